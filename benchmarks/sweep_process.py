"""Sweep: automatic phasing and picking of synthetic FIDs over SNR, phase errors and signs.

Run: python benchmarks/sweep_process.py [trials]

Each trial builds a FID (tests/_synth_lines.fid: damped lines, exact fractional
group delay) with random shifts, amplitudes (DEPT: random signs, strongest
negative half the time), zero-order phase 0–360°, a first-order error of up to
±60° (a mis-set group delay) and noise; processes it with verify.process and picks
with verify.peaks.  Reports, per SNR band: the fraction of trials with every line
found within 0.02 ppm, with the relative signs right (DEPT) or all lines upright
(carbon), and the worst dispersive dip (phase quality).
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from _synth_lines import MHZ, fid  # noqa: E402

from verify.peaks import pick_peaks  # noqa: E402
from verify.process import process_fid  # noqa: E402

GD_ERR = 1 / 6
MIN_LINES = 4


def trial(rng: np.random.Generator, snr: float, experiment: str) -> tuple[bool, bool, float]:
    n_lines = int(rng.integers(MIN_LINES, 12))
    centres = np.sort(rng.uniform(10, 190, n_lines))[::-1]
    keep = np.concatenate([[True], np.diff(centres) < -0.5])
    centres = centres[keep]
    amps = rng.uniform(0.3, 1.0, centres.size)
    if experiment == "dept135":
        signs = rng.choice([-1.0, 1.0], centres.size)
        if rng.random() < 0.5:  # strongest line negative
            amps[np.argmax(amps)] = 1.5
            signs[np.argmax(amps)] = -1.0
        amps = amps * signs
    p0 = rng.uniform(0, 360)
    gd_err = rng.uniform(-GD_ERR, GD_ERR)  # GD_ERR · 360° of first-order phase
    f = fid(list(zip(centres, amps, strict=True)), p0_deg=p0, group_delay=68.0 + gd_err,
            noise=0.0, experiment=experiment)  # fmt: skip
    # noise so that the weakest line has roughly the requested SNR after processing
    data = np.array(f.data)
    sigma = np.min(np.abs(amps)) * np.sqrt(data.size) / snr / 12
    data = data + rng.normal(0, sigma, data.size) + 1j * rng.normal(0, sigma, data.size)
    from dataclasses import replace

    f = replace(f, data=data, group_delay=68.0)  # the processor is told the nominal delay
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s = process_fid(f)
        ps = pick_peaks(s, experiment, solvent=None)
    found = [p for p in ps.peaks if p.role == "sample"]
    ok_pos, signs_ok, dip = True, True, 0.0
    rel = []
    for c, a in zip(centres, amps, strict=True):
        near = [p for p in found if abs(p.ppm - c) < 0.02]
        if not near:
            ok_pos = False
            continue
        p = max(near, key=lambda q: abs(q.height))
        rel.append(np.sign(p.height) * np.sign(a))
        m = np.abs(s.ppm - c) < 20 / MHZ
        seg = s.intensity[m] * np.sign(p.height)
        dip = min(dip, float(seg.min() / seg.max()))
    if experiment == "carbon":
        signs_ok = all(r > 0 for r in rel)
    else:
        signs_ok = len(set(rel)) <= 1
    return ok_pos, signs_ok, dip


def main() -> None:
    trials = int(sys.argv[1]) if len(sys.argv) > 1 else 20
    rng = np.random.default_rng(20240611)
    print(f"{'experiment':10s} {'SNR':>5s} {'found':>6s} {'signs':>6s} {'worst dip':>9s}")
    for experiment in ("carbon", "dept135"):
        for snr in (10, 30, 100):
            res = [trial(rng, snr, experiment) for _ in range(trials)]
            found = np.mean([r[0] for r in res])
            signs = np.mean([r[1] for r in res])
            dip = np.min([r[2] for r in res])
            print(f"{experiment:10s} {snr:5d} {found:6.2f} {signs:6.2f} {dip:9.3f}")


if __name__ == "__main__":
    main()
