"""SVG pictures for the report: stacked spectra on one ppm axis and the numbered structure.

Everything here returns SVG text meant to be placed inline in the HTML report; no
file is read or written.  Text that comes from the user or the data (labels,
names) is escaped here, so the returned string is safe to insert as markup.

Spectra are drawn from the real data points.  To keep the page small they are
reduced with min/max binning: for every horizontal bin (a fraction of a pixel)
the smallest and the largest value are both kept, so that no peak top and no
negative peak is lost, as can happen when every n-th point is kept.

The ppm axis runs from high shift on the left to low shift on the right, the way
chemical-shift axes are read (common practice).

References
----------
.. [1] Steinarsson, S. (2013). Downsampling time series for visual representation.
   MSc thesis, University of Iceland — compares point-skipping with bucket
   methods; min/max buckets keep every extreme.
.. [2] RDKit: Open-source cheminformatics, ``rdMolDraw2D`` drawing code,
   https://www.rdkit.org (structure depiction and 2D coordinates).

"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt
from markupsafe import escape

from verify.model import Spectrum

__all__ = [
    "MARK_STATUSES",
    "PALETTE",
    "Mark",
    "Sticks",
    "crowded_windows",
    "glyph_svg",
    "minmax_downsample",
    "nice_step",
    "spectrum_stack_svg",
    "stack_window",
    "structure_svg",
]

#: Colours of the report, chosen to stay apart for the common colour-vision
#: deficiencies (blue against orange, with grey and a dark violet that also differ
#: in lightness).  Every status also has its own glyph shape and its own words.
PALETTE: dict[str, str] = {
    "ink": "#1d2430",
    "muted": "#5b6575",
    "rule": "#c9ced6",
    "trace": "#24476b",
    "agree": "#2c5f93",
    "mismatch": "#c2561a",
    "unassigned": "#c2561a",
    "solvent": "#6f7782",
    "impurity": "#6a3d8a",
    "artifact": "#6f7782",
}

#: What a marked signal is, in the order the legend lists them.
MARK_STATUSES: tuple[str, ...] = (
    "agree",
    "mismatch",
    "unassigned",
    "solvent",
    "impurity",
    "artifact",
)

#: Order of the stacked panels, top to bottom.
PANEL_ORDER: tuple[str, ...] = ("carbon", "dept90", "dept135", "dept45", "apt")

PANEL_NAMES: dict[str, tuple[str, str]] = {
    "carbon": ("13C", "broadband"),
    "dept90": ("DEPT-90", "CH up"),
    "dept135": ("DEPT-135", "CH, CH3 up · CH2 down"),
    "dept45": ("DEPT-45", "all protonated up"),
    "apt": ("APT", "C, CH2 opposite CH, CH3"),
}


@dataclass(frozen=True)
class Mark:
    """One signal to be marked on the stacked spectra.

    Parameters
    ----------
    ppm : float
        Shift of the signal in ppm (referenced axis).
    text : str
        Short label drawn above the spectra, e.g. ``"C5 CH2"``.
    status : str
        One of :data:`MARK_STATUSES`; decides glyph shape and colour.
    detail : str
        Longer description shown as a tooltip.
    short : str
        Shorter label used where an expansion repeats the region (empty: `text`).

    """

    ppm: float
    text: str
    status: str = "agree"
    detail: str = ""
    short: str = ""

    def __post_init__(self) -> None:
        if self.status not in MARK_STATUSES:
            raise ValueError(
                f"unknown mark status {self.status!r}; expected one of {MARK_STATUSES}"
            )
        if not math.isfinite(self.ppm):
            raise ValueError("a mark needs a finite shift")


# --------------------------------------------------------------------- downsample


def minmax_downsample(
    ppm: npt.ArrayLike, intensity: npt.ArrayLike, bins: int, lo: float, hi: float
) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]:
    """Reduce a trace to the minimum and maximum of each of `bins` equal ppm bins.

    Parameters
    ----------
    ppm, intensity : array of float, shape (n,)
        The trace; the axis may run either way (ppm).
    bins : int
        Number of equal-width bins across ``[lo, hi]``.
    lo, hi : float
        Window in ppm; points outside are dropped.

    Returns
    -------
    x, y : arrays of float
        Ascending ppm.  When the window holds at most ``2 * bins`` points they are
        returned unchanged; otherwise two points per non-empty bin, both at the
        bin centre, holding the bin's minimum and maximum (in the order they occur
        in the bin), so that every extreme of the trace is kept.

    References
    ----------
    .. [1] Steinarsson (2013), min/max bucket downsampling (see module docstring).

    """
    if bins < 1 or not hi > lo:
        raise ValueError(f"need bins >= 1 and hi > lo, got bins={bins}, lo={lo}, hi={hi}")
    x = np.asarray(ppm, dtype=np.float64)
    y = np.asarray(intensity, dtype=np.float64)
    inside = (x >= lo) & (x <= hi)
    x, y = x[inside], y[inside]
    order = np.argsort(x, kind="stable")
    x, y = x[order], y[order]
    if x.size <= 2 * bins:
        return x, y
    width = (hi - lo) / bins
    idx = np.clip(np.floor((x - lo) / width).astype(np.int64), 0, bins - 1)
    starts = np.flatnonzero(np.r_[True, np.diff(idx) != 0])
    ends = np.r_[starts[1:], x.size]
    mins = np.minimum.reduceat(y, starts)
    maxs = np.maximum.reduceat(y, starts)
    # which extreme comes first inside each bin keeps the line's direction honest
    pos = np.arange(x.size)
    is_min = y == np.repeat(mins, ends - starts)
    is_max = y == np.repeat(maxs, ends - starts)
    first_min = np.minimum.reduceat(np.where(is_min, pos, x.size), starts)
    first_max = np.minimum.reduceat(np.where(is_max, pos, x.size), starts)
    min_first = first_min <= first_max
    low_high = np.column_stack([mins, maxs])
    pair = np.where(min_first[:, None], low_high, low_high[:, ::-1])
    centres = lo + (idx[starts] + 0.5) * width
    return np.repeat(centres, 2), np.asarray(pair, dtype=np.float64).ravel()


@dataclass(frozen=True)
class Sticks:
    """A peak list drawn as sticks (for data that come as a list, not a spectrum).

    Parameters
    ----------
    ppm : tuple of float
        Peak shifts in ppm.
    height : tuple of float
        Signed peak heights, arbitrary units.

    """

    ppm: tuple[float, ...]
    height: tuple[float, ...]

    def __post_init__(self) -> None:
        if len(self.ppm) != len(self.height):
            raise ValueError("a stick needs one height per shift")


Trace = Spectrum | Sticks


def _axis(t: Trace) -> npt.NDArray[np.float64]:
    return np.asarray(t.ppm, dtype=np.float64)


def _values(t: Trace) -> npt.NDArray[np.float64]:
    return np.asarray(t.intensity if isinstance(t, Spectrum) else t.height, dtype=np.float64)


# ----------------------------------------------------------------------- glyphs


def glyph_svg(status: str, cx: float, cy: float, r: float = 4.5) -> str:
    """SVG element for the glyph of one mark status, centred at (`cx`, `cy`) in px.

    Shapes: agree — filled circle; mismatch — hollow diamond with a bar;
    unassigned — hollow circle with a cross; solvent — square; impurity — upward
    triangle; artifact — short bar.  Shapes differ, so colour is never needed to
    tell them apart.
    """
    c = PALETTE[status]
    if status == "agree":
        return f'<circle cx="{cx:.1f}" cy="{cy:.1f}" r="{r:.1f}" fill="{c}"/>'
    if status == "mismatch":
        d = r * 1.35
        return (
            f'<path d="M{cx:.1f} {cy - d:.1f}L{cx + d:.1f} {cy:.1f}L{cx:.1f} {cy + d:.1f}'
            f'L{cx - d:.1f} {cy:.1f}Z" fill="#fff" stroke="{c}" stroke-width="2"/>'
            f'<path d="M{cx:.1f} {cy - d * 0.5:.1f}V{cy + d * 0.15:.1f}" stroke="{c}" '
            f'stroke-width="1.8"/><circle cx="{cx:.1f}" cy="{cy + d * 0.45:.1f}" r="0.9" '
            f'fill="{c}"/>'
        )
    if status == "unassigned":
        k = r * 0.6
        return (
            f'<circle cx="{cx:.1f}" cy="{cy:.1f}" r="{r:.1f}" fill="#fff" stroke="{c}" '
            f'stroke-width="1.6"/><path d="M{cx - k:.1f} {cy - k:.1f}L{cx + k:.1f} {cy + k:.1f}'
            f'M{cx + k:.1f} {cy - k:.1f}L{cx - k:.1f} {cy + k:.1f}" stroke="{c}" '
            f'stroke-width="1.4"/>'
        )
    if status == "solvent":
        return (
            f'<rect x="{cx - r * 0.85:.1f}" y="{cy - r * 0.85:.1f}" width="{r * 1.7:.1f}" '
            f'height="{r * 1.7:.1f}" fill="{c}"/>'
        )
    if status == "impurity":
        return (
            f'<path d="M{cx:.1f} {cy - r * 1.1:.1f}L{cx + r:.1f} {cy + r * 0.8:.1f}'
            f'L{cx - r:.1f} {cy + r * 0.8:.1f}Z" fill="{c}"/>'
        )
    if status == "artifact":
        return (
            f'<rect x="{cx - r:.1f}" y="{cy - 1.2:.1f}" width="{2 * r:.1f}" height="2.4" '
            f'fill="{c}"/>'
        )
    raise ValueError(f"unknown mark status {status!r}")


# ----------------------------------------------------------------------- spectra


def nice_step(span: float, pixels: float, min_px: float = 44.0) -> float:
    """Smallest tick step (ppm) from the 1-2-5 series that leaves `min_px` between ticks."""
    if span <= 0 or pixels <= 0:
        return 1.0
    for exp in range(-2, 4):
        for m in (1.0, 2.0, 5.0):
            step = m * 10.0**exp
            if step / span * pixels >= min_px:
                return step
    return 1000.0


def _text_px(text: str, size: float) -> float:
    """Rough rendered width in px of `text` in a sans-serif face at `size` px."""
    return 0.58 * size * len(text) + 2.0


def crowded_windows(
    marks: Sequence[Mark],
    lo: float,
    hi: float,
    *,
    width: int = 1000,
    max_lanes: int = 4,
    gap_ppm: float = 6.0,
    min_marks: int = 5,
) -> list[tuple[float, float]]:
    """Regions (lo, hi) in ppm whose labels crowd the full view and deserve an expansion.

    Nothing is returned while the labels of the whole window fit in `max_lanes`
    rows.  Otherwise the marks are split where neighbours lie more than `gap_ppm`
    apart, and each group of at least `min_marks` that spans less than 60 % of the
    window becomes an expansion (1 ppm margin, at most two, most crowded first).
    """
    inside = sorted(m.ppm for m in marks if lo <= m.ppm <= hi and m.status != "artifact")
    if not inside or _lane_count(marks, lo, hi, width) <= max_lanes:
        return []
    groups: list[list[float]] = [[inside[0]]]
    for p in inside[1:]:
        if p - groups[-1][-1] > gap_ppm:
            groups.append([])
        groups[-1].append(p)
    out = []
    for g in sorted(groups, key=len, reverse=True):
        a = max(lo, math.floor(g[0] - 1.0))
        b = min(hi, math.ceil(g[-1] + 1.0))
        if len(g) >= min_marks and b - a < 0.6 * (hi - lo):
            out.append((a, b))
    return out[:2]


def _lane_count(marks: Sequence[Mark], lo: float, hi: float, width: int) -> int:
    left, right = 104.0, 14.0
    plot_w = width - left - right
    spans = []
    for m in marks:
        if lo <= m.ppm <= hi and m.status != "artifact":
            x = left + (hi - m.ppm) / (hi - lo) * plot_w
            w = _text_px(m.text, 11.0) + 12.0
            x0 = min(max(x - w / 2, left), width - right - w)
            spans.append((x0, x0 + w))
    lanes = _lanes(spans)
    return max(lanes) + 1 if lanes else 0


def stack_window(spectra: Sequence[Trace], marks: Sequence[Mark]) -> tuple[float, float]:
    """Default ppm window of a stack: the marks' span ± 8 ppm, rounded to 10, within the data."""
    return _window(spectra, marks)


