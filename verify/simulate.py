"""A physical model of the edited carbon experiments, and synthetic spectra built on it.

Two things live here:

* closed-form signal intensities of a CHn group in DEPT (any final pulse angle, any
  mismatch between the actual one-bond C–H coupling and the one the delays were set
  for) and in APT, plus the typical one-bond coupling by shift region;
* a synthetic-spectrum generator (Lorentzian lines, NOE-weighted carbon intensities,
  noise at a chosen signal-to-noise ratio, solvent multiplets, baseline roll, inverted
  phases, a mis-referenced axis) and :func:`write_sample`, which writes the spectra as
  JCAMP-DX together with a sample file.

The model assumes weak coupling, ideal (instantaneous, on-resonance) pulses apart from
a common error of the final DEPT pulse angle, no relaxation during the sequence, and
perfect proton decoupling during acquisition.  ``tests/test_simulate.py`` checks the
DEPT formula against a density-matrix simulation of the pulse sequence.

Everything here is pure except :func:`write_sample`, which writes files through the
JCAMP-DX writer of :mod:`verify.readers.jcamp`.
"""

from __future__ import annotations

import json
import math
import os
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from verify.errors import UsageError
from verify.model import HYDROGENS, Multiplicity, Spectrum
from verify.reference import canonical_solvent, solvent_signals

__all__ = [
    "EDITED_EXPERIMENTS",
    "SyntheticCarbon",
    "apt_intensity",
    "canonical_solvent",
    "dept_intensity",
    "edited_response",
    "solvent_carbons",
    "synthesize",
    "typical_j_hz",
    "write_sample",
]

#: Final proton pulse angle (degrees) of each DEPT variant.
DEPT_THETA: Mapping[str, float] = {"dept45": 45.0, "dept90": 90.0, "dept135": 135.0}
#: Experiments whose peak heights depend on the attached protons.
EDITED_EXPERIMENTS: tuple[str, ...] = ("dept45", "dept90", "dept135", "apt")


# --------------------------------------------------------------------------- model


def dept_intensity(
    n_h: int, theta_deg: float, j_hz: float = 145.0, j_set_hz: float = 145.0
) -> float:
    """Signal of a CHn carbon in DEPT, relative to a CH at θ = 90° and matched J.

    Parameters
    ----------
    n_h : int
        Attached protons (0–3).  ``0`` (quaternary, or a deuterated carbon) gives 0.
    theta_deg : float
        Final proton pulse angle θ in degrees (45, 90, 135 nominally).
    j_hz : float
        Actual one-bond C–H coupling in Hz.
    j_set_hz : float
        Coupling in Hz the delays were set for (τ = 1/(2·J_set)).

    Returns
    -------
    float
        S_n = n·sinθ·sin²(πJτ)·[cos²(πJτ) + sin²(πJτ)·cosθ]^(n−1); signed (a CH2 at
        θ = 135° is negative).

    References
    ----------
    D. M. Doddrell, D. T. Pegg, M. R. Bendall, J. Magn. Reson. 1982, 48, 323–327
    (DEPT intensities versus θ; with τ ≠ 1/(2J) the same derivation gives the
    sin²/cos² weighting used here).  Checked against a density-matrix simulation in
    ``tests/test_simulate.py``.

    """
    if n_h < 0 or n_h > 3:
        raise UsageError(f"a carbon carries 0 to 3 protons, got n_h={n_h}")
    if j_set_hz <= 0:
        raise UsageError(f"the set coupling must be positive, got {j_set_hz} Hz")
    if n_h == 0:
        return 0.0
    x = math.pi * j_hz / (2.0 * j_set_hz)
    t = math.radians(theta_deg)
    s2 = math.sin(x) ** 2
    c2 = math.cos(x) ** 2
    return float(n_h * math.sin(t) * s2 * (c2 + s2 * math.cos(t)) ** (n_h - 1))


def apt_intensity(n_h: int, j_hz: float = 145.0, delay_s: float = 1.0 / 145.0) -> float:
    """Signal of a CHn carbon in APT relative to its fully relaxed carbon signal.

    Parameters
    ----------
    n_h : int
        Attached protons (0–3).
    j_hz : float
        Actual one-bond C–H coupling in Hz.
    delay_s : float
        J-evolution delay Δ in seconds (usually 1/J_set).

    Returns
    -------
    float
        cosⁿ(πJΔ): +1 for C and CH2, −1 for CH and CH3 at Δ = 1/J.  The sign
        convention is that quaternary carbons (and the solvent's deuterated carbon)
        are positive.

    References
    ----------
    S. L. Patt, J. N. Shoolery, J. Magn. Reson. 1982, 46, 535–539 (attached proton
    test: C and CH2 one phase, CH and CH3 the other).

    """
    if n_h < 0 or n_h > 3:
        raise UsageError(f"a carbon carries 0 to 3 protons, got n_h={n_h}")
    return float(math.cos(math.pi * j_hz * delay_s) ** n_h)


