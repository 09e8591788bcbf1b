"""Expected carbon inventory of a proposed structure (the *expect* stage).

A structure (SMILES, MOL/SDF file or RDKit molecule) is turned into one
:class:`~verify.model.CarbonClass` per NMR-distinct class of carbons, with its
multiplicity by attached protium, a coarse environment, a handbook shift range,
expected heteronuclear splittings and flags.

How carbons are grouped
-----------------------
1. *Normalisation* (per fragment): protons that exchange fast on the NMR time scale
   are moved off (azole N-H, ammonium N-H, amidine N-H, carboxylate/acid O-H are
   made one state), and a charged, delocalised fragment is expanded into its
   resonance forms with RDKit's ``ResonanceMolSupplier``.
2. *Prefilter*: ``Chem.CanonicalRankAtoms(breakTies=False)`` on a hybrid graph
   (bonds that change between resonance forms made alike, charges of delocalised
   atoms removed) gives candidate classes of constitutionally equivalent atoms.
3. *Substitution test* inside each candidate class: every unspecified potential
   stereocentre and stereo double bond is given a fixed arbitrary configuration,
   one carbon is labelled (isotope), the labelled molecule is canonicalised with
   stereochemistry (smallest SMILES over the resonance forms) and compared with the
   other labelled molecules and with their mirror images.  Equal ⇒ homotopic or
   enantiotopic (one class); different ⇒ diastereotopic (two classes, flagged).
   RDKit's legacy and new stereo perception each fail some cases of stereo
   cleaning (the new one keeps a spurious tag on a carbon between two like
   stereocentres; the legacy one drops ring para-stereocentres); two carbons are
   merged when either perception finds the labelled molecules equal.
4. Tertiary amides, carbamates and N-nitrosamines are drawn in their zwitterionic
   resonance form (C=N+ double bond) for the test, so the two N-substituents come
   out syn/anti (slow rotation at room temperature).

5. When stereo elements are left unspecified (and there are two or more in all), the
   classes are worked out for each relative configuration (all of them up to three
   unspecified elements, else three seeded random ones) and the finest common
   partition is kept: a pair that is diastereotopic in any configuration is split.

Flags
-----
``diastereotopic``: constitutionally equivalent but split by the substitution test
(``partner`` set).  ``amide-rotation``: an N-carbon of a tertiary amide, carbamate,
thioamide or N-nitrosamine (not lactam ring bonds, not ureas); with a partner it is the
syn/anti half of a pair, without one it warns that rotamers may double the signal.
``resonance-averaged``: a carbon of a charged delocalised group, or a class merged only
over resonance forms.  ``exchange-averaged``: a carbon of a tautomeric azole/amidine
system, or a class merged only by proton exchange.  ``deuterated``: D on the carbon.
``coupled-F``/``coupled-P``: F or P within three bonds (a four-bond aromatic C-F
coupling is listed among the couplings without the flag).

Limitation: ring para-stereocentres of the all-cis-1,3,5-trisubstituted-cyclohexane
kind are split too finely by both perceptions (flagged ``diastereotopic`` with a
partner, so a coincident pair is still accepted).

References
----------
.. [1] Mislow & Raban, "Stereoisomeric relationships of groups in molecules",
   Top. Stereochem. 1 (1967) 1 — the substitution (replacement) test.
.. [2] RDKit, ``CanonicalRankAtoms``, ``ResonanceMolSupplier``, ``AssignStereochemistry``
   (https://www.rdkit.org/docs).
.. [3] Shift ranges and couplings: ``verify/data/shift_ranges.toml`` and
   ``verify/data/couplings.toml`` (Pretsch et al. 4th ed. 2009; Breitmaier & Voelter
   3rd ed. 1987; Fulmer et al. 2010), values from memory as marked there.

"""

from __future__ import annotations

import os
import random
import tomllib
import warnings
from collections import Counter
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import replace
from functools import cache
from pathlib import Path
from typing import Any

from rdkit import Chem, rdBase
from rdkit.Chem import rdMolDescriptors

from verify.errors import CtallyWarning, InputFileError, StructureError
from verify.model import MULTIPLICITIES, CarbonClass, Coupling, Expectation, Multiplicity

__all__ = [
    "expectation_to_dict",
    "expected_inventory",
    "format_expectation",
    "load_structure",
    "smiles_failure",
]

_DATA = Path(__file__).with_name("data")
#: Atom property holding the index of the atom in the input structure.
_INPUT_IDX = "ctally_input_idx"
#: Molecule property: the full input molfile, kept when protium atoms preceded heavy atoms.
_INPUT_BLOCK = "ctally_input_molblock"
#: Isotope used to label one carbon in the substitution test.
_LABEL = 199
#: Most resonance forms considered per fragment.
_MAX_FORMS = 64
_FILE_SUFFIXES = (".mol", ".sdf", ".mdl", ".sd")
_CW = Chem.ChiralType.CHI_TETRAHEDRAL_CW
_CCW = Chem.ChiralType.CHI_TETRAHEDRAL_CCW


# --------------------------------------------------------------------------- data


@cache
def _shift_ranges() -> dict[str, tuple[float, float]]:
    """Environment (or ``environment.multiplicity``) -> (lo, hi) in ppm."""
    with open(_DATA / "shift_ranges.toml", "rb") as fh:
        data = tomllib.load(fh)
    table = dict(data["ranges"])
    for env, by_mult in data.get("by_multiplicity", {}).items():
        for mult, v in by_mult.items():
            table[f"{env}.{mult}"] = v
    return {k: (float(v[0]), float(v[1])) for k, v in table.items()}


@cache
def _couplings() -> dict[str, dict[str, tuple[float, float]]]:
    with open(_DATA / "couplings.toml", "rb") as fh:
        table = tomllib.load(fh)
    return {
        group: {k: (float(v[0]), float(v[1])) for k, v in values.items()}
        for group, values in table.items()
    }


# --------------------------------------------------------------------------- load


@contextmanager
def _captured_log() -> Iterator[list[str]]:
    """Collect RDKit error messages instead of printing them; silence its warnings.

    RDKit sends some parse problems of a molfile ("Atom line too short") to its
    warning log, which :class:`rdBase.CaptureErrorLog` does not see; without the
    :class:`rdBase.BlockLogs` they would reach standard error beside the tool's one
    error line.  ``BlockLogs`` restores the caller's log settings on exit.
    """
    messages: list[str] = []
    with rdBase.BlockLogs(), rdBase.CaptureErrorLog() as log:
        try:
            yield messages
        finally:
            for line in str(log.messages).splitlines():
                text = line.split("] ", 1)[-1].strip() if line.startswith("[") else line.strip()
                if text:
                    messages.append(text)


def _is_file(text: str) -> bool:
    try:
        # a folder named with a path separator is a wrong path (said so), not a SMILES;
        # a bare name like "C" stays a SMILES even when a folder of that name exists
        return Path(text).is_file() or (os.sep in text and Path(text).is_dir())
    except (OSError, ValueError):  # too long for a file name, or a NUL byte: a SMILES
        return False


def _looks_like_file(text: str) -> bool:
    return text.lower().endswith(_FILE_SUFFIXES)


