"""Small helpers shared by the classification sweep: truth → PeakSets, and a tiny picker.

The tiny picker (local extrema of |y| above k noise SD, parabolic interpolation,
MAD noise) stands in for ``verify.peaks.pick_peaks`` where speed matters; it is not the
project's peak picker.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from verify.model import Peak, PeakSet, Spectrum
from verify.simulate import canonical_solvent, solvent_carbons


def tiny_pick(
    spectrum: Spectrum, experiment: str, *, threshold: float = 5.0, solvent: str | None = "CDCl3"
) -> PeakSet:
    y = np.asarray(spectrum.intensity)
    x = np.asarray(spectrum.ppm)
    noise = float(np.median(np.abs(np.diff(y))) / 0.954)
    a = np.abs(y)
    cand = (
        np.flatnonzero((a[1:-1] > a[:-2]) & (a[1:-1] >= a[2:]) & (a[1:-1] > threshold * noise)) + 1
    )
    peaks = []
    name = canonical_solvent(solvent) if solvent else None
    solvent_ppm = [c[0] for c in solvent_carbons(name)] if name else []
    groups: dict[float, list[Peak]] = {}
    for i in cand:
        if np.sign(y[i - 1]) != np.sign(y[i]) or np.sign(y[i + 1]) != np.sign(y[i]):
            continue
        lo, c, r = y[i - 1], y[i], y[i + 1]
        den = lo - 2 * c + r
        off = 0.5 * (lo - r) / den if den else 0.0
        ppm = float(x[i] + off * (x[1] - x[0]))
        h = float(c - 0.25 * (lo - r) * off)
        half = abs(h) / 2
        j = i
        while j < len(y) - 1 and abs(y[j]) > half:
            j += 1
        k = i
        while k > 0 and abs(y[k]) > half:
            k -= 1
        width = max(abs(x[j] - x[k]) * spectrum.observe_mhz, 0.3)
        p = Peak(ppm=ppm, height=h, snr=abs(h) / noise, width_hz=float(width))
        near = [s for s in solvent_ppm if abs(s - ppm) < 0.6]
        if near:
            groups.setdefault(near[0], []).append(p)
        else:
            peaks.append(p)
    # drop maxima on the flank of a much stronger line (noise bumps on Lorentzian tails)
    kept: list[Peak] = []
    for p in sorted(peaks, key=lambda q: -abs(q.height)):
        if any(
            abs(p.ppm - k.ppm) < 4 * k.width_hz / spectrum.observe_mhz
            and abs(p.height) < 0.2 * abs(k.height)
            for k in kept
        ):
            continue
        kept.append(p)
    peaks = kept
    for centre, members in groups.items():
        top = max(members, key=lambda q: abs(q.height))
        peaks.append(
            Peak(
                ppm=centre if abs(top.ppm - centre) < 0.6 else top.ppm,
                height=top.height,
                snr=top.snr,
                width_hz=top.width_hz,
                lines=tuple(q.ppm for q in members),
                pattern="solvent",
                role="solvent",
            )
        )
    return PeakSet(
        experiment=experiment,
        peaks=tuple(peaks),
        noise=noise,
        spectrum=spectrum,
        threshold_snr=threshold,
    )


def pick_all(
    spectra: Mapping[str, Spectrum], *, solvent: str | None = "CDCl3", threshold: float = 5.0
) -> dict[str, PeakSet]:
    return {
        role: tiny_pick(s, role, threshold=threshold, solvent=solvent)
        for role, s in spectra.items()
    }


def nearest(signals: Sequence, ppm: float, tol: float = 0.05):
    best = min(signals, key=lambda s: abs(s.ppm - ppm), default=None)
    if best is None or abs(best.ppm - ppm) > tol:
        return None
    return best