def _window(spectra: Sequence[Trace], marks: Sequence[Mark]) -> tuple[float, float]:
    axes = [_axis(s) for s in spectra if _axis(s).size]
    if not axes:
        axes = [np.array([-10.0, 230.0])]  # an empty peak list: the usual carbon range
    pad = [0.0 if isinstance(s, Spectrum) else 10.0 for s in spectra if _axis(s).size] or [0.0]
    data_lo = min(float(np.min(a)) - p for a, p in zip(axes, pad, strict=True))
    data_hi = max(float(np.max(a)) + p for a, p in zip(axes, pad, strict=True))
    if not marks:
        return data_lo, data_hi
    lo = math.floor((min(m.ppm for m in marks) - 8.0) / 10.0) * 10.0
    hi = math.ceil((max(m.ppm for m in marks) + 8.0) / 10.0) * 10.0
    lo, hi = max(lo, data_lo), min(hi, data_hi)
    return (lo, hi) if hi > lo else (data_lo, data_hi)


def _scale(spec: Trace, lo: float, hi: float, marks: Sequence[Mark]) -> float:
    """Height (spectrum units) that fills a panel: the tallest point that is not solvent."""
    x, y = _axis(spec), np.abs(_values(spec))
    keep = (x >= lo) & (x <= hi)
    for m in marks:
        if m.status == "solvent":
            keep &= np.abs(x - m.ppm) > 1.2
    top = float(np.max(y[keep])) if np.any(keep) else 0.0
    if top <= 0:
        inside = (x >= lo) & (x <= hi)
        top = float(np.max(y[inside])) if np.any(inside) else 1.0
    return top if top > 0 else 1.0