@lru_cache(maxsize=1)
def _tables() -> dict[str, Any]:
    text = resources.files("verify").joinpath("data/edited_spectra.toml").read_text("utf-8")
    return tomllib.loads(text)


def typical_j_hz(ppm: float, multiplicity: Multiplicity | str | None = None) -> float:
    """Typical one-bond C–H coupling in Hz for a carbon at a given shift.

    Parameters
    ----------
    ppm : float
        Carbon shift in ppm.
    multiplicity : {"C", "CH", "CH2", "CH3"} or None
        Class of the carbon; some regions differ by class (aldehyde and formyl CH).

    Returns
    -------
    float
        1J(C,H) in Hz from ``verify/data/edited_spectra.toml``: sp3 ~128,
        O-CH2/O-CH3 ~143, aromatic/alkene ~160, aldehyde ~172, formyl ~190.  Terminal
        alkyne CH (~250 Hz) shares its region with O-CH and is not returned here; see
        the ``alkyne_ch`` entry of the table.

    References
    ----------
    E. Pretsch, P. Bühlmann, M. Badertscher, Structure Determination of Organic
    Compounds, 4th ed., Springer 2009, 13C chapter (1J(C,H) tables; values from memory).

    """
    for row in _tables()["one_bond_j"]:
        if row["lo"] <= ppm < row["hi"]:
            allowed = row.get("multiplicities")
            if allowed and multiplicity not in allowed:
                continue
            return float(row["j_hz"])
    return 145.0


def edited_response(
    experiment: str,
    n_h: int,
    j_hz: float,
    *,
    j_set_hz: float = 145.0,
    theta_error_deg: float = 0.0,
) -> float:
    """Model response of a CHn group in one edited experiment.

    Parameters
    ----------
    experiment : {"dept45", "dept90", "dept135", "apt"}
        Which experiment.
    n_h : int
        Attached protons (0–3).
    j_hz, j_set_hz : float
        Actual and set one-bond coupling in Hz.
    theta_error_deg : float
        Error of the final DEPT pulse angle in degrees (ignored for APT).

    Returns
    -------
    float
        :func:`dept_intensity` at the nominal angle plus the error, or
        :func:`apt_intensity` with Δ = 1/J_set.

    References
    ----------
    Doddrell, Pegg & Bendall 1982 (DEPT); Patt & Shoolery 1982 (APT).

    """
    if experiment == "apt":
        return apt_intensity(n_h, j_hz, 1.0 / j_set_hz)
    if experiment not in DEPT_THETA:
        raise UsageError(
            f"{experiment!r} is not an edited experiment; use one of {EDITED_EXPERIMENTS}"
        )
    return dept_intensity(n_h, DEPT_THETA[experiment] + theta_error_deg, j_hz, j_set_hz)


# ------------------------------------------------------------------------ spectra


@dataclass(frozen=True)
class SyntheticCarbon:
    """One carbon signal of a synthetic sample.

    Parameters
    ----------
    ppm : float
        True shift in ppm.
    multiplicity : {"C", "CH", "CH2", "CH3"}
        Attached protium (a CD3 is ``"C"`` with a ``("2H", J, 3)`` coupling).
    carbons : int
        Equivalent carbons in the signal (its carbon-spectrum height scales with it).
    j_hz : float or None
        One-bond C–H coupling in Hz; None takes :func:`typical_j_hz`.
    width_hz : float
        Full width at half height in Hz.
    label : str
        Free text (e.g. the atom label).
    couplings : tuple of (nucleus, J in Hz, partners)
        Heteronuclear splittings that survive proton decoupling, e.g.
        ``(("19F", 245.0, 1),)`` for an aromatic C–F doublet or ``(("2H", 19.5, 3),)``
        for a CD3 septet.  19F/31P are spin ½, 2H spin 1.
    amount : float
        Relative concentration of the compound the carbon belongs to (1 for the sample,
        e.g. 0.05 for a 5 mol-% impurity); scales all its heights.

    """

    ppm: float
    multiplicity: Multiplicity
    carbons: int = 1
    j_hz: float | None = None
    width_hz: float = 1.0
    label: str = ""
    couplings: tuple[tuple[str, float, int], ...] = ()
    amount: float = 1.0

    def __post_init__(self) -> None:
        if not self.amount > 0:
            raise UsageError(f"amount must be positive, got {self.amount}")
        if self.multiplicity not in HYDROGENS:
            raise UsageError(f"unknown multiplicity {self.multiplicity!r}; use C, CH, CH2 or CH3")
        if self.carbons < 1:
            raise UsageError(f"a signal holds at least one carbon, got {self.carbons}")
        if not self.width_hz > 0:
            raise UsageError(f"line width must be positive, got {self.width_hz} Hz")
        for nucleus, j, partners in self.couplings:
            if nucleus not in ("19F", "31P", "2H") or partners < 1 or j < 0:
                raise UsageError(f"invalid coupling {(nucleus, j, partners)!r}")

    @property
    def n_h(self) -> int:
        """Attached protons."""
        return HYDROGENS[self.multiplicity]

    @property
    def coupling_j_hz(self) -> float:
        """The one-bond C–H coupling used (given, or typical for the shift)."""
        return self.j_hz if self.j_hz is not None else typical_j_hz(self.ppm, self.multiplicity)


