"""Read a sample description (TOML) into a :class:`~verify.model.Sample`.

Format (our own)::

    name = "…"                 # free text, shown in reports (default: the file's stem)
    structure = "SMILES"       # and/or structure_file = "x.mol"
    solvent = "CDCl3"
    lot = "…"                  # any other top-level key is kept as metadata
    [spectra]
    carbon = "13c.dx"          # roles: carbon, dept90, dept135, dept45, apt
    dept135 = "dept135.dx"

Paths are relative to the TOML file and made absolute; every one must exist.  When
both ``structure`` and ``structure_file`` are given they must be the same compound:
their standard InChIKeys (RDKit) must agree in the connectivity block and the
protonation flag; the stereo block must agree too unless one of the two structures
specifies no stereochemistry at all (then the less specific one is compatible).

References
----------
TOML 1.0 (https://toml.io/en/v1.0.0), read with :mod:`tomllib`.  S. R. Heller et al.,
*J. Cheminform.* 2015, 7, 23 (InChI and the InChIKey layers).

"""

from __future__ import annotations

import os
import re
import tomllib
from pathlib import Path
from typing import Any

from verify.errors import InputFileError, SampleError, StructureError
from verify.model import EXPERIMENTS, Sample

__all__ = ["load_sample", "same_compound"]

_KNOWN = {"name", "structure", "structure_file", "solvent", "spectra"}


def _inchi(structure: str | Path) -> tuple[str, str]:
    from rdkit import Chem

    from verify.structure import load_structure

    if isinstance(structure, Path):
        mol = load_structure(structure)
    else:
        # a SMILES such as C/C=C/C may look like a path: parse it as SMILES here
        with _quiet_rdkit():
            mol = Chem.MolFromSmiles(structure)
        if mol is None:
            from verify.structure import smiles_failure

            raise SampleError(
                f"structure {structure!r} is not a valid SMILES: {smiles_failure(structure)};"
                " check brackets, ring closures and atom symbols"
            )
    with _quiet_rdkit():
        inchi = Chem.MolToInchi(mol)  # type: ignore[no-untyped-call]  # RDKit stubs
        key = Chem.InchiToInchiKey(inchi) if inchi else ""  # type: ignore[no-untyped-call]
    return inchi or "", key or ""


class _quiet_rdkit:
    def __enter__(self) -> None:
        from rdkit import RDLogger

        RDLogger.DisableLog("rdApp.*")  # type: ignore[attr-defined]  # RDKit stubs

    def __exit__(self, *exc: object) -> None:
        from rdkit import RDLogger

        RDLogger.EnableLog("rdApp.*")  # type: ignore[attr-defined]  # RDKit stubs


def _has_stereo(inchi: str) -> bool:
    return re.search(r"/[btm]\d", inchi) is not None


def same_compound(smiles: str, structure_file: Path) -> tuple[bool, str]:
    """Whether a SMILES and a structure file describe the same compound.

    Parameters
    ----------
    smiles : str
        The ``structure`` value.
    structure_file : Path
        The ``structure_file`` path (absolute).

    Returns
    -------
    (bool, str)
        Agreement, and a sentence saying how they differ when they do.

    References
    ----------
    Heller et al. 2015 (InChIKey: 14-character connectivity block, 8-character
    stereo/isotope block, protonation flag).

    """
    i1, k1 = _inchi(smiles)
    i2, k2 = _inchi(structure_file)
    if k1 == k2:
        return True, ""
    if not k1 or not k2:
        return False, "one of the two has no InChI"
    if k1[:14] != k2[:14] or k1[-1] != k2[-1]:
        return False, f"different compounds (InChIKey {k1} vs {k2})"
    if _has_stereo(i1) and _has_stereo(i2):
        return False, f"same constitution but different stereochemistry ({k1} vs {k2})"
    return True, ""