def _strip_protium(mol: Chem.Mol) -> Chem.Mol:
    """Remove protium atoms, keep D/T, record input indices on every atom."""
    mol = Chem.Mol(mol)
    for atom in mol.GetAtoms():
        atom.SetIntProp(_INPUT_IDX, atom.GetIdx())
    has_h = any(a.GetAtomicNum() == 1 for a in mol.GetAtoms())
    full_block = Chem.MolToMolBlock(mol) if has_h else ""
    params = Chem.RemoveHsParameters()
    params.removeIsotopes = False  # type: ignore[assignment]  # RDKit stub types
    params.removeDefiningBondStereo = True  # type: ignore[assignment]  # RDKit stub types
    params.removeWithWedgedBond = True  # type: ignore[assignment]  # RDKit stub types
    params.showWarnings = False  # type: ignore[assignment]  # RDKit stub types
    out = Chem.RemoveHs(mol, params, sanitize=True) if has_h else mol
    kept = [a.GetIntProp(_INPUT_IDX) for a in out.GetAtoms()]
    if kept != list(range(len(kept))):
        out.SetProp(_INPUT_BLOCK, full_block)
    return out


def _open_ring_bond(text: str) -> str:
    """Say where a ring-closure label that is never closed was opened (RDKit does not).

    Ring-bond labels are a digit or ``%nn`` outside bracket atoms; each label pairs
    its first and second use (OpenSMILES specification, section 3.4, "Ring closure").
    Returns e.g. ``"ring bond 1 opened at position 2 is never closed"`` (1-based
    position) or ``""`` when every label is closed.
    """
    opened: dict[str, int] = {}
    i, depth = 0, 0
    while i < len(text):
        ch = text[i]
        label, width = "", 1
        if ch == "[":
            depth += 1
        elif ch == "]":
            depth = max(depth - 1, 0)
        elif depth == 0 and ch.isdigit():
            label = ch
        elif depth == 0 and ch == "%" and text[i + 1 : i + 3].isdigit():
            label, width = text[i : i + 3], 3
        if label:
            if label in opened:
                del opened[label]
            else:
                opened[label] = i + 1
        i += width
    if not opened:
        return ""
    label, pos = min(opened.items(), key=lambda kv: kv[1])
    return f"ring bond {label} opened at position {pos} is never closed"


def _smiles_failure(text: str, log: Sequence[str]) -> str:
    """Say what RDKit's parser disliked in `text` and where (1-based position), from its log."""
    reasons = []
    position = ""
    for m in log:
        if "position" in m:
            position = m.rstrip(":").split("mistakes ")[-1]
        elif m.startswith("SMILES Parse Error:") and "Failed parsing" not in m:
            reasons.append(
                m.split(":", 1)[1].split(" while parsing")[0].split(" for input")[0].strip()
            )
    reason = "; ".join(reasons) or "syntax error"
    if not position:
        position = _open_ring_bond(text)
    return f"{reason} ({position})" if position else reason


def smiles_failure(text: str) -> str | None:
    """Why `text` does not parse as SMILES, with the position; None when it parses.

    Parameters
    ----------
    text : str
        A SMILES string.

    Returns
    -------
    str or None
        E.g. ``"extra open parentheses (around position 5)"``.

    References
    ----------
    RDKit ``MolFromSmiles`` (its parse-error log); OpenSMILES specification.
    """
    params = Chem.SmilesParserParams()
    params.sanitize = False  # type: ignore[assignment]  # RDKit stub types
    with _captured_log() as log:
        mol = Chem.MolFromSmiles(text, params)
    return None if mol is not None else _smiles_failure(text, log)


def _parse_smiles(text: str) -> Chem.Mol:
    params = Chem.SmilesParserParams()
    params.removeHs = False  # type: ignore[assignment]  # RDKit stub types
    params.sanitize = False  # type: ignore[assignment]  # RDKit stub types
    with _captured_log() as log:
        mol = Chem.MolFromSmiles(text, params)
    if mol is None:
        raise StructureError(
            f"cannot parse SMILES {text!r}: {_smiles_failure(text, log)}; "
            "check brackets, ring-closure digits and atom symbols"
        )
    with _captured_log():
        problems = Chem.DetectChemistryProblems(mol)
    if problems:
        p = problems[0]
        atom = ""
        if hasattr(p, "GetAtomIdx"):
            atom = f" at atom {p.GetAtomIdx()} (0-based)"
        raise StructureError(
            f"SMILES {text!r} is not a valid structure{atom}: {p.Message()}; "
            "check valences, charges and aromatic rings"
        )
    Chem.SanitizeMol(mol)
    return mol


def _read_file(path: Path) -> Chem.Mol:
    if path.is_dir():
        raise InputFileError(
            f"{str(path)!r} is a folder, not a structure file; give a MOL/SDF path or a SMILES",
            path=path,
        )
    if not path.is_file():
        raise InputFileError(
            f"structure file {str(path)!r} does not exist; give a MOL/SDF path or a SMILES",
            path=path,
        )
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except OSError as exc:
        raise InputFileError(f"cannot read structure file: {exc.strerror}", path=path) from exc
    if not text.strip():
        raise InputFileError("structure file is empty; expected a molfile", path=path)
    records = [r for r in text.split("$$$$") if r.strip()]
    block = records[0]
    if len(records) > 1:
        warnings.warn(
            f"{path.name} holds {len(records)} structures; only the first is checked",
            CtallyWarning,
            stacklevel=3,
        )
    with _captured_log() as log:
        mol = Chem.MolFromMolBlock(block, sanitize=True, removeHs=False)
    if mol is None:
        detail = "; ".join(m.strip() for m in log) or (
            "not a valid molfile (its header, counts line or atom and bond blocks"
            " do not parse); give a V2000/V3000 MOL or SDF file"
        )
        raise InputFileError(f"cannot read a structure from the file: {detail}", path=path)
    if mol.GetNumConformers() and mol.GetConformer().Is3D():
        Chem.AssignStereochemistryFrom3D(mol)
    return mol


def load_structure(structure: str | os.PathLike[str] | Chem.Mol) -> Chem.Mol:
    """Read a proposed structure into an RDKit molecule with protium removed.

    Parameters
    ----------
    structure : str, path or rdkit.Chem.Mol
        A SMILES string, the path of a MOL/SDF file (a string naming an existing
        file, or ending in ``.mol``/``.sdf``/``.mdl``/``.sd``; the first record of an
        SDF is used), or an RDKit molecule (copied, never modified).

    Returns
    -------
    rdkit.Chem.Mol
        Heavy atoms (and D/T atoms, which carry deuteration) in input order; every
        atom has the int property ``ctally_input_idx`` with its 0-based index in the
        input (explicit protium atoms removed from the graph, so the indices skip
        them).

    Raises
    ------
    StructureError
        Empty string, unparsable SMILES (with the position RDKit reports), invalid
        valences, or no carbon atom.
    InputFileError
        A missing, empty or unreadable structure file (``path`` set).

    References
    ----------
    .. [1] RDKit ``MolFromSmiles``/``MolFromMolBlock``/``RemoveHs`` (removeIsotopes=False).

    """
    source: Path | None = None  # the file the structure came from, for error messages
    if isinstance(structure, Chem.Mol):
        mol = Chem.Mol(structure)
        try:
            Chem.SanitizeMol(mol)
        except Exception as exc:  # RDKit raises its own sanitisation errors
            raise StructureError(f"the RDKit molecule does not sanitise: {exc}") from exc
    elif isinstance(structure, os.PathLike):
        source = Path(structure)
        mol = _read_file(source)
    elif isinstance(structure, str):
        text = structure.strip()
        if not text:
            raise StructureError("the structure is an empty string; give a SMILES or a file")
        if _is_file(text) or (_looks_like_file(text) and " " not in text):
            source = Path(text)
            mol = _read_file(source)
        else:
            mol = _parse_smiles(text)
    else:
        raise StructureError(
            f"a structure must be a SMILES, a MOL/SDF path or an RDKit Mol, "
            f"got {type(structure).__name__}"
        )
    mol = _strip_protium(mol)
    for atom in mol.GetAtoms():
        # square-planar/trigonal-bipyramidal/octahedral tags on main-group atoms come from
        # odd molfiles and mean nothing there: drop them
        if atom.GetChiralTag() not in (
            Chem.ChiralType.CHI_UNSPECIFIED,
            _CW,
            _CCW,
        ) and atom.GetAtomicNum() in (5, 6, 7, 8, 14, 15, 16, 33, 34):
            atom.SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
    if not any(a.GetAtomicNum() == 6 for a in mol.GetAtoms()):
        raise StructureError(
            f"the structure {Chem.MolToSmiles(mol)!r} has no carbon atom: nothing to check "
            "in a carbon-13 spectrum",
            path=source,
        )
    return mol


