"""Process a raw FID into a phased, baseline-corrected spectrum on a ppm axis.

The stage is pure: a :class:`~verify.model.Fid` goes in, a new
:class:`~verify.model.Spectrum` comes out, and every step taken is written to its
``provenance``.  Steps, in order:

1. Exponential apodization (line broadening ``lb`` Hz), counted from the true
   time zero (the digital-filter group delay), and, for analogue data only, the
   first point halved (Otting et al. 1986).
2. Zero-fill to the next power of two times ``zero_fill``, FFT (numpy's sign
   convention: a line above the carrier frequency appears at a higher ppm).
3. Digital-filter correction as a first-order phase ``exp(+2πi k g / N)`` for the
   group delay ``g`` (complex points), ``k`` the signed frequency index.  This is
   the Fourier shift theorem applied exactly, fractional part included; it is the
   same as a circular shift of the zero-filled FID, so no point is discarded and
   the filter's pre-response lands in the zero-filled tail where it belongs
   (circularly just before time zero) instead of being cut off.
4. A smooth complex baseline is removed from the real and imaginary parts (it
   commutes with the phase rotation), then the phase ``p0 + p1·x`` (x the
   frequency as a fraction of the spectral width, pivot at the carrier) is fitted
   to the phases of the integrated isolated peak regions by circular regression
   (see :func:`_fit_phase`).  In the sign-free mode (DEPT/APT) each region's phase
   counts modulo 180°, so an inverted line pulls no harder than an upright one and
   the overall sign is left for the classification stage; for the broadband
   carbon spectrum the phase counts modulo 360° and the majority of the peak area
   is then made positive.
5. Baseline: a smooth curve through the block medians of the points that are
   not signal (signal masked by ``|y - baseline| > 4σ``, symmetric, so negative
   lines are masked exactly like positive ones), refined three times
   (:func:`verify._lines.smooth_baseline`).

Why not an entropy autophase (Chen et al. 2002): it rewards a spectrum whose
largest lines are upright and so turns a DEPT-135 whose CH2 lines dominate upside
down.  The peak-region fit uses only where the lines are, is sign-free by
construction when the angles are doubled, and on the shared raw FIDs reproduces
the instrument's peak positions within 0.012 ppm (tests/test_process.py).

References
----------
G. Otting, H. Widmer, G. Wagner, K. Wüthrich, J. Magn. Reson. 1986, 66, 187
(first-point scaling).  J. Keeler, *Understanding NMR Spectroscopy*, 2nd ed.,
Wiley 2010, ch. 5 (apodization, zero filling, first-order phase of a time shift).
P. H. C. Eilers, Anal. Chem. 2003, 75, 3631 (Whittaker smoother used for the
baseline curve).  Peak-region phasing by the phase of the integrated complex line
follows from the symmetry of the Lorentzian dispersion (its integral over a
symmetric window is zero); common practice.

"""

from __future__ import annotations

import math
import warnings
from dataclasses import replace
from typing import Any

import numpy as np
import numpy.typing as npt

from verify._lines import robust_noise, smooth_baseline
from verify.errors import CtallyWarning, ProcessingError, UsageError
from verify.model import Fid, Spectrum

__all__ = ["prepare", "process_fid"]

#: Experiments whose lines may legitimately be negative: phase sign-free by default.
SIGN_FREE_EXPERIMENTS = frozenset({"dept135", "apt", "dept45"})

FloatArray = npt.NDArray[np.float64]
ComplexArray = npt.NDArray[np.complex128]