def _multiplet(couplings: Sequence[tuple[str, float, int]]) -> list[tuple[float, float]]:
    """Line offsets (Hz) and relative intensities (sum 1) of a first-order multiplet."""
    lines: dict[float, float] = {0.0: 1.0}
    for nucleus, j, partners in couplings:
        spin_lines = (-1.0, 0.0, 1.0) if nucleus == "2H" else (-0.5, 0.5)
        for _ in range(partners):
            new: dict[float, float] = {}
            for off, w in lines.items():
                for m in spin_lines:
                    key = round(off + m * j, 9)
                    new[key] = new.get(key, 0.0) + w / len(spin_lines)
            lines = new
    return sorted(lines.items())


def solvent_carbons(solvent: str) -> tuple[tuple[float, int, float], ...]:
    """Carbon signals of a deuterated solvent: (ppm, deuterons, 1J(C,D) in Hz) each.

    Parameters
    ----------
    solvent : str
        Solvent name as a user or file writes it.

    Raises
    ------
    UsageError
        When the solvent is unknown.

    References
    ----------
    Fulmer et al., Organometallics 2010, 29, 2176 (shifts, multiplicities).
    """
    signals = solvent_signals(solvent)
    if not signals:
        raise UsageError(
            f"no carbon data for solvent {solvent!r}; name a deuterated solvent or None"
        )
    return tuple((sig.ppm, sig.deuterium, sig.j_hz) for sig in signals)


_solvent_carbons = solvent_carbons