# ------------------------------------------------------------------ normalisation

_PATTERNS: dict[str, Chem.Mol] = {
    name: Chem.MolFromSmarts(sma)
    for name, sma in {
        # azole N-H next to (through the ring) a pyridine-type ring N: fast 1,2/1,3 shift
        "azole_nh": "[nH;r5]",
        "carboxylate": "[CX3](=O)[OX1-]",
        "terminal_anion": "[$([CX3]=O),$([PX4]=O),$([SX4]=O)]-[O-,S-;X1]",
        "ammonium": "[NX4+;!H0]",
        "aromatic_nh_plus": "[nH+]",
        "amidine_nh": "[NX3;!H0;!a;!$(N-[#6]=[O,S])]-[CX3;!a]=[NX2;!a]",
        # tertiary amides/carbamates (not ureas), thioamides; N-nitrosamines
        "amide": "[CX3;!a;!$(C(=[O,S])(N)N)](=[O,S;X1])-[NX3;!a;H0;!$(N-[!#6;!#1;!#7])]([#6])[#6]",
        "nitrosamine": "[NX3;H0;!a]([#6])([#6])-[NX2]=[OX1]",
    }.items()
}


def _azole_rings(mol: Chem.Mol) -> list[tuple[int, ...]]:
    """Aromatic five-rings holding an N-H and a pyridine-type N (tautomeric azoles)."""
    rings = []
    for ring in mol.GetRingInfo().AtomRings():
        if len(ring) != 5:
            continue
        atoms = [mol.GetAtomWithIdx(i) for i in ring]
        if not all(a.GetIsAromatic() for a in atoms):
            continue
        nh = any(a.GetAtomicNum() == 7 and a.GetTotalNumHs() > 0 for a in atoms)
        npy = any(
            a.GetAtomicNum() == 7 and a.GetTotalNumHs() == 0 and a.GetDegree() == 2 for a in atoms
        )
        if nh and npy:
            rings.append(tuple(ring))
    return rings


def _exchange_normalise(mol: Chem.Mol) -> tuple[Chem.Mol, set[int]]:
    """Move fast-exchanging protons so that all their sites look alike.

    Returns the new molecule (same atom order) and the carbons in tautomeric
    azole/amidine systems.
    """
    rw = Chem.RWMol(mol)
    touched: set[int] = set()
    for a in rw.GetAtoms():
        h = a.GetTotalNumHs()
        a.SetNoImplicit(True)
        a.SetNumExplicitHs(h)
    for _c, _o1, o2 in mol.GetSubstructMatches(_PATTERNS["carboxylate"]):
        o = rw.GetAtomWithIdx(o2)
        o.SetFormalCharge(0)
        o.SetNumExplicitHs(1)
    for (n,) in mol.GetSubstructMatches(_PATTERNS["ammonium"]):
        a = rw.GetAtomWithIdx(n)
        a.SetFormalCharge(0)
        a.SetNumExplicitHs(a.GetNumExplicitHs() - 1)
    for (n,) in mol.GetSubstructMatches(_PATTERNS["aromatic_nh_plus"]):
        a = rw.GetAtomWithIdx(n)
        a.SetFormalCharge(0)
        a.SetNumExplicitHs(a.GetNumExplicitHs() - 1)
    for ring in _azole_rings(mol):
        for i in ring:
            a = rw.GetAtomWithIdx(i)
            if a.GetAtomicNum() == 7 and a.GetNumExplicitHs() > 0 and a.GetFormalCharge() == 0:
                a.SetNumExplicitHs(a.GetNumExplicitHs() - 1)
                a.SetFormalCharge(-1)
                touched.update(j for j in ring if mol.GetAtomWithIdx(j).GetAtomicNum() == 6)
                break
    done: set[int] = set()
    for n, c, _n2 in mol.GetSubstructMatches(_PATTERNS["amidine_nh"]):
        if c in done:
            continue
        a = rw.GetAtomWithIdx(n)
        if a.GetFormalCharge() != 0 or a.GetNumExplicitHs() == 0:
            continue
        a.SetNumExplicitHs(a.GetNumExplicitHs() - 1)
        a.SetFormalCharge(-1)
        done.add(c)
        touched.add(c)
    out = rw.GetMol()
    try:
        with _captured_log():
            Chem.SanitizeMol(out)
    except Exception:  # an exotic case the rules do not fit: keep the drawing as given
        return Chem.Mol(mol), set()
    return out, touched


def _resonance_forms(mol: Chem.Mol) -> list[Chem.Mol]:
    """Resonance forms of a charged molecule (the molecule itself when neutral)."""
    # an anionic O/S on C(=O), P(=O) or S(=O) only swaps with its terminal twin: that
    # local swap never changes carbon classes, so it is not enumerated (a polyanion
    # would otherwise give 2**n forms)
    terminal = [m[1] for m in mol.GetSubstructMatches(_PATTERNS["terminal_anion"])]
    if terminal:
        rw = Chem.RWMol(mol)
        for i in terminal:
            a = rw.GetAtomWithIdx(i)
            a.SetFormalCharge(0)
            a.SetNumExplicitHs(a.GetNumExplicitHs() + 1)
        mol = rw.GetMol()
        mol.UpdatePropertyCache(strict=False)
    if not any(a.GetFormalCharge() for a in mol.GetAtoms()):
        return [Chem.Mol(mol)]
    supplier = Chem.ResonanceMolSupplier(mol, 0, _MAX_FORMS)
    if len(supplier) >= _MAX_FORMS:
        warnings.warn(
            f"more than {_MAX_FORMS} resonance forms: carbons of charged groups may be "
            "split where they are in fact equivalent",
            CtallyWarning,
            stacklevel=2,
        )
    forms = []
    for i in range(len(supplier)):
        form = supplier[i]
        if form is None:
            continue
        form = Chem.Mol(form)
        try:
            Chem.SanitizeMol(form)
        except Exception:  # a form RDKit cannot sanitise is skipped
            continue
        forms.append(form)
    if not forms:
        return [Chem.Mol(mol)]

    # RDKit also returns some forms with the charge on carbon, but not all symmetric
    # copies of them: keep only the forms with the fewest charged carbons.
    def charged_carbons(m: Chem.Mol) -> int:
        return sum(1 for a in m.GetAtoms() if a.GetAtomicNum() == 6 and a.GetFormalCharge())

    fewest = min(charged_carbons(f) for f in forms)
    return [f for f in forms if charged_carbons(f) == fewest]


