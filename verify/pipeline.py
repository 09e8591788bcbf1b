"""The whole job, stage after stage: sample → observation → verdict(s).

This module only strings the stages together (read → process → reference → pick →
classify; expect → match → verdict); each stage lives in its own module.  It reads
files only through :mod:`verify.readers` and never writes any.
"""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from verify.errors import InputFileError, StructureError, UsageError
from verify.model import EXPERIMENTS, Expectation, Observation, PeakSet, Sample, Spectrum, Verdict

__all__ = [
    "CheckResult",
    "ProcessingOptions",
    "check",
    "hetero_nuclei",
    "load_candidates",
    "observe",
    "sample_from_flags",
]


@dataclass(frozen=True)
class ProcessingOptions:
    """Parameters of the read → pick stages, recorded in the audit block.

    Parameters
    ----------
    line_broadening_hz : float
        Exponential apodization for raw FIDs in Hz (1 Hz suits carbon lines of
        ~1 Hz natural width: common practice).
    threshold_snr : float
        Peak-picking threshold as a multiple of the noise standard deviation.
    """

    line_broadening_hz: float = 1.0
    threshold_snr: float = 6.0

    def as_dict(self) -> dict[str, Any]:
        """Plain dict for the audit block."""
        return {
            "line_broadening_hz": self.line_broadening_hz,
            "threshold_snr": self.threshold_snr,
        }


@dataclass(frozen=True)
class CheckResult:
    """Everything one run of ``ctally check`` produced.

    Parameters
    ----------
    verdicts : tuple of Verdict
        The proposed structure's verdict first, then further candidates in the
        order given.
    ranked : tuple of Verdict
        The same verdicts, best fit first.
    observation : Observation
        What the spectra say.
    audit : mapping
        Tool version, time, inputs with SHA-256, parameters.
    sample : Sample
        The sample that was checked.
    """

    verdicts: tuple[Verdict, ...]
    ranked: tuple[Verdict, ...]
    observation: Observation
    audit: Mapping[str, Any] = field(default_factory=dict)
    sample: Sample | None = None

    @property
    def verdict(self) -> Verdict:
        """Verdict for the proposed (first) structure."""
        return self.verdicts[0]


def sample_from_flags(
    *,
    structure: str | None,
    spectra: Mapping[str, str | os.PathLike[str] | None],
    solvent: str | None = None,
    name: str | None = None,
) -> Sample:
    """Build a :class:`Sample` from command-line flags instead of a TOML file.

    Parameters
    ----------
    structure : str or None
        SMILES or a MOL/SDF path.
    spectra : mapping
        Experiment role → file or folder (None entries are ignored).
    solvent : str or None
        NMR solvent name as the user writes it.
    name : str or None
        Display name; defaults to the carbon file's folder name.

    Raises
    ------
    UsageError
        When no spectrum is given.
    InputFileError
        When a spectrum path does not exist.
    """
    paths: dict[str, Path] = {}
    for role, value in spectra.items():
        if value is None:
            continue
        if role not in EXPERIMENTS:
            raise UsageError(f"unknown spectrum role {role!r}; use one of {', '.join(EXPERIMENTS)}")
        p = Path(value).expanduser().resolve()
        if not p.exists():
            raise InputFileError(f"{role} spectrum not found: {value}", path=p)
        paths[role] = p
    if not paths:
        raise UsageError("no spectrum given: pass a sample file or at least --carbon")
    structure_file: Path | None = None
    smiles: str | None = structure
    if structure is not None and _looks_like_file(structure):
        structure_file = Path(structure).expanduser().resolve()
        smiles = None
    first = next(iter(paths.values()))
    return Sample(
        name=name or first.parent.name or first.name,
        structure=smiles,
        structure_file=structure_file,
        solvent=solvent,
        spectra=paths,
    )


def _looks_like_file(text: str) -> bool:
    return Path(text).suffix.lower() in (".mol", ".sdf", ".mdl", ".sd") or Path(text).is_file()