def process_fid(
    fid: Fid,
    *,
    line_broadening_hz: float = 1.0,
    zero_fill: int = 2,
    phase: str | tuple[float, float] = "auto",
    sign_free: bool | None = None,
) -> Spectrum:
    """Turn a raw FID into a processed spectrum.

    Parameters
    ----------
    fid : Fid
        Raw complex FID, digital-filter delay still present (``fid.group_delay``
        complex points).
    line_broadening_hz : float
        Exponential line broadening in Hz (1 Hz suits carbon: about the natural
        line width, a good signal-to-noise/resolution trade).
    zero_fill : int
        Final size is the next power of two of the FID length times this (≥ 1).
    phase : "auto" or (p0, p1)
        Automatic phasing, or zero- and first-order phase in degrees (first order
        across the full spectral width, pivot at the carrier).
    sign_free : bool or None
        Phase without assuming the lines are positive; None means yes for
        ``dept135``, ``dept45`` and ``apt`` and no otherwise.

    Returns
    -------
    Spectrum
        Real part on a descending ppm axis (``ppm = carrier_ppm + Hz / observe_mhz``),
        with ``provenance`` holding the processing parameters and the phase used
        (``provenance["phase"] = {"p0": deg, "p1": deg, "method": ...}``).

    Raises
    ------
    UsageError
        For a negative line broadening, a zero-fill below 1, or an unknown phase mode.
    ProcessingError
        When the FID holds no signal at all (all points zero).

    References
    ----------
    See the module docstring.

    """
    if not (math.isfinite(line_broadening_hz) and line_broadening_hz >= 0):
        raise UsageError(f"line broadening must be ≥ 0 Hz, got {line_broadening_hz}")
    if int(zero_fill) != zero_fill or zero_fill < 1:
        raise UsageError(f"zero_fill must be a whole number ≥ 1, got {zero_fill}")
    if not (phase == "auto" or (isinstance(phase, tuple) and len(phase) == 2)):
        raise UsageError(f"phase must be 'auto' or a (p0, p1) pair in degrees, got {phase!r}")
    if sign_free is None:
        sign_free = fid.experiment in SIGN_FREE_EXPERIMENTS
    data = np.array(fid.data, dtype=np.complex128)
    if not np.any(data):
        raise ProcessingError("the FID holds only zeros; nothing to process", path=fid.source)

    n = data.size
    dwell = fid.dwell_s
    gd = float(fid.group_delay)
    gd_source = "file"
    if gd == 0.0:
        guess = _unreported_delay(data)
        if guess:
            gd, gd_source = float(guess), "estimated from the FID (none given)"
            warnings.warn(
                f"the FID starts with {guess} near-zero points as a digitally filtered one"
                " does, but no group delay was given; taking that delay (check the"
                " acquisition parameters)",
                CtallyWarning,
                stacklevel=2,
            )
        else:
            data[0] *= 0.5  # analogue data: first-point scaling (Otting et al. 1986)
    t = (np.arange(n) - gd) * dwell
    data *= np.exp(-math.pi * line_broadening_hz * t)

    size = (1 << max(0, (n - 1).bit_length())) * int(zero_fill)
    padded = np.zeros(size, dtype=np.complex128)
    padded[:n] = data
    spec = np.fft.fftshift(np.fft.fft(padded))
    k = np.fft.fftshift(np.fft.fftfreq(size)) * size  # signed frequency index
    spec *= np.exp(2j * math.pi * k * gd / size)
    hz = np.fft.fftshift(np.fft.fftfreq(size, dwell))
    x = k / size  # frequency as a fraction of the spectral width, -0.5 … 0.5

    hz_per_point = 1.0 / (size * dwell)
    # A smooth complex baseline (e.g. from the first points of the FID) is removed
    # from the real and imaginary parts before phasing: a linear operation that
    # commutes with the phase rotation, so the line phases are not biased by it.
    spec = spec - (smooth_baseline(spec.real) + 1j * smooth_baseline(spec.imag))
    if phase == "auto":
        p0, p1, info = _auto_phase(spec, x, hz_per_point, sign_free=bool(sign_free))
    else:
        p0, p1 = float(phase[0]), float(phase[1])
        info = {"method": "given"}
    real = (spec * np.exp(-1j * np.deg2rad(p0 + p1 * x))).real
    baseline = smooth_baseline(real)
    real = real - baseline

    ppm = fid.carrier_ppm + hz / fid.observe_mhz
    ppm, real = ppm[::-1].copy(), real[::-1].copy()  # descending ppm, as displayed

    provenance: dict[str, Any] = dict(fid.provenance)
    provenance.update(
        {
            "processed_from": "fid",
            "line_broadening_hz": float(line_broadening_hz),
            "apodization": "exponential",
            "zero_fill_points": int(size),
            "fid_points": int(n),
            "group_delay_points": gd,
            "group_delay_source": gd_source,
            "digital_filter": "first-order phase exp(+2πi k g/N) after FFT (no points lost)",
            "phase": {"p0": float(p0), "p1": float(p1), "pivot": "carrier", **info},
            "sign_free_phase": bool(sign_free),
            "baseline": "Whittaker smoother through block medians of signal-free points",
        }
    )
    return Spectrum(
        ppm=ppm,
        intensity=real,
        nucleus=fid.nucleus,
        observe_mhz=fid.observe_mhz,
        experiment=fid.experiment,
        solvent=fid.solvent,
        source=fid.source,
        provenance=provenance,
        pulse_program=fid.pulse_program,
    )