def _varying(forms: Sequence[Chem.Mol]) -> tuple[set[int], set[int]]:
    """Bonds whose type, and atoms whose charge, change between resonance forms."""
    bonds: set[int] = set()
    atoms: set[int] = set()
    first = forms[0]
    for form in forms[1:]:
        for b0, b in zip(first.GetBonds(), form.GetBonds(), strict=True):
            if b0.GetBondType() != b.GetBondType():
                bonds.add(b.GetIdx())
        for a0, a in zip(first.GetAtoms(), form.GetAtoms(), strict=True):
            if a0.GetFormalCharge() != a.GetFormalCharge():
                atoms.add(a.GetIdx())
    for idx in bonds:
        b = first.GetBondWithIdx(idx)
        atoms.update((b.GetBeginAtomIdx(), b.GetEndAtomIdx()))
    return bonds, atoms


def _hybrid_ranks(forms: Sequence[Chem.Mol]) -> list[int]:
    """Constitutional symmetry ranks (ties kept) of the resonance hybrid."""
    bonds, atoms = _varying(forms)
    rw = Chem.RWMol(forms[0])
    for a in rw.GetAtoms():
        h = a.GetTotalNumHs()
        a.SetNoImplicit(True)
        a.SetNumExplicitHs(h)
        if a.GetIdx() in atoms:
            a.SetFormalCharge(0)
            a.SetIsAromatic(False)
    for idx in bonds:
        b = rw.GetBondWithIdx(idx)
        b.SetBondType(Chem.BondType.SINGLE)
        b.SetIsAromatic(False)
    hybrid = rw.GetMol()
    hybrid.UpdatePropertyCache(strict=False)
    Chem.FastFindRings(hybrid)
    return list(Chem.CanonicalRankAtoms(hybrid, breakTies=False, includeChirality=False))


def _amide_sites(mol: Chem.Mol, skip_bonds: set[int]) -> list[tuple[int, int, int]]:
    """(X, C, N) of tertiary amides/carbamates/thioamides and (O, N', N) of nitrosamines."""
    sites = []
    for c, x, n, *_ in mol.GetSubstructMatches(_PATTERNS["amide"]):
        bonds = {mol.GetBondBetweenAtoms(c, x).GetIdx(), mol.GetBondBetweenAtoms(c, n).GetIdx()}
        if not bonds & skip_bonds:
            sites.append((x, c, n))
    for n, _c1, _c2, n2, o in mol.GetSubstructMatches(_PATTERNS["nitrosamine"]):
        sites.append((o, n2, n))
    # an imide N (two acyl groups) shares its lone pair: no single slow C-N rotor
    per_n = Counter(n for _x, _c, n in sites)
    return [site for site in sites if per_n[site[2]] == 1]


def _zwitterion(form: Chem.Mol, sites: Iterable[tuple[int, int, int]]) -> Chem.Mol:
    """Draw each amide X=C-N as X(-)-C=N(+), so that C-N carries E/Z stereo."""
    rw = Chem.RWMol(form)
    for x, c, n in sites:
        rw.GetBondBetweenAtoms(x, c).SetBondType(Chem.BondType.SINGLE)
        rw.GetBondBetweenAtoms(c, n).SetBondType(Chem.BondType.DOUBLE)
        rw.GetAtomWithIdx(x).SetFormalCharge(rw.GetAtomWithIdx(x).GetFormalCharge() - 1)
        rw.GetAtomWithIdx(n).SetFormalCharge(rw.GetAtomWithIdx(n).GetFormalCharge() + 1)
    out = rw.GetMol()
    Chem.SanitizeMol(out)
    return out


def _tagged(form: Chem.Mol, skip_bonds: set[int], flip: frozenset[int] = frozenset()) -> Chem.Mol:
    """Give every unspecified potential stereo element a fixed arbitrary configuration.

    Atoms whose index is in `flip` get the other configuration (CCW instead of CW),
    double bonds whose index (offset by the atom count) is in `flip` trans instead of cis.
    """
    n_atoms = form.GetNumAtoms()
    rw = Chem.RWMol(form)
    for a in rw.GetAtoms():
        if a.GetChiralTag() != Chem.ChiralType.CHI_UNSPECIFIED or a.GetIsAromatic():
            continue
        deg = a.GetDegree()
        nh = a.GetTotalNumHs()
        z = a.GetAtomicNum()
        tetra = z in (6, 14) and deg + nh == 4 and deg >= 3
        tetra |= z == 7 and a.GetFormalCharge() == 1 and deg == 4
        tetra |= z in (15, 16) and deg >= 3 and nh == 0 and deg <= 4
        if tetra:
            a.SetChiralTag(_CCW if a.GetIdx() in flip else _CW)
    for b in rw.GetBonds():
        if b.GetBondType() != Chem.BondType.DOUBLE or b.GetIdx() in skip_bonds:
            continue
        if b.GetStereo() != Chem.BondStereo.STEREONONE:
            continue
        if b.IsInRing() and not any(b.IsInRingSize(k) for k in range(8, 40)):
            continue
        x, y = b.GetBeginAtom(), b.GetEndAtom()
        nx = [n.GetIdx() for n in x.GetNeighbors() if n.GetIdx() != y.GetIdx()]
        ny = [n.GetIdx() for n in y.GetNeighbors() if n.GetIdx() != x.GetIdx()]
        if nx and ny:
            b.SetStereoAtoms(nx[0], ny[0])
            trans = n_atoms + b.GetIdx() in flip
            b.SetStereo(Chem.BondStereo.STEREOTRANS if trans else Chem.BondStereo.STEREOCIS)
    return rw.GetMol()


def _mirrored(form: Chem.Mol) -> Chem.Mol:
    """Return the mirror image: every tetrahedral tag inverted (double bonds unchanged)."""
    rw = Chem.RWMol(form)
    for a in rw.GetAtoms():
        tag = a.GetChiralTag()
        if tag == _CW:
            a.SetChiralTag(_CCW)
        elif tag == _CCW:
            a.SetChiralTag(_CW)
    return rw.GetMol()


def _label_key(form: Chem.Mol, atom: int, *, legacy: bool) -> str:
    """Canonical isomeric SMILES of `form` with `atom` labelled by an isotope."""
    mol = Chem.Mol(form)
    mol.GetAtomWithIdx(atom).SetIsotope(_LABEL)
    if legacy:
        Chem.SetDoubleBondNeighborDirections(mol)
    Chem.AssignStereochemistry(mol, cleanIt=True, force=True)
    return str(Chem.MolToSmiles(mol))


@contextmanager
def _stereo_perception(legacy: bool) -> Iterator[None]:
    before = Chem.GetUseLegacyStereoPerception()
    Chem.SetUseLegacyStereoPerception(legacy)
    try:
        yield
    finally:
        Chem.SetUseLegacyStereoPerception(before)


