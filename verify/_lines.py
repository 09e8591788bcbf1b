"""Private helpers shared by processing, referencing and peak picking.

Robust noise, line (local extremum) finding with sub-point positions, and the
matching of a line list against a first-order multiplet pattern.  Kept apart so
that :mod:`verify.process`, :mod:`verify.reference` and :mod:`verify.peaks` can
use them without importing each other.

References
----------
P. J. Rousseeuw, C. Croux, J. Am. Stat. Assoc. 1993, 88, 1273 (the MAD and its
consistency factor 1.4826 for normal noise).  Parabolic interpolation of a sampled
maximum: common practice (e.g. J. Keeler, *Understanding NMR Spectroscopy*, 2010).

"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]

#: MAD → standard deviation for normal noise (Rousseeuw & Croux 1993).
MAD_TO_SD = 1.4826


def robust_noise(y: npt.ArrayLike, segments: int = 64) -> float:
    """Noise standard deviation from the median of per-segment MADs.

    The array is cut into ``segments`` pieces; in each, a straight line through
    the medians of its two halves is removed (baseline roll) and the MAD taken
    (lines occupy few points of a segment and barely move it).  The median over
    segments ignores the few segments crowded with lines.  Segments that are
    exactly constant (blanked regions) are skipped.

    Parameters
    ----------
    y : array of float
        Spectrum intensities (any units).
    segments : int
        Number of segments.

    Returns
    -------
    float
        Noise SD in the units of ``y`` (0 for a constant array).

    """
    arr = np.asarray(y, dtype=np.float64)
    n = arr.size
    segments = max(1, min(segments, n // 32))
    length = n // segments
    if length < 8:
        return 0.0
    seg = arr[: segments * length].reshape(segments, length)
    m = length // 2
    a = np.median(seg[:, :m], axis=1)
    b = np.median(seg[:, m : 2 * m], axis=1)
    # straight line through (m/2, a) and (3m/2, b)
    slope = (b - a) / m
    x = np.arange(length) - m / 2
    resid = seg - (a[:, None] + slope[:, None] * x[None, :])
    mad = np.median(np.abs(resid - np.median(resid, axis=1)[:, None]), axis=1)
    mad = mad[mad > 0]
    return float(MAD_TO_SD * np.median(mad)) if mad.size else 0.0


@dataclass(frozen=True)
class Line:
    """One local extremum: sub-point position and shape numbers.

    Attributes are in points (index units) except ``height`` (signed, spectrum
    units); ``width`` is the full width at half height in points.
    """

    index: int
    pos: float
    height: float
    width: float
    prominence: float


def _half_width(y: FloatArray, i: int, level: float, step: int, limit: int) -> float:
    """Distance in points from apex ``i`` to where ``y`` falls below ``level`` (interpolated)."""
    n = y.size
    j = i
    while 0 <= j + step < n and abs(j + step - i) <= limit and y[j + step] > level:
        j += step
    k = j + step
    if not 0 <= k < n:
        return float(abs(j - i))
    denom = y[j] - y[k]
    frac = (y[j] - level) / denom if denom > 0 else 0.0
    return abs(j - i) + float(min(max(frac, 0.0), 1.0))


def find_lines(
    y: npt.ArrayLike,
    threshold: float,
    *,
    min_prominence: float = 0.0,
    sign: int = 1,
    wlen: int | None = None,
) -> list[Line]:
    """Local maxima of ``sign·y`` above ``threshold`` with positions and widths.

    Parameters
    ----------
    y : array of float
        Intensities.
    threshold : float
        Minimum of ``sign·y`` at the apex (spectrum units, > 0).
    min_prominence : float
        Minimum prominence (height above the higher of the two surrounding valleys,
        as in ``scipy.signal.find_peaks``).
    sign : {1, -1}
        Look for upright (1) or inverted (-1) lines.
    wlen : int, optional
        Window (points) within which the prominence is measured, so that it says
        how far a line rises above its *local* surroundings.

    Returns
    -------
    list of Line
        Heights carry the sign of the data.

    """
    from scipy.signal import find_peaks, peak_prominences

    arr = sign * np.asarray(y, dtype=np.float64)
    idx, _ = find_peaks(arr, height=threshold)
    if idx.size == 0:
        return []
    prom = peak_prominences(arr, idx, wlen=wlen)[0]
    keep = prom >= min_prominence
    lines = []
    for i, p in zip(idx[keep], prom[keep], strict=True):
        i = int(i)
        pos = float(i)
        if 0 < i < arr.size - 1:
            a, b, c = arr[i - 1], arr[i], arr[i + 1]
            den = a - 2 * b + c
            if den < 0:
                pos = i + 0.5 * (a - c) / den
        level = 0.5 * arr[i]
        limit = 5000
        width = _half_width(arr, i, level, -1, limit) + _half_width(arr, i, level, 1, limit)
        # parabolic apex height
        h = float(arr[i])
        if 0 < i < arr.size - 1:
            a, b, c = arr[i - 1], arr[i], arr[i + 1]
            den = a - 2 * b + c
            if den < 0:
                h = float(b - 0.125 * (a - c) ** 2 / den)
        lines.append(Line(i, pos, sign * h, width, float(p)))
    return lines


def binomial_pattern(spins: int, spin2: bool) -> tuple[float, ...]:
    """Relative first-order intensities for coupling to ``spins`` equivalent nuclei.

    ``spin2`` selects spin-1 nuclei (²H: 1:1:1, 1:2:3:2:1, 1:3:6:7:6:3:1 …);
    otherwise spin-½ (binomial 1:1, 1:2:1, 1:3:3:1 …).
    """
    base = np.array([1.0, 1.0, 1.0]) if spin2 else np.array([1.0, 1.0])
    out = np.array([1.0])
    for _ in range(spins):
        out = np.convolve(out, base)
    return tuple(float(v) for v in out)


def pattern_fit(heights: FloatArray, pattern: tuple[float, ...]) -> float:
    """Relative misfit of line heights to a pattern (0 perfect), scale fitted.

    Returns ``‖h - a·p‖ / ‖h‖`` with ``a`` the least-squares scale.
    """
    h = np.asarray(heights, dtype=np.float64)
    p = np.asarray(pattern, dtype=np.float64)
    a = float(h @ p / (p @ p))
    norm = float(np.linalg.norm(h))
    return float(np.linalg.norm(h - a * p) / norm) if norm > 0 else math.inf


@dataclass(frozen=True)
class MultipletMatch:
    """A first-order multiplet found in a spectrum.

    ``centre_ppm`` and ``lines_ppm`` in ppm, ``heights`` signed in spectrum units,
    ``j_hz`` the fitted spacing in Hz, ``misfit`` from :func:`pattern_fit`, ``sign``
    +1 for upright and -1 for inverted lines, ``indices`` the apex indices.
    """

    centre_ppm: float
    lines_ppm: tuple[float, ...]
    heights: tuple[float, ...]
    j_hz: float
    misfit: float
    sign: int
    indices: tuple[int, ...]


def _local_apex(arr: FloatArray, centre: float, half: int) -> tuple[int, float]:
    """Index and parabolic sub-point position of the maximum of ``arr`` near ``centre``."""
    lo = max(1, int(round(centre)) - half)
    hi = min(arr.size - 1, int(round(centre)) + half + 1)
    if hi <= lo:
        return int(min(max(round(centre), 0), arr.size - 1)), centre
    i = lo + int(np.argmax(arr[lo:hi]))
    pos = float(i)
    if 0 < i < arr.size - 1:
        a, b, c = arr[i - 1], arr[i], arr[i + 1]
        den = a - 2 * b + c
        if den < 0:
            pos = i + 0.5 * (a - c) / den
    return i, pos


def _fit_with_one_overlapped(
    h: FloatArray, pattern: tuple[float, ...]
) -> tuple[float, npt.NDArray[np.bool_]]:
    """Misfit (+0.1 penalty) when one line, taller than predicted, is left out."""
    p = np.asarray(pattern, dtype=np.float64)
    best = (math.inf, np.ones(h.size, dtype=bool))
    for k in range(h.size):
        keep = np.ones(h.size, dtype=bool)
        keep[k] = False
        if keep.sum() < 2:
            continue
        scale = float(h[keep] @ p[keep] / (p[keep] @ p[keep]))
        if scale <= 0 or h[k] < 1.3 * scale * p[k]:
            continue  # an overlapped line can only be taller
        rest = pattern_fit(h[keep], tuple(p[keep]))
        if rest < 0.15 and rest + 0.1 < best[0]:
            best = (rest + 0.1, keep)
    return best


def find_multiplet(
    ppm: FloatArray,
    y: FloatArray,
    sigma: float,
    mhz: float,
    centre_ppm: float,
    window_ppm: float,
    j_hz: float,
    pattern: tuple[float, ...],
    *,
    j_tol: float = 0.25,
    max_misfit: float = 0.35,
    min_snr: float = 6.0,
    overlap_ppm: float = 0.0,
) -> MultipletMatch | None:
    """Best first-order multiplet of the given pattern centred within a window.

    Every local extremum (either sign) within ``window_ppm`` of ``centre_ppm`` is
    tried as the centre line (patterns have an odd number of lines; for a singlet
    the strongest line wins); the spacing is taken from a neighbouring extremum
    within ``j_hz·(1 ± j_tol)``, or ``j_hz`` itself.  Each line must be a local
    extremum of the same sign near its expected position (±15 % of J), the outer
    lines may be missing only where the pattern makes them weaker than the noise
    threshold, and the heights must fit the pattern (``misfit ≤ max_misfit``).

    Parameters
    ----------
    ppm, y : arrays of float
        Axis (ppm, either direction, linear) and intensities.
    sigma : float
        Noise SD of ``y``.
    mhz : float
        Observe frequency in MHz (Hz = ppm × MHz).
    centre_ppm, window_ppm : float
        Where the centre is expected and how far it may be from there (ppm).
    j_hz : float
        Expected spacing in Hz.
    pattern : tuple of float
        Relative line intensities, e.g. ``(1, 1, 1)``.
    j_tol : float
        Allowed relative deviation of the spacing from ``j_hz``.
    max_misfit : float
        Largest accepted height misfit (see :func:`pattern_fit`).
    min_snr : float
        Lines must exceed this many noise SDs.
    overlap_ppm : float
        When > 0, one line may be taller than the pattern says (a sample line on
        top of it) if the others fit it closely; such a match is accepted only
        within this distance (ppm) of ``centre_ppm`` and ranks below clean ones.

    Returns
    -------
    MultipletMatch or None

    """
    n_lines = len(pattern)
    step = float(ppm[1] - ppm[0])  # ppm per point, signed
    pts_per_hz = 1.0 / (abs(step) * mhz)

    def to_index(p: float) -> float:
        return (p - float(ppm[0])) / step

    c_idx = to_index(centre_ppm)
    half_win = abs(window_ppm / step)
    lo = max(1, int(c_idx - half_win))
    hi = min(y.size - 1, int(c_idx + half_win) + 1)
    if hi - lo < 3:
        return None
    best: MultipletMatch | None = None
    centre_k = n_lines // 2
    for sign in (1, -1):
        arr = sign * y
        seg = arr[lo - 1 : hi + 1]
        inner = seg[1:-1]
        apex = np.flatnonzero((inner > seg[:-2]) & (inner >= seg[2:]) & (inner > min_snr * sigma))
        apex = apex + lo
        if n_lines == 1:
            if apex.size:
                i = int(apex[np.argmax(arr[apex])])
                _, pos = _local_apex(arr, i, 1)
                p = float(ppm[0] + pos * step)
                cand = MultipletMatch(p, (p,), (float(y[i]),), 0.0, 0.0, sign, (i,))
                if best is None or abs(cand.heights[0]) > abs(best.heights[0]):
                    best = cand
            continue
        for a_np in apex:
            a = int(a_np)
            spacings = {j_hz}
            for b in apex:
                d = abs(int(b) - a) / pts_per_hz
                if abs(d - j_hz) <= j_tol * j_hz:
                    spacings.add(d)
            _, apos = _local_apex(arr, float(a), 1)
            for j in spacings:
                jp = j * pts_per_hz
                half = max(1, int(round(0.15 * jp)))
                idxs, poss, hs = [], [], []
                ok = True
                for k in range(n_lines):
                    expect = apos + (k - centre_k) * jp
                    if not 1 <= expect < arr.size - 1:
                        ok = False
                        break
                    i, pos = _local_apex(arr, expect, half)
                    idxs.append(i)
                    poss.append(pos)
                    hs.append(float(arr[i]))
                if not ok:
                    continue
                h = np.array(hs)
                scale = float(h @ np.array(pattern) / (np.array(pattern) @ np.array(pattern)))
                # a line the pattern makes visible must be a true local extremum
                for k, i in enumerate(idxs):
                    visible = scale * pattern[k] > min_snr * sigma
                    is_apex = arr[i] >= arr[i - 1] and arr[i] >= arr[i + 1]
                    if visible and not is_apex:
                        ok = False
                        break
                if not ok or scale <= 0:
                    continue
                misfit = pattern_fit(h, pattern)
                keep = np.ones(n_lines, dtype=bool)
                if misfit > max_misfit and overlap_ppm > 0:
                    misfit, keep = _fit_with_one_overlapped(h, pattern)
                if misfit > max_misfit:
                    continue
                lines_ppm = tuple(float(ppm[0] + p * step) for p in poss)
                ks = np.flatnonzero(keep)
                kept = np.array(poss)[ks]
                spacing = np.diff(kept) / np.diff(ks) / pts_per_hz
                j_fit = float(np.mean(np.abs(spacing)))
                if np.any(np.abs(np.abs(spacing) - j_fit) > max(0.15 * j_fit, 1.0)):
                    continue
                # centre from the unobstructed lines: each says where the centre is
                jp_fit = float(np.mean(spacing)) * pts_per_hz
                centre_pt = float(np.mean(kept - (ks - centre_k) * jp_fit))
                centre = float(ppm[0] + centre_pt * step)
                if not keep.all() and abs(centre - centre_ppm) > overlap_ppm:
                    continue
                cand = MultipletMatch(
                    centre,
                    lines_ppm,
                    tuple(float(sign * v) for v in h),
                    j_fit,
                    misfit,
                    sign,
                    tuple(idxs),
                )
                if best is None or (misfit, -scale) < (best.misfit, -abs(best.heights[centre_k])):
                    best = cand
    return best


def _whittaker(y: FloatArray, w: FloatArray, lam: float) -> FloatArray:
    """Weighted Whittaker smoother, second differences (Eilers 2003), banded solve."""
    from scipy.linalg import solveh_banded

    n = y.size
    if n < 4:
        return np.full(n, float(np.average(y, weights=w)) if w.sum() else 0.0)
    # bands of D'D for the second-difference matrix D, upper form for solveh_banded
    main = np.full(n, 6.0)
    main[[0, -1]] = 1.0
    main[[1, -2]] = 5.0
    off1 = np.full(n, -4.0)
    off1[[1, -1]] = -2.0
    off2 = np.ones(n)
    bands = np.zeros((3, n))
    bands[0, 2:] = lam * off2[2:]
    bands[1, 1:] = lam * off1[1:]
    bands[2] = lam * main + w + 1e-12
    return np.asarray(solveh_banded(bands, w * y), dtype=np.float64)


def smooth_baseline(y: FloatArray, blocks: int = 256, lam: float = 50.0) -> FloatArray:
    """Smooth baseline through the block medians of signal-free points (symmetric).

    The spectrum is cut into ``blocks`` equal blocks; the median of each block's
    points that are not signal is smoothed with a weighted Whittaker smoother
    (second differences, ``lam``) and interpolated back.  Signal is
    ``|y - baseline| > 4σ`` (either sign: negative DEPT lines are masked exactly
    like positive ones), widened so that line wings stay out; three refinements.

    Parameters
    ----------
    y : array of float
        Real spectrum.
    blocks : int
        Number of blocks (fewer for short arrays).
    lam : float
        Smoothing weight in block units.

    Returns
    -------
    array of float
        Baseline, same shape as ``y``.

    References
    ----------
    P. H. C. Eilers, Anal. Chem. 2003, 75, 3631 (Whittaker smoother).

    """
    n = y.size
    blocks = min(blocks, max(8, n // 16))
    size_b = n // blocks
    edges = np.arange(blocks + 1) * size_b
    centres = 0.5 * (edges[:-1] + edges[1:] - 1)
    sigma = robust_noise(y)
    base = np.zeros(n)
    if sigma <= 0:
        return base
    grow = max(3, n // (blocks * 8))
    mask = np.zeros(n, dtype=bool)  # first pass: plain block medians (lines are narrow)
    for it in range(4):
        if it:
            resid = np.abs(y - base) > 4.0 * sigma
            # widen the mask so that line wings are not taken for baseline
            mask = np.convolve(resid.astype(float), np.ones(2 * grow + 1), mode="same") > 0
        cut = edges[-1]
        vals = np.where(mask[:cut], np.nan, y[:cut]).reshape(blocks, size_b)
        free = np.sum(~np.isnan(vals), axis=1)
        wts = (free >= max(4, size_b // 5)).astype(float)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN blocks
            med = np.nan_to_num(np.nanmedian(vals, axis=1))
        if wts.sum() < 4:
            break
        smooth = _whittaker(med, wts, lam)
        base = np.interp(np.arange(n), centres, smooth)
    return base