def _lanes(items: Sequence[tuple[float, float]], gap: float = 6.0) -> list[int]:
    """Greedy lane for each (left, right) px interval so that no two overlap in a lane."""
    ends: list[float] = []
    lanes = [0] * len(items)
    for i in sorted(range(len(items)), key=lambda k: items[k][0]):
        left, right = items[i]
        for lane, end in enumerate(ends):
            if left >= end + gap:
                ends[lane] = right
                lanes[i] = lane
                break
        else:
            ends.append(right)
            lanes[i] = len(ends) - 1
    return lanes


def spectrum_stack_svg(
    traces: Sequence[tuple[str, Trace]],
    marks: Sequence[Mark] = (),
    *,
    notes: dict[str, str] | None = None,
    width: int = 1000,
    ppm_range: tuple[float, float] | None = None,
    compact: Sequence[tuple[float, float]] = (),
    title: str = "",
) -> str:
    """Draw several spectra stacked on one shared, descending ppm axis.

    Parameters
    ----------
    traces : sequence of (role, Spectrum or Sticks)
        Role is one of the experiment names; panels are drawn in the order
        carbon, DEPT-90, DEPT-135, DEPT-45, APT whatever the input order.
    marks : sequence of Mark
        Signals to label above the top panel; each also gets a guide line down
        through every panel at its shift.
    notes : dict of str to str, optional
        A short note per role shown under the panel name (e.g. "phase inverted").
    width : int
        Width of the drawing in px (it scales with the page through its viewBox).
    ppm_range : (lo, hi), optional
        Window in ppm; by default the span of the marks with a margin, rounded to
        10 ppm, within the data.
    compact : sequence of (lo, hi)
        Regions (ppm) shown again in an expansion: marks there that agree use
        their short label.
    title : str
        Heading written above the labels (e.g. "Expansion 58–10 ppm").

    Returns
    -------
    str
        An ``<svg>`` element.  Labels are escaped.

    """
    if not traces:
        return ""
    order = {r: i for i, r in enumerate(PANEL_ORDER)}
    traces = sorted(traces, key=lambda t: order.get(t[0], len(order)))
    notes = notes or {}
    lo, hi = ppm_range if ppm_range is not None else _window([s for _, s in traces], marks)
    left, right = 104.0, 14.0
    plot_w = width - left - right
    # ids must be unique in the whole page, which may hold several stacks
    uid = f"clip{round(lo * 100)}-{round(hi * 100)}".replace("-", "_").replace(".", "_")

    def px(ppm: float) -> float:
        return left + (hi - ppm) / (hi - lo) * plot_w

    # label lanes above the top panel
    size = 11.0
    shown = [
        Mark(m.ppm, m.short, m.status, m.detail)
        if m.short and m.status == "agree" and any(a <= m.ppm <= b for a, b in compact)
        else m
        for m in marks
        if lo <= m.ppm <= hi and m.status != "artifact"
    ]
    # artifacts get a bare glyph just above the top panel: no label row of their own
    bare = [m for m in marks if lo <= m.ppm <= hi and m.status == "artifact"]
    spans = []
    for m in shown:
        w = _text_px(m.text, size) + 12.0  # glyph + gap
        x0 = min(max(px(m.ppm) - w / 2, left), width - right - w)
        spans.append((x0, x0 + w))
    lanes = _lanes(spans)
    n_lanes = (max(lanes) + 1) if lanes else 0
    lane_h = 15.0
    head = 18.0 if title else 0.0
    top = head + 8.0 + n_lanes * lane_h + 14.0
    heights = [150.0 if role == "carbon" else 92.0 for role, _ in traces]
    gap = 10.0
    y0s = []
    y = top
    for h in heights:
        y0s.append(y)
        y += h + gap
    axis_y = y - gap + 4.0
    total_h = axis_y + 40.0

    out: list[str] = [
        f'<svg class="stack" xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {width} '
        f'{total_h:.0f}" role="img" aria-label="Spectra stacked on a common ppm axis" '
        f'font-family="DejaVu Sans, Liberation Sans, Arial, sans-serif">'
    ]
    out.append("<defs>")
    for i, (h, y0) in enumerate(zip(heights, y0s, strict=True)):
        out.append(
            f'<clipPath id="{uid}-p{i}"><rect x="{left:.1f}" y="{y0:.1f}" '
            f'width="{plot_w:.1f}" height="{h:.1f}"/></clipPath>'
        )
    out.append("</defs>")

    if title:
        out.append(
            f'<text x="{left:.1f}" y="13" font-size="12" font-weight="700" '
            f'fill="{PALETTE["ink"]}">{escape(title)}</text>'
        )

    # guide lines through all panels
    bottom = y0s[-1] + heights[-1]
    for m in shown:
        x = px(m.ppm)
        dash = ' stroke-dasharray="4 3"' if m.status in ("mismatch", "unassigned") else ""
        colour = PALETTE[m.status] if dash else PALETTE["rule"]
        out.append(
            f'<path d="M{x:.1f} {top - 10:.1f}V{bottom:.1f}" stroke="{colour}" '
            f'stroke-width="{1.1 if dash else 0.6}"{dash} opacity="0.8"/>'
        )

    # panels
    bins = int(plot_w * 2)
    for i, ((role, spec), h, y0) in enumerate(zip(traces, heights, y0s, strict=True)):
        signed = role != "carbon"
        base = y0 + h * (0.5 if signed else 0.88)
        amp = h * (0.46 if signed else 0.84)
        scale = _scale(spec, lo, hi, marks)
        if isinstance(spec, Spectrum):
            xs, ys = minmax_downsample(spec.ppm, spec.intensity, bins, lo, hi)
        else:
            xs, ys = np.empty(0), np.empty(0)
            sticks = " ".join(
                f"M{px(p):.1f} {base:.1f}V{base - v / scale * amp:.1f}"
                for p, v in zip(spec.ppm, spec.height, strict=True)
                if lo <= p <= hi
            )
        out.append(
            f'<rect x="{left:.1f}" y="{y0:.1f}" width="{plot_w:.1f}" height="{h:.1f}" '
            f'fill="#fbfcfd" stroke="{PALETTE["rule"]}" stroke-width="0.8"/>'
        )
        out.append(
            f'<path d="M{left:.1f} {base:.1f}H{left + plot_w:.1f}" stroke="{PALETTE["rule"]}" '
            f'stroke-width="0.6"/>'
        )
        if not isinstance(spec, Spectrum) and sticks:
            out.append(
                f'<path class="sticks" clip-path="url(#{uid}-p{i})" d="{sticks}" '
                f'stroke="{PALETTE["trace"]}" stroke-width="1.4"/>'
            )
        if xs.size:
            pts = " ".join(
                f"{px(a):.1f},{base - b / scale * amp:.1f}" for a, b in zip(xs, ys, strict=True)
            )
            out.append(
                f'<polyline clip-path="url(#{uid}-p{i})" fill="none" stroke="{PALETTE["trace"]}" '
                f'stroke-width="0.9" stroke-linejoin="round" points="{pts}"/>'
            )
        name, sub = PANEL_NAMES.get(role, (role, ""))
        out.append(
            f'<text x="8" y="{y0 + 16:.1f}" font-size="13" font-weight="700" '
            f'fill="{PALETTE["ink"]}" data-role="{escape(role)}">{escape(name)}</text>'
        )
        if sub:
            out.append(
                f'<text x="8" y="{y0 + 30:.1f}" font-size="9" fill="{PALETTE["muted"]}">'
                f"{escape(sub)}</text>"
            )
        if role in notes:
            out.append(
                f'<text x="8" y="{y0 + 43:.1f}" font-size="9" fill="{PALETTE["mismatch"]}">'
                f"{escape(notes[role])}</text>"
            )
        if signed:
            for sign, yy in (("+", y0 + 11), ("\u2212", y0 + h - 4)):
                out.append(
                    f'<text x="{left + plot_w - 4:.1f}" y="{yy:.1f}" font-size="10" '
                    f'text-anchor="end" fill="{PALETTE["muted"]}">{sign}</text>'
                )

    # labels
    for m, lane, (x0, _x1) in zip(shown, lanes, spans, strict=True):
        ly = head + 8.0 + (n_lanes - 1 - lane) * lane_h + 10.0
        x = px(m.ppm)
        colour = PALETTE[m.status]
        weight = ' font-weight="700"' if m.status in ("mismatch", "unassigned") else ""
        out.append(f'<g class="mark" data-status="{m.status}" data-ppm="{m.ppm:.2f}">')
        if m.detail:
            out.append(f"<title>{escape(m.detail)}</title>")
        out.append(
            f'<path d="M{x:.1f} {ly + 3:.1f}V{top - 2:.1f}" stroke="{colour}" '
            f'stroke-width="0.7" opacity="0.7"/>'
        )
        out.append(glyph_svg(m.status, x0 + 5.0, ly - 3.5, 4.0))
        out.append(
            f'<text x="{x0 + 12:.1f}" y="{ly:.1f}" font-size="{size:.0f}" fill="{colour}"'
            f"{weight}>{escape(m.text)}</text>"
        )
        out.append("</g>")

    for m in bare:
        out.append(f'<g class="mark" data-status="{m.status}" data-ppm="{m.ppm:.2f}">')
        if m.detail:
            out.append(f"<title>{escape(m.detail)}</title>")
        out.append(glyph_svg(m.status, px(m.ppm), top - 5.0, 3.5))
        out.append("</g>")

    # axis
    out.append(
        f'<path d="M{left:.1f} {axis_y:.1f}H{left + plot_w:.1f}" stroke="{PALETTE["ink"]}" '
        f'stroke-width="1"/>'
    )
    step = nice_step(hi - lo, plot_w)
    minor = step / 2
    decimals = max(0, -math.floor(math.log10(step) + 1e-9))
    first, last = math.ceil(lo / minor - 1e-9), math.floor(hi / minor + 1e-9)
    for k in range(first, last + 1):  # ticks by index: no drift, no "-0"
        t = round(k * minor, decimals + 2) + 0.0
        x = px(t)
        major = k % 2 == 0
        out.append(
            f'<path d="M{x:.1f} {axis_y:.1f}v{6 if major else 3}" stroke="{PALETTE["ink"]}" '
            f'stroke-width="1"/>'
        )
        if major:
            label = f"{t:.{decimals}f}"
            out.append(
                f'<text x="{x:.1f}" y="{axis_y + 19:.1f}" font-size="11" text-anchor="middle" '
                f'fill="{PALETTE["ink"]}">{label}</text>'
            )
    out.append(
        f'<text x="{left + plot_w:.1f}" y="{axis_y + 35:.1f}" font-size="11" '
        f'text-anchor="end" fill="{PALETTE["muted"]}">\u03b4 (ppm), high shift on the left</text>'
    )
    out.append("</svg>")
    return "".join(out)