class _Analysis:
    """Carbon classes of one fragment under one normalisation."""

    def __init__(
        self,
        forms: Sequence[Chem.Mol],
        amides: Sequence[tuple[int, int, int]],
        flip: frozenset[int] = frozenset(),
    ):
        self.ranks = _hybrid_ranks(forms)
        skip, _ = _varying(forms)
        ready = []
        for form in forms:
            if amides:
                try:
                    with _captured_log():
                        form = _zwitterion(form, amides)
                except Exception:  # cannot draw the zwitterion: use the plain form
                    pass
            ready.append(_tagged(form, skip, flip))
        self.forms = ready
        self.mirrors = [_mirrored(f) for f in ready]
        carbons = [a.GetIdx() for a in forms[0].GetAtoms() if a.GetAtomicNum() == 6]
        by_rank: dict[int, list[int]] = {}
        for i in carbons:
            by_rank.setdefault(self.ranks[i], []).append(i)
        self.classes: list[list[int]] = []
        for members in by_rank.values():
            self.classes.extend(self._split(members) if len(members) > 1 else [members])
        self.classes.sort()

    def _key(self, atom: int, *, mirrors: tuple[bool, ...], legacy: bool) -> str:
        with _stereo_perception(legacy):
            return min(
                _label_key(f, atom, legacy=legacy)
                for m in mirrors
                for f in (self.mirrors if m else self.forms)
            )

    def _split(self, members: list[int]) -> list[list[int]]:
        """Split one candidate class by the substitution test (cheapest keys first)."""
        # 1. labelled molecules alike as drawn (homotopic): usually settles it
        plain = {i: self._key(i, mirrors=(False,), legacy=True) for i in members}
        if len(set(plain.values())) == 1:
            return [members]
        # 2. {labelled, mirror image} as a pair: equal for enantiotopic atoms too
        keys = [{i: min(plain[i], self._key(i, mirrors=(True,), legacy=True)) for i in members}]
        if len(set(keys[0].values())) > 1:
            # 3. the other stereo perception (each misses some cases, see module notes)
            keys.append({i: self._key(i, mirrors=(False, True), legacy=False) for i in members})
        parent = {i: i for i in members}

        def find(i: int) -> int:
            while parent[i] != i:
                i = parent[i]
            return i

        for key in keys:
            first: dict[str, int] = {}
            for i in members:
                j = first.setdefault(key[i], i)
                parent[find(i)] = find(j)
        groups: dict[int, list[int]] = {}
        for i in members:
            groups.setdefault(find(i), []).append(i)
        return sorted(groups.values())

    def class_of(self) -> dict[int, int]:
        return {a: k for k, members in enumerate(self.classes) for a in members}


# ------------------------------------------------------------------ environment


def _heavy_neighbours(atom: Chem.Atom) -> list[Chem.Atom]:
    return [n for n in atom.GetNeighbors() if n.GetAtomicNum() != 1]


def _double_partner(mol: Chem.Mol, atom: Chem.Atom) -> Chem.Atom | None:
    for b in atom.GetBonds():
        if b.GetBondType() == Chem.BondType.DOUBLE:
            other: Chem.Atom = b.GetOtherAtom(atom)
            return other
    return None


def _carbonyl_env(mol: Chem.Mol, atom: Chem.Atom, hetero: Chem.Atom) -> str:
    others = [n for n in _heavy_neighbours(atom) if n.GetIdx() != hetero.GetIdx()]
    if hetero.GetAtomicNum() == 16:
        return "thiocarbonyl"
    n_o = sum(1 for n in others if n.GetAtomicNum() == 8)
    n_n = sum(1 for n in others if n.GetAtomicNum() == 7)
    halo = any(n.GetAtomicNum() in (9, 17, 35, 53) for n in others)
    if halo:
        return "carbonyl-halide"
    if n_o == 2:
        return "carbonate"
    if n_n == 2:
        return "carbonyl-urea"
    if n_n == 1 and n_o == 1:
        return "carbonyl-carbamate"
    if n_o == 1:
        o = next(n for n in others if n.GetAtomicNum() == 8)
        heavy = [x for x in _heavy_neighbours(o) if x.GetIdx() != atom.GetIdx()]
        if not heavy or o.GetFormalCharge() < 0:
            return "carbonyl-acid"
        r = heavy[0]
        if r.GetAtomicNum() == 6 and _double_partner(mol, r) is not None:
            pr = _double_partner(mol, r)
            if pr is not None and pr.GetAtomicNum() == 8:
                return "carbonyl-anhydride"
        return "carbonyl-ester"
    if n_n == 1:
        n = next(x for x in others if x.GetAtomicNum() == 7)
        acyl = sum(
            1
            for x in _heavy_neighbours(n)
            if x.GetIdx() != atom.GetIdx()
            and x.GetAtomicNum() == 6
            and (p := _double_partner(mol, x)) is not None
            and p.GetAtomicNum() == 8
        )
        return "carbonyl-imide" if acyl else "carbonyl-amide"
    if any(n.GetAtomicNum() == 16 for n in others):
        return "carbonyl-thioester"
    if atom.GetTotalNumHs() > 0 or len(others) < 2:
        return "carbonyl-aldehyde"
    return "carbonyl-ketone"


def _environment(mol: Chem.Mol, atom: Chem.Atom) -> str:
    """Coarse environment label of a carbon (keys of ``shift_ranges.toml``)."""
    heavy = _heavy_neighbours(atom)
    z = [n.GetAtomicNum() for n in heavy]
    hyb = atom.GetHybridization()
    ring3 = atom.IsInRingSize(3)
    if atom.GetIsAromatic():
        return _aromatic_env(mol, atom)
    triple = any(b.GetBondType() == Chem.BondType.TRIPLE for b in atom.GetBonds())
    doubles = [b for b in atom.GetBonds() if b.GetBondType() == Chem.BondType.DOUBLE]
    if triple:
        other = next(
            b.GetOtherAtom(atom) for b in atom.GetBonds() if b.GetBondType() == Chem.BondType.TRIPLE
        )
        if other.GetAtomicNum() == 7:
            return (
                "isonitrile"
                if other.GetFormalCharge() > 0 or atom.GetFormalCharge() < 0
                else "nitrile"
            )
        return "alkyne"
    if atom.GetFormalCharge() < 0 and any(n == 7 for n in z) and atom.GetDegree() == 1:
        return "isonitrile"
    if len(doubles) >= 2:
        return (
            "allene-central"
            if all(b.GetOtherAtom(atom).GetAtomicNum() == 6 for b in doubles)
            else "heterocumulene"
        )
    if doubles:
        partner = doubles[0].GetOtherAtom(atom)
        pz = partner.GetAtomicNum()
        if pz in (8, 16):
            return _carbonyl_env(mol, atom, partner)
        if pz == 7:
            others = [n for n in heavy if n.GetIdx() != partner.GetIdx()]
            if any(n.GetAtomicNum() == 7 for n in others):
                return "amidine-guanidine"
            if any(
                n.GetAtomicNum() in (7, 8)
                for n in _heavy_neighbours(partner)
                if n.GetIdx() != atom.GetIdx()
            ):
                return "oxime-hydrazone"
            return "imine"
        if (
            pz == 6
            and sum(1 for b in partner.GetBonds() if b.GetBondType() == Chem.BondType.DOUBLE) >= 2
        ):
            return "allene-terminal"
        if pz == 6:
            subs = [n for n in heavy if n.GetIdx() != partner.GetIdx()]
            if any(n.GetAtomicNum() == 8 for n in subs):
                return "alkene-O"
            if any(n.GetAtomicNum() == 7 for n in subs):
                return "alkene-N"
            if any(n.GetAtomicNum() in (9, 17, 35, 53) for n in subs):
                return "alkene-halogen"
            psubs = [n for n in _heavy_neighbours(partner) if n.GetIdx() != atom.GetIdx()]
            if any(
                n.GetAtomicNum() in (7, 8)
                and not n.GetIsAromatic()
                and _double_partner(mol, n) is None
                for n in psubs
            ):
                return "alkene-beta-donor"
            return "alkene"
        return "other"
    if hyb not in (Chem.HybridizationType.SP3, Chem.HybridizationType.SP3D):
        return "other"
    n_o = z.count(8)
    n_n = z.count(7)
    n_s = z.count(16)
    n_f = z.count(9)
    nh = atom.GetTotalNumHs()
    # hydrogens of any isotope: a CD3 is a methyl for its shift
    mult = nh + sum(1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 1)
    if n_f >= 3:
        return "CF3"
    if n_f == 2:
        return "CF2"
    if n_f == 1:
        return "sp3-F"
    if z.count(53):
        return "sp3-I"
    if z.count(35):
        return "sp3-Br"
    if z.count(17):
        return "sp3-Cl"
    if n_o >= 2:
        return "sp3-O2"
    if n_o and n_n:
        return "sp3-N-O"
    if n_o:
        if mult == 3 and len(heavy) == 1:
            return "OCH3"
        return "sp3-O-ring3" if ring3 else "sp3-O"
    if n_n:
        nitro = any(
            n.GetAtomicNum() == 7
            and n.GetFormalCharge() > 0
            and any(x.GetAtomicNum() == 8 for x in n.GetNeighbors())
            for n in heavy
        )
        if nitro:
            return "sp3-NO2"
        if mult == 3 and len(heavy) == 1:
            return "NCH3"
        return "sp3-N"
    if n_s:
        s = next(n for n in heavy if n.GetAtomicNum() == 16)
        oxidised = any(
            b.GetBondType() == Chem.BondType.DOUBLE or b.GetOtherAtom(s).GetFormalCharge() < 0
            for b in s.GetBonds()
            if b.GetOtherAtom(s).GetAtomicNum() == 8
        )
        if mult == 3 and len(heavy) == 1:
            return "SOCH3" if oxidised else "SCH3"
        return "sp3-S"
    if any(x not in (1, 6) for x in z):
        return "sp3-Si" if 14 in z else "sp3-other"
    if ring3:
        return "sp3-ring3"
    return {3: "sp3-CH3", 2: "sp3-CH2", 1: "sp3-CH"}.get(mult, "sp3-C")