def prepare(obj: Spectrum | Fid, *, experiment: str | None = None, **kw: Any) -> Spectrum:
    """Return a processed spectrum for what a reader produced.

    Parameters
    ----------
    obj : Spectrum or Fid
        A processed spectrum (returned unchanged) or a raw FID (processed with
        :func:`process_fid`).
    experiment : str, optional
        Role of the spectrum in the sample (``"carbon"``, ``"dept135"`` …); when
        given for a FID it decides the phase mode and is set on the result.
    **kw
        Passed on to :func:`process_fid`.

    Returns
    -------
    Spectrum

    Raises
    ------
    ProcessingError
        A processed spectrum with the same value at every point (no signal and
        no noise: no measurement is that flat), or a FID of zeros.

    """
    if isinstance(obj, Spectrum):
        values = obj.intensity
        if values.size and float(values.max()) == float(values.min()):
            raise ProcessingError(
                f"the spectrum holds the same value ({float(values[0]):g}) at all"
                f" {values.size} points: no signal and no noise to work with; export it again",
                path=obj.source,
            )
        return obj
    if not isinstance(obj, Fid):
        raise UsageError(f"prepare() takes a Spectrum or a Fid, got {type(obj).__name__}")
    fid = obj if experiment is None else replace(obj, experiment=experiment)
    return process_fid(fid, **kw)


def _unreported_delay(data: ComplexArray) -> int:
    """Group delay (points) a digitally filtered FID shows by its shape, or 0.

    Such a FID stays near zero for the filter delay (tens of points) and then
    jumps up.  When the first 4 points are below 2 % of the maximum of the first
    1024 and the first point above 30 % of it lies at 8–400 points, that index is
    returned; the remainder (about a point) is left to the first-order phase fit,
    which spans ±2 points (±720°).
    """
    head = np.abs(data[: min(1024, data.size)])
    top = float(head.max())
    if top <= 0 or float(head[:4].max()) >= 0.02 * top:
        return 0
    onset = int(np.argmax(head >= 0.3 * top))
    return onset if 8 <= onset <= 400 else 0


# --------------------------------------------------------------------------- phase


