"""Classify every carbon signal as C, CH, CH2 or CH3 from the edited spectra.

Input: one :class:`~verify.model.PeakSet` per experiment (``carbon``, ``dept45``,
``dept90``, ``dept135``, ``apt``), all on one referenced axis.  Output: an
:class:`~verify.model.Observation` with one :class:`~verify.model.Signal` per carbon
signal, each with its call, a confidence, the reason in words and the evidence.

How it decides
--------------
1. **Matching.**  Each carbon-spectrum signal is paired with at most one peak of each
   edited spectrum, by an optimal one-to-one assignment (``scipy.optimize.
   linear_sum_assignment``) within a tolerance of one line width (at least
   0.05 ppm), after removing a common small offset between the experiments.  Where
   no peak was picked, the edited spectrum's own intensity at that shift is read, so
   that sub-threshold residuals still count as (weak) evidence.  Edited peaks with no
   carbon-spectrum partner become signals of their own (a low-SNR carbon spectrum
   misses them).
2. **A physical model, not presence alone.**  For every signal and every class the
   observed signed heights are compared with the model of :mod:`verify.simulate`
   (DEPT: Doddrell, Pegg & Bendall 1982; APT: Patt & Shoolery 1982), allowing the
   one-bond coupling to range around the value typical of the shift region and the
   final pulse angle to be a few degrees off.  The amplitude of the carbon in the
   edited spectra is tied to its carbon-spectrum height by a broad log-normal prior,
   so that a carbon whose edited peaks are far too small for a protonated carbon is
   a quaternary one, and a DEPT-90 peak much smaller than a CH's relative to its own
   DEPT-135 peak is a residual, not a CH (for a CH the DEPT-90/DEPT-135 ratio is
   sin 90°/sin 135° whatever J is).  The noise of each spectrum plus a relative
   model error (20 %) and a floor (3 % of a typical peak, for baseline and phase)
   set the weights.
3. **Experiment scales and signs.**  Each experiment has its own unknown intensity
   scale and possibly an inverted phase; both are fitted by minimising the total score
   over all signals (profile likelihood; every sign combination is tried, each signal's
   score is capped so that junk cannot steer the fit).  Two priors anchor the fit: the
   stored phase is favoured (processed exports are usually phased CH/CH3 up), and the
   DEPT experiments of one sample have comparable SNR per unit response (the scale of
   an exported spectrum moves with its noise).  DEPT-90 CH peaks are positive, and a CH
   seen in DEPT-90 must then be positive in DEPT-135; without DEPT-90 the shift-region
   class priors (aromatic CH 110–160 ppm, carbonyl C, alkyl CH3 …) and in APT the
   solvent's deuterated carbon (no protium: the quaternary phase) settle the sign.
   Experiments read with the opposite of their stored phase are reported as inverted;
   when the data do not settle the phase firmly, every phase-dependent confidence is
   multiplied by the probability of the reading used.
4. **Calls.**  Scores become posterior probabilities with weak shift-region priors
   (``verify/data/edited_spectra.toml``); the confidence is the best class's
   probability, lowered when no class fits well.  Where the data cannot separate two
   classes (CH vs CH3 with DEPT-135 alone, C vs CH2 with APT alone) both stay as
   candidates.  A signal that no single class explains but a pair does is reported as
   mixed; one about twice as tall as its class-mates in both the carbon and the edited
   spectra is flagged as possibly two equivalent carbons.  A peak seen only in an
   edited spectrum is kept as a signal, unless the carbon spectrum would clearly show
   a carbon of that size and does not (then an artifact), or it is far smaller than
   any carbon of the sample (then a minor component, role ``impurity``).  Shoulders
   on the flank of a much stronger peak are artifacts.

Assumptions: proton-decoupled spectra; the DEPT/APT delays set for 1J(C,H) = 145 Hz
(the usual default, common practice); one referenced axis for all experiments.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import numpy as np
import numpy.typing as npt
from scipy.optimize import linear_sum_assignment, nnls

from verify.errors import UsageError
from verify.model import (
    EXPERIMENTS,
    HYDROGENS,
    MULTIPLICITIES,
    Multiplicity,
    Observation,
    Peak,
    PeakSet,
    Referencing,
    Signal,
)
from verify.simulate import DEPT_THETA, _tables, canonical_solvent, typical_j_hz

__all__ = ["classify", "format_observation", "observation_to_dict"]

_Array = npt.NDArray[np.float64]

#: Coupling (Hz) the DEPT and APT delays are assumed to be set for (common default).
J_SET_HZ = 145.0
#: Relative model error of a predicted edited-spectrum height (NOE/relaxation/width).
MODEL_ERROR = 0.20
#: Error floor as a fraction of a typical peak of the experiment (baseline, phase).
FLOOR = 0.03
#: Log-normal spread of a carbon's DEPT amplitude relative to its carbon-spectrum height.
DEPT_SPREAD = 0.55
#: Same for APT (both come from the carbon's own magnetisation).
APT_SPREAD = 0.35
#: Cap of one value's χ² contribution (robustness against a mismatched peak).
CHI2_CAP = 400.0
#: Log spread of the unit-response SNR between DEPT experiments of one sample.
SCALE_SPREAD = 0.5
#: Score cost of reading a DEPT-135/APT with the opposite of its stored phase.
FLIP_PRIOR = 2.2
#: Cap of one signal's score in the global scale/sign fit.
ROW_CAP = 25.0
#: Below this fraction of a typical carbon, an edited-only peak is a minor component
#: (all carbons of one compound share its concentration; common practice).
MINOR_FRACTION = 0.15
#: Extra cost of a CH2/CH3 coupling > 45 Hz above typical (a CH+CH2 overlap mimics it).
EXTREME_J_PENALTY = 4.0
#: Minimum matching tolerance in ppm.
MIN_TOLERANCE_PPM = 0.05
#: |height| / noise above which a peak counts as present in words.
PRESENT_SNR = 3.0

_NAMES = {"dept45": "DEPT-45", "dept90": "DEPT-90", "dept135": "DEPT-135", "apt": "APT"}
_EDITED = ("dept45", "dept90", "dept135", "apt")
_N_H = np.array([0, 1, 2, 3])
_J_OFFSETS = np.array([-20.0, -10.0, 0.0, 10.0, 25.0, 45.0, 70.0])
_THETA_ERR = np.array([-8.0, -4.0, 0.0, 4.0, 8.0])


# ----------------------------------------------------------------- model arrays


def _dept_np(
    n: npt.NDArray[Any], theta: npt.NDArray[Any], j: npt.NDArray[Any]
) -> npt.NDArray[np.float64]:
    """Vectorised :func:`verify.simulate.dept_intensity` (same formula and reference)."""
    x = np.pi * j / (2.0 * J_SET_HZ)
    t = np.radians(theta)
    s2 = np.sin(x) ** 2
    c2 = np.cos(x) ** 2
    out = n * np.sin(t) * s2 * (c2 + s2 * np.cos(t)) ** np.maximum(n - 1, 0)
    return np.where(n == 0, 0.0, out)


def _response(experiment: str, n: Any, j: Any, theta_err: Any) -> npt.NDArray[np.float64]:
    if experiment == "apt":
        return np.asarray(np.cos(np.pi * j / J_SET_HZ) ** n, dtype=float)
    return _dept_np(n, DEPT_THETA[experiment] + theta_err, j)


@lru_cache(maxsize=512)
def _class_prior(ppm_bin: float) -> tuple[float, float, float, float]:
    for row in _tables()["class_prior"]:
        if row["lo"] <= ppm_bin < row["hi"]:
            w = np.asarray(row["weights"], dtype=float)
            w = w / w.sum()
            return (float(w[0]), float(w[1]), float(w[2]), float(w[3]))
    return (0.25, 0.25, 0.25, 0.25)


def _j_grid(ppm: float) -> npt.NDArray[np.float64]:
    """(class, K) one-bond couplings tried per class, and the typical value per class."""
    out = np.empty((4, _J_OFFSETS.size))
    for m, mult in enumerate(MULTIPLICITIES):
        typ = typical_j_hz(ppm, mult)
        out[m] = np.clip(typ + _J_OFFSETS, 110.0, 260.0)
    alk = _tables()["alkyne_ch"]
    if alk["lo"] <= ppm < alk["hi"]:
        out[1, -1] = float(alk["j_hz"])
    return out


def _j_penalty(ppm: float, grid: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    """Penalty (χ² units) for a coupling away from the typical one.

    Free within ±12 Hz, then Gaussian with 25 Hz spread (Pretsch 2009 ranges, from memory);
    CH2/CH3 more than 45 Hz above their typical coupling pay EXTREME_J_PENALTY more.
    """
    pen = np.empty_like(grid)
    for m, mult in enumerate(MULTIPLICITIES):
        typ = typical_j_hz(ppm, mult)
        dev = np.maximum(np.abs(grid[m] - typ) - 12.0, 0.0)
        pen[m] = (dev / 25.0) ** 2
        if mult in ("CH2", "CH3"):
            # only a CH reaches ~200 Hz and beyond (formyl, azine C2-H, alkyne); a CH2
            # or CH3 that far from its typical value is implausible (Pretsch 2009)
            pen[m] += np.where(grid[m] - typ > 45.0, EXTREME_J_PENALTY, 0.0)
    alk = _tables()["alkyne_ch"]
    if alk["lo"] <= ppm < alk["hi"]:
        pen[1, -1] = 2.0  # a terminal alkyne CH: possible but not the default reading
    return pen


# --------------------------------------------------------------------- records


@dataclass
class _Row:
    """One carbon signal under classification (mutable working record)."""

    ppm: float
    carbon: Peak | None
    role: str
    label: str = ""
    peaks: dict[str, Peak] = field(default_factory=dict)
    y: dict[str, float] = field(default_factory=dict)  # signed heights (file sign)
    picked: dict[str, bool] = field(default_factory=dict)
    note: str = ""


@dataclass
class _Fit:
    scores: npt.NDArray[np.float64]  # (4,) total score per class
    chi2: npt.NDArray[np.float64]  # (4,) data part at the best (J, θ)
    amp: npt.NDArray[np.float64]  # (4,) fitted DEPT amplitude u (relative to carbon)
    best_k: npt.NDArray[np.int64]  # (4,) index of best (J, θ) per class


# ------------------------------------------------------------------- matching


def _mhz(ps: PeakSet) -> float:
    return float(ps.spectrum.observe_mhz) if ps.spectrum is not None else 100.0


def _tolerance(a: Peak, b: Peak, mhz: float) -> float:
    width = 0.5 * (a.width_hz + b.width_hz) / mhz
    return max(MIN_TOLERANCE_PPM, width)


def _distance(a: Peak, b: Peak) -> float:
    cands = [abs(a.ppm - b.ppm)]
    cands += [abs(line - b.ppm) for line in a.lines]
    cands += [abs(a.ppm - line) for line in b.lines]
    return min(cands)


def _common_offset(ref: Sequence[Peak], other: Sequence[Peak]) -> float:
    """Median shift of `other` against `ref` for well-resolved strong pairs (ppm)."""
    if not ref or not other:
        return 0.0
    strong = sorted(other, key=lambda p: -p.snr)[:30]
    ref_ppm = np.array([p.ppm for p in ref])
    diffs = []
    for p in strong:
        d = ref_ppm - p.ppm
        i = int(np.argmin(np.abs(d)))
        if abs(d[i]) < 0.3:
            diffs.append(-d[i])
    if len(diffs) < 3:
        return 0.0
    med = float(np.median(diffs))
    mad = float(np.median(np.abs(np.asarray(diffs) - med)))
    if abs(med) < 0.01 or mad > 0.03:
        return 0.0
    return med


def _assign(
    ref: Sequence[Peak], other: Sequence[Peak], mhz: float, offset: float
) -> dict[int, int]:
    """Optimal one-to-one pairing of `ref` peaks with `other` peaks (index → index)."""
    if not ref or not other:
        return {}
    big = 1.0e6
    cost = np.full((len(ref), len(other)), big)
    for i, a in enumerate(ref):
        for j, b in enumerate(other):
            shifted = Peak(
                ppm=b.ppm - offset,
                height=b.height,
                width_hz=b.width_hz,
                lines=tuple(line - offset for line in b.lines),
            )
            d = _distance(a, shifted)
            tol = _tolerance(a, b, mhz)
            if d <= tol:
                # prefer pairing strong with strong: SNR ranks carry over between experiments
                snr_term = (
                    abs(math.log(max(a.snr, 1.0) / max(b.snr, 1.0))) if a.snr and b.snr else 0.0
                )
                cost[i, j] = (d / tol) ** 2 + 0.1 * snr_term
    rows, cols = linear_sum_assignment(cost)
    return {int(r): int(c) for r, c in zip(rows, cols, strict=True) if cost[r, c] < big}


def _is_split(p: Peak, rows: Sequence[_Row], experiment: str, mhz: float, offset: float) -> bool:
    """Tell whether an unpaired peak is a weaker piece of a signal already paired there.

    The carbon and edited spectra resolve alike, so a second, weaker maximum within the
    tolerance of a signal that already has its partner in this experiment is the same
    line split by noise or phase, not another carbon.
    """
    for r in rows:
        partner = r.peaks.get(experiment)
        if partner is None:
            continue
        ref = r.carbon if r.carbon is not None else partner
        if abs(p.ppm - offset - r.ppm) <= 2.0 * _tolerance(ref, p, mhz) and abs(
            p.height
        ) < 0.5 * abs(partner.height):
            return True
    return False


def _is_shoulder(p: Peak, peaks: Sequence[Peak], mhz: float) -> bool:
    """Tell whether a much stronger peak of the same spectrum lies within three widths."""
    for q in peaks:
        if q is p or abs(q.height) < 5.0 * abs(p.height):
            continue
        if abs(q.ppm - p.ppm) <= max(3.0 * q.width_hz / mhz, MIN_TOLERANCE_PPM):
            return True
    return False


def _value_at(ps: PeakSet, ppm: float) -> float | None:
    """Signed intensity of the spectrum at `ppm`, linearly interpolated (unbiased noise)."""
    spec = ps.spectrum
    if spec is None:
        return None
    x = spec.ppm
    if ppm < min(x[0], x[-1]) or ppm > max(x[0], x[-1]):
        return None
    if x[0] > x[-1]:
        return float(np.interp(ppm, x[::-1], spec.intensity[::-1]))
    return float(np.interp(ppm, x, spec.intensity))


def _noise(ps: PeakSet) -> float:
    if ps.noise > 0:
        return float(ps.noise)
    heights = [abs(p.height) for p in ps.peaks if p.height]
    floor = (min(heights) / max(ps.threshold_snr, 5.0)) if heights else 1.0
    return float(floor)


def _build_rows(
    peaksets: Mapping[str, PeakSet], edited: Sequence[str], notes: list[str]
) -> tuple[list[_Row], dict[str, float]]:
    """Signals of the reference experiment plus edited peaks that have no partner there."""
    if "carbon" in peaksets:
        base_role = "carbon"
    else:
        base_role = next(e for e in ("dept135", "dept45", "dept90", "apt") if e in peaksets)
    base = peaksets[base_role]
    mhz = _mhz(base)
    rows: list[_Row] = []
    for p in base.peaks:
        rows.append(
            _Row(
                ppm=p.ppm,
                carbon=p if base_role == "carbon" else None,
                role=p.role,
                peaks={base_role: p} if base_role != "carbon" else {},
                y={},
                picked={},
            )
        )
    for r in rows:
        q = r.carbon if r.carbon is not None else next(iter(r.peaks.values()), None)
        if q is not None and r.role == "sample" and _is_shoulder(q, base.peaks, mhz):
            r.role = "artifact"
            r.note = "a small maximum on the flank of a much stronger peak"
    base_peaks = list(base.peaks)
    offsets: dict[str, float] = {}
    for e in edited:
        if e == base_role:
            continue
        ps = peaksets[e]
        offset = _common_offset(base_peaks, ps.peaks)
        offsets[e] = offset
        if offset:
            notes.append(
                f"{_NAMES[e]} sits {offset:+.3f} ppm from the {base_role} axis; "
                "matched after removing it."
            )
        pairs = _assign(base_peaks, ps.peaks, mhz, offset)
        matched = set(pairs.values())
        for i, j in pairs.items():
            rows[i].peaks[e] = ps.peaks[j]
        for j, p in enumerate(ps.peaks):
            if j in matched or p.role in ("solvent", "artifact"):
                continue
            if p.snr and p.snr < max(ps.threshold_snr, 5.0):
                continue
            if _is_shoulder(p, ps.peaks, mhz) or _is_split(p, rows, e, mhz, offset):
                continue
            rows.append(
                _Row(
                    ppm=p.ppm - offset,
                    carbon=None,
                    role=p.role,
                    peaks={e: p},
                    y={},
                    picked={},
                    note=f"not picked in the {base_role} spectrum",
                )
            )
            base_peaks.append(Peak(ppm=p.ppm - offset, height=p.height, width_hz=p.width_hz))
    return rows, offsets


# -------------------------------------------------------------------- scoring


@dataclass
class _Data:
    """Arrays of the problem: rows × edited experiments."""

    edited: tuple[str, ...]
    y: npt.NDArray[np.float64]  # (N, E) signed heights (file sign)
    sigma: npt.NDArray[np.float64]  # (N, E) noise SD per value
    hc: npt.NDArray[np.float64]  # (N,) carbon height (NaN when unknown)
    ppm: npt.NDArray[np.float64]  # (N,)
    fixed: npt.NDArray[np.int64]  # (N,) forced class index or -1 (solvent = C)
    weight: npt.NDArray[np.float64]  # (N,) weight in the global fit
    resp: npt.NDArray[np.float64]  # (N, 4, K, E) model responses
    pen: npt.NDArray[np.float64]  # (N, 4, K) J penalties (θ penalty apart)
    logprior: npt.NDArray[np.float64]  # (N, 4) −2 ln prior
    noe: npt.NDArray[np.float64]  # (N, 4) carbon-height (NOE) term
    typical: npt.NDArray[np.float64]  # (E,) typical |height| per experiment
    apt_only: npt.NDArray[np.bool_]  # (N,) no carbon peak and no DEPT evidence of protium
    carbon_ref: float  # median carbon height (for relative evidence without a carbon peak)
    theta_of_k: npt.NDArray[np.int64]  # (K,) index into _THETA_ERR of each grid point
    list_only: tuple[bool, ...] = ()  # per experiment: a peak list without a spectrum


def _prepare(
    rows: Sequence[_Row],
    peaksets: Mapping[str, PeakSet],
    edited: Sequence[str],
    offsets: Mapping[str, float],
) -> _Data:
    n, e_count = len(rows), len(edited)
    y = np.zeros((n, e_count))
    sigma = np.ones((n, e_count))
    for k, e in enumerate(edited):
        ps = peaksets[e]
        noise = _noise(ps)
        for i, row in enumerate(rows):
            p = row.peaks.get(e)
            if p is not None:
                y[i, k] = p.height
                row.picked[e] = True
            else:
                v = _value_at(ps, row.ppm + offsets.get(e, 0.0))
                y[i, k] = 0.0 if v is None else v
                row.picked[e] = False
            row.y[e] = float(y[i, k])
            sigma[i, k] = noise
    hc = np.array([r.carbon.height if r.carbon is not None else np.nan for r in rows])
    ppm = np.array([r.ppm for r in rows])
    fixed = np.array([0 if r.role == "solvent" else -1 for r in rows])
    weight = np.array([_weight(r) for r in rows])
    k_count = _J_OFFSETS.size * _THETA_ERR.size
    resp = np.zeros((n, 4, k_count, e_count))
    pen = np.zeros((n, 4, k_count))
    logprior = np.zeros((n, 4))
    for i, r in enumerate(rows):
        grid = _j_grid(r.ppm)
        jpen = _j_penalty(r.ppm, grid)
        jj = np.repeat(grid, _THETA_ERR.size, axis=1)  # (4, K)
        tt = np.tile(_THETA_ERR, _J_OFFSETS.size)[None, :].repeat(4, axis=0)
        nn = _N_H[:, None].repeat(k_count, axis=1)
        for k, e in enumerate(edited):
            resp[i, :, :, k] = _response(e, nn, jj, tt)
        pen[i] = np.repeat(jpen, _THETA_ERR.size, axis=1)
        prior = np.asarray(_class_prior(float(r.ppm)))
        logprior[i] = -2.0 * np.log(prior)
    typical = np.array(
        [
            float(np.median(np.sort(np.abs(y[:, k]))[-max(1, n // 2) :])) if n else 1.0
            for k in range(e_count)
        ]
    )
    noe = _noe_terms(hc, y, sigma, weight >= 1.0)
    dept_cols = [k for k, e in enumerate(edited) if e != "apt"]
    if dept_cols:
        dept_seen = np.any(np.abs(y[:, dept_cols]) > PRESENT_SNR * sigma[:, dept_cols], axis=1)
    else:
        dept_seen = np.zeros(n, dtype=bool)
    apt_only = ~np.isfinite(hc) & ~dept_seen & ("apt" in edited)
    finite = hc[np.isfinite(hc) & (hc > 0) & (weight >= 1.0)]
    carbon_ref = float(np.median(finite)) if finite.size else 1.0
    return _Data(
        tuple(edited),
        y,
        sigma,
        hc,
        ppm,
        fixed,
        weight,
        resp,
        pen,
        logprior,
        noe,
        typical,
        apt_only,
        carbon_ref,
        np.tile(np.arange(_THETA_ERR.size), _J_OFFSETS.size),
        tuple(peaksets[e].spectrum is None for e in edited),
    )


def _weight(row: _Row) -> float:
    """Weight of a row in the global scale/sign fit (solvent firm, unpaired peaks light)."""
    if row.role == "solvent":
        return 3.0
    if row.role == "artifact":
        return 0.0
    return 1.0 if row.carbon is not None else 0.3


def _noe_terms(
    hc: npt.NDArray[np.float64],
    y: npt.NDArray[np.float64],
    sigma: npt.NDArray[np.float64],
    usable: npt.NDArray[np.bool_],
) -> npt.NDArray[np.float64]:
    """Carbon-height term: quaternary carbons are weaker (no NOE, long T1).

    Relative height against the median of sample signals clearly present in some
    edited spectrum; C expected at 0.45, protonated at 1 (1 or 2 carbons), log spread
    0.7, each term capped at 4 so that it only tips otherwise undecided calls.

    References
    ----------
    Friebolin, Basic One- and Two-Dimensional NMR Spectroscopy, 5th ed., 2011, ch. 10
    (NOE of protonated carbons up to 2.99×; common practice).

    """
    out = np.zeros((hc.size, 4))
    if y.shape[1] == 0:
        return out
    present = np.any(np.abs(y) > 5.0 * sigma, axis=1) & np.isfinite(hc) & usable
    if present.sum() < 3:
        return out
    ref = float(np.median(hc[present]))
    if not ref > 0:
        return out
    with np.errstate(invalid="ignore", divide="ignore"):
        rel = np.where(np.isfinite(hc) & (hc > 0), hc / ref, np.nan)
        for m, centre in enumerate((0.45, 1.0, 1.0, 1.0)):
            terms = [((np.log(rel) - np.log(centre * k)) / 0.7) ** 2 for k in (1.0, 2.0)]
            out[:, m] = np.minimum(np.nan_to_num(np.minimum(*terms), nan=0.0), 4.0)
    return out


def _core(
    data: _Data,
    scales: npt.NDArray[np.float64],
    sign: npt.NDArray[np.float64],
    theta: int | None = None,
) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64], npt.NDArray[np.float64]]:
    """Scores for a batch of scale vectors.

    Parameters
    ----------
    data : _Data
        The prepared problem.
    scales : array, shape (B, E)
        Experiment scales to try.
    sign : array, shape (E,)
        Experiment signs.
    theta : int or None
        Index into the pulse-angle error grid when the error is fixed for the whole
        sample (one proton pulse calibration); None lets every signal take its own.

    Returns
    -------
    total, chi, amp : arrays, shape (B, N, 4, K)
        Score (data + amplitude prior + J/θ penalty), the data part alone, and the fitted
        DEPT amplitude, per (J, θ) grid point.

    """
    y = data.y * sign[None, :]  # (N, E)
    dept = np.array([e != "apt" for e in data.edited])
    has_c = np.isfinite(data.hc)
    # without a carbon peak, a typical carbon of the sample sets the amplitude unit
    hc = np.where(has_c, data.hc, data.carbon_ref)
    # model amplitude per unit u: g_e · hC · R  → (B, N, 4, K, E)
    unit = scales[:, None, None, None, :] * (hc[:, None, None, None] * data.resp)[None]
    floor2 = (FLOOR * data.typical) ** 2  # (E,) raw units, like y
    s0 = data.sigma**2 + floor2[None, :] + (MODEL_ERROR * y) ** 2
    shape = unit.shape[:4]
    chi = np.zeros(shape)
    prior_amp = np.zeros(shape)
    amp_out = np.ones(shape)
    for is_dept, block, spread in ((True, dept, DEPT_SPREAD), (False, ~dept, APT_SPREAD)):
        if not np.any(block):
            continue
        ub = unit[..., block]
        yb = y[None, :, None, None, block]
        w = 1.0 / s0[None, :, None, None, block]
        den = np.einsum("...e,...e->...", w * ub, ub)
        num = np.einsum("...e,...e->...", w * ub, np.broadcast_to(yb, ub.shape))
        with np.errstate(divide="ignore", invalid="ignore"):
            u = np.where(den > 0, num / den, 1.0)
        u = np.clip(u, math.exp(-3.5), math.exp(3.5))
        pred = u[..., None] * ub
        # relative model error on the geometric mean of prediction and observation:
        # a predicted zero (quaternary) keeps the bare noise, a 2× mismatch costs ~12
        s_eff = (data.sigma[:, block] ** 2 + floor2[block])[None, :, None, None, :] + (
            MODEL_ERROR**2 * np.abs(pred * yb)
        )
        chi += np.minimum((yb - pred) ** 2 / s_eff, CHI2_CAP).sum(axis=-1)
        active = den > 0
        with_c = has_c[None, :, None, None]
        pa = np.where(active & with_c, (np.log(u) / spread) ** 2, 0.0)
        # without a carbon height the amplitude is free, but it must be positive
        pa = np.where(active & ~with_c & (num <= 0), 25.0, pa)
        prior_amp += pa
        if is_dept:
            amp_out = np.where(active, u, amp_out)
    return chi + prior_amp + (data.pen + _theta_penalty(data, theta))[None], chi, amp_out


def _theta_penalty(data: _Data, theta: int | None) -> npt.NDArray[np.float64]:
    """Per-grid-point θ term: free θ pays (θ/5°)² per signal; a fixed θ rules out others."""
    if theta is None:
        return np.asarray((_THETA_ERR[data.theta_of_k] / 5.0) ** 2, dtype=float)
    return np.where(data.theta_of_k == theta, 0.0, np.inf)


def _finish(data: _Data, best: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    """Add class priors and rule out impossible classes; `best` has shape (..., N, 4)."""
    best = best + data.logprior + data.noe
    has_c = np.isfinite(data.hc)
    # a signal seen only in DEPT spectra carries protium (APT also shows quaternary C)
    best[..., ~has_c & ~data.apt_only, 0] = np.inf
    forced = data.fixed >= 0
    if np.any(forced):
        mask = np.ones(best.shape[-2:], dtype=bool)
        mask[np.where(forced)[0], data.fixed[forced]] = False
        best = np.where(forced[:, None] & mask, np.inf, best)
    return best


def _scores(
    data: _Data,
    scale: npt.NDArray[np.float64],
    sign: npt.NDArray[np.float64],
    theta: int | None = None,
) -> _Fit:
    """Score of every class for every row under given experiment scales and signs."""
    total, chi, amp = (a[0] for a in _core(data, scale[None, :], sign, theta))
    n = total.shape[0]
    k_best = np.argmin(total, axis=2)  # (N, 4)
    idx = np.arange(n)[:, None], np.arange(4)[None, :], k_best
    best = _finish(data, total[idx])
    return _Fit(scores=best, chi2=chi[idx], amp=amp[idx], best_k=k_best)


def _totals(
    data: _Data,
    scales: npt.NDArray[np.float64],
    sign: npt.NDArray[np.float64],
    theta: int | None = None,
) -> npt.NDArray[np.float64]:
    """Total score of each scale vector of a batch (B, E) → (B,)."""
    total, _, _ = _core(data, scales, sign, theta)
    best = _finish(data, np.min(total, axis=3))  # (B, N, 4)
    per_row = np.min(best, axis=2)
    # robust: a row no class explains (overlap, picking junk) cannot steer the scales
    capped = np.minimum(np.where(np.isfinite(per_row), per_row, 1e6), ROW_CAP)
    rows = np.sum(data.weight[None, :] * capped, axis=1)
    theta_term = 0.0 if theta is None else float((_THETA_ERR[theta] / 5.0) ** 2)
    priors = np.array([_scale_prior(data, sc) for sc in scales]) + theta_term
    return np.asarray(rows + priors, dtype=float)


def _total(
    data: _Data,
    scale: npt.NDArray[np.float64],
    sign: npt.NDArray[np.float64],
    theta: int | None = None,
) -> float:
    return float(_totals(data, scale[None, :], sign, theta)[0])


def _scale_prior(data: _Data, scale: npt.NDArray[np.float64]) -> float:
    """Penalty tying the DEPT experiments' signal-to-noise per unit response together.

    Scale and noise of an exported spectrum change together, so scale/noise depends only
    on the acquisition: DEPT-45/90/135 of one sample are usually run with comparable
    scans, hence comparable SNR for a unit response (within √(scan ratio); common
    practice).  Without this anchor a DEPT-90 scale could be made so large that every
    CH looks like a residual.  Log-normal, spread SCALE_SPREAD.
    """
    dept = [k for k, e in enumerate(data.edited) if e != "apt"]
    if len(dept) < 2:
        return 0.0
    noise = data.sigma[0, dept] if data.sigma.shape[0] else np.ones(len(dept))
    snr_unit = np.log(scale[dept] / noise)
    ref = data.edited.index("dept135") if "dept135" in data.edited else dept[0]
    centre = float(np.log(scale[ref] / data.sigma[0, ref]))
    return float(np.sum(((snr_unit - centre) / SCALE_SPREAD) ** 2))


def _fit_globals(
    data: _Data, peaksets: Mapping[str, PeakSet]
) -> tuple[_Array, _Array, float, int | None]:
    """Experiment scales, signs and pulse-angle error that minimise the total score.

    A profile-likelihood fit.

    Every sign combination is tried (the stored phase is favoured by FLIP_PRIOR per
    flipped experiment; a DEPT-90 of a sample with few CH can be dominated by negative
    CH2 residuals, so even its sign is not taken from the majority of its peaks); for
    each combination the scales are found by coordinate search, first on a wide
    logarithmic grid (e^±4 around a median-based start), then refined.
    """
    e_count = len(data.edited)
    has_c = np.isfinite(data.hc) & (data.hc > 0)
    start = np.ones(e_count)
    fixed_sign = np.ones(e_count)
    free: list[int] = []
    typical_resp = {"dept45": 0.9, "dept90": 1.0, "dept135": 0.85, "apt": 1.0}
    has_peaks = np.zeros(e_count, dtype=bool)
    for k, e in enumerate(data.edited):
        strong = np.abs(data.y[:, k]) > 5.0 * data.sigma[:, k]
        has_peaks[k] = bool(np.any(strong))
        sel = strong & has_c
        if np.any(sel):
            ratio = np.abs(data.y[sel, k]) / data.hc[sel]
            val = float(np.median(ratio)) / typical_resp[e]
        elif np.any(strong):
            val = float(np.median(np.abs(data.y[strong, k]))) / float(data.carbon_ref)
        else:
            val = math.nan  # nothing strong here: set from the noise below
        start[k] = val if val > 0 else math.nan
        vals = data.y[strong, k]
        if e == "dept45" and vals.size:
            # at 45° every CHn is positive whatever J is: the majority sign is the phase
            fixed_sign[k] = 1.0 if float(np.sum(vals)) >= 0 else -1.0
        else:
            free.append(k)
    # an experiment without strong peaks (a DEPT-90 of a sample without CH) starts where
    # the scale prior puts it: the same SNR per unit response as a DEPT with peaks
    known = [k for k in range(e_count) if np.isfinite(start[k])]
    for k in range(e_count):
        if not np.isfinite(start[k]):
            if known and data.sigma.shape[0]:
                ref = known[0]
                start[k] = start[ref] * float(data.sigma[0, k] / data.sigma[0, ref])
            else:
                start[k] = 1.0
    # without a carbon spectrum the first edited experiment fixes the amplitude unit
    base = -1 if np.any(has_c) else 0
    best_total = math.inf
    best_scale, best_sign = start.copy(), fixed_sign.copy()
    totals: list[float] = []
    best_theta: int | None = None
    for combo in itertools.product((1.0, -1.0), repeat=len(free)):
        sign = fixed_sign.copy()
        for k, sg in zip(free, combo, strict=True):
            sign[k] = sg
        scale = start.copy()
        total = _total(data, scale, sign)
        for sweep in range(4):
            before = total
            for k in range(e_count):
                if k == base:
                    continue
                if sweep == 0:
                    grid = start[k] * np.exp(np.linspace(-4.0, 4.0, 41))
                else:
                    grid = scale[k] * np.exp(np.linspace(-0.4, 0.4, 17) / sweep)
                trials = np.repeat(scale[None, :], grid.size, axis=0)
                trials[:, k] = grid
                values = _totals(data, trials, sign)
                pick = int(np.argmin(values))
                if values[pick] < total - 1e-9:
                    total, scale = float(values[pick]), trials[pick].copy()
            if sweep > 0 and total > before - 1e-6:
                break
        # one proton pulse serves the whole sample: its angle error is common to all
        # signals, so fix it per sample and refine the scales for each value
        theta_best, total_t, scale_t = None, math.inf, scale
        if any(e != "apt" for e in data.edited):
            for t in range(_THETA_ERR.size):
                sc_t = scale.copy()
                tot = _total(data, sc_t, sign, t)
                for sweep in (1,):
                    for k in range(e_count):
                        if k == base:
                            continue
                        grid = sc_t[k] * np.exp(np.linspace(-0.6, 0.6, 17) / sweep)
                        trials = np.repeat(sc_t[None, :], grid.size, axis=0)
                        trials[:, k] = grid
                        values = _totals(data, trials, sign, t)
                        pick = int(np.argmin(values))
                        if values[pick] < tot - 1e-9:
                            tot, sc_t = float(values[pick]), trials[pick].copy()
                if tot < total_t:
                    theta_best, total_t, scale_t = t, tot, sc_t
            total, scale = total_t, scale_t
        # the stored phase is more often right than not (processed exports are usually
        # phased CH/CH3 up; common practice): flipping it costs FLIP_PRIOR
        total += FLIP_PRIOR * sum(1 for sg in combo if sg < 0)
        totals.append(total)
        if total < best_total - 1e-9:
            best_total, best_scale, best_sign, best_theta = total, scale, sign, theta_best
    # probability that the chosen signs are right, against the other combinations; an
    # experiment without a strong peak (a DEPT-90 of a sample without CH) has no sign
    # that matters, so its two readings are summed over rather than counted as doubt
    weights = np.exp(-0.5 * (np.asarray(totals) - best_total))
    combos = list(itertools.product((1.0, -1.0), repeat=len(free)))
    settled = [j for j, k in enumerate(free) if has_peaks[k]]
    agree = [all(c[j] == best_sign[free[j]] for j in settled) for c in combos]
    sign_p = float(weights[np.asarray(agree, dtype=bool)].sum() / weights.sum())
    return best_scale, best_sign, sign_p, best_theta


# ------------------------------------------------------------------ decisions


def _posterior(scores: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    finite = np.isfinite(scores)
    if not np.any(finite):
        return np.full(4, 0.25)
    s = np.where(finite, scores, np.inf)
    w = np.exp(-0.5 * (s - np.min(s)))
    return np.asarray(w / w.sum(), dtype=float)


def _mixed_fit(
    data: _Data, i: int, scale: npt.NDArray[np.float64], sign: npt.NDArray[np.float64]
) -> tuple[float, tuple[int, int], tuple[float, float]] | None:
    """Best two-class explanation of a DEPT signal (typical J, nominal angles)."""
    dept = [k for k, e in enumerate(data.edited) if e != "apt"]
    if len(dept) < 2 or not np.isfinite(data.hc[i]):
        return None
    y = (data.y[i] * sign)[dept]
    hc = data.hc[i]
    # index of (typical J, nominal angle) in the (J, θ) grid: k = j·n_θ + t
    k0 = int(np.flatnonzero(_J_OFFSETS == 0.0)[0]) * _THETA_ERR.size
    k0 += int(np.flatnonzero(_THETA_ERR == 0.0)[0])
    sig = np.sqrt(
        data.sigma[i, dept] ** 2 + (FLOOR * data.typical[dept]) ** 2 + (MODEL_ERROR * y) ** 2
    )
    best: tuple[float, tuple[int, int], tuple[float, float]] | None = None
    for a in range(4):
        for b in range(a + 1, 4):
            cols = np.stack(
                [
                    scale[dept] * hc * data.resp[i, a, k0, dept],
                    scale[dept] * hc * data.resp[i, b, k0, dept],
                ],
                axis=1,
            )
            if a == 0:
                cols[:, 0] = 0.0
            coef, _ = nnls(cols / sig[:, None], y / sig)
            chi = float(np.sum(((cols @ coef) - y) ** 2 / sig**2))
            pa = 0.0
            for m, c in zip((a, b), coef, strict=True):
                if m == 0:
                    continue
                pa += (np.log(max(c, math.exp(-3.5)) / 0.5) / DEPT_SPREAD) ** 2
            score = chi + pa + 0.5 * (data.logprior[i, a] + data.logprior[i, b]) + 6.0
            if best is None or score < best[0]:
                best = (score, (a, b), (float(coef[0]), float(coef[1])))
    return best


def _word(e: str, rel: float | None, present: bool, unit: str) -> str:
    name = _NAMES[e]
    if rel is None:
        return f"not measured in {name}"
    if not present:
        return f"absent from {name} ({rel:+.2f})"
    if abs(rel) < 0.15:
        return f"only a trace in {name} ({rel:+.2f} {unit})"
    if e == "apt":
        return f"{'quaternary (solvent) phase' if rel > 0 else 'CH/CH3 phase'} in APT ({rel:+.2f})"
    return f"{'up' if rel > 0 else 'down'} in {name} ({rel:+.2f} {unit})"


def classify(
    peaksets: Mapping[str, PeakSet],
    *,
    referencing: Referencing | None = None,
    solvent: str | None = None,
) -> Observation:
    """Call every carbon signal C, CH, CH2 or CH3 from the picked peaks of each experiment.

    Parameters
    ----------
    peaksets : mapping of str to PeakSet
        Experiment role (``carbon``, ``dept45``, ``dept90``, ``dept135``, ``apt``) →
        its picked peaks on the common referenced ppm axis.  Peaks keep their sign.
    referencing : Referencing or None
        How the axis was referenced (carried into the observation).
    solvent : str or None
        NMR solvent, used to label solvent signals.

    Returns
    -------
    Observation
        One :class:`~verify.model.Signal` per carbon signal (solvent and artifact
        peaks included with their role), the mode (``full``, ``dept135``, ``apt``,
        ``dept-series``, ``carbon-only``, ``edited-only`` (edited spectra without a
        carbon spectrum, not a full DEPT series) or ``partial`` (carbon with DEPT-90 or
        DEPT-45 alone)), inverted experiments and notes.

    Raises
    ------
    UsageError
        When no peak set is given, a role is unknown, or a set's experiment
        disagrees with its role.

    References
    ----------
    DEPT intensities: Doddrell, Pegg & Bendall, J. Magn. Reson. 1982, 48, 323.
    APT: Patt & Shoolery, J. Magn. Reson. 1982, 46, 535.  Shift-region priors and
    one-bond couplings: Pretsch et al., Structure Determination of Organic Compounds,
    Springer 2009 (from memory; ``verify/data/edited_spectra.toml``).  Optimal
    one-to-one matching: Kuhn–Munkres via ``scipy.optimize.linear_sum_assignment``.

    """
    if not peaksets:
        raise UsageError(
            "no peak set given: classify needs at least a carbon or an edited spectrum"
        )
    for role, ps in peaksets.items():
        if role not in EXPERIMENTS:
            raise UsageError(
                f"unknown experiment role {role!r}; use one of {', '.join(EXPERIMENTS)}"
            )
        if ps.experiment != role:
            raise UsageError(f"the peak set given as {role!r} says it is {ps.experiment!r}")
    referencing = referencing or Referencing()
    # the solvent actually found by referencing names the solvent signals, else the given one
    found = referencing.solvent if referencing.method == "solvent" else None
    solvent_name = canonical_solvent(found) or found or canonical_solvent(solvent) or solvent or ""
    experiments = tuple(e for e in EXPERIMENTS if e in peaksets)
    edited = tuple(e for e in _EDITED if e in peaksets)
    mode = _mode(experiments)
    notes: list[str] = []
    inverted: list[str] = []
    carbon_sign = 1.0
    if "carbon" in peaksets:
        carbon_ps = peaksets["carbon"]
        sample_heights = [p.height for p in carbon_ps.peaks if p.role == "sample"] or [
            p.height for p in carbon_ps.peaks
        ]
        if sample_heights and sum(sample_heights) < 0:
            carbon_sign = -1.0
            inverted.append("carbon")
            notes.append(
                "The carbon spectrum was stored with inverted phase; its peaks were read negated."
            )
    if not any(ps.peaks for ps in peaksets.values()):
        return Observation(
            (),
            experiments,
            mode,
            referencing,
            (),
            ("No peak was picked in any spectrum.",),
            dict(peaksets),
        )
    if not edited:
        signals = _carbon_only(peaksets["carbon"], carbon_sign, solvent_name)
        notes.append("Carbon spectrum only: multiplicities are not measured; counts only.")
        return Observation(
            tuple(signals),
            experiments,
            mode,
            referencing,
            tuple(inverted),
            tuple(notes),
            dict(peaksets),
        )
    if "carbon" not in peaksets and all(not peaksets[e].peaks for e in edited):
        return Observation((), experiments, mode, referencing, (), tuple(notes), dict(peaksets))
    rows, offsets = _build_rows(peaksets, edited, notes)
    if carbon_sign < 0:
        for r in rows:
            if r.carbon is not None:
                r.carbon = _negated(r.carbon)
    data = _prepare(rows, peaksets, edited, offsets)
    scale, sign, sign_p, theta = _fit_globals(data, peaksets)
    if sign_p < 0.95:
        phased = " and ".join(_NAMES[e] for e in edited if e in ("dept135", "apt"))
        notes.append(
            f"The overall phase of {phased} "
            f"is not settled firmly by the data (probability {sign_p:.2f} for the reading used); "
            "confidences are lowered accordingly."
        )
    for k, e in enumerate(edited):
        if sign[k] < 0:
            inverted.append(e)
            notes.append(f"{_NAMES[e]} was stored with inverted phase; its signs were corrected.")
    fit = _scores(data, scale, sign, theta)
    if theta is not None and _THETA_ERR[theta] != 0.0:
        notes.append(
            f"The edited spectra fit best with the final DEPT pulse {_THETA_ERR[theta]:+.0f}° "
            "off its nominal angle (a mis-set proton pulse)."
        )
    if "carbon" in peaksets:
        for i, row in enumerate(rows):
            if row.carbon is None and row.role == "sample":
                why = _not_a_carbon(i, row, data, scale, sign, peaksets["carbon"])
                if why:
                    row.role, row.note = (
                        ("impurity" if why.startswith("minor") else "artifact"),
                        why,
                    )
    signals = [
        _decide(i, row, data, fit, scale, sign, mode, solvent_name, sign_p)
        for i, row in enumerate(rows)
    ]
    signals = _carbon_hints(signals, mode)
    missing = [r for r in rows if r.carbon is None and r.role == "sample" and "carbon" in peaksets]
    if missing:
        notes.append(
            f"{len(missing)} signal(s) seen in edited spectra were not picked in the carbon "
            "spectrum "
            "(low carbon SNR?); they are included."
        )
    if mode == "dept135":
        notes.append(
            "Without DEPT-90, CH and CH3 (both up in DEPT-135) are told apart only by shift region "
            "and intensity."
        )
    if mode == "apt":
        notes.append(
            "With APT alone, C vs CH2 and CH vs CH3 (same phase) are told apart only by shift "
            "region "
            "and carbon-spectrum intensity."
        )
    return Observation(
        signals=tuple(signals),
        experiments=experiments,
        mode=mode,
        referencing=referencing,
        inverted=tuple(inverted),
        notes=tuple(notes),
        peaksets=dict(peaksets),
    )


def _negated(p: Peak) -> Peak:
    return Peak(
        ppm=p.ppm,
        height=-p.height,
        area=-p.area,
        snr=p.snr,
        width_hz=p.width_hz,
        lines=p.lines,
        pattern=p.pattern,
        j_hz=p.j_hz,
        role=p.role,
    )


def _mode(experiments: Sequence[str]) -> str:
    has = set(experiments)
    if "carbon" in has:
        if "dept90" in has and ("dept135" in has or "dept45" in has):
            return "full"
        if "dept135" in has:
            return "dept135"
        if "apt" in has:
            return "apt"
        if has & {"dept45", "dept90"}:
            return "partial"
        return "carbon-only"
    if len(has & {"dept45", "dept90", "dept135"}) >= 2:
        return "dept-series"
    return "edited-only"


def _carbon_only(carbon: PeakSet, carbon_sign: float, solvent: str) -> list[Signal]:
    out = []
    for p in carbon.peaks:
        role = p.role
        label = solvent if role == "solvent" else ""
        reason = (
            f"solvent{(' (' + solvent + ')') if solvent else ''} multiplet"
            if role == "solvent"
            else "carbon spectrum only: multiplicity not measured"
        )
        out.append(
            Signal(
                ppm=p.ppm,
                multiplicity=None,
                confidence=0.0,
                reason=reason,
                role=role,
                candidates=(),
                height=carbon_sign * p.height,
                snr=p.snr,
                width_hz=p.width_hz,
                evidence={"carbon": 1.0},
                pattern=p.pattern,
                j_hz=p.j_hz,
                lines=p.lines,
                label=label,
            )
        )
    return _carbon_hints(out, "carbon-only")


def _not_a_carbon(
    i: int,
    row: _Row,
    data: _Data,
    scale: npt.NDArray[np.float64],
    sign: npt.NDArray[np.float64],
    carbon: PeakSet,
) -> str:
    """Why an edited-only peak is not a carbon of the sample ("" when it may be one).

    A carbon that gives an edited peak of a given size also gives a carbon-spectrum peak
    of about that size (in units fitted from the other signals).  When the carbon
    spectrum would show it clearly (expected SNR ≥ 2× its picking threshold) but has
    less than a third of that at the position, the edited peak is residual solvent,
    a sideband or another artefact.  Peaks on a solvent multiplet are residual solvent.
    """
    for p in carbon.peaks:
        if p.role == "solvent":
            span = (max(p.lines) - min(p.lines)) / 2.0 if p.lines else 0.0
            if abs(row.ppm - p.ppm) <= span + 0.1:
                return "residual solvent signal in an edited spectrum"
    typical = {"dept45": 0.9, "dept90": 1.0, "dept135": 0.85, "apt": 1.0}
    equiv = 0.0
    where = ""
    for k, e in enumerate(data.edited):
        if not row.picked.get(e):
            continue
        h = abs(data.y[i, k]) / (scale[k] * typical[e])
        if h > equiv:
            equiv, where = h, _NAMES[e]
    noise = _noise(carbon)
    if equiv <= 0 or noise <= 0:
        return ""
    if equiv < MINOR_FRACTION * data.carbon_ref:
        return (
            f"minor: seen only in {where}, about {100.0 * equiv / data.carbon_ref:.0f} % of a "
            "typical carbon of the sample, so not one of its carbons"
        )
    expected_snr = equiv / noise
    value = _value_at(carbon, row.ppm)
    seen = abs(value) if value is not None else 0.0
    if expected_snr >= 2.0 * max(carbon.threshold_snr, 5.0) and seen < equiv / 3.0:
        return (
            f"seen only in {where}; a carbon of that size would stand at SNR ~{expected_snr:.0f} "
            f"in the carbon spectrum, which shows {seen / noise:.1f}: not a carbon signal "
            "(sideband, solvent residue or other artefact)"
        )
    return ""


def _decide(
    i: int,
    row: _Row,
    data: _Data,
    fit: _Fit,
    scale: npt.NDArray[np.float64],
    sign: npt.NDArray[np.float64],
    mode: str,
    solvent: str,
    sign_p: float = 1.0,
) -> Signal:
    carbon = row.carbon
    height = carbon.height if carbon is not None else 0.0
    base: dict[str, Any] = {
        "ppm": row.ppm,
        "role": row.role,
        "height": height,
        "snr": carbon.snr
        if carbon is not None
        else max((p.snr for p in row.peaks.values()), default=0.0),
        "width_hz": carbon.width_hz if carbon is not None else 1.0,
        "pattern": carbon.pattern if carbon is not None else None,
        "j_hz": carbon.j_hz if carbon is not None else None,
        "lines": carbon.lines if carbon is not None else (),
    }
    hc = data.hc[i]
    has_c = bool(np.isfinite(hc) and hc > 0)
    evidence: dict[str, float | None] = {"carbon": 1.0 if has_c else None}
    present: dict[str, bool] = {}
    for k, e in enumerate(data.edited):
        yk = data.y[i, k] * sign[k]
        present[e] = abs(yk) >= PRESENT_SNR * data.sigma[i, k]
        # relative to the carbon peak; without one, to a typical carbon of the sample
        ref = hc if has_c else data.carbon_ref
        evidence[e] = round(float(yk / (scale[k] * ref)), 3)
    if row.role == "solvent":
        return Signal(
            multiplicity=None,
            confidence=1.0,
            label=solvent,
            reason="solvent signal (deuterated carbon, no protium)",
            evidence=evidence,
            candidates=(),
            **base,
        )
    if row.role == "artifact":
        return Signal(
            multiplicity=None,
            confidence=0.0,
            reason=f"artifact: {row.note or 'marked by peak picking'}",
            evidence=evidence,
            **base,
        )
    post = _posterior(fit.scores[i])
    order = np.argsort(-post)
    m_best = int(order[0])
    conf = float(post[m_best])
    candidates = tuple(MULTIPLICITIES[m] for m in range(4) if post[m] >= 0.1)
    # how sure the signal is one of the candidates: what rules a class outside them out
    set_conf = float(sum(post[m] for m in range(4) if post[m] >= 0.1))
    if m_best != 0:  # a quaternary call does not depend on the phase
        conf *= sign_p
    if candidates != ("C",):
        set_conf *= sign_p
    chi_best = float(fit.chi2[i, m_best])
    e_count = len(data.edited)
    if chi_best > 4.0 + 3.0 * e_count:
        misfit = math.exp(-(chi_best - 4.0 - 3.0 * e_count) / 20.0)
        conf *= misfit
        set_conf *= misfit
    mixed = False
    mixed_words = ""
    alt = _mixed_fit(data, i, scale, sign)
    if alt is not None and alt[0] < float(fit.scores[i, m_best]) - 2.0:
        mixed = True
        a, b = alt[1]
        candidates = (MULTIPLICITIES[a], MULTIPLICITIES[b])
        mixed_words = (
            f"; fits no single class well (best {MULTIPLICITIES[m_best]}, χ² {chi_best:.0f}), "
            f"an overlap of {MULTIPLICITIES[a]} + {MULTIPLICITIES[b]} fits better"
        )
        conf = min(conf, 0.5)
        set_conf = conf
    mult: Multiplicity = MULTIPLICITIES[m_best]
    unit = "of carbon height" if has_c else "of a typical carbon's height"
    words = [
        f"no peak listed in {_NAMES[e]}"
        if (data.list_only and data.list_only[k] and not row.picked.get(e))
        else _word(e, evidence[e], present[e], unit)
        for k, e in enumerate(data.edited)
    ]
    words = _refine_words(words, data, i, sign, scale, fit, m_best, present, evidence)
    if len(candidates) > 1 and not mixed:
        alts = [c for c in candidates if c != mult]
        region = f"{row.ppm:.1f} ppm fits {mult} best"
        tail = f"{mult} (or {' or '.join(alts)}; {region})"
    else:
        tail = mult
    if mult == "C" and not mixed and any(e != "apt" for e in data.edited):
        tail += " (a protonated carbon would give about ±0.7–1.1 of its carbon height in DEPT)"
    reason = ", ".join(words) + mixed_words + f": {tail}"
    if carbon is not None and carbon.pattern == "C-D" and mult == "C":
        reason = (
            "C–D multiplet in the carbon spectrum"
            f"{f' (J {carbon.j_hz:.0f} Hz)' if carbon.j_hz else ''}"
            f", nothing in the edited spectra: deuterated carbon, counted as C (no protium)"
        )
        conf = max(conf, 0.9)
        set_conf = max(set_conf, conf)
    if row.note.startswith("not picked"):
        where = " and ".join(_NAMES[e] for e in data.edited if row.picked.get(e))
        reason += f" (seen in {where} but {row.note})"
    elif row.note:
        reason += f" ({row.note})"
    if len(candidates) <= 1:
        candidates = (mult,)
    confidence = round(min(max(conf, 0.0), 0.99), 3)
    return Signal(
        multiplicity=mult,
        confidence=confidence,
        candidates_confidence=max(confidence, round(min(max(set_conf, 0.0), 0.99), 3)),
        reason=reason,
        candidates=candidates,
        mixed=mixed,
        evidence=evidence,
        label=row.label,
        **base,
    )


def _refine_words(
    words: list[str],
    data: _Data,
    i: int,
    sign: npt.NDArray[np.float64],
    scale: npt.NDArray[np.float64],
    fit: _Fit,
    m_best: int,
    present: Mapping[str, bool],
    evidence: Mapping[str, float | None],
) -> list[str]:
    """Say when a DEPT-90 peak is a residual (ratio far below a CH's)."""
    edited = data.edited
    if "dept90" in edited and "dept135" in edited and m_best != 1 and present["dept90"]:
        k90, k135 = edited.index("dept90"), edited.index("dept135")
        y90 = data.y[i, k90] * sign[k90] / scale[k90]
        y135 = data.y[i, k135] * sign[k135] / scale[k135]
        expected = 1.0 / math.sin(math.radians(135.0))
        if y135 != 0:
            frac = (y90 / y135) / expected
            words[k90] = (
                f"only a residual in DEPT-90 ({evidence['dept90']:+.2f}; DEPT-90/DEPT-135 at "
                f"{frac:+.0%} of a CH's)"
            )
    if (
        len(edited) >= 3
        and {"dept45", "dept90", "dept135"} <= set(edited)
        and not np.isfinite(data.hc[i])
    ):
        k45, k90, k135 = (edited.index(e) for e in ("dept45", "dept90", "dept135"))
        d45, d90, d135 = (data.y[i, k] * sign[k] / scale[k] for k in (k45, k90, k135))
        ch2 = (d45 - d135) / 2.0
        ch3 = (d45 + d135 - math.sqrt(2.0) * d90) / (2.0 * 1.0607)
        words.append(f"edited sub-spectra CH {d90:+.2f}, CH2 {ch2:+.2f}, CH3 {ch3:+.2f}")
    return words


def _carbon_hints(signals: list[Signal], mode: str) -> list[Signal]:
    """Flag signals about twice as tall as their class-mates (possibly two carbons).

    Conservative: needs at least three class-mates, ≥ 1.8× their median carbon height,
    and (when edited spectra exist) ≥ 1.6× in the edited spectrum that shows the class.
    NOE and relaxation make single heights vary by tens of percent (common practice).
    """
    out = list(signals)
    groups: dict[str | None, list[int]] = {}
    for idx, s in enumerate(out):
        if s.role != "sample" or s.height <= 0:
            continue
        groups.setdefault(s.multiplicity, []).append(idx)
    for mult, members in groups.items():
        if len(members) < 4:
            continue
        heights = np.array([out[k].height for k in members])
        key = _edited_key(out[members[0]], mult)
        edited_vals = (
            np.array([abs(out[k].evidence.get(key) or 0.0) * out[k].height for k in members])
            if key
            else None
        )
        for pos, k in enumerate(members):
            others = np.delete(heights, pos)
            if mult is None:
                # unknown classes mix weak quaternary with protonated carbons: compare
                # with the taller half only
                others = others[others >= np.median(others)]
            ratio = heights[pos] / float(np.median(others))
            if ratio < 1.8:
                continue
            if edited_vals is not None:
                ed_others = np.delete(edited_vals, pos)
                med = float(np.median(ed_others))
                if not med > 0 or edited_vals[pos] / med < 1.6:
                    continue
            n = int(min(4 if mult is not None else 3, round(ratio)))
            s = out[k]
            cls = f"{mult} " if mult else ""
            out[k] = Signal(
                **{
                    **_signal_fields(s),
                    "carbons": n,
                    "reason": s.reason
                    + f"; {ratio:.1f}× the median height of the other {cls}signals: possibly {n} "
                    "equivalent carbons (heights vary with NOE and relaxation)",
                }
            )
    return out


def _edited_key(s: Signal, mult: str | None) -> str | None:
    for key in ("dept135", "dept45", "dept90", "apt"):
        if key in s.evidence and s.evidence[key] is not None:
            if key == "dept90" and mult != "CH":
                continue
            return key
    return None


def _signal_fields(s: Signal) -> dict[str, Any]:
    return {
        "ppm": s.ppm,
        "multiplicity": s.multiplicity,
        "confidence": s.confidence,
        "reason": s.reason,
        "role": s.role,
        "candidates": s.candidates,
        "mixed": s.mixed,
        "carbons": s.carbons,
        "height": s.height,
        "snr": s.snr,
        "width_hz": s.width_hz,
        "evidence": dict(s.evidence),
        "pattern": s.pattern,
        "j_hz": s.j_hz,
        "lines": s.lines,
        "label": s.label,
    }


# ------------------------------------------------------------------- output


def observation_to_dict(obs: Observation) -> dict[str, Any]:
    """JSON-ready form of an observation (the CLI wraps it as ``{"observed": …}``).

    Parameters
    ----------
    obs : Observation
        A classification result.

    Returns
    -------
    dict
        ``peaks`` (one entry per signal: ``ppm``, ``multiplicity``, ``confidence``,
        ``role``, ``reason``, ``candidates``, ``mixed``, ``carbons``, ``snr``,
        ``height``, ``evidence``, ``label``), ``signals`` (sample-signal count per
        class C/CH/CH2/CH3), ``mode``, ``experiments``, ``referencing``,
        ``inverted``, ``notes`` and ``experiments_peaks`` (picked peaks per role).

    """
    ref = obs.referencing
    peaks = [
        {
            "ppm": round(float(s.ppm), 3),
            "multiplicity": s.multiplicity,
            "confidence": round(float(s.confidence), 3),
            "role": s.role,
            "reason": s.reason,
            "candidates": list(s.candidates),
            "mixed": bool(s.mixed),
            "carbons": int(s.carbons),
            "snr": round(float(s.snr), 1),
            "height": float(s.height),
            "evidence": {
                k: (None if v is None else round(float(v), 3)) for k, v in s.evidence.items()
            },
            "label": s.label,
        }
        for s in obs.signals
    ]
    return {
        "peaks": peaks,
        "signals": obs.signal_counts(),
        "mode": obs.mode,
        "experiments": list(obs.experiments),
        "referencing": {
            "offset_ppm": ref.offset_ppm,
            "method": ref.method,
            "solvent": ref.solvent,
            "reference_ppm": ref.reference_ppm,
            "found_ppm": ref.found_ppm,
            "note": ref.note,
        },
        "inverted": list(obs.inverted),
        "notes": list(obs.notes),
        "experiments_peaks": {
            role: [
                {
                    "ppm": round(float(p.ppm), 3),
                    "height": float(p.height),
                    "snr": round(float(p.snr), 1),
                    "role": p.role,
                }
                for p in ps.peaks
            ]
            for role, ps in obs.peaksets.items()
        },
    }


def format_observation(obs: Observation) -> str:
    """Spectra-only summary for ``ctally classify``: signals, totals and the CxHy fragment.

    Parameters
    ----------
    obs : Observation
        A classification result.

    Returns
    -------
    str
        A plain-text table (shift, class, confidence, role, reason), the totals per
        class, the carbon-bound hydrogen count with the fragment it implies, the
        notes, and the caveat that symmetry-equivalent carbons give one signal.

    """
    lines = [f"Mode: {obs.mode} ({', '.join(obs.experiments)})"]
    ref = obs.referencing
    if ref.method != "none" or ref.offset_ppm:
        lines.append(
            f"Referencing: {ref.method}, offset {ref.offset_ppm:+.2f} ppm. {ref.note}".rstrip()
        )
    if obs.inverted:
        lines.append(f"Inverted phase corrected: {', '.join(obs.inverted)}")
    lines.append("")
    lines.append(f"{'ppm':>8}  {'class':<6} {'conf':>5}  {'role':<8} reason")
    for s in obs.signals:
        cls: str = s.multiplicity or "?"
        if s.mixed:
            cls = "+".join(s.candidates) or cls
        elif len(s.candidates) > 1:
            cls = f"{cls}?"
        extra = f" [×{s.carbons}]" if s.carbons > 1 else ""
        label = f" {s.label}" if s.label else ""
        lines.append(
            f"{s.ppm:8.2f}  {cls:<6} {s.confidence:5.2f}  {s.role:<8}{label} {s.reason}{extra}"
        )
    counts = obs.signal_counts()
    sample = obs.sample_signals
    unknown = sum(1 for s in sample if s.multiplicity is None)
    lines.append("")
    total = "  ".join(f"{m} {counts[m]}" for m in MULTIPLICITIES)
    lines.append(
        f"Sample signals: {len(sample)}  ({total}{f', unknown {unknown}' if unknown else ''})"
    )
    if sample and not unknown:
        n_c = n_h = 0
        for sig in sample:
            if sig.mixed and len(sig.candidates) > 1:
                # an overlap: count its candidate composition, one carbon per class
                n_c += max(sig.carbons, len(sig.candidates))
                n_h += sum(HYDROGENS[c] for c in sig.candidates)
            elif sig.multiplicity is not None:
                n_c += sig.carbons
                n_h += HYDROGENS[sig.multiplicity] * sig.carbons
        mixed = sum(1 for sig in sample if sig.mixed)
        tail = f" (counting {mixed} overlapped signal(s) by their composition)" if mixed else ""
        lines.append(f"Carbon-bound hydrogens: {n_h}  → C{n_c} H{n_h} on carbon{tail}")
    elif sample:
        lines.append(
            f"Carbons seen: {sum(s.carbons for s in sample)} (multiplicities not all measured)"
        )
    for note in obs.notes:
        lines.append(f"Note: {note}")
    lines.append(
        "Caveat: symmetry-equivalent carbons give one signal, so the counts are lower bounds "
        "unless a signal is flagged as holding several carbons."
    )
    return "\n".join(lines)