def _aromatic_env(mol: Chem.Mol, atom: Chem.Atom) -> str:
    ring_atoms = [n for n in atom.GetNeighbors() if n.GetIsAromatic()]
    exo = [
        n
        for n in _heavy_neighbours(atom)
        if not mol.GetBondBetweenAtoms(atom.GetIdx(), n.GetIdx()).GetIsAromatic()
    ]
    hetero_ring = False
    ri = mol.GetRingInfo()
    for ring in ri.AtomRings():
        if atom.GetIdx() in ring and all(mol.GetAtomWithIdx(i).GetIsAromatic() for i in ring):
            if any(mol.GetAtomWithIdx(i).GetAtomicNum() != 6 for i in ring):
                hetero_ring = True
    ring_het = [n for n in ring_atoms if n.GetAtomicNum() != 6]
    exo_double_o = any(
        n.GetAtomicNum() in (8, 16)
        and mol.GetBondBetweenAtoms(atom.GetIdx(), n.GetIdx()).GetBondType() == Chem.BondType.DOUBLE
        for n in exo
    )
    if exo_double_o:
        thio = any(n.GetAtomicNum() == 16 for n in exo)
        return "heteroaromatic-C=S" if thio else "heteroaromatic-C=O"
    if hetero_ring:
        if any(
            n.GetAtomicNum() == 7 and n.GetTotalNumHs() == 0 and n.GetDegree() == 2
            for n in ring_het
        ):
            return "heteroaromatic-C=N"
        ring_z = {n.GetAtomicNum() for n in ring_het}
        for zz, env in (
            (8, "heteroaromatic-C-o"),
            (16, "heteroaromatic-C-s"),
            (7, "heteroaromatic-C-nR"),
        ):
            if zz in ring_z:
                return env
        if ring_het:
            return "heteroaromatic-C-X"
        if not exo or all(n.GetAtomicNum() == 6 for n in exo):
            return "heteroaromatic-C"
    exo_z = {n.GetAtomicNum() for n in exo}
    for zz, env in (
        (9, "aromatic-C-F"),
        (8, "aromatic-C-O"),
        (7, "aromatic-C-N"),
        (17, "aromatic-C-Cl"),
        (35, "aromatic-C-Br"),
        (53, "aromatic-C-I"),
        (16, "aromatic-C-S"),
    ):
        if zz in exo_z:
            return env
    if exo_z - {1, 6}:
        return "aromatic-C-other"
    if hetero_ring:
        return "heteroaromatic-C"
    any_h = atom.GetTotalNumHs() + sum(1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 1)
    return "aromatic-CH" if any_h else "aromatic-C"


# ---------------------------------------------------------------------- couplings


def _fluorine_kind(mol: Chem.Mol, f: Chem.Atom) -> str:
    c = f.GetNeighbors()[0]
    nf = sum(1 for n in c.GetNeighbors() if n.GetAtomicNum() == 9)
    if c.GetIsAromatic():
        return "aromatic"
    if any(
        b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(c).GetAtomicNum() == 8
        for b in c.GetBonds()
    ):
        return "acyl"
    if any(b.GetBondType() == Chem.BondType.DOUBLE for b in c.GetBonds()):
        return "alkene"
    return {3: "cf3", 2: "cf2"}.get(nf, "alkyl")


def _phosphorus_kind(mol: Chem.Mol, p: Chem.Atom, carbon: Chem.Atom, path: Sequence[int]) -> str:
    if len(path) >= 2 and mol.GetAtomWithIdx(path[1]).GetAtomicNum() == 8:
        return "ester"
    if p.GetFormalCharge() > 0 and p.GetDegree() == 4:
        return "phosphonium"
    double_o = any(
        b.GetOtherAtom(p).GetAtomicNum() in (8, 16)
        and (b.GetBondType() == Chem.BondType.DOUBLE or b.GetOtherAtom(p).GetFormalCharge() < 0)
        for b in p.GetBonds()
    )
    n_c = sum(1 for n in p.GetNeighbors() if n.GetAtomicNum() == 6)
    if double_o and n_c >= 3:
        return "oxide"
    if double_o or p.GetDegree() >= 4:
        return "phosphonate"
    return "phosphine"


def _couplings_of(
    mol: Chem.Mol, idx: int, fclass: dict[int, int], hetero: Sequence[int]
) -> tuple[tuple[Coupling, ...], set[str]]:
    """Return the expected C-F, C-P and C-D splittings of carbon `idx`."""
    table = _couplings()
    out: list[Coupling] = []
    flags: set[str] = set()
    atom = mol.GetAtomWithIdx(idx)
    groups: dict[tuple[str, int, Any], int] = {}
    ranges: dict[tuple[str, int, Any], tuple[float, float]] = {}
    for h in hetero:
        other = mol.GetAtomWithIdx(h)
        z = other.GetAtomicNum()
        path = Chem.GetShortestPath(mol, idx, other.GetIdx())
        if not path:
            continue
        bonds = len(path) - 1
        if z == 9:
            kind = _fluorine_kind(mol, other)
            key = f"{kind}.{bonds}"
            rng = table["fluorine"].get(key)
            nucleus = "19F"
        else:
            kind = _phosphorus_kind(mol, other, atom, path)
            key = f"{kind}.{bonds}"
            rng = table["phosphorus"].get(key)
            nucleus = "31P"
        if rng is None:
            continue
        gk = (nucleus, bonds, fclass.get(other.GetIdx(), other.GetIdx()))
        groups[gk] = groups.get(gk, 0) + 1
        ranges[gk] = rng
        if bonds <= 3:
            flags.add("coupled-F" if z == 9 else "coupled-P")
    for gk in sorted(groups, key=lambda g: (g[0], g[1], str(g[2]))):
        out.append(Coupling(gk[0], gk[1], ranges[gk], groups[gk]))
    nd = sum(1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 1 and n.GetIsotope() == 2)
    if nd:
        flags.add("deuterated")
        hyb = atom.GetHybridization()
        if hyb == Chem.HybridizationType.SP:
            key = "sp.0"
        elif hyb == Chem.HybridizationType.SP2 or atom.GetIsAromatic():
            key = "sp2.0"
        else:
            neg = sum(
                1 for n in atom.GetNeighbors() if n.GetAtomicNum() in (7, 8, 9, 16, 17, 35, 53)
            )
            key = f"sp3.{min(neg, 2)}"
        out.append(Coupling("2H", 1, table["deuterium"][key], nd))
    return tuple(out), flags


