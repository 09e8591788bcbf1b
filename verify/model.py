"""Small frozen data objects passed between the pipeline stages.

read → process → pick → classify → expect → predict → match → verdict → report

Each stage is a module of plain functions that take and return these objects; no
stage modifies its inputs.  Arrays held here are made read-only on construction.
Invariants are checked in ``__post_init__`` so that a bad object cannot exist.

Units: chemical shifts in ppm, frequencies and couplings in Hz, the observe
frequency in MHz, times in seconds.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, Literal

import numpy as np
import numpy.typing as npt

__all__ = [
    "EXPERIMENTS",
    "HYDROGENS",
    "MULTIPLICITIES",
    "ROLES",
    "SEVERITIES",
    "Assignment",
    "CarbonClass",
    "Coupling",
    "Expectation",
    "Fid",
    "Finding",
    "Impurity",
    "Multiplicity",
    "Observation",
    "Peak",
    "PeakSet",
    "Referencing",
    "Sample",
    "Signal",
    "Spectrum",
    "Verdict",
]

Multiplicity = Literal["C", "CH", "CH2", "CH3"]
#: Carbon classes by attached protium, in the order they are always listed.
MULTIPLICITIES: tuple[Multiplicity, ...] = ("C", "CH", "CH2", "CH3")
#: Attached protium per class.
HYDROGENS: Mapping[str, int] = MappingProxyType({"C": 0, "CH": 1, "CH2": 2, "CH3": 3})
#: Experiment roles a sample may supply (``carbon`` is the broadband-decoupled spectrum).
EXPERIMENTS: tuple[str, ...] = ("carbon", "dept45", "dept90", "dept135", "apt")
#: What an observed signal is taken to be.
ROLES: tuple[str, ...] = ("sample", "solvent", "impurity", "artifact")
#: Finding severities, mildest first.  ``fail`` and ``review`` drive the verdict.
SEVERITIES: tuple[str, ...] = ("info", "review", "fail")


def _frozen_array(values: Any, dtype: Any) -> npt.NDArray[Any]:
    arr = np.array(values, dtype=dtype, copy=True)
    arr.setflags(write=False)
    return arr


def _frozen_mapping(values: Mapping[str, Any] | None) -> Mapping[str, Any]:
    return MappingProxyType(dict(values or {}))


# --------------------------------------------------------------------------- read


@dataclass(frozen=True, eq=False)
class Spectrum:
    """A processed 1D spectrum on a ppm axis.

    Parameters
    ----------
    ppm : array of float, shape (n,)
        Chemical-shift axis in ppm, strictly monotonic (either direction; readers
        keep the file's order, which for NMR is usually descending).
    intensity : array of float, shape (n,)
        Real part of the spectrum, arbitrary units, signs as in the file.
    nucleus : str
        Observed nucleus, e.g. ``"13C"``.
    observe_mhz : float
        Spectrometer frequency of the observed nucleus in MHz (ppm ↔ Hz factor).
    experiment : str
        What the file says it is: one of :data:`EXPERIMENTS` or ``"unknown"``.
    solvent : str or None
        Solvent named by the file, as written there.
    source : Path or None
        File or folder it was read from.
    provenance : mapping
        How it was read and processed (format, compression, parameters, offsets).
    pulse_program : str or None
        Pulse-program name from the file, if any.
    """

    ppm: npt.NDArray[np.float64]
    intensity: npt.NDArray[np.float64]
    nucleus: str = "13C"
    observe_mhz: float = 100.0
    experiment: str = "unknown"
    solvent: str | None = None
    source: Path | None = None
    provenance: Mapping[str, Any] = field(default_factory=dict)
    pulse_program: str | None = None

    def __post_init__(self) -> None:
        ppm = _frozen_array(self.ppm, np.float64)
        y = _frozen_array(self.intensity, np.float64)
        if ppm.ndim != 1 or y.shape != ppm.shape:
            raise ValueError(f"ppm {ppm.shape} and intensity {y.shape} must be equal 1D shapes")
        if ppm.size < 2:
            raise ValueError("a spectrum needs at least two points")
        d = np.diff(ppm)
        if not (np.all(d > 0) or np.all(d < 0)):
            raise ValueError("the ppm axis must be strictly monotonic")
        if not np.all(np.isfinite(y)):
            raise ValueError("intensities must be finite")
        if not self.observe_mhz > 0:
            raise ValueError(f"observe frequency must be positive, got {self.observe_mhz} MHz")
        object.__setattr__(self, "ppm", ppm)
        object.__setattr__(self, "intensity", y)
        object.__setattr__(self, "provenance", _frozen_mapping(self.provenance))

    @property
    def points(self) -> int:
        """Number of points."""
        return int(self.ppm.size)

    @property
    def ppm_per_point(self) -> float:
        """Axis step in ppm (absolute value)."""
        return float(abs(self.ppm[-1] - self.ppm[0]) / (self.ppm.size - 1))


@dataclass(frozen=True, eq=False)
class Fid:
    """A raw free-induction decay, not yet processed.

    Parameters
    ----------
    data : array of complex, shape (n,)
        Complex time-domain points, as acquired (digital-filter delay still present).
    dwell_s : float
        Time between complex points in seconds (1 / spectral width in Hz).
    observe_mhz : float
        Observe frequency in MHz.
    carrier_ppm : float
        Chemical shift in ppm of the spectral centre (zero frequency after FFT),
        before any solvent referencing.
    group_delay : float
        Digital-filter group delay in complex points (0 for analogue data).
    nucleus, experiment, solvent, source, provenance, pulse_program
        As for :class:`Spectrum`.
    """

    data: npt.NDArray[np.complex128]
    dwell_s: float
    observe_mhz: float
    carrier_ppm: float
    group_delay: float = 0.0
    nucleus: str = "13C"
    experiment: str = "unknown"
    solvent: str | None = None
    source: Path | None = None
    provenance: Mapping[str, Any] = field(default_factory=dict)
    pulse_program: str | None = None

    def __post_init__(self) -> None:
        data = _frozen_array(self.data, np.complex128)
        if data.ndim != 1 or data.size < 8:
            raise ValueError("an FID needs a 1D array of at least 8 points")
        if not (self.dwell_s > 0 and self.observe_mhz > 0):
            raise ValueError("dwell time and observe frequency must be positive")
        object.__setattr__(self, "data", data)
        object.__setattr__(self, "provenance", _frozen_mapping(self.provenance))

    @property
    def spectral_width_hz(self) -> float:
        """Spectral width in Hz."""
        return 1.0 / self.dwell_s


# --------------------------------------------------------------------------- pick


@dataclass(frozen=True)
class Peak:
    """One carbon signal picked from one experiment (a multiplet counts once).

    Parameters
    ----------
    ppm : float
        Shift of the signal centre in ppm (sub-point interpolated; for a multiplet
        its centre).
    height : float
        Signed height in spectrum units (negative peaks stay negative).
    area : float
        Signed integral over the signal, spectrum units × ppm.
    snr : float
        ``abs(height) / noise``, noise being the robust standard deviation.
    width_hz : float
        Full width at half height in Hz of the strongest line.
    lines : tuple of float
        Shifts in ppm of the individual lines when the signal is a multiplet.
    pattern : str or None
        Why lines were grouped: ``"solvent"``, ``"C-F"``, ``"C-P"``, ``"C-D"`` or None.
    j_hz : float or None
        Line spacing in Hz for a grouped multiplet.
    role : str
        One of :data:`ROLES`.
    """

    ppm: float
    height: float
    area: float = 0.0
    snr: float = 0.0
    width_hz: float = 1.0
    lines: tuple[float, ...] = ()
    pattern: str | None = None
    j_hz: float | None = None
    role: str = "sample"

    def __post_init__(self) -> None:
        if not np.isfinite(self.ppm) or not np.isfinite(self.height):
            raise ValueError("peak position and height must be finite")
        if self.role not in ROLES:
            raise ValueError(f"unknown peak role {self.role!r}; expected one of {ROLES}")
        if self.snr < 0 or self.width_hz < 0:
            raise ValueError("SNR and width cannot be negative")

    @property
    def sign(self) -> int:
        """+1 for an upright peak, -1 for an inverted one."""
        return 1 if self.height >= 0 else -1


@dataclass(frozen=True)
class PeakSet:
    """All signals picked from one experiment, with what is needed to judge them.

    Parameters
    ----------
    experiment : str
        Role of the spectrum (one of :data:`EXPERIMENTS`).
    peaks : tuple of Peak
        Sorted by descending ppm.
    noise : float
        Robust noise standard deviation in spectrum units.
    spectrum : Spectrum or None
        The referenced spectrum the peaks come from (None for a CSV peak list).
    threshold_snr : float
        Multiple of the noise used as the picking threshold.
    """

    experiment: str
    peaks: tuple[Peak, ...]
    noise: float
    spectrum: Spectrum | None = None
    threshold_snr: float = 0.0

    def __post_init__(self) -> None:
        if self.experiment not in EXPERIMENTS:
            raise ValueError(
                f"unknown experiment {self.experiment!r}; expected one of {EXPERIMENTS}"
            )
        if not self.noise >= 0:
            raise ValueError("noise must be non-negative")
        object.__setattr__(self, "peaks", tuple(sorted(self.peaks, key=lambda p: -p.ppm)))


@dataclass(frozen=True)
class Referencing:
    """How the ppm axis of a sample was referenced.

    Parameters
    ----------
    offset_ppm : float
        Correction added to every shift of every experiment (corrected = file + offset).
    method : str
        ``"solvent"``, ``"tms"``, ``"file"`` (axis trusted as written) or ``"none"``.
    solvent : str or None
        Canonical solvent name used (e.g. ``"CDCl3"``).
    reference_ppm : float or None
        Literature shift the axis was set to.
    found_ppm : float or None
        Where the reference signal was found before correction.
    note : str
        A sentence for the report.
    """

    offset_ppm: float = 0.0
    method: str = "none"
    solvent: str | None = None
    reference_ppm: float | None = None
    found_ppm: float | None = None
    note: str = ""


# ----------------------------------------------------------------------- classify


@dataclass(frozen=True)
class Signal:
    """One observed carbon signal after classification across experiments.

    Parameters
    ----------
    ppm : float
        Shift on the referenced axis (from the carbon spectrum when there is one).
    multiplicity : {"C", "CH", "CH2", "CH3"} or None
        The call, None when the data cannot tell (carbon only).
    confidence : float
        0–1, how sure the call is.
    reason : str
        The call's reasoning in words, for the report.
    role : str
        One of :data:`ROLES`.
    candidates : tuple of str
        Classes still possible (e.g. ``("CH", "CH3")`` for "CH or CH3"; for a mixed
        signal its candidate composition, e.g. ``("CH2", "CH3")``).
    mixed : bool
        True when the edited-spectrum behaviour fits no single class (overlap).
    carbons : int
        Carbons the signal likely holds from its intensity (1, or 2+ when about
        twice as tall as its class-mates).
    height, snr, width_hz : float
        From the carbon-spectrum peak.
    evidence : mapping
        Per experiment, the signed height of the matched counterpart relative to
        the carbon peak, or None when nothing was found there.
    pattern, j_hz, lines
        Multiplet grouping carried over from the carbon peak.
    label : str
        For solvent/impurity signals, what it is (e.g. ``"CDCl3"``, ``"ethyl acetate"``).
    candidates_confidence : float or None
        0–1, how sure it is that the signal is one of its ``candidates`` (so how sure a
        class outside them is ruled out); None when not estimated (``confidence`` then
        stands for it).
    """

    ppm: float
    multiplicity: Multiplicity | None
    confidence: float
    reason: str = ""
    role: str = "sample"
    candidates: tuple[str, ...] = ()
    mixed: bool = False
    carbons: int = 1
    height: float = 0.0
    snr: float = 0.0
    width_hz: float = 1.0
    evidence: Mapping[str, float | None] = field(default_factory=dict)
    pattern: str | None = None
    j_hz: float | None = None
    lines: tuple[float, ...] = ()
    label: str = ""
    candidates_confidence: float | None = None

    def __post_init__(self) -> None:
        if self.multiplicity is not None and self.multiplicity not in MULTIPLICITIES:
            raise ValueError(f"unknown multiplicity {self.multiplicity!r}")
        if not 0.0 <= self.confidence <= 1.0:
            raise ValueError(f"confidence must be in [0, 1], got {self.confidence}")
        if self.role not in ROLES:
            raise ValueError(f"unknown role {self.role!r}")
        if self.carbons < 1:
            raise ValueError("a signal holds at least one carbon")
        for c in self.candidates:
            if c not in MULTIPLICITIES:
                raise ValueError(f"unknown candidate multiplicity {c!r}")
        object.__setattr__(self, "evidence", _frozen_mapping(self.evidence))


@dataclass(frozen=True)
class Observation:
    """What the spectra say, before any structure is considered.

    Parameters
    ----------
    signals : tuple of Signal
        Every signal (sample, solvent, impurity, artifact), descending ppm.
    experiments : tuple of str
        Experiments that were supplied.
    mode : str
        ``"full"`` (carbon+DEPT-90+DEPT-135), ``"dept135"``, ``"apt"``,
        ``"dept-series"`` (45/90/135), ``"carbon-only"``, or ``"edited-only"``.
    referencing : Referencing
        The common axis correction applied to every experiment.
    inverted : tuple of str
        Experiments whose stored phase was found inverted and corrected.
    notes : tuple of str
        Sentences about the data as a whole (low SNR, odd pulse angle …).
    peaksets : mapping of str to PeakSet
        Picked peaks per experiment, for the report.
    """

    signals: tuple[Signal, ...]
    experiments: tuple[str, ...]
    mode: str
    referencing: Referencing = field(default_factory=Referencing)
    inverted: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    peaksets: Mapping[str, PeakSet] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "signals", tuple(sorted(self.signals, key=lambda s: -s.ppm)))
        object.__setattr__(self, "peaksets", _frozen_mapping(self.peaksets))

    @property
    def sample_signals(self) -> tuple[Signal, ...]:
        """Signals whose role is ``"sample"``."""
        return tuple(s for s in self.signals if s.role == "sample")

    def signal_counts(self) -> dict[str, int]:
        """Sample-signal count per multiplicity (unknown calls are not counted)."""
        counts: dict[str, int] = dict.fromkeys(MULTIPLICITIES, 0)
        for s in self.sample_signals:
            if s.multiplicity is not None:
                counts[s.multiplicity] += 1
        return counts


# ------------------------------------------------------------------------- expect


@dataclass(frozen=True)
class Coupling:
    """An expected heteronuclear splitting of a carbon in a 1H-decoupled spectrum.

    Parameters
    ----------
    nucleus : str
        ``"19F"``, ``"31P"`` or ``"2H"``.
    bonds : int
        Number of bonds between the carbon and the coupled nucleus (1–3).
    j_range_hz : tuple of float
        Expected |J| range in Hz from the handbook named in the data file.
    partners : int
        How many equivalent such nuclei couple (3 for CF3 → quartet).
    """

    nucleus: str
    bonds: int
    j_range_hz: tuple[float, float]
    partners: int = 1

    def __post_init__(self) -> None:
        lo, hi = self.j_range_hz
        if not (0 <= lo <= hi) or self.bonds < 1 or self.partners < 1:
            raise ValueError(f"invalid coupling {self}")


@dataclass(frozen=True)
class CarbonClass:
    """One NMR-distinct class of carbons in the proposed structure.

    Parameters
    ----------
    atoms : tuple of int
        0-based atom indices in the order of the input structure.
    multiplicity : {"C", "CH", "CH2", "CH3"}
        By attached protium only (a CD3 is ``"C"``).
    environment : str
        Coarse label such as ``"carbonyl-ester"``, ``"aromatic-CH"``, ``"sp3-O"``.
    shift_range : tuple of float
        Handbook (lo, hi) shift range in ppm for the environment.
    predicted_ppm : float or None
        A predicted shift, when a predictor has run.
    flags : tuple of str
        Any of ``diastereotopic``, ``exchange-averaged``, ``amide-rotation``,
        ``deuterated``, ``coupled-F``, ``coupled-P``, ``resonance-averaged``.
    fragment : int
        0-based index of the fragment (salt part, solvate) the class belongs to.
    couplings : tuple of Coupling
        Expected heteronuclear splittings.
    partner : int or None
        Index (in :attr:`Expectation.classes`) of the diastereotopic or rotamer
        partner class that may coincide with this one.
    label : str
        Display name, e.g. ``"C5"`` or ``"C2/C6"`` (1-based atom numbers).
    prediction_sd : float or None
        Expected error (one standard deviation, ppm) of ``predicted_ppm``.
    """

    atoms: tuple[int, ...]
    multiplicity: Multiplicity
    environment: str
    shift_range: tuple[float, float]
    predicted_ppm: float | None = None
    flags: tuple[str, ...] = ()
    fragment: int = 0
    couplings: tuple[Coupling, ...] = ()
    partner: int | None = None
    label: str = ""
    prediction_sd: float | None = None

    def __post_init__(self) -> None:
        if not self.atoms:
            raise ValueError("a carbon class needs at least one atom")
        if self.multiplicity not in MULTIPLICITIES:
            raise ValueError(f"unknown multiplicity {self.multiplicity!r}")
        lo, hi = self.shift_range
        if lo > hi:
            raise ValueError(f"shift range ({lo}, {hi}) is reversed")
        object.__setattr__(self, "atoms", tuple(sorted(self.atoms)))
        if not self.label:
            object.__setattr__(self, "label", "/".join(f"C{a + 1}" for a in self.atoms))

    @property
    def carbons(self) -> int:
        """Number of carbons in the class."""
        return len(self.atoms)


@dataclass(frozen=True)
class Expectation:
    """The expected carbon inventory of a proposed structure.

    Parameters
    ----------
    structure : str
        Canonical SMILES of the whole input (all fragments).
    formula : str
        Molecular formula (Hill order, isotopes written as RDKit writes them).
    classes : tuple of CarbonClass
        One per NMR-distinct carbon class.
    fragments : tuple of str
        Canonical SMILES of each distinct fragment, indexed by ``CarbonClass.fragment``.
    molblock : str
        The input structure as a molfile (atom order preserved) for depiction.
    name : str
        Display name of the candidate (its SMILES unless one was given).
    """

    structure: str
    formula: str
    classes: tuple[CarbonClass, ...]
    fragments: tuple[str, ...] = ()
    molblock: str = ""
    name: str = ""

    def inventory(self) -> dict[str, int]:
        """Carbons per multiplicity."""
        counts: dict[str, int] = dict.fromkeys(MULTIPLICITIES, 0)
        for c in self.classes:
            counts[c.multiplicity] += c.carbons
        return counts

    def signals(self) -> dict[str, int]:
        """Count the expected distinct peaks per multiplicity (one per class)."""
        counts: dict[str, int] = dict.fromkeys(MULTIPLICITIES, 0)
        for c in self.classes:
            counts[c.multiplicity] += 1
        return counts


# -------------------------------------------------------------- match and verdict


@dataclass(frozen=True)
class Assignment:
    """One observed signal assigned to one or more expected classes.

    Parameters
    ----------
    signal : int
        Index into ``Observation.signals``.
    classes : tuple of int
        Indices into ``Expectation.classes`` (several when carbons coincide).
    cost : float
        Contribution of this pairing to the total assignment cost (lower is better).
    note : str
        Why this pairing is unusual, if it is (overlap, coincident pair …).
    """

    signal: int
    classes: tuple[int, ...]
    cost: float = 0.0
    note: str = ""


@dataclass(frozen=True)
class Impurity:
    """A recognised solvent or laboratory impurity among the unassigned signals.

    Parameters
    ----------
    name : str
        Compound name as in the source table.
    signals : tuple of int
        Indices into ``Observation.signals`` explained by it.
    mol_percent : float or None
        Rough amount relative to the sample, by peak height per carbon.
    source : str
        Citation of the table the shifts come from.
    """

    name: str
    signals: tuple[int, ...]
    mol_percent: float | None = None
    source: str = ""


@dataclass(frozen=True)
class Finding:
    """One thing the chemist should know about, with the atoms and peaks involved.

    Parameters
    ----------
    code : str
        Stable machine-readable code, e.g. ``"count-mismatch-CH2"``.
    severity : {"info", "review", "fail"}
    message : str
        A sentence a chemist understands.
    atoms : tuple of int
        0-based atom indices involved.
    peaks : tuple of float
        Shifts in ppm of the signals involved.
    """

    code: str
    severity: str
    message: str
    atoms: tuple[int, ...] = ()
    peaks: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"unknown severity {self.severity!r}; expected one of {SEVERITIES}")
        if not self.code or not self.message:
            raise ValueError("a finding needs a code and a message")


@dataclass(frozen=True)
class Verdict:
    """The outcome of checking one candidate structure against one observation.

    Parameters
    ----------
    verdict : {"pass", "fail", "review"}
    expectation : Expectation
    observation : Observation
    assignment : tuple of Assignment
    findings : tuple of Finding
    impurities : tuple of Impurity
    score : float
        Fit of the candidate (higher is better), comparable between candidates
        checked against the same observation.
    """

    verdict: str
    expectation: Expectation
    observation: Observation
    assignment: tuple[Assignment, ...] = ()
    findings: tuple[Finding, ...] = ()
    impurities: tuple[Impurity, ...] = ()
    score: float = 0.0

    def __post_init__(self) -> None:
        if self.verdict not in ("pass", "fail", "review"):
            raise ValueError(f"unknown verdict {self.verdict!r}")


# ------------------------------------------------------------------------- sample


@dataclass(frozen=True)
class Sample:
    """A sample description as read from its TOML file (or built from CLI flags).

    Parameters
    ----------
    name : str
        Free text shown in reports.
    structure : str or None
        SMILES, if given.
    structure_file : Path or None
        MOL/SDF path (absolute), if given.
    solvent : str or None
        Solvent as written by the user.
    spectra : mapping of str to Path
        Experiment role → absolute path of file or folder.
    metadata : mapping
        Every other top-level key (lot, operator, instrument …), kept for the report.
    path : Path or None
        The TOML file itself.
    """

    name: str
    structure: str | None
    structure_file: Path | None
    solvent: str | None
    spectra: Mapping[str, Path]
    metadata: Mapping[str, Any] = field(default_factory=dict)
    path: Path | None = None

    def __post_init__(self) -> None:
        for role in self.spectra:
            if role not in EXPERIMENTS:
                raise ValueError(f"unknown spectrum role {role!r}; expected one of {EXPERIMENTS}")
        object.__setattr__(self, "spectra", _frozen_mapping(self.spectra))
        object.__setattr__(self, "metadata", _frozen_mapping(self.metadata))
