"""Pick the peaks of a processed, referenced spectrum, positive and negative.

A line is picked when it stands ``threshold_snr`` noise SDs above the baseline
*and* above the valleys that separate it from its neighbours (its prominence):
the second condition drops noise riding on the wing or shoulder of a big line.
Positions are interpolated between points (parabola through the apex and its two
neighbours), widths are full widths at half height, areas are signed integrals
over ±3 widths (clipped half-way to the next line).

Artefacts are kept with role ``"artifact"``: single-point spikes (narrower than
one point where real lines span several), broad humps of the baseline (wider
than 50 Hz and 8× the typical line), the opposite-sign lobes beside a large
mis-phased line and the broad feet/skirts under a sharp one, ¹³C–¹³C satellites
and symmetric sideband pairs, and the evenly spaced ripples of a truncated FID.
In the carbon spectrum a line far weaker than the typical one (below 6 %) gets
role ``"impurity"``; in edited spectra the weak lines where the solvent's
protonated isotopologue (CHCl3, CHD2…) resonates get role ``"solvent"``.

Lines that belong to one carbon are grouped into one :class:`~verify.model.Peak`:
the solvent multiplet (role ``"solvent"``), and — only when the structure contains
¹⁹F, ³¹P or ²H — doublets (and C–F triplets/quartets) of about equal lines whose
spacing falls in a handbook range for C–F or C–P couplings, and C–D triplets,
quintets and septets.

References
----------
C–F couplings (Hz): ¹J 240–290 (CF3 ~272, aryl C–F ~245), ²J 17–35, ³J 5–10,
⁴J 1–4; C–P: ¹J 50–150, ²J 3–20, ³J 3–15 — from memory, in line with
E. Pretsch, P. Bühlmann, M. Badertscher, *Structure Determination of Organic
Compounds*, 4th ed., Springer 2009, 13C coupling tables, and E. Breitmaier,
W. Voelter, *Carbon-13 NMR Spectroscopy*, 3rd ed., VCH 1987.
Noise: see :func:`estimate_noise`.

"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence
from dataclasses import replace

import numpy as np

from verify._lines import (
    Line,
    _fit_with_one_overlapped,
    binomial_pattern,
    find_lines,
    pattern_fit,
    robust_noise,
    smooth_baseline,
)
from verify.errors import UsageError
from verify.model import EXPERIMENTS, Peak, PeakSet, Referencing, Spectrum
from verify.reference import SolventSignal, canonical_solvent, solvent_signals

__all__ = ["COUPLING_RANGES_HZ", "estimate_noise", "pick_peaks"]

#: Handbook ranges (Hz) of carbon–heteronucleus couplings that split a 13C{1H} line.
COUPLING_RANGES_HZ: dict[str, tuple[tuple[float, float], ...]] = {
    "19F": ((240.0, 290.0), (17.0, 35.0), (5.0, 10.0), (1.0, 4.0)),
    "31P": ((50.0, 150.0), (3.0, 20.0)),  # 3J 3–15 lies inside the 2J range
}
_PATTERN_NAME = {"19F": "C-F", "31P": "C-P"}
#: One-bond C–D couplings (Hz) of deuterated sample carbons (see _deuterium_groups).
_CD_J_HZ = (18.0, 40.0)
#: Half-window (Hz) in which a line's prominence is measured: wide enough for any
#: carbon line (natural + 1–3 Hz apodization), narrow enough to be local.
_PROMINENCE_WINDOW_HZ = 30.0
#: ¹³C–¹³C satellites: each 0.55 % of the parent (1.1 % natural abundance / 2), at
#: ±¹J(C,C)/2, ¹J(C,C) 30–180 Hz (sp³–sp³ ~35, aromatic ~56, alkyne ~170; from memory,
#: Breitmaier & Voelter 1987).  Lines below this fraction of a line that close are
#: satellites (or spinning sidebands), not carbons of the sample.
_SATELLITE_FRACTION = 0.02
_SATELLITE_HZ = (12.0, 95.0)
#: Weak lines placed symmetrically (±1 Hz or 1 %) about a line at least 50× stronger,
#: up to this far (Hz), are sidebands (spinning, decoupler modulation): common practice.
_SIDEBAND_MAX_HZ = 2000.0
#: How far (Hz) from a strong line weak truncation ripples are looked for.
_RIPPLE_REACH_HZ = 1000.0
#: A line below this fraction of the typical sample line (carbon spectrum only) is
#: taken for an impurity: in routine 13C{1H} spectra a quaternary carbon is seldom
#: weaker than ~15 % of the median protonated carbon (experience; no table).
_IMPURITY_FRACTION = 0.06


def estimate_noise(spectrum: Spectrum) -> float:
    """Robust noise standard deviation of a spectrum.

    The spectrum is cut into 64 segments; each loses a straight-line trend and
    gives ``1.4826·MAD``; the median over segments is returned.  Lines occupy few
    points of a segment and crowd few segments, so neither moves the result, and
    a rolling baseline is taken out per segment.

    Parameters
    ----------
    spectrum : Spectrum
        Any spectrum (processed, either sign).

    Returns
    -------
    float
        Noise SD in spectrum intensity units.

    References
    ----------
    P. J. Rousseeuw, C. Croux, J. Am. Stat. Assoc. 1993, 88, 1273 (MAD, 1.4826).
    Using signal-free segments of the spectrum for the noise is common practice
    (the SNR of a spectrometer's acceptance test is measured that way).

    """
    return robust_noise(spectrum.intensity)


def pick_peaks(
    spectrum: Spectrum,
    experiment: str,
    *,
    threshold_snr: float = 6.0,
    solvent: str | None = None,
    hetero: frozenset[str] = frozenset(),
    referencing: Referencing | None = None,
) -> PeakSet:
    """Pick positive and negative peaks and group multiplets of one carbon.

    Parameters
    ----------
    spectrum : Spectrum
        Processed spectrum on its referenced ppm axis.
    experiment : str
        Role of the spectrum (``"carbon"``, ``"dept135"`` …).
    threshold_snr : float
        A line must rise this many noise SDs above the baseline and above its
        surrounding valleys.
    solvent : str, optional
        Solvent whose multiplet is labelled ``"solvent"`` (falls back on
        ``referencing.solvent`` and then ``spectrum.solvent``).
    hetero : frozenset of str
        Coupled heteronuclei in the structure (``"19F"``, ``"31P"``, ``"2H"``); only
        then are C–F/C–P/C–D multiplets grouped.
    referencing : Referencing, optional
        The sample's referencing (for the solvent name).

    Raises
    ------
    UsageError
        For an unknown experiment or a threshold that is not a positive number.

    Returns
    -------
    PeakSet
        Peaks sorted by descending ppm; ``noise`` the robust SD; ``spectrum`` this
        spectrum.

    References
    ----------
    See the module docstring.

    """
    if experiment not in EXPERIMENTS:
        raise UsageError(
            f"unknown experiment {experiment!r} for peak picking;"
            f" use one of {', '.join(EXPERIMENTS)}"
        )
    if not (math.isfinite(threshold_snr) and threshold_snr > 0):
        raise UsageError(f"threshold_snr must be a positive number, got {threshold_snr}")
    ppm = spectrum.ppm
    sigma = estimate_noise(spectrum)
    raw = spectrum.intensity
    if sigma <= 0:  # noiseless (synthetic) data: anything above 1e-6 of the maximum
        sigma = float(np.max(np.abs(raw))) * 1e-6 or 1.0
        y = raw
    else:
        # heights count from the local baseline (files may hold an offset or a roll)
        y = raw - smooth_baseline(raw)
    thr = threshold_snr * sigma
    step = float(ppm[1] - ppm[0])
    hz_per_point = abs(step) * spectrum.observe_mhz
    wlen = 2 * max(10, int(round(_PROMINENCE_WINDOW_HZ / hz_per_point))) + 1
    lines = find_lines(y, thr, min_prominence=thr, wlen=wlen)
    lines += find_lines(y, thr, min_prominence=thr, sign=-1, wlen=wlen)
    lines.sort(key=lambda ln: ln.pos)
    all_pos = np.array([ln.pos for ln in lines])

    def at(pos: float) -> float:
        return float(ppm[0] + pos * step)

    roles = _artifact_roles(lines, hz_per_point)
    # one line → one Peak; multiplets merge several
    peaks: list[Peak] = []
    used: set[int] = set()

    # the solvent the referencing actually found beats the one written down
    found = referencing.solvent if referencing and referencing.method == "solvent" else None
    key = canonical_solvent(found or solvent or spectrum.solvent)
    if key is not None and experiment in ("carbon", "apt"):
        found_primary = False
        for sig in solvent_signals(key):
            if sig.deuterium == 0 and not found_primary:
                continue
            match = _solvent_group(lines, used, sig, at, hz_per_point)
            if match is None:
                continue
            group, centre_pos, j_hz = match
            found_primary = found_primary or sig.primary
            members = [lines[i] for i in group]
            used.update(group)
            peak = _merge(members, y, at, hz_per_point, sigma, "solvent", "solvent", all_pos)
            if sig.deuterium > 0:
                peak = replace(peak, ppm=at(centre_pos), j_hz=j_hz)
            peaks.append(peak)
            _mark_isotopologues(lines, roles, used, group, sig, at, spectrum.observe_mhz)

    for nucleus in ("19F", "31P"):
        if nucleus not in hetero:
            continue
        for group, j in _coupled_groups(lines, roles, used, nucleus, hz_per_point, sigma):
            if _decoupling_residue(lines, used, group):
                for i in group:
                    roles[i] = "artifact"
                continue
            used.update(group)
            members = [lines[i] for i in group]
            pattern = _PATTERN_NAME[nucleus]
            peak = _merge(members, y, at, hz_per_point, sigma, "sample", pattern, all_pos)
            peaks.append(replace(peak, j_hz=float(j)))
    if "2H" in hetero:
        for group, j in _deuterium_groups(lines, roles, used, hz_per_point, thr):
            used.update(group)
            peak = _merge(
                [lines[i] for i in group], y, at, hz_per_point, sigma, "sample", "C-D", all_pos
            )
            peaks.append(replace(peak, j_hz=float(j)))

    if experiment == "carbon":
        _mark_weak(lines, roles, used, peaks)
    elif key is not None and experiment not in ("carbon", "apt"):
        _mark_protonated_solvent(lines, roles, key, at, spectrum.observe_mhz)
    for i, ln in enumerate(lines):
        if i in used:
            continue
        peaks.append(_merge([ln], y, at, hz_per_point, sigma, roles[i], None, all_pos))

    return PeakSet(
        experiment=experiment,
        peaks=tuple(peaks),
        noise=sigma,
        spectrum=spectrum,
        threshold_snr=threshold_snr,
    )


# ----------------------------------------------------------------------- helpers


def _artifact_roles(lines: list[Line], hz_per_point: float) -> list[str]:
    """``"sample"`` or ``"artifact"`` for each line (spikes, humps, phase lobes)."""
    roles = ["sample"] * len(lines)
    if not lines:
        return roles
    strong = [ln.width for ln in lines if ln.prominence > 0.5 * abs(ln.height)]
    typical = float(np.median(strong)) if strong else float(np.median([ln.width for ln in lines]))
    for i, ln in enumerate(lines):
        if ln.width <= 1.05 and typical > 2.0:
            roles[i] = "artifact"  # a one-point spike where real lines span several
        elif ln.width * hz_per_point > 50.0 and ln.width > 8.0 * typical:
            roles[i] = "artifact"  # a baseline hump
    for i, ln in enumerate(lines):
        for big in lines:
            d = abs(big.pos - ln.pos) * hz_per_point
            if (
                _SATELLITE_HZ[0] <= d <= _SATELLITE_HZ[1]
                and abs(ln.height) < _SATELLITE_FRACTION * abs(big.height)
                and np.sign(big.height) == np.sign(ln.height)
            ):
                roles[i] = "artifact"  # a 13C-13C satellite or spinning sideband
                break
    _mark_ripples(lines, roles, hz_per_point)
    # symmetric pairs of weak lines around a strong one: modulation/spinning sidebands
    pos = np.array([ln.pos for ln in lines]) * hz_per_point
    amp = np.array([abs(ln.height) for ln in lines])
    for big_h, big_pos in zip(amp, pos, strict=True):
        weak = np.flatnonzero(
            (amp < _SATELLITE_FRACTION * big_h) & (np.abs(pos - big_pos) <= _SIDEBAND_MAX_HZ)
        )
        right = weak[pos[weak] > big_pos]
        left = weak[pos[weak] < big_pos]
        if right.size == 0 or left.size == 0:
            continue
        da = pos[right] - big_pos
        db = big_pos - pos[left]
        ok = np.abs(da[:, None] - db[None, :]) < np.maximum(1.0, 0.01 * da)[:, None]
        for r, q in zip(*np.nonzero(ok), strict=True):
            roles[int(right[r])] = roles[int(left[q])] = "artifact"
    for i, ln in enumerate(lines):
        for j in (i - 2, i - 1, i + 1, i + 2):
            if not 0 <= j < len(lines):
                continue
            big = lines[j]
            near = abs(ln.pos - big.pos) < 3.0 * (big.width + ln.width)
            if not near:
                continue
            if np.sign(big.height) != np.sign(ln.height) and abs(ln.height) < 0.25 * abs(
                big.height
            ):
                roles[i] = "artifact"  # the opposite lobe of a dispersive (mis-phased) line
            elif abs(ln.height) < 0.1 * abs(big.height) and ln.width > 3.0 * max(
                typical, big.width
            ):
                roles[i] = "artifact"  # a broad foot or shoulder under a sharp line
        if ln.width > 4.0 * typical and any(
            abs(big.height) > 20.0 * abs(ln.height)
            and abs(big.pos - ln.pos) < 10.0 * ln.width
            and big.width < 0.5 * ln.width
            for big in lines
        ):
            roles[i] = "artifact"  # the wide skirt of a much stronger sharp line
    return roles


def _mark_isotopologues(
    lines: list[Line],
    roles: list[str],
    used: set[int],
    group: list[int],
    sig: SolventSignal,
    at: Callable[[float], float],
    mhz: float,
) -> None:
    """Label as solvent the weak lines of the solvent's partly protonated isotopologues.

    CHCl3 in CDCl3, CHD2 in a CD3 solvent: a deuterium replaced by protium moves
    the carbon ~0.2–0.3 ppm downfield (one-bond isotope shift; from memory), and
    those lines, and the solvent line's own satellites, lie just beside it.  Lines
    from the multiplet's low edge to 0.45 ppm above its high edge, weaker than a
    quarter of the strongest solvent line, are taken for them.
    """
    centre_lines = [at(lines[i].pos) for i in group]
    top = max(abs(lines[i].height) for i in group)
    span = (len(sig.pattern) // 2) * sig.j_hz / mhz
    lo = min(centre_lines) - 0.05 - (0.0 if span else 0.3)
    hi = max(centre_lines) + 0.45
    for i, ln in enumerate(lines):
        if i in used:
            continue
        if lo <= at(ln.pos) <= hi and abs(ln.height) < 0.25 * top:
            roles[i] = "solvent"


def _mark_ripples(lines: list[Line], roles: list[str], hz_per_point: float) -> None:
    """Label as artefacts evenly spaced runs of weak lines near a strong line.

    A FID cut off before it has decayed gives each line sinc side lobes about
    1/AQ Hz apart (AQ the acquisition time), decaying slowly away from the line.
    Three weak lines of one sign in arithmetic progression (spacing 0.5–25 Hz,
    within 10 % of it or half a point) are taken for such lobes; "weak" is below
    25 % of the strongest line within 30 spacings, or below 5 % of one within
    ``_RIPPLE_REACH_HZ``.
    """
    n = len(lines)
    if n < 4:
        return
    pos_hz = np.array([ln.pos for ln in lines]) * hz_per_point
    h = np.array([abs(ln.height) for ln in lines])
    sign = np.sign([ln.height for ln in lines])
    far = np.zeros(n, dtype=bool)
    for i in range(n):
        near = np.abs(pos_hz - pos_hz[i]) < _RIPPLE_REACH_HZ
        far[i] = h[i] < 0.05 * h[near].max()
    for a in range(n):  # lines are sorted by position
        stop = int(np.searchsorted(pos_hz, pos_hz[a] + 25.0, side="right"))
        for b in range(a + 1, stop):
            d = pos_hz[b] - pos_hz[a]
            if d < 0.5 or sign[a] != sign[b]:
                continue
            target = pos_hz[b] + d
            tol = max(0.5 * hz_per_point, 0.1 * d)
            lo = int(np.searchsorted(pos_hz, target - tol))
            hi = int(np.searchsorted(pos_hz, target + tol))
            c = [k for k in range(lo, hi) if sign[k] == sign[a]]
            if not c:
                continue
            trio = [a, b, c[0]]
            around = np.abs(pos_hz - pos_hz[b]) < 30.0 * d
            if all(far[k] for k in trio) or all(h[k] < 0.25 * h[around].max() for k in trio):
                for k in trio:
                    roles[k] = "artifact"


def _mark_protonated_solvent(
    lines: list[Line],
    roles: list[str],
    key: str,
    at: Callable[[float], float],
    mhz: float,
) -> None:
    """In an edited spectrum, label the weak lines of the solvent's protonated isotopologue.

    DEPT shows no CDn carbon, but CHCl3 (in CDCl3) or CHD2 (in a CD3 solvent) is a
    protonated carbon ~0.2–0.3 ppm above the solvent (from memory).  Lines from the
    solvent multiplet's low edge to 0.45 ppm above its high edge, weaker than a
    quarter of the median strong line, are labelled ``"solvent"``.
    """
    heights = np.array([abs(ln.height) for ln in lines])
    if heights.size == 0:
        return
    typical = float(np.median(heights[heights >= 0.1 * heights.max()]))
    for sig in solvent_signals(key):
        if sig.deuterium == 0:
            continue
        span = (len(sig.pattern) // 2) * sig.j_hz / mhz
        lo, hi = sig.ppm - span - 0.05, sig.ppm + span + 0.45
        for i, ln in enumerate(lines):
            if roles[i] == "sample" and lo <= at(ln.pos) <= hi and heights[i] < 0.25 * typical:
                roles[i] = "solvent"


def _mark_weak(lines: list[Line], roles: list[str], used: set[int], peaks: list[Peak]) -> None:
    """Mark as ``"impurity"`` the sample lines far weaker than the typical one."""
    solvent_h = [abs(p.height) for p in peaks if p.role == "solvent"]
    cand = [i for i in range(len(lines)) if roles[i] == "sample" and i not in used]
    if len(cand) < 3:
        return
    hs = np.array([abs(lines[i].height) for i in cand])
    strong = hs[hs >= 0.1 * hs.max()]
    typical = float(np.median(strong))
    del solvent_h
    for i, h in zip(cand, hs, strict=True):
        if h < _IMPURITY_FRACTION * typical:
            roles[i] = "impurity"


def _area(y: np.ndarray, lo: float, hi: float, step: float) -> float:
    a, b = max(0, int(math.floor(lo))), min(y.size, int(math.ceil(hi)) + 1)
    return float(np.sum(y[a:b]) * abs(step))


def _merge(
    group: list[Line],
    y: np.ndarray,
    at: Callable[[float], float],
    hz_per_point: float,
    sigma: float,
    role: str,
    pattern: str | None,
    all_pos: np.ndarray,
) -> Peak:
    """One Peak from one or more lines (a multiplet: centre, lines, summed area).

    ``all_pos``: sorted positions (points) of every picked line, for clipping.
    """
    to_ppm = at
    group = sorted(group, key=lambda ln: ln.pos)
    top = max(group, key=lambda ln: abs(ln.height))
    step = to_ppm(1.0) - to_ppm(0.0)
    area = 0.0
    for ln in group:  # each line over ±3 widths, clipped half-way to its neighbours
        lo, hi = ln.pos - 3 * ln.width, ln.pos + 3 * ln.width
        k = int(np.searchsorted(all_pos, ln.pos))
        if k > 0:
            lo = max(lo, 0.5 * (all_pos[k - 1] + ln.pos))
        nxt = k + 1 if k < all_pos.size and all_pos[k] == ln.pos else k
        if nxt < all_pos.size:
            hi = min(hi, 0.5 * (all_pos[nxt] + ln.pos))
        area += _area(y, lo, hi, step)
    if len(group) == 1:
        centre = float(to_ppm(top.pos))
        lines_ppm: tuple[float, ...] = ()
    else:
        # first-order multiplets are symmetric: the centre is the mean line position
        # (a height-weighted mean would follow the noise on the outer lines)
        centre = float(to_ppm(float(np.mean([ln.pos for ln in group]))))
        lines_ppm = tuple(float(to_ppm(ln.pos)) for ln in group)
    return Peak(
        ppm=centre,
        height=float(top.height),
        area=area,
        snr=abs(float(top.height)) / sigma,
        width_hz=float(top.width * hz_per_point),
        lines=lines_ppm,
        pattern=pattern,
        role=role,
    )


def _decoupling_residue(lines: list[Line], used: set[int], group: Sequence[int]) -> bool:
    """Tell whether a coupled multiplet is the residue of one carbon's decoupled line.

    With heteronuclear decoupling that is not quite complete (e.g. 19F decoupling
    over a wide offset range), a carbon shows a tall singlet and, around it, a weak
    copy of its coupled multiplet.  When a line of the same sign at least three times
    taller than every line of the multiplet sits at the multiplet's centre (within two
    line widths), the multiplet belongs to that carbon and is not a carbon of its own.
    Three times: a real coupled carbon's multiplet lines are each as tall as or taller
    than any accidental line at its centre would need to be to hide it (common
    practice of reading decoupled spectra, no tabulated source).
    """
    members = [lines[i] for i in group]
    centre = float(np.mean([ln.pos for ln in members]))
    top = max(abs(ln.height) for ln in members)
    sign = np.sign(members[0].height)
    reach = 2.0 * max(ln.width for ln in members)
    for i, ln in enumerate(lines):
        if i in used or i in group:
            continue
        if (
            abs(ln.pos - centre) <= reach
            and np.sign(ln.height) == sign
            and abs(ln.height) >= 3.0 * top
        ):
            return True
    return False


def _solvent_group(
    lines: list[Line],
    used: set[int],
    sig: SolventSignal,
    at: Callable[[float], float],
    hz_per_point: float,
) -> tuple[list[int], float, float] | None:
    """Find the lines forming the solvent signal ``sig`` near its shift (indices).

    A multiplet: lines of one sign at the pattern's positions (±25 % of J) around
    a centre line within 0.15 ppm of the published shift, heights fitting the
    pattern; weak outer lines may be missing.  A singlet (unresolved splitting):
    the strongest line within 0.3 ppm.
    """
    to_ppm = at
    cands = [
        i for i, ln in enumerate(lines) if i not in used and abs(to_ppm(ln.pos) - sig.ppm) < 0.6
    ]
    if not cands:
        return None
    if sig.deuterium == 0:
        near = [k for k in cands if abs(to_ppm(lines[k].pos) - sig.ppm) < 0.3]
        if not near:
            return None
        top = max(near, key=lambda k: abs(lines[k].height))
        return [top], lines[top].pos, 0.0
    pattern = sig.pattern
    n = len(pattern)
    best: tuple[float, list[int], float, float] | None = None
    for c in cands:
        if abs(to_ppm(lines[c].pos) - sig.ppm) > 0.15:
            continue
        sign = np.sign(lines[c].height)
        jp = sig.j_hz / hz_per_point
        chosen: list[int] = []
        for k in range(n):
            expect = lines[c].pos + (k - n // 2) * jp
            near = [
                i
                for i in cands
                if np.sign(lines[i].height) == sign and abs(lines[i].pos - expect) < 0.25 * jp
            ]
            if near:
                chosen.append(min(near, key=lambda i: abs(lines[i].pos - expect)))
        if len(chosen) < min(n, 3) or len(set(chosen)) != len(chosen):
            continue
        # missing weak outer lines are allowed; fit the lines we have
        ks = [round((lines[i].pos - lines[c].pos) / jp) + n // 2 for i in chosen]
        h = np.array([abs(lines[i].height) for i in chosen])
        misfit = pattern_fit(h, tuple(pattern[k] for k in ks))
        if misfit >= 0.4 and abs(to_ppm(lines[c].pos) - sig.ppm) < 0.05:
            # one line under a sample line: the solvent takes the others, the sample
            # line stays a carbon of its own
            misfit, keep = _fit_with_one_overlapped(h, tuple(pattern[k] for k in ks))
            chosen = [i for i, k in zip(chosen, keep, strict=True) if k]
            ks = [k for k, kk in zip(ks, keep, strict=True) if kk]
        if misfit < 0.4 and (best is None or misfit < best[0]):
            # centre from each line's place in the pattern (robust to a missing line)
            pos = np.array([lines[i].pos for i in chosen])
            kk = np.array(ks, dtype=float)
            j_pts = float((pos.max() - pos.min()) / (kk.max() - kk.min())) if np.ptp(kk) else jp
            centre = float(np.mean(pos - (kk - n // 2) * j_pts))
            best = (misfit, chosen, centre, j_pts)
    return None if best is None else (best[1], best[2], best[3] * hz_per_point)


def _deuterium_groups(
    lines: list[Line], roles: list[str], used: set[int], hz_per_point: float, thr: float
) -> list[tuple[list[int], float]]:
    """C–D multiplets of deuterated sample carbons: CD3 septets, CD2 quintets, CD triplets.

    Spin-1 first-order patterns (1:1:1, 1:2:3:2:1, 1:3:6:7:6:3:1) with ¹J(C,D) in
    ``_CD_J_HZ`` (¹J(C,H)/6.51 for ¹J(C,H) 120–250 Hz; the ratio is γH/γD, the
    couplings from memory); outer lines the pattern puts below the threshold may be
    missing.  Larger multiplets are tried first; each line joins one group.
    """
    free = [i for i in range(len(lines)) if i not in used and roles[i] == "sample"]
    pos = np.array([ln.pos for ln in lines]) * hz_per_point
    out: list[tuple[list[int], float]] = []
    taken: set[int] = set()
    for nd in (3, 2, 1):
        pattern = binomial_pattern(nd, spin2=True)
        cands: list[tuple[float, list[int], float]] = []
        for c in free:
            if c in taken:
                continue
            for b in free:
                d = pos[b] - pos[c]
                if not _CD_J_HZ[0] <= d <= _CD_J_HZ[1]:
                    continue
                if np.sign(lines[b].height) != np.sign(lines[c].height):
                    continue
                tol = max(1.0, 0.05 * d)
                group: list[int] = []
                ks: list[int] = []
                scale = abs(lines[c].height) / max(pattern)
                ok = True
                for k in range(-nd, nd + 1):
                    near = [
                        i
                        for i in free
                        if i not in taken
                        and abs(pos[i] - (pos[c] + k * d)) < tol
                        and np.sign(lines[i].height) == np.sign(lines[c].height)
                    ]
                    if near:
                        group.append(min(near, key=lambda i: abs(pos[i] - (pos[c] + k * d))))
                        ks.append(k + nd)
                    elif scale * pattern[k + nd] > thr:
                        ok = False
                        break
                if not ok or len(group) < 3 or len(set(group)) != len(group):
                    continue
                hs = np.array([abs(lines[i].height) for i in group])
                misfit = pattern_fit(hs, tuple(pattern[k] for k in ks))
                if misfit < 0.25:
                    cands.append((misfit, group, float(d)))
        for _misfit, group, d in sorted(cands, key=lambda t: t[0]):
            if any(i in taken for i in group):
                continue
            taken.update(group)
            out.append((group, d))
    return out


def _coupled_groups(
    lines: list[Line],
    roles: list[str],
    used: set[int],
    nucleus: str,
    hz_per_point: float,
    sigma_lines: float,
) -> Iterable[tuple[list[int], float]]:
    """Multiplets from coupling to one or three spin-½ heteronuclei (C–F, C–P).

    Quartets (CF3, 1:3:3:1) first, then triplets (CF2, 1:2:1, C–F only), then
    doublets of about equal lines;
    each line joins one group; the best-fitting candidates are taken first.
    Doublet lines must have the same width (within 1.5×) and height (within 25 %,
    or 40 % below SNR 15): lines of one carbon share both.
    """
    ranges = COUPLING_RANGES_HZ[nucleus]
    free = [i for i in range(len(lines)) if i not in used and roles[i] == "sample"]
    taken: set[int] = set()
    out: list[tuple[list[int], float]] = []
    sizes = (4, 3, 2) if nucleus == "19F" else (2,)
    for size in sizes:
        pattern = binomial_pattern(size - 1, spin2=False)
        cands: list[tuple[float, list[int], float]] = []
        for a in free:
            for b in free:
                if b <= a:
                    continue
                d = (lines[b].pos - lines[a].pos) * hz_per_point
                if not any(lo <= d <= hi for lo, hi in ranges):
                    continue
                if np.sign(lines[a].height) != np.sign(lines[b].height):
                    continue
                group = [a, b]
                if size > 2:
                    tol = max(1.0, 0.05 * d) / hz_per_point
                    for k in range(2, size):
                        expect = lines[a].pos + k * (lines[b].pos - lines[a].pos)
                        near = [i for i in free if abs(lines[i].pos - expect) < tol]
                        if not near:
                            break
                        group.append(min(near, key=lambda i: abs(lines[i].pos - expect)))
                    if len(group) < size:
                        continue
                hs = np.array([abs(lines[i].height) for i in group])
                ws = np.array([lines[i].width for i in group])
                if np.any(np.sign([lines[i].height for i in group]) != np.sign(lines[a].height)):
                    continue
                if ws.max() > 1.5 * ws.min():
                    continue  # the lines of one carbon share its width
                # ... and its height: within noise (two lines of different carbons
                # 17–35 Hz apart are common in aromatic regions)
                snr_min = float(hs.min() / sigma_lines)
                if size == 2 and hs.min() < (0.75 if snr_min > 15 else 0.6) * hs.max():
                    continue
                misfit = pattern_fit(hs, pattern)
                if size > 2 and misfit > 0.25:
                    continue
                cands.append((misfit, group, d))
        for _misfit, group, d in sorted(cands, key=lambda t: t[0]):
            if any(i in taken for i in group):
                continue
            taken.update(group)
            out.append((group, d))
        free = [i for i in free if i not in taken]
    return out