# ---------------------------------------------------------------------- classes


def _n_side(mol: Chem.Mol, c: int, n: int) -> set[int]:
    """Atoms reached from amide N without crossing the C-N bond (the N-substituents)."""
    seen = {n}
    stack = [n]
    while stack:
        i = stack.pop()
        for nb in mol.GetAtomWithIdx(i).GetNeighbors():
            j = nb.GetIdx()
            if j == c or j in seen:
                continue
            seen.add(j)
            stack.append(j)
    seen.discard(n)
    return seen if c not in seen else set()


#: Alternative configurations tried when two or more stereo elements are unspecified.
_VARIANTS = 3


def _configuration_variants(frag: Chem.Mol) -> list[frozenset[int]]:
    """Flip sets for other relative configurations of unspecified stereo elements.

    Empty unless some stereo element is unspecified and there are at least two in
    all (a lone one only makes the mirror image or the other planar isomer, with the
    same classes).  Up to three unspecified elements every relative configuration is
    tried; beyond that ``_VARIANTS`` seeded random ones.
    """
    n_atoms = frag.GetNumAtoms()
    unspecified = []
    specified = 0
    for si in Chem.FindPotentialStereo(frag):
        if si.type == Chem.StereoType.Atom_Tetrahedral:
            element = si.centeredOn
        elif si.type == Chem.StereoType.Bond_Double:
            element = n_atoms + si.centeredOn
        else:
            continue
        if si.specified == Chem.StereoSpecified.Unspecified:
            unspecified.append(element)
        else:
            specified += 1
    n = len(unspecified)
    if n == 0 or n + specified < 2:
        return []
    if n <= 3:
        # with nothing specified, flipping everything gives the mirror image: skip half
        masks = range(1, 2**n if specified else 2 ** (n - 1))
        return [frozenset(e for k, e in enumerate(unspecified) if m >> k & 1) for m in masks]
    rng = random.Random(n)
    variants: list[frozenset[int]] = []
    while len(variants) < _VARIANTS:
        pick = frozenset(e for e in unspecified if rng.random() < 0.5)
        if pick and pick not in variants:
            variants.append(pick)
    return variants


def _fragment_classes(frag: Chem.Mol) -> list[tuple[list[int], set[str], int | None]]:
    """Carbon classes of one fragment: (atoms, flags, partner index within fragment)."""
    amides = _amide_sites(frag, set())
    carboxylates = {m[0] for m in frag.GetSubstructMatches(_PATTERNS["carboxylate"])}
    res_forms = _resonance_forms(frag)
    res_bonds, res_atoms = _varying(res_forms)
    exch_mol, tautomeric = _exchange_normalise(frag)
    if Chem.MolToSmiles(exch_mol) == Chem.MolToSmiles(frag):
        forms, sites = res_forms, _amide_sites(frag, res_bonds)
    else:
        forms = _resonance_forms(exch_mol)
        sites = _amide_sites(exch_mol, _varying(forms)[0])
    full = _Analysis(forms, sites)
    variants = _configuration_variants(frag)
    if variants:
        # the relative configuration is not given: a carbon pair counts as one class only
        # if it is equivalent in every configuration tried (the finest partition wins)
        maps = [full.class_of()] + [_Analysis(forms, sites, v).class_of() for v in variants]
        groups: dict[tuple[int, ...], list[int]] = {}
        for members in full.classes:
            for a in members:
                groups.setdefault(tuple(m[a] for m in maps), []).append(a)
        full.classes = sorted(groups.values())
    # constitutional ranks of the localised drawing and of its resonance hybrid: a class
    # spanning several of them was merged by resonance or by exchange
    plain_of = list(Chem.CanonicalRankAtoms(frag, breakTies=False, includeChirality=False))
    res_of = _hybrid_ranks(res_forms) if len(res_forms) > 1 else plain_of
    amide_sides = [(_n_side(frag, c, n), n) for _x, c, n in amides]
    alpha = {
        nb.GetIdx()
        for _x, c, n in amides
        if not frag.GetBondBetweenAtoms(c, n).IsInRing()  # lactams cannot rotate
        for nb in frag.GetAtomWithIdx(n).GetNeighbors()
        if nb.GetIdx() != c and nb.GetAtomicNum() == 6
    }
    out: list[tuple[list[int], set[str], int | None]] = []
    for members in full.classes:
        flags: set[str] = set()
        if len({plain_of[a] for a in members}) > 1 and len({res_of[a] for a in members}) == 1:
            flags.add("resonance-averaged")
        if len({res_of[a] for a in members}) > 1:
            flags.add("exchange-averaged")
        if any(a in res_atoms for a in members) and len(res_forms) > 1:
            flags.add("resonance-averaged")
        if any(a in carboxylates for a in members):
            flags.add("resonance-averaged")
        if any(a in tautomeric for a in members):
            flags.add("exchange-averaged")
        if any(a in alpha for a in members):
            flags.add("amide-rotation")
        out.append((members, flags, None))
    # diastereotopic / rotamer partners: classes from one constitutional candidate class
    by_rank: dict[int, list[int]] = {}
    for k, (members, _f, _p) in enumerate(out):
        by_rank.setdefault(full.ranks[members[0]], []).append(k)
    for ks in by_rank.values():
        if len(ks) < 2:
            continue
        for pos, k in enumerate(ks):
            members, flags, _ = out[k]
            partner = ks[(pos + 1) % len(ks)] if len(ks) == 2 else ks[0 if pos else 1]
            union = set(members) | set(out[partner][0])
            if any(union <= side for side, _n in amide_sides):
                flags.add("amide-rotation")
            else:
                flags.add("diastereotopic")
            out[k] = (members, flags, partner)
    return out


def _protium(atom: Chem.Atom) -> int:
    return int(atom.GetTotalNumHs())