# --------------------------------------------------------------------- structure

_UNSAFE = re.compile(
    r"<\s*(script|foreignObject|iframe|object|embed)|javascript:|\son\w+\s*=", re.I
)


def structure_svg(
    molblock: str,
    marked: Sequence[int] = (),
    *,
    numbered: bool = True,
    size: tuple[int, int] = (440, 330),
) -> str | None:
    """Draw a structure from its molfile with RDKit, carbons numbered from 1.

    Parameters
    ----------
    molblock : str
        Molfile text; atom order gives the numbering (atom index + 1), as in the
        class labels ``"C5"``.
    marked : sequence of int
        0-based atom indices to mark (atoms of fail/review findings): each gets a
        highlight disc and an outlined diamond with an exclamation bar, so the
        mark does not rest on colour alone.
    numbered : bool
        Write the atom number beside every carbon.
    size : (int, int)
        Width and height in px.

    Returns
    -------
    str or None
        An ``<svg>`` element, or None when RDKit cannot read the molfile.

    References
    ----------
    .. [1] RDKit ``rdMolDraw2D.MolDraw2DSVG`` and ``rdDepictor.Compute2DCoords``.

    """
    from rdkit import Chem
    from rdkit.Chem import rdDepictor
    from rdkit.Chem.Draw import rdMolDraw2D

    if not molblock.strip():
        return None
    mol = Chem.MolFromMolBlock(molblock, sanitize=True, removeHs=False)
    if mol is None:
        return None
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() != 1]
    if heavy == list(range(len(heavy))):  # hydrogens only after heavy atoms: indices survive
        mol = Chem.RemoveHs(mol)
    mol = Chem.Mol(mol)
    for atom in mol.GetAtoms():
        for prop in ("molFileAlias", "dummyLabel", "_displayLabel", "_displayLabelW", "atomLabel"):
            if atom.HasProp(prop):
                atom.ClearProp(prop)
        if numbered and atom.GetAtomicNum() == 6:
            atom.SetProp("atomNote", str(atom.GetIdx() + 1))
    for prop in list(mol.GetPropNames()):
        mol.ClearProp(prop)
    if mol.GetNumConformers() == 0 or mol.GetConformer().Is3D():
        rdDepictor.Compute2DCoords(mol)
    marked = sorted({i for i in marked if 0 <= i < mol.GetNumAtoms()})
    w, h = size
    bond_px = 34.0  # longest bond drawn, so that small molecules are not blown up
    pos = mol.GetConformer().GetPositions()
    if len(pos) > 1:  # fit the canvas to the drawing (RDKit bonds are ~1.5 units long)
        dx = float(np.ptp(pos[:, 0])) + 2.5
        dy = float(np.ptp(pos[:, 1])) + 2.5
        scale = min(bond_px / 1.5, w / dx, h / dy)
        w, h = int(max(dx * scale, 0.5 * w)), int(max(dy * scale, 0.4 * h))
    drawer = rdMolDraw2D.MolDraw2DSVG(w, h)
    opts: Any = drawer.drawOptions()
    opts.fixedBondLength = bond_px
    opts.annotationFontScale = 0.62
    opts.padding = 0.08
    opts.clearBackground = False
    opts.bondLineWidth = 1.6
    highlight = (0.96, 0.80, 0.66)  # pale orange disc under a marked atom
    rdMolDraw2D.PrepareAndDrawMolecule(
        drawer,
        mol,
        highlightAtoms=marked,
        highlightAtomColors=dict.fromkeys(marked, highlight),
        highlightBonds=[],
        highlightAtomRadii=dict.fromkeys(marked, 0.45),
    )
    coords = [drawer.GetDrawCoords(i) for i in marked]
    drawer.FinishDrawing()
    svg = drawer.GetDrawingText()
    svg = re.sub(r"<\?xml[^>]*\?>\s*", "", svg)
    svg = re.sub(r"<!--.*?-->", "", svg, flags=re.S)
    svg = re.sub(r"width='\d+px' height='\d+px'", "class='structure'", svg, count=1)
    if _UNSAFE.search(svg):  # defensive: RDKit output holds no user text once labels are gone
        return None
    c = PALETTE["mismatch"]
    extra = []
    for p in coords:
        x, y, d = p.x, p.y, 15.0
        extra.append(
            f'<g class="marked-atom"><path d="M{x:.1f} {y - d:.1f}L{x + d:.1f} {y:.1f}'
            f'L{x:.1f} {y + d:.1f}L{x - d:.1f} {y:.1f}Z" fill="none" stroke="{c}" '
            f'stroke-width="1.8"/><text x="{x + d * 0.75:.1f}" y="{y - d * 0.55:.1f}" '
            f'font-size="13" font-weight="700" fill="{c}" '
            f'font-family="DejaVu Sans, Arial, sans-serif">!</text></g>'
        )
    return svg.replace("</svg>", "".join(extra) + "</svg>")