def hetero_nuclei(expectations: Sequence[Expectation]) -> frozenset[str]:
    """Spin-active heteronuclei (19F, 31P, 2H) that split carbon lines in any candidate."""
    nuclei: set[str] = set()
    for exp in expectations:
        for cls in exp.classes:
            nuclei.update(c.nucleus for c in cls.couplings)
    return frozenset(nuclei)


def observe(
    sample: Sample,
    *,
    options: ProcessingOptions | None = None,
    hetero: frozenset[str] = frozenset(),
) -> Observation:
    """Read, process, reference, pick and classify every spectrum of a sample.

    Parameters
    ----------
    sample : Sample
        Which files play which role.
    options : ProcessingOptions, optional
        Processing and picking parameters.
    hetero : frozenset of str
        Heteronuclei present in the proposed structure(s) ({"19F", "31P", "2H"}),
        so that their splittings are grouped into one signal per carbon.

    Returns
    -------
    Observation
        The classified signals on one referenced ppm axis.
    """
    from verify.classify import classify
    from verify.peaks import pick_peaks
    from verify.process import prepare
    from verify.readers import read_any
    from verify.reference import reference_sample

    opts = options or ProcessingOptions()
    spectra: dict[str, Spectrum] = {}
    lists: dict[str, PeakSet] = {}
    for role, path in sample.spectra.items():
        obj = read_any(path, role=role)
        if isinstance(obj, PeakSet):
            lists[role] = obj
        else:
            spectra[role] = prepare(
                obj, experiment=role, line_broadening_hz=opts.line_broadening_hz
            )
    solvent = sample.solvent or next((s.solvent for s in spectra.values() if s.solvent), None)
    referenced, referencing = reference_sample(spectra, solvent)
    peaksets = dict(lists)
    for role, spectrum in referenced.items():
        peaksets[role] = pick_peaks(
            spectrum,
            role,
            threshold_snr=opts.threshold_snr,
            solvent=solvent,
            hetero=hetero,
            referencing=referencing,
        )
    return classify(peaksets, referencing=referencing, solvent=solvent)


def load_candidates(
    sample: Sample | None, structures: Sequence[str] = (), candidates_file: str | None = None
) -> list[Expectation]:
    """Build the expected inventories of the proposed structure and further candidates.

    Parameters
    ----------
    sample : Sample or None
        Its ``structure``/``structure_file`` is the proposed structure, if set.
    structures : sequence of str
        Further SMILES or MOL/SDF paths (``--structure``, repeatable).
    candidates_file : str or None
        A text file with one SMILES per line (optionally followed by a name; ``#``
        starts a comment) or an SDF with several records.

    Raises
    ------
    UsageError
        When no structure is given at all.
    """
    from verify.predict import predict_shifts
    from verify.structure import expected_inventory

    out: list[Expectation] = []
    if sample is not None:
        if sample.structure_file is not None:
            out.append(expected_inventory(sample.structure_file, name=sample.name))
        elif sample.structure:
            out.append(expected_inventory(sample.structure, name=sample.name))
    for s in structures:
        out.append(expected_inventory(s))
    if candidates_file is not None:
        out.extend(_read_candidates_file(Path(candidates_file)))
    if not out:
        raise UsageError(
            "no structure given: set `structure` in the sample file or pass --structure",
            path=sample.path if sample is not None else None,
        )
    return [predict_shifts(e) for e in out]