def expected_inventory(
    structure: str | os.PathLike[str] | Chem.Mol, *, name: str | None = None
) -> Expectation:
    """Return the expected NMR-distinct carbon classes of a proposed structure.

    Parameters
    ----------
    structure : str, path or rdkit.Chem.Mol
        As for :func:`load_structure`.
    name : str, optional
        Display name (default: the canonical SMILES).

    Returns
    -------
    Expectation
        One :class:`~verify.model.CarbonClass` per distinct carbon class, atom indices
        0-based in the input order; multiplicity by attached protium only; shift
        ranges in ppm; coupling ranges in Hz.  Identical fragments (a 2:1 salt) share
        classes; each class names its fragment (index into ``Expectation.fragments``).

    Raises
    ------
    StructureError, InputFileError
        As for :func:`load_structure`.

    References
    ----------
    .. [1] Mislow & Raban, Top. Stereochem. 1 (1967) 1 (substitution test).
    .. [2] Pretsch et al., Structure Determination of Organic Compounds, 4th ed.,
       Springer 2009 (shift ranges, C-F/C-P couplings; from memory, see the data files).

    """
    mol = load_structure(structure)
    ranges = _shift_ranges()
    input_idx = [a.GetIntProp(_INPUT_IDX) for a in mol.GetAtoms()]
    frag_atoms = Chem.GetMolFrags(mol, asMols=False, sanitizeFrags=False)
    frag_mols = Chem.GetMolFrags(mol, asMols=True, sanitizeFrags=True)
    fragments: list[str] = []
    frag_key: list[int] = []
    orders: list[list[int]] = []
    for fm in frag_mols:
        smi = Chem.MolToSmiles(fm)
        orders.append(list(fm.GetPropsAsDict(True, True)["_smilesAtomOutputOrder"]))
        if smi not in fragments:
            fragments.append(smi)
        frag_key.append(fragments.index(smi))
    fclass = dict(enumerate(Chem.CanonicalRankAtoms(mol, breakTies=False, includeChirality=False)))
    hetero = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() in (9, 15)]
    classes: list[CarbonClass] = []
    done: set[int] = set()
    for f, fm in enumerate(frag_mols):
        key = frag_key[f]
        if key in done or not any(a.GetAtomicNum() == 6 for a in fm.GetAtoms()):
            continue
        done.add(key)
        copies = [g for g in range(len(frag_mols)) if frag_key[g] == key]
        local = _fragment_classes(fm)
        pos = {a: k for k, a in enumerate(orders[f])}
        base = len(classes)
        for members, flags, partner in local:
            mapped: list[int] = []
            for g in copies:
                # the same canonical SMILES: the k-th atom written corresponds
                for m in members:
                    mapped.append(frag_atoms[g][orders[g][pos[m]]])
            rep = mol.GetAtomWithIdx(frag_atoms[f][members[0]])
            env = _environment(mol, rep)
            couplings, cflags = _couplings_of(mol, rep.GetIdx(), fclass, hetero)
            nh = _protium(rep)
            mult: Multiplicity = MULTIPLICITIES[min(nh, 3)]
            # shift ranges by hydrogens of any isotope (a CD2 shifts like a CH2)
            anyh = nh + sum(1 for n in rep.GetNeighbors() if n.GetAtomicNum() == 1)
            hmult = MULTIPLICITIES[min(anyh, 3)]
            all_flags = flags | cflags
            ordered = tuple(f for f in _FLAG_ORDER if f in all_flags)
            classes.append(
                CarbonClass(
                    atoms=tuple(input_idx[i] for i in mapped),
                    multiplicity=mult,
                    environment=env,
                    shift_range=ranges.get(f"{env}.{hmult}", ranges.get(env, ranges["other"])),
                    flags=ordered,
                    fragment=key,
                    couplings=couplings,
                    partner=None if partner is None else base + partner,
                )
            )
    classes = _sorted_classes(classes)
    smiles = Chem.MolToSmiles(mol)
    return Expectation(
        structure=smiles,
        formula=rdMolDescriptors.CalcMolFormula(mol),
        classes=tuple(classes),
        fragments=tuple(fragments),
        molblock=_molblock(structure, mol),
        name=name or smiles,
    )


_FLAG_ORDER = (
    "diastereotopic",
    "amide-rotation",
    "resonance-averaged",
    "exchange-averaged",
    "deuterated",
    "coupled-F",
    "coupled-P",
)


def _sorted_classes(classes: list[CarbonClass]) -> list[CarbonClass]:
    """Sort classes by first atom and point each partner at its new index."""
    order = sorted(range(len(classes)), key=lambda k: classes[k].atoms[0])
    new = {old: pos for pos, old in enumerate(order)}
    out = []
    for old in order:
        c = classes[old]
        partner = None if c.partner is None else new[c.partner]
        out.append(replace(c, partner=partner))
    return out


def _molblock(structure: object, mol: Chem.Mol) -> str:
    """Molfile for depiction whose atom numbering equals the reported indices."""
    idx = [a.GetIntProp(_INPUT_IDX) for a in mol.GetAtoms()]
    if idx == list(range(len(idx))):
        return str(Chem.MolToMolBlock(mol))
    # protium atoms interleaved with heavy atoms: keep them, so numbering survives
    return mol.GetProp(_INPUT_BLOCK) if mol.HasProp(_INPUT_BLOCK) else ""


# ------------------------------------------------------------------------ output


def expectation_to_dict(exp: Expectation) -> dict[str, Any]:
    """Return the expectation as JSON-ready data (the ``ctally expect --json`` shape).

    Parameters
    ----------
    exp : Expectation
        The expected inventory.

    Returns
    -------
    dict
        ``{"structure", "formula", "classes": [...], "inventory": {...}, "signals": {...}}``;
        each class has ``atoms`` (0-based), ``multiplicity``, ``carbons``,
        ``environment``, ``shift_range`` [lo, hi] in ppm, ``predicted_ppm``, ``flags``,
        ``label``, ``fragment``, ``partner`` and ``couplings`` (J ranges in Hz).
        ``inventory`` counts carbons, ``signals`` counts classes.

    """
    return {
        "structure": exp.structure,
        "formula": exp.formula,
        "name": exp.name,
        "fragments": list(exp.fragments),
        "classes": [
            {
                "atoms": list(c.atoms),
                "multiplicity": c.multiplicity,
                "carbons": c.carbons,
                "environment": c.environment,
                "shift_range": [c.shift_range[0], c.shift_range[1]],
                "predicted_ppm": c.predicted_ppm,
                "flags": list(c.flags),
                "label": c.label,
                "fragment": c.fragment,
                "partner": c.partner,
                "couplings": [
                    {
                        "nucleus": j.nucleus,
                        "bonds": j.bonds,
                        "j_range_hz": [j.j_range_hz[0], j.j_range_hz[1]],
                        "partners": j.partners,
                    }
                    for j in c.couplings
                ],
            }
            for c in exp.classes
        ],
        "inventory": exp.inventory(),
        "signals": exp.signals(),
    }


def _coupling_text(j: Coupling) -> str:
    lo, hi = j.j_range_hz
    times = f"{j.partners}x" if j.partners > 1 else ""
    return f"{j.bonds}J({j.nucleus}) {times}{lo:g}-{hi:g} Hz"


def format_expectation(exp: Expectation) -> str:
    """Readable table of the expected classes and their totals (for ``ctally expect``).

    Parameters
    ----------
    exp : Expectation
        The expected inventory.

    Returns
    -------
    str
        One line per class (label, atoms 0-based, multiplicity, carbons, shift range in
        ppm, environment, flags and couplings), then the carbon and signal totals.

    """
    head = ("class", "atoms", "mult", "n", "range/ppm", "environment", "flags")
    rows = [head]
    for k, c in enumerate(exp.classes):
        flags = list(c.flags)
        if c.partner is not None:
            flags.append(f"partner #{c.partner + 1}")
        flags.extend(_coupling_text(j) for j in c.couplings)
        rows.append(
            (
                f"#{k + 1} {c.label}",
                ",".join(str(a) for a in c.atoms),
                c.multiplicity,
                str(c.carbons),
                f"{c.shift_range[0]:g}-{c.shift_range[1]:g}",
                c.environment,
                "; ".join(flags),
            )
        )
    widths = [max(len(r[i]) for r in rows) for i in range(len(head) - 1)]
    lines = [
        "  ".join(cell.ljust(w) for cell, w in zip(r[:-1], widths, strict=True)) + "  " + r[-1]
        for r in rows
    ]
    inv = exp.inventory()
    sig = exp.signals()
    lines.append("")
    lines.append(f"structure: {exp.structure}   formula: {exp.formula}")
    lines.append(
        "carbons:  "
        + "  ".join(f"{m} {inv[m]}" for m in MULTIPLICITIES)
        + f"  (total {sum(inv.values())})"
    )
    lines.append(
        "signals:  "
        + "  ".join(f"{m} {sig[m]}" for m in MULTIPLICITIES)
        + f"  (total {sum(sig.values())})"
    )
    return "\n".join(lines)