def _check_smiles(smiles: str, path: Path) -> None:
    """Parse the ``structure`` SMILES now, so that its error names the sample file."""
    from verify.structure import load_structure

    try:
        load_structure(smiles)
    except StructureError as exc:
        raise StructureError(f"structure: {exc.detail}", path=path) from None


def _tomlerror_line(exc: tomllib.TOMLDecodeError) -> int | None:
    m = re.search(r"line (\d+)", str(exc))
    return int(m.group(1)) if m else None


def load_sample(path: str | os.PathLike[str]) -> Sample:
    """Read a sample TOML file.

    Parameters
    ----------
    path : str or path-like
        The sample file.

    Returns
    -------
    Sample
        Spectrum and structure paths absolute; other top-level keys in ``metadata``.

    Raises
    ------
    InputFileError
        The sample file, a spectrum file or the structure file does not exist.
    SampleError
        Invalid TOML (with its line), a missing or empty ``[spectra]`` table, an
        unknown role (named), a value of the wrong type, or ``structure`` and
        ``structure_file`` naming different compounds.
    StructureError
        ``structure`` is not a usable SMILES (unparsable, with the position, or no
        carbon); the message names the sample file.

    References
    ----------
    TOML 1.0; Heller et al. 2015 (see the module docstring).

    """
    p = Path(path)
    if not p.is_file():
        raise InputFileError(f"no such sample file: {p}; check the path", path=p)
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise InputFileError(f"cannot read the sample file: {exc.strerror}", path=p) from exc
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise SampleError("the sample file is not UTF-8 text", path=p) from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SampleError(f"invalid TOML: {exc}", path=p, line=_tomlerror_line(exc)) from None
    base = p.resolve().parent

    def text_value(key: str) -> str | None:
        v = doc.get(key)
        if v is None:
            return None
        if not isinstance(v, str):
            raise SampleError(f"{key} should be a string, got {type(v).__name__} {v!r}", path=p)
        return v.strip() or None

    name = text_value("name") or p.stem
    smiles = text_value("structure")
    solvent = text_value("solvent")
    sfile_text = text_value("structure_file")
    structure_file = (base / sfile_text).resolve() if sfile_text else None
    if structure_file is not None and not structure_file.is_file():
        raise InputFileError(
            f"structure_file {sfile_text!r} does not exist (looked for {structure_file})",
            path=structure_file,
        )
    spectra_doc = doc.get("spectra")
    if spectra_doc is None:
        raise SampleError(
            'the sample has no [spectra] table; add e.g. [spectra] carbon = "13c.dx"', path=p
        )
    if not isinstance(spectra_doc, dict) or not spectra_doc:
        raise SampleError('[spectra] should list at least one role = "file"', path=p)
    spectra: dict[str, Path] = {}
    for role, value in spectra_doc.items():
        if role not in EXPERIMENTS:
            raise SampleError(
                f"unknown spectrum role {role!r} in [spectra]; use one of {', '.join(EXPERIMENTS)}",
                path=p,
            )
        if not isinstance(value, str) or not value.strip():
            raise SampleError(f"spectra.{role} should be a file name, got {value!r}", path=p)
        target = (base / value.strip()).resolve()
        if not target.exists():
            raise InputFileError(
                f"spectra.{role} = {value!r} does not exist (looked for {target})", path=target
            )
        spectra[role] = target
    if smiles and structure_file is not None:
        try:
            same, why = same_compound(smiles, structure_file)
        except SampleError as exc:
            raise SampleError(exc.detail, path=p) from None
        if not same:
            raise SampleError(
                f"structure and structure_file are not the same compound: {why}; keep one"
                " or correct the other",
                path=p,
            )
    if smiles:
        _check_smiles(smiles, p)
    metadata: dict[str, Any] = {k: v for k, v in doc.items() if k not in _KNOWN}
    return Sample(
        name=name,
        structure=smiles,
        structure_file=structure_file,
        solvent=solvent,
        spectra=spectra,
        metadata=metadata,
        path=p.resolve(),
    )