def synthesize(
    carbons: Sequence[SyntheticCarbon],
    *,
    experiments: Sequence[str] = ("carbon", "dept90", "dept135"),
    observe_mhz: float = 125.77,
    points: int = 65536,
    sw_ppm: tuple[float, float] = (-10.0, 230.0),
    snr: float | Mapping[str, float] = 100.0,
    theta_error_deg: float = 0.0,
    j_set_hz: float = 145.0,
    solvent: str | None = "CDCl3",
    reference_offset_ppm: float = 0.0,
    baseline_roll: float = 0.0,
    invert: Sequence[str] = (),
    seed: int = 0,
) -> dict[str, Spectrum]:
    """Synthetic carbon and edited spectra of a list of carbons.

    Parameters
    ----------
    carbons : sequence of SyntheticCarbon
        The sample's carbon signals.
    experiments : sequence of str
        Roles to produce: ``carbon``, ``dept45``, ``dept90``, ``dept135``, ``apt``.
    observe_mhz : float
        13C observe frequency in MHz.
    points : int
        Points per spectrum.
    sw_ppm : (float, float)
        Low and high end of the ppm axis (stored in descending order, as NMR files do).
    snr : float or mapping of str to float
        Signal-to-noise ratio, per experiment if a mapping.  In the carbon spectrum
        (and APT) it is the strongest sample peak over the noise standard deviation.
        In a DEPT spectrum it is the height a single CH carbon would have at θ = 90°
        and matched J over the noise standard deviation, so that residuals and
        missing classes keep their true size against the noise.
    theta_error_deg : float
        Error in degrees added to every final DEPT pulse angle (a mis-set pulse).
    j_set_hz : float
        1J(C,H) in Hz the DEPT and APT delays were set for.
    solvent : str or None
        Deuterated solvent whose carbon multiplet(s) appear in the carbon and APT
        spectra (never in DEPT), or None.
    reference_offset_ppm : float
        Mis-referencing: every line appears at its true shift plus this offset.
    baseline_roll : float
        Amplitude of a smooth baseline distortion, as a fraction of the strongest peak.
    invert : sequence of str
        Experiments stored with inverted phase (all intensities negated).
    seed : int
        Seed of the random generator (noise, NOE and transfer jitter, scales).

    Returns
    -------
    dict of str to Spectrum
        One spectrum per requested experiment.  Each experiment has its own arbitrary
        intensity scale (as separately acquired and exported spectra do), so only
        ratios within one experiment, and the noise, carry meaning.

    Notes
    -----
    Carbon-spectrum heights are NOE-weighted: quaternary carbons get 0.3–0.5 of a
    protonated carbon's height, protonated carbons 0.85–1.15 (uniform, seeded), times
    the number of equivalent carbons.  DEPT heights are the model response
    (:func:`dept_intensity`) times a 0.9–1.1 transfer factor per carbon (relaxation
    during the sequence).  APT heights are the carbon heights times
    :func:`apt_intensity` with Δ = 1/J_set.  The solvent's deuterated carbon gets
    lines of 1.5–3 times a protonated carbon's height, split by the C–D coupling.

    References
    ----------
    Lorentzian line shape, NOE weighting and the DEPT/APT responses: H. Friebolin,
    Basic One- and Two-Dimensional NMR Spectroscopy, 5th ed., Wiley-VCH 2011, ch. 2
    and 8 (common practice).  Solvent shifts: Fulmer et al., Organometallics 2010, 29,
    2176.

    """
    for role in experiments:
        if role != "carbon" and role not in EDITED_EXPERIMENTS:
            raise UsageError(
                f"unknown experiment {role!r}; use carbon, dept45, dept90, dept135 or apt"
            )
    if points < 16:
        raise UsageError(f"a synthetic spectrum needs at least 16 points, got {points}")
    lo, hi = sorted(sw_ppm)
    rng = np.random.default_rng(seed)
    ppm = np.linspace(hi, lo, points)
    hz = ppm * observe_mhz
    noe = np.array(
        [rng.uniform(0.3, 0.5) if c.n_h == 0 else rng.uniform(0.85, 1.15) for c in carbons]
    )
    transfer = rng.uniform(0.9, 1.1, size=len(carbons))
    solvent_lines = _solvent_carbons(solvent) if solvent else ()
    solvent_height = rng.uniform(1.5, 3.0, size=len(solvent_lines))
    out: dict[str, Spectrum] = {}
    for role in experiments:
        sub_seed = int(rng.integers(2**31))
        sub = np.random.default_rng(sub_seed)
        y = np.zeros(points)
        heights = []
        for c, w_noe, w_tr in zip(carbons, noe, transfer, strict=True):
            if role == "carbon":
                amp = w_noe * c.carbons * c.amount
            elif role == "apt":
                amp = (
                    w_noe
                    * c.carbons
                    * c.amount
                    * apt_intensity(c.n_h, c.coupling_j_hz, 1.0 / j_set_hz)
                )
            else:
                amp = (
                    w_tr
                    * c.carbons
                    * c.amount
                    * edited_response(
                        role,
                        c.n_h,
                        c.coupling_j_hz,
                        j_set_hz=j_set_hz,
                        theta_error_deg=theta_error_deg,
                    )
                )
            heights.append(abs(amp))
            _add_lines(
                y, hz, (c.ppm + reference_offset_ppm) * observe_mhz, amp, c.width_hz, c.couplings
            )
        if role in ("carbon", "apt"):
            for (shift, n_d, j_cd), h in zip(solvent_lines, solvent_height, strict=True):
                couplings = (("2H", j_cd, n_d),) if n_d else ()
                lines = _multiplet(couplings)
                peak = max(w for _, w in lines)
                _add_lines(
                    y, hz, (shift + reference_offset_ppm) * observe_mhz, h / peak, 1.2, couplings
                )
        level = _snr_for(snr, role)
        if role in ("carbon", "apt"):
            reference = max(heights, default=1.0) or 1.0
        else:
            reference = 1.0
        sd = reference / level
        if baseline_roll:
            u = np.linspace(-1.0, 1.0, points)
            phase = sub.uniform(0, 2 * np.pi, size=2)
            roll = np.sin(1.3 * np.pi * u + phase[0]) + 0.5 * np.sin(3.1 * np.pi * u + phase[1])
            y = y + baseline_roll * float(np.max(np.abs(y)) or 1.0) * roll / 1.5
        y = y + sub.normal(0.0, sd, size=points)
        scale = float(10.0 ** sub.uniform(-1.0, 1.0)) * 1.0e4
        if role in invert:
            scale = -scale
        out[role] = Spectrum(
            ppm=ppm,
            intensity=y * scale,
            nucleus="13C",
            observe_mhz=observe_mhz,
            experiment=role,
            solvent=canonical_solvent(solvent) if solvent else None,
            source=None,
            provenance={
                "format": "synthetic",
                "seed": seed,
                "snr": level,
                "noise_sd": sd * abs(scale),
                "theta_error_deg": theta_error_deg,
                "j_set_hz": j_set_hz,
                "reference_offset_ppm": reference_offset_ppm,
                "inverted": role in invert,
            },
            pulse_program=None if role == "carbon" else role,
        )
    return out


