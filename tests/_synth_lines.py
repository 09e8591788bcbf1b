"""Seeded synthetic FIDs and spectra with lines at known positions (for process/reference/peaks).

Everything here is built from first principles (a sum of damped complex exponentials,
Lorentzian lines); nothing is read from the project code under test except the
frozen data objects.
"""

from __future__ import annotations

import numpy as np

from verify.model import Fid, Spectrum

MHZ = 125.77  # a 500 MHz (1H) spectrometer's carbon frequency


def lorentz(ppm: np.ndarray, centre: float, height: float, fwhm_hz: float, mhz: float = MHZ):
    """Absorption Lorentzian of given height and full width at half height (Hz)."""
    x = (ppm - centre) * mhz / (fwhm_hz / 2)
    return height / (1 + x**2)


def spectrum(
    lines: list[tuple[float, float]],
    *,
    fwhm_hz: float = 2.0,
    noise: float = 1.0,
    seed: int = 1,
    roll: float = 0.0,
    lo: float = -5.0,
    hi: float = 225.0,
    points: int = 65536,
    mhz: float = MHZ,
    shift: float = 0.0,
    solvent: str | None = "CDCl3",
    experiment: str = "carbon",
) -> Spectrum:
    """Descending-ppm spectrum with Lorentzians (ppm, height), noise SD and a baseline roll."""
    rng = np.random.default_rng(seed)
    ppm = np.linspace(hi, lo, points)
    y = rng.normal(0.0, noise, points) if noise else np.zeros(points)
    for centre, height in lines:
        y += lorentz(ppm, centre + shift, height, fwhm_hz, mhz)
    if roll:
        u = (ppm - lo) / (hi - lo)
        y += roll * (np.sin(2.2 * np.pi * u) + 0.5 * np.cos(5.1 * np.pi * u))
    return Spectrum(ppm=ppm, intensity=y, observe_mhz=mhz, solvent=solvent, experiment=experiment)


def cdcl3(centre: float = 77.16, height: float = 300.0, j_hz: float = 32.0, mhz: float = MHZ):
    """The 1:1:1 triplet of CDCl3 as (ppm, height) lines."""
    d = j_hz / mhz
    return [(centre - d, height), (centre, height), (centre + d, height)]


def fid(
    lines: list[tuple[float, float]],
    *,
    carrier_ppm: float = 100.0,
    sw_hz: float = 30000.0,
    n: int = 16384,
    t2_s: float = 0.5,
    group_delay: float = 67.98,
    p0_deg: float = 0.0,
    noise: float = 0.0,
    seed: int = 2,
    mhz: float = MHZ,
    experiment: str = "carbon",
) -> Fid:
    """A FID of damped lines (ppm, amplitude) delayed by a digital-filter group delay.

    The delay is applied exactly in the frequency domain of a long band-limited
    signal (Fourier shift theorem), so the first ``group_delay`` points carry the
    band-limited pre-response as a real digital filter's output does.
    """
    rng = np.random.default_rng(seed)
    dwell = 1.0 / sw_hz
    m = 4 * n
    t = np.arange(m) * dwell
    x = np.zeros(m, dtype=complex)
    for centre, amp in lines:
        f = (centre - carrier_ppm) * mhz
        x += amp * np.exp(2j * np.pi * f * t - t / t2_s)
    x *= np.exp(1j * np.deg2rad(p0_deg))
    x[0] *= 0.5  # the continuous-time FID sampled at t = 0 (band-limited reconstruction)
    k = np.fft.fftfreq(m) * m
    delayed = np.fft.ifft(np.fft.fft(x) * np.exp(-2j * np.pi * k * group_delay / m))[:n]
    if noise:
        delayed = delayed + rng.normal(0, noise, n) + 1j * rng.normal(0, noise, n)
    return Fid(
        data=delayed,
        dwell_s=dwell,
        observe_mhz=mhz,
        carrier_ppm=carrier_ppm,
        group_delay=group_delay,
        experiment=experiment,
        solvent="CDCl3",
    )