def _peak_regions(
    spec: ComplexArray, hz_per_point: float, min_snr: float = 10.0, max_width_hz: float = 30.0
) -> list[tuple[int, int, int]]:
    """Isolated regions around magnitude maxima: (start, stop, apex) index triples.

    Maxima broader than ``max_width_hz`` (magnitude full width; baseline humps, not
    carbon lines) and those in the outer 2 % at either edge (filter roll-off) are
    left out.
    """
    sigma = 0.5 * (robust_noise(spec.real) + robust_noise(spec.imag))
    mag = np.abs(spec)
    if sigma <= 0:
        return []
    floor = min_snr * sigma
    inner = mag[1:-1]
    apex = np.flatnonzero((inner > mag[:-2]) & (inner >= mag[2:]) & (inner > floor)) + 1
    if apex.size == 0:
        return []
    apex = apex[np.argsort(-mag[apex])][:200]
    regions: list[tuple[int, int, int]] = []
    taken = np.zeros(mag.size, dtype=bool)
    n = mag.size
    for a_np in apex:
        a = int(a_np)
        if taken[a]:
            continue
        half = 0.5 * mag[a]
        lo = a
        while lo > 0 and mag[lo] > half and a - lo < 2000:
            lo -= 1
        hi = a
        while hi < n - 1 and mag[hi] > half and hi - a < 2000:
            hi += 1
        hw = int(max(2, (hi - lo) // 2))
        if (hi - lo) * hz_per_point > max_width_hz or not 0.02 * n < a < 0.98 * n:
            taken[lo : hi + 1] = True
            continue
        start, stop = max(0, a - 5 * hw), min(n, a + 5 * hw + 1)
        if stop - start < 7 or taken[start:stop].any():
            taken[max(0, a - hw) : a + hw + 1] = True
            continue
        taken[start:stop] = True
        regions.append((start, stop, a))
    return regions


def _region_phase(spec: ComplexArray, start: int, stop: int) -> tuple[float, float]:
    """Phase (rad) and size of the integrated line in a region, edge baseline removed."""
    seg = spec[start:stop]
    m = max(2, seg.size // 10)
    left, right = seg[:m].mean(), seg[-m:].mean()
    base = np.linspace(left, right, seg.size)
    total = complex(np.sum(seg - base))
    return math.atan2(total.imag, total.real), abs(total)


def _fit_phase(
    angles: FloatArray, x: FloatArray, w: FloatArray, fold: int
) -> tuple[float, float, float]:
    """Fit ``angle ≈ p0 + p1·x`` (modulo 2π/fold) by circular regression.

    Maximises ``|Σ w exp(i·fold·(angle - p1 x))|`` over a grid of p1 and refines;
    returns (p0, p1, agreement) with p0, p1 in radians and agreement in [0, 1].
    """
    if angles.size == 0:
        return 0.0, 0.0, 0.0
    z = w * np.exp(1j * fold * angles)
    wsum = float(np.sum(w))

    def score(p1: float) -> float:
        r = abs(np.sum(z * np.exp(-1j * fold * p1 * x))) / wsum
        return float(r) - 0.02 * (p1 / (2 * math.pi)) ** 2  # mild pull toward p1 = 0

    if angles.size < 3:
        grid = np.array([0.0])
    else:
        grid = np.deg2rad(np.arange(-720.0, 720.5, 2.0))
    scores = np.array([score(p) for p in grid])
    best = float(grid[int(np.argmax(scores))])
    if angles.size >= 3:
        from scipy.optimize import minimize_scalar

        res = minimize_scalar(
            lambda p: -score(p), bounds=(best - 0.05, best + 0.05), method="bounded"
        )
        best = float(res.x)
    total = np.sum(z * np.exp(-1j * fold * best * x))
    p0 = math.atan2(total.imag, total.real) / fold
    return p0, best, abs(total) / wsum


def _auto_phase(
    spec: ComplexArray, x: FloatArray, hz_per_point: float, *, sign_free: bool
) -> tuple[float, float, dict[str, Any]]:
    """Zero/first-order phase in degrees from the phases of isolated peak regions."""
    regions = _peak_regions(spec, hz_per_point)
    if len(regions) < 3:  # weak spectrum: take the lines down to 6σ in magnitude
        regions = _peak_regions(spec, hz_per_point, min_snr=6.0) or regions
    if not regions:
        warnings.warn(
            "no line stands out of the noise (SNR < 6); the spectrum is left unphased",
            CtallyWarning,
            stacklevel=3,
        )
        return 0.0, 0.0, {"method": "none (no peaks)", "regions": 0}
    sigma = 0.5 * (robust_noise(spec.real) + robust_noise(spec.imag))
    angles, sizes, xs = [], [], []
    for start, stop, apex in regions:
        ang, size = _region_phase(spec, start, stop)
        angles.append(ang)
        sizes.append(size / (sigma * math.sqrt(stop - start)))
        xs.append(x[apex])
    a, s, xx = np.array(angles), np.array(sizes), np.array(xs)
    w = np.minimum(s, 50.0)  # strong lines count more, but no single line rules
    fold = 2 if sign_free else 1
    p0, p1, agreement = _fit_phase(a, xx, w, fold)
    method = "peak-region phases mod 180° (sign-free)" if sign_free else "peak-region phases"
    flipped = False
    if not sign_free:
        # make the majority of the line area positive
        corr = np.exp(-1j * (p0 + p1 * xx))
        areas = [
            (spec[st:sp] * np.exp(-1j * (p0 + p1 * x[st:sp]))).real.sum()
            for (st, sp, _), _c in zip(regions, corr, strict=True)
        ]
        if float(np.sum(areas)) < 0:
            p0 += math.pi
            flipped = True
    p0_deg = (math.degrees(p0) + 180.0) % 360.0 - 180.0
    info = {
        "method": method,
        "regions": len(regions),
        "agreement": round(float(agreement), 4),
        "flipped_to_positive": flipped,
    }
    return p0_deg, math.degrees(p1), info