def _snr_for(snr: float | Mapping[str, float], role: str) -> float:
    value = snr.get(role, 100.0) if isinstance(snr, Mapping) else snr
    if not value > 0:
        raise UsageError(f"SNR must be positive, got {value} for {role}")
    return float(value)


def _add_lines(
    y: npt.NDArray[np.float64],
    hz: npt.NDArray[np.float64],
    centre_hz: float,
    amp: float,
    width_hz: float,
    couplings: Sequence[tuple[str, float, int]],
) -> None:
    """Add a (multiplet of) Lorentzian line(s) of total height ``amp`` in place."""
    half = width_hz / 2.0
    lines = _multiplet(couplings)
    top = max(w for _, w in lines)
    for off, w in lines:
        # a multiplet keeps the strongest line at `amp` × (its share / the largest share)
        y += (amp * w / top if couplings else amp) / (1.0 + ((hz - centre_hz - off) / half) ** 2)


# ------------------------------------------------------------------------- files


def write_sample(
    directory: str | os.PathLike[str],
    carbons: Sequence[SyntheticCarbon],
    *,
    structure: str,
    name: str,
    solvent: str | None = "CDCl3",
    metadata: Mapping[str, str | int | float | bool] | None = None,
    jcamp_form: str | None = None,
    **synth_kw: Any,
) -> Path:
    """Write synthetic spectra as JCAMP-DX files plus a ``sample.toml`` describing them.

    Parameters
    ----------
    directory : path
        Existing or new folder for the files.
    carbons : sequence of SyntheticCarbon
        The sample's carbon signals.
    structure : str
        SMILES of the compound (written as ``structure``).
    name : str
        Display name.
    solvent : str or None
        Solvent (written to the sample file and added as multiplet(s) to the spectra).
    metadata : mapping, optional
        Further top-level keys (lot, operator …), scalar values only.
    jcamp_form : str or None
        Compression form passed to the JCAMP-DX writer (its default when None).
    **synth_kw
        Passed to :func:`synthesize` (``experiments``, ``snr``, ``seed`` …).

    Returns
    -------
    Path
        The sample file.

    Raises
    ------
    UsageError
        When a metadata key clashes with a reserved key or a value is not a scalar.

    """
    from verify._files import atomic_write_text
    from verify.readers.jcamp import write_jcamp

    meta_lines = []
    for key, value in (metadata or {}).items():
        if key in ("name", "structure", "structure_file", "solvent", "spectra"):
            raise UsageError(f"metadata key {key!r} is reserved in the sample file")
        meta_lines.append(f"{_toml_key(key)} = {_toml_value(value)}")
    spectra = synthesize(carbons, solvent=solvent, **synth_kw)
    folder = Path(directory)
    folder.mkdir(parents=True, exist_ok=True)
    files: dict[str, str] = {}
    for role, spectrum in spectra.items():
        filename = f"{role}.dx"
        if jcamp_form is None:
            write_jcamp(spectrum, folder / filename)
        else:
            write_jcamp(spectrum, folder / filename, form=jcamp_form)
        files[role] = filename
    lines = [f"name = {_toml_value(name)}", f"structure = {_toml_value(structure)}"]
    if solvent is not None:
        lines.append(f"solvent = {_toml_value(solvent)}")
    lines.extend(meta_lines)
    lines.append("")
    lines.append("[spectra]")
    lines.extend(f"{role} = {_toml_value(fn)}" for role, fn in files.items())
    path = folder / "sample.toml"
    atomic_write_text(path, "\n".join(lines) + "\n")
    return path


def _toml_key(key: str) -> str:
    if key and all(ch.isalnum() or ch in "-_" for ch in key):
        return key
    return json.dumps(key)


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        if isinstance(value, float) and not math.isfinite(value):
            raise UsageError(f"metadata values must be finite, got {value}")
        return repr(value)
    if isinstance(value, str):
        # a JSON string literal is a valid TOML basic string for the characters we write
        return json.dumps(value, ensure_ascii=False)
    raise UsageError(f"sample-file values must be strings, numbers or booleans, got {value!r}")