def _read_candidates_file(path: Path) -> list[Expectation]:
    from rdkit import Chem, rdBase

    from verify.structure import expected_inventory

    if not path.is_file():
        raise InputFileError(f"candidates file not found: {path}", path=path)
    if path.suffix.lower() in (".sdf", ".sd"):
        out = []
        try:
            with rdBase.BlockLogs():  # RDKit's own parse messages would add lines to stderr
                mols = list(Chem.SDMolSupplier(str(path), removeHs=False))
        except OSError as exc:  # RDKit refuses an empty or unreadable file this way
            raise InputFileError(
                f"cannot read the candidates SDF (empty or unreadable): {exc}", path=path
            ) from None
        if not mols:
            raise StructureError("the candidates file holds no structure", path=path)
        for i, mol in enumerate(mols):
            if mol is None:
                raise StructureError(f"record {i + 1} of the SDF cannot be read", path=path)
            name = mol.GetProp("_Name") if mol.HasProp("_Name") else ""
            out.append(expected_inventory(mol, name=name or f"{path.stem} #{i + 1}"))
        return out
    out = []
    try:
        lines = path.read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        raise InputFileError(f"cannot read candidates file: {exc}", path=path) from exc
    for number, raw in enumerate(lines, start=1):
        text = raw.split("#", 1)[0].strip()
        if not text:
            continue
        smiles, _, name = text.partition(" ")
        try:
            out.append(expected_inventory(smiles, name=name.strip() or None))
        except StructureError as exc:
            raise StructureError(exc.detail, path=path, line=number) from exc
    if not out:
        raise StructureError("the candidates file holds no structure", path=path)
    return out


def build_audit(
    sample: Sample, options: ProcessingOptions, observation: Observation
) -> dict[str, Any]:
    """Record what was checked, with which inputs and which version.

    Extends :func:`verify.report.build_audit` (tool, version, time, every input file
    with its SHA-256, parameters) with the referencing applied and, per experiment,
    the processing that produced the spectrum.
    """
    from verify.report import build_audit as _inputs_audit

    audit = _inputs_audit(sample, options.as_dict())
    ref = observation.referencing
    processing: dict[str, Any] = {}
    for role, ps in observation.peaksets.items():
        prov: dict[str, Any] = (
            dict(ps.spectrum.provenance) if ps.spectrum is not None else {"format": "peak list"}
        )
        prov["noise"] = ps.noise
        prov["threshold_snr"] = ps.threshold_snr
        processing[role] = _plain(prov)
    audit["referencing"] = {
        "offset_ppm": ref.offset_ppm,
        "method": ref.method,
        "solvent": ref.solvent,
        "reference_ppm": ref.reference_ppm,
        "found_ppm": ref.found_ppm,
        "note": ref.note,
    }
    audit["processing"] = processing
    return audit


def _plain(value: Any) -> Any:
    """Turn mappings, tuples and numpy scalars into JSON-ready Python values."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, Path):
        return str(value)
    if hasattr(value, "item") and callable(value.item):
        try:
            return value.item()
        except (TypeError, ValueError):
            return str(value)
    if value is None or isinstance(value, (str, int, float, bool)):
        return value
    return str(value)


def check(
    sample: Sample,
    *,
    structures: Sequence[str] = (),
    candidates_file: str | None = None,
    options: ProcessingOptions | None = None,
) -> CheckResult:
    """Check a sample against its proposed structure and any further candidates.

    Parameters
    ----------
    sample : Sample
        The sample; its structure, if set, is the proposed one.
    structures : sequence of str
        Further candidates (SMILES or MOL/SDF paths).
    candidates_file : str or None
        A file of further candidates (see :func:`load_candidates`).
    options : ProcessingOptions, optional
        Processing and picking parameters.

    Returns
    -------
    CheckResult
        Verdicts (proposed first), the ranking, the observation and the audit record.
    """
    from verify.verdict import judge

    opts = options or ProcessingOptions()
    expectations = load_candidates(sample, structures, candidates_file)
    observation = observe(sample, options=opts, hetero=hetero_nuclei(expectations))
    verdicts = tuple(judge(e, observation) for e in expectations)
    ranked = tuple(sorted(verdicts, key=lambda v: -v.score))
    return CheckResult(
        verdicts=verdicts,
        ranked=ranked,
        observation=observation,
        audit=build_audit(sample, opts, observation),
        sample=sample,
    )
