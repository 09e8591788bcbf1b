"""Predict the carbon-13 shift of every carbon of a structure by additive increments.

The stage fills :attr:`CarbonClass.predicted_ppm` and :attr:`CarbonClass.prediction_sd`
so that the assignment can tell apart structures with the same CHn inventory
(regioisomers, homologues) and flag carbons far from where they should be.

Method: the classical additive-increment schemes of the handbooks, one per kind of
carbon, with the numbers in ``verify/data/increments.toml`` (written from memory of the
tables cited there):

* benzene-ring carbons: 128.5 ppm plus ipso/ortho/meta/para increments of each
  substituent; ring nitrogens of pyridine-type rings and fused rings are treated as
  substituents too; five-membered heteroaromatics start from the parent ring's shift by
  position;
* alkene carbons: 123.3 ppm plus alpha/beta/gamma increments on both ends;
* sp3 carbons: the Grant–Paul sum with steric and ring corrections, plus functional-group
  alpha/beta/gamma increments;
* C=O, C=S, C=N and sp carbons: a typical value per type, adjusted for conjugation,
  ring size and branching at the alpha carbon.

Where plain additivity is known to fail, a few corrections derived from parent compounds
are applied (named in the data file): damped ipso terms for alkyl substituents, scaled
heteroatom ipso terms next to a ring nitrogen, 1,2-dioxy pairs on benzene rings,
several heteroatoms or groups on one sp3 carbon, gamma effects through aryl and vinyl
groups, push-pull and conjugation in alkenes.

Each prediction carries an expected error (one standard deviation, ppm) that grows with the
number of increments used; the SDs were calibrated on an open assigned-shift set
(nmrshiftdb2-derived, see ``benchmarks/bench_predict.py``) so that about 92 % of its errors
lie within 2 SD.  On that set the mean absolute error is about 3.7 ppm overall, 1.8 ppm for
lone benzene rings with at most two substituents and 2.1 ppm for saturated hydrocarbon
carbons; alkene carbons (about 6 ppm) are the weakest.  A carbon no scheme covers gets the
midpoint of its class's shift range with SD a quarter of the range width.  The stage never
fails on an unusual structure and never returns NaN.

Not modelled: solvent, concentration and pH effects (acids and amines shift by several ppm
between CDCl3 and DMSO-d6 or on protonation), stereochemistry beyond cis/trans in rings,
tautomer averaging (done by :mod:`verify.structure` merging classes), and
deuterium isotope shifts.

Assumes a sanitized RDKit Mol (aromaticity perceived); hydrogens may be implicit or
explicit.  Deterministic; a 100-heavy-atom structure takes some tens of milliseconds.

References
----------
.. [1] E. Pretsch, P. Bühlmann, M. Badertscher, *Structure Determination of Organic
   Compounds*, 4th ed., Springer, Berlin 2009, chapter "13C NMR".
.. [2] D. M. Grant, E. G. Paul, *J. Am. Chem. Soc.* 1964, 86, 2984.
.. [3] C. Pascual, J. Meier, W. Simon, *Helv. Chim. Acta* 1966, 49, 164.
.. [4] D. F. Ewing, *Org. Magn. Reson.* 1979, 12, 499.

"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from functools import cache
from pathlib import Path
from typing import Any

from rdkit import Chem

from verify.errors import StructureError
from verify.model import CarbonClass, Expectation

__all__ = ["predict_atom_shifts", "predict_shifts"]

_DATA = Path(__file__).with_name("data") / "increments.toml"
_SINGLE = Chem.BondType.SINGLE
_DOUBLE = Chem.BondType.DOUBLE
_TRIPLE = Chem.BondType.TRIPLE
_HALOGENS = frozenset({9, 17, 35, 53})
_EZ = (
    Chem.BondStereo.STEREOE,
    Chem.BondStereo.STEREOZ,
    Chem.BondStereo.STEREOCIS,
    Chem.BondStereo.STEREOTRANS,
)
#: Crude (lo, hi) ranges in ppm used only when no class range is known (common practice).
_CRUDE_RANGE = {"sp3": (0.0, 90.0), "sp2": (100.0, 170.0), "sp": (65.0, 125.0)}


@dataclass(frozen=True)
class _Prediction:
    ppm: float
    sd: float
    method: str


@cache
def _tables() -> Mapping[str, Any]:
    with _DATA.open("rb") as fh:
        return tomllib.load(fh)


# --------------------------------------------------------------------------- helpers


def _heavy(atom: Chem.Atom, *exclude: int) -> list[Chem.Atom]:
    return [n for n in atom.GetNeighbors() if n.GetAtomicNum() > 1 and n.GetIdx() not in exclude]


def _hs(atom: Chem.Atom) -> int:
    return int(atom.GetTotalNumHs(includeNeighbors=True))


def _bond(mol: Chem.Mol, a: int, b: int) -> Chem.BondType:
    bond = mol.GetBondBetweenAtoms(a, b)
    return bond.GetBondType() if bond is not None else None


def _multiple(mol: Chem.Mol, atom: Chem.Atom, *exclude: int) -> list[tuple[Chem.Atom, Any]]:
    """Neighbours joined by a double or triple bond (aromatic bonds not counted)."""
    out = []
    for bond in atom.GetBonds():
        other = bond.GetOtherAtom(atom)
        if other.GetIdx() in exclude:
            continue
        if bond.GetBondType() in (_DOUBLE, _TRIPLE):
            out.append((other, bond.GetBondType()))
    return out


def _is_alkyl(mol: Chem.Mol, atom: Chem.Atom) -> bool:
    """Tell whether `atom` is an sp3 carbon (no multiple bond, not aromatic, < 2 F)."""
    if atom.GetAtomicNum() != 6 or atom.GetIsAromatic() or _multiple(mol, atom):
        return False
    return sum(1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 9) < 2


def _is_acyl(mol: Chem.Mol, atom: Chem.Atom) -> bool:
    """Tell whether `atom` is C=O/C=S carbon or a sulfonyl/phosphoryl centre."""
    if atom.GetAtomicNum() == 6:
        return any(o.GetAtomicNum() in (8, 16) and t == _DOUBLE for o, t in _multiple(mol, atom))
    if atom.GetAtomicNum() in (15, 16):
        return any(o.GetAtomicNum() == 8 and t == _DOUBLE for o, t in _multiple(mol, atom))
    return False


def _conjugating(mol: Chem.Mol, atom: Chem.Atom, exclude: int) -> bool:
    """Tell whether `atom` is aromatic or has a C=C/C≡C/C=N bond not to `exclude`."""
    if atom.GetIsAromatic():
        return True
    if atom.GetAtomicNum() != 6:
        return False
    return any(o.GetAtomicNum() in (6, 7) for o, _ in _multiple(mol, atom, exclude))


def _lookup(table: Mapping[str, Any], keys: Sequence[str]) -> tuple[Any, bool]:
    """First of `keys` in `table` (found=True), else ``table["other"]`` (found=False)."""
    for key in keys:
        if key in table:
            return table[key], True
    return table["other"], False


def _group(mol: Chem.Mol, frm: int, atom: Chem.Atom) -> tuple[str, ...]:
    """Name the substituent that starts at `atom`, seen from atom `frm`.

    Returns keys from the most specific to the most general, as used in the tables.
    """
    z = atom.GetAtomicNum()
    idx = atom.GetIdx()
    subs = _heavy(atom, frm)
    if z == 6:
        return _carbon_group(mol, frm, atom, subs)
    if z in _HALOGENS:
        return (atom.GetSymbol(),)
    if z == 8:
        if not subs:
            return ("O-", "OH") if atom.GetFormalCharge() < 0 else ("OH",)
        s = subs[0]
        if s.GetAtomicNum() == 6:
            if _is_acyl(mol, s):
                return ("OCOR",)
            return ("OAr", "OR") if s.GetIsAromatic() else ("OR",)
        return {14: ("OSi", "OR"), 7: ("ON", "OR"), 16: ("OS", "OCOR"), 15: ("OS", "OCOR")}.get(
            s.GetAtomicNum(), ("OR",)
        )
    if z == 7:
        n_o = sum(1 for s in subs if s.GetAtomicNum() == 8)
        if n_o >= 2 or (n_o == 1 and atom.GetFormalCharge() > 0 and len(subs) == 2):
            return ("NO2",)
        if atom.GetIsAromatic():
            return ("Nhet", "NR2")
        mult = _multiple(mol, atom, frm)
        for other, _ in mult:
            if other.GetAtomicNum() == 7:
                if any(t == _DOUBLE for _, t in _multiple(mol, other, idx)):
                    return ("N3", "NR2")
                return ("N=N", "N=C", "NR2")
            if other.GetAtomicNum() == 6:
                if any(o.GetAtomicNum() == 16 for o, _ in _multiple(mol, other, idx)):
                    return ("NCS", "N=C", "NR2")
                return ("N=C", "NR2")
            return ("NO2",)
        if atom.GetFormalCharge() > 0:
            if not _hs(atom) and len(subs) >= 3:
                return ("NR4", "NR3", "NR2")  # quaternary ammonium
            return ("NR3", "NR2")  # protonated amine
        if any(_is_acyl(mol, s) for s in subs):
            return ("NHCOR",) if _hs(atom) else ("NRCOR", "NHCOR")
        if any(s.GetIsAromatic() for s in subs):
            return ("NHAr", "NHR") if _hs(atom) else ("NRAr", "NHAr", "NR2")
        return ("NH2",) if _hs(atom) >= 2 else ("NHR",) if _hs(atom) == 1 else ("NR2",)
    if z == 16:
        n_oxo = sum(1 for o, t in _multiple(mol, atom, frm) if o.GetAtomicNum() == 8)
        others = [s for s in subs if _bond(mol, idx, s.GetIdx()) == _SINGLE]
        if n_oxo >= 2:
            kinds = {s.GetAtomicNum() for s in others}
            if 8 in kinds:
                return ("SO3H", "SO2R")
            if 7 in kinds:
                return ("SO2N", "SO2R")
            if 17 in kinds:
                return ("SO2Cl", "SO2R")
            return ("SO2R",)
        if n_oxo == 1:
            return ("SOR", "SO2R")
        if atom.GetIsAromatic():
            return ("aryl",)
        return ("SH",) if _hs(atom) else ("SR",)
    if z == 14:
        return ("SiR3",)
    if z == 5:
        return ("B",)
    if z == 15:
        return ("P",)
    if z == 34:
        return ("SR",)
    return ("other",)


def _carbon_group(
    mol: Chem.Mol, frm: int, atom: Chem.Atom, subs: list[Chem.Atom]
) -> tuple[str, ...]:
    idx = atom.GetIdx()
    if atom.GetIsAromatic():
        info = mol.GetRingInfo()
        if info.IsAtomInRingOfSize(idx, 5) and not info.IsAtomInRingOfSize(idx, 6):
            ring = next((r for r in info.AtomRings() if idx in r and len(r) == 5), ())
            if any(_ring_letter(mol.GetAtomWithIdx(i), ring) == "n" for i in ring):
                return ("azolyl", "aryl5", "aryl")
            return ("aryl5", "aryl")
        return ("aryl",)
    mult = _multiple(mol, atom, frm)
    for other, btype in mult:
        oz = other.GetAtomicNum()
        if btype == _TRIPLE:
            return ("CN",) if oz == 7 else ("alkynyl",)
        if oz == 8:
            rest = [s for s in subs if s.GetIdx() != other.GetIdx()]
            if not rest:
                return ("CHO",)
            r = rest[0]
            rz = r.GetAtomicNum()
            if rz == 8:
                if r.GetFormalCharge() < 0:
                    return ("COO-", "COOH")
                return ("COOH",) if _hs(r) else ("COOR",)
            if rz == 7:
                return ("CONH2", "CONR2") if _hs(r) >= 2 else ("CONR2",)
            if rz in (17, 35):
                return ("COCl",)
            if rz == 6 and r.GetIsAromatic():
                return ("COAr", "COR")
            return ("COR",)
        if oz == 16:
            return ("C=S", "C=N")
        if oz == 7:
            return ("C=N",)
        if oz == 6:
            return ("vinyl",)
    hetero = [s for s in subs if s.GetAtomicNum() != 6]
    if sum(1 for s in hetero if s.GetAtomicNum() == 9) >= 2:
        return ("CF3",)
    by_count = ("CH3", "CH2R", "CHR2", "CR3")[min(len(subs), 3)]
    keys: list[str] = []
    if len(hetero) >= 2:
        keys.append("CHX2")
    elif len(hetero) == 1 and len(subs) == 1:
        h = hetero[0]
        hz = h.GetAtomicNum()
        if hz == 8:
            keys += ["CH2OH", "CH2O"] if _hs(h) else ["CH2O"]
        elif hz == 7:
            keys.append("CH2N")
        elif hz == 17:
            keys.append("CH2Cl")
        elif hz == 35:
            keys.append("CH2Br")
        elif hz == 16:
            keys.append("CH2S")
    elif len(subs) == 1 and subs[0].GetAtomicNum() == 6:
        s = subs[0]
        if _is_acyl(mol, s):
            keys.append("CH2CO")
        elif any(o.GetAtomicNum() == 7 and t == _TRIPLE for o, t in _multiple(mol, s, idx)):
            keys.append("CH2CN")
    keys += [by_count, "CH2R", "alkyl"]
    return tuple(keys)


# ------------------------------------------------------------------------- aromatic


@dataclass(frozen=True)
class _Rings:
    rings: tuple[tuple[int, ...], ...]
    aromatic: tuple[tuple[int, ...], ...]

    def containing(self, idx: int, aromatic: bool = False) -> list[tuple[int, ...]]:
        pool = self.aromatic if aromatic else self.rings
        return [r for r in pool if idx in r]

    def smallest(self, idx: int) -> int | None:
        sizes = [len(r) for r in self.rings if idx in r]
        return min(sizes) if sizes else None


def _rings(mol: Chem.Mol) -> _Rings:
    try:
        atom_rings = mol.GetRingInfo().AtomRings()
    except RuntimeError:  # ring perception not run (unsanitized input): work on a copy
        copy = Chem.Mol(mol)
        Chem.FastFindRings(copy)
        atom_rings = copy.GetRingInfo().AtomRings()
    rings = tuple(tuple(r) for r in atom_rings)
    arom = tuple(r for r in rings if all(mol.GetAtomWithIdx(i).GetIsAromatic() for i in r))
    return _Rings(rings, arom)


def _ring_letter(atom: Chem.Atom, ring: tuple[int, ...]) -> str:
    z = atom.GetAtomicNum()
    if z == 7:
        outside = [n for n in atom.GetNeighbors() if n.GetIdx() not in ring]
        if _hs(atom) or outside or atom.GetFormalCharge() > 0:
            return "N"
        return "n"
    return atom.GetSymbol()


def _exo_double(mol: Chem.Mol, atom: Chem.Atom, ring: tuple[int, ...]) -> Chem.Atom | None:
    for other, btype in _multiple(mol, atom):
        if btype == _DOUBLE and other.GetIdx() not in ring:
            return other
    return None


def _fused_ring(rings: _Rings, y: int, z: int, ring: tuple[int, ...]) -> tuple[int, ...] | None:
    """Return the aromatic ring holding bond y–z that shares atoms with `ring`, if any."""
    for other in rings.aromatic:
        if other is not ring and y in other and z in other and len(set(other) & set(ring)) >= 2:
            return other
    return None


def _aromatic(mol: Chem.Mol, atom: Chem.Atom, rings: _Rings) -> _Prediction | None:
    t = _tables()
    sd = t["sd"]
    idx = atom.GetIdx()
    own = rings.containing(idx, aromatic=True)
    six = [r for r in own if len(r) == 6]
    if six:
        exo = _exo_double(mol, atom, six[0])
        if exo is not None:
            return _oxo_ring(mol, atom, six[0], exo)
        results = [_six_ring(mol, atom, r, rings) for r in six]
        ppm = sum(r[0] for r in results) / len(results)
        n = max(r[1] for r in results)
        kind = max(r[2] for r in results)
        base_sd = (sd["benzene"], sd["aromatic_fused"], sd["hetero6"])[kind]
        ipso_sd = sd["ipso"] if _heavy(atom, *six[0]) else 0.0  # substituted carbon
        return _Prediction(
            ppm, math.hypot(base_sd, sd["per_increment"] * math.sqrt(n), ipso_sd), "aromatic"
        )
    five = [r for r in own if len(r) == 5]
    if five:
        exo = _exo_double(mol, atom, five[0])
        if exo is not None:
            return _oxo_ring(mol, atom, five[0], exo)
        return _five_ring(mol, atom, five[0], rings)
    if own:  # three-, four-, seven-membered aromatic rings: typical values only
        other = t["aromatic"]["other_rings"]
        oxo = _exo_double(mol, atom, own[0]) is not None
        size = "7" if len(own[0]) >= 7 else "small"
        value = other[f"{size}_oxo" if oxo else size]
        return _Prediction(float(value), sd["other_ring"], "aromatic-other")
    return None


def _ordered(mol: Chem.Mol, ring: tuple[int, ...], start: int) -> list[int]:
    """Ring atoms in bond order starting at `start` (RDKit rings are already in order)."""
    k = ring.index(start)
    return list(ring[k:] + ring[:k])


def _six_ring(
    mol: Chem.Mol, atom: Chem.Atom, ring: tuple[int, ...], rings: _Rings
) -> tuple[float, int, int]:
    """Shift of a six-ring aromatic carbon: (ppm, increments used, kind 0/1/2)."""
    t = _tables()["aromatic"]
    aza = t["aza6"]
    order = _ordered(mol, ring, atom.GetIdx())
    ppm = t["benzene"]
    n = 0
    kind = 0
    n_alpha = 0
    next_to_n = any(_ring_letter(mol.GetAtomWithIdx(i), ring) == "n" for i in (order[1], order[-1]))
    for pos, y_idx in enumerate(order):
        d = min(pos, 6 - pos)
        y = mol.GetAtomWithIdx(y_idx)
        if y.GetAtomicNum() != 6:
            kind = 2
            name = ("", "alpha", "beta", "gamma")[d]
            if y.GetAtomicNum() == 7 and y.GetFormalCharge() > 0:
                ppm += aza.get(f"pyridinium_{name}", aza[name] * 0.5)
            elif y.GetAtomicNum() == 7 and (_hs(y) or _heavy(y, *ring)):
                ppm += aza[f"NH_{name}"]
            elif y.GetAtomicNum() == 7:
                ppm += aza[name]
                n_alpha += d == 1
            else:
                ppm += aza[f"O_{name}"]
            n += 1
            continue
        for z in _heavy(y, *ring):
            bt = _bond(mol, y_idx, z.GetIdx())
            if bt == _DOUBLE:  # exocyclic =O etc. on another ring atom (pyridone-type ring)
                kind = 2
                ppm += aza["oxo"][d]
                n += 1
                continue
            fused = _fused_ring(rings, y_idx, z.GetIdx(), ring)
            if fused is not None:
                kind = max(kind, 1)
                table = t["fused"]
                letter = _ring_letter(z, fused)
                if len(fused) == 5:
                    key = {"C": "C5", "N": "N5", "n": "n5", "O": "O5", "S": "S5"}.get(letter, "")
                else:
                    key = {"C": "C", "n": "n6", "N": "N6", "O": "O6"}.get(letter, "")
                incr, _ = _lookup(table, (key,))
                if d == 0 and next_to_n and z.GetAtomicNum() != 6:
                    ppm += incr[0] * t["ipso_next_to_n"]
                    n += 1
                    continue
            else:
                incr, found = _lookup(t["substituents"], _group(mol, y_idx, z))
                if not found:
                    kind = 2
                if d == 0:
                    ppm += _ipso(mol, y_idx, z, incr[0], next_to_n)
                    n += 1
                    continue
            ppm += incr[d]
            n += 1
    if n_alpha >= 2:
        ppm += aza["second_alpha"] * (n_alpha - 1)
    ppm += _oxygen_pairs(mol, order, ring)
    return ppm, n, kind


def _oxygen_pairs(mol: Chem.Mol, order: list[int], ring: tuple[int, ...]) -> float:
    """Correction for oxygen substituents on neighbouring ring carbons (1,2-dioxy).

    Two ortho O-substituents twist each other out of the ring plane, so the sum of the
    benzene increments is off near them: a member of the pair gets ``pair``, a carbon
    without oxygen next to the pair gets ``next`` (veratrole, pyrogallol ethers).
    """
    t = _tables()["aromatic"]["ortho_oxygen"]

    def oxygenated(i: int) -> bool:
        atom = mol.GetAtomWithIdx(i)
        return atom.GetAtomicNum() == 6 and any(
            z.GetAtomicNum() == 8 and _bond(mol, i, z.GetIdx()) == _SINGLE
            for z in _heavy(atom, *ring)
        )

    flags = [oxygenated(i) for i in order]
    total = 0.0
    for k in range(6):
        pair = (k, (k + 1) % 6)
        if not (flags[pair[0]] and flags[pair[1]]):
            continue
        if 0 in pair:
            total += t["pair"]
        elif not flags[0] and (1 in pair or 5 in pair):
            total += t["next"]
    return total


def _ipso(mol: Chem.Mol, y: int, z: Chem.Atom, tabled: float, next_to_n: bool) -> float:
    """Ipso increment of substituent `z` on ring atom `y`.

    An sp3 carbon substituent is built from the methyl value plus one term per atom on
    it, damped for two and three atoms (so that ethyl, isopropyl, tert-butyl, CH2OH,
    CH(OH)R ... come out of one table).  A heteroatom on a carbon next to a ring
    nitrogen has its ipso increment scaled down (2-methoxy-, 2-amino-, 2-chloropyridine).
    """
    t = _tables()["aromatic"]
    if z.GetAtomicNum() == 6 and _is_alkyl(mol, z):
        beta = t["ipso_beta"]
        terms: list[float] = []
        gammas: list[float] = []
        for w in _heavy(z, y):
            wz = w.GetAtomicNum()
            if wz == 6:
                if _is_alkyl(mol, w):
                    key = "C"
                    gammas.extend(_ipso_gamma(mol, z.GetIdx(), w))
                elif w.GetIsAromatic():
                    key = "aryl"
                elif _is_acyl(mol, w):
                    key = "acyl"
                elif any(bt == _TRIPLE for _, bt in _multiple(mol, w)):
                    key = (
                        "CN"
                        if any(o.GetAtomicNum() == 7 for o, _ in _multiple(mol, w))
                        else "vinyl"
                    )
                else:
                    key = "vinyl"
            elif wz == 8:
                key = "OH" if _hs(w) else "OR"
            elif wz == 7:
                key = "N" if not any(_is_acyl(mol, v) for v in _heavy(w, z.GetIdx())) else "NCO"
            else:
                key = w.GetSymbol()
            terms.append(beta.get(key, 0.0))
        value = t["substituents"]["CH3"][0] + sum(gammas)
        if terms:
            value += t["ipso_damping"][min(len(terms), 3) - 1] * sum(terms)
        return float(value)
    if next_to_n and z.GetAtomicNum() != 6:
        return float(tabled * t["ipso_next_to_n"])
    return tabled


def _ipso_gamma(mol: Chem.Mol, z: int, w: Chem.Atom) -> list[float]:
    """Gamma terms of the ipso increment: atoms on the carbon beta to the ring."""
    gamma = _tables()["aromatic"]["ipso_gamma"]
    out = []
    for v in _heavy(w, z):
        vz = v.GetAtomicNum()
        if vz == 6:
            out.append(gamma["acyl"] if _is_acyl(mol, v) else gamma["C"])
        else:
            out.append(gamma.get(v.GetSymbol(), gamma["other"]))
    return out


def _five_key(mol: Chem.Mol, ring: tuple[int, ...], start: int) -> str:
    order = _ordered(mol, ring, start)
    letters = [_ring_letter(mol.GetAtomWithIdx(i), ring) for i in order[1:]]
    forward = "".join(letters)
    backward = "".join(reversed(letters))
    return min(forward, backward)


def _five_ring(
    mol: Chem.Mol, atom: Chem.Atom, ring: tuple[int, ...], rings: _Rings
) -> _Prediction | None:
    t = _tables()
    arom = t["aromatic"]
    sd = t["sd"]
    order = _ordered(mol, ring, atom.GetIdx())
    base = arom["five"].get(_five_key(mol, ring, atom.GetIdx()))
    base_sd = sd["five_ring"]
    if base is None:  # a ring not in the table: by the number of ring heteroatoms
        generic = arom["five_generic"]
        near = sum(mol.GetAtomWithIdx(i).GetAtomicNum() != 6 for i in (order[1], order[-1]))
        far = sum(mol.GetAtomWithIdx(i).GetAtomicNum() != 6 for i in order[2:-1])
        base = generic["base"] + generic["adjacent"] * near + generic["further"] * far
        base_sd = sd["five_ring_generic"]
    ppm = float(base)
    n = 0
    scale = arom["five_ring_scale"]
    for pos, y_idx in enumerate(order):
        d = min(pos, 5 - pos)
        y = mol.GetAtomWithIdx(y_idx)
        for z in _heavy(y, *ring):
            if _bond(mol, y_idx, z.GetIdx()) == _DOUBLE:
                continue
            if _fused_ring(rings, y_idx, z.GetIdx(), ring) is not None:
                ppm += arom["five_fused"][d]
            else:
                incr, _ = _lookup(arom["substituents"], _group(mol, y_idx, z))
                ipso = _ipso(mol, y_idx, z, incr[0], False)
                ppm += (ipso, incr[1], 0.5 * (incr[2] + incr[3]))[d] * scale[d]
            n += 1
    return _Prediction(ppm, math.hypot(base_sd, sd["per_increment"] * math.sqrt(n)), "five")


def _oxo_ring(mol: Chem.Mol, atom: Chem.Atom, ring: tuple[int, ...], exo: Chem.Atom) -> _Prediction:
    t = _tables()
    table = t["aromatic"]["oxo6"]
    sd = t["sd"]["oxo6"]
    if exo.GetAtomicNum() == 16:
        return _Prediction(table["thione"], sd, "oxo-ring")
    letters = sorted(
        "C" if n.GetAtomicNum() == 6 else "N" if n.GetAtomicNum() == 7 else "O"
        for n in atom.GetNeighbors()
        if n.GetIdx() in ring
    )
    value = table.get(",".join(letters))
    if value is None:
        value = table["C,N"]
    if exo.GetAtomicNum() == 7:  # imino tautomer drawn aromatic: rough
        value -= 5.0
    return _Prediction(float(value), sd, "oxo-ring")


# --------------------------------------------------------------------------- alkenes


def _alkene(mol: Chem.Mol, atom: Chem.Atom, partner: Chem.Atom, rings: _Rings) -> _Prediction:
    t = _tables()
    a = t["alkene"]
    sd = t["sd"]
    x, y = atom.GetIdx(), partner.GetIdx()
    if len([1 for _, bt in _multiple(mol, atom) if bt == _DOUBLE]) >= 2:
        inner = any(
            len([1 for _, bt in _multiple(mol, o) if bt == _DOUBLE]) >= 2
            for o, _ in _multiple(mol, atom)
        )
        value = a["allene"]["cumulene_inner" if inner else "central"]
        return _Prediction(value, sd["allene"], "allene")
    if len([1 for _, bt in _multiple(mol, partner) if bt == _DOUBLE]) >= 2:
        return _Prediction(a["allene"]["terminal"], sd["allene"], "allene")
    ppm = a["base"]
    n = 0
    n_func = 0
    side_alpha = []
    acceptors = set(a["acceptors"])
    own_keys = [_group(mol, x, z)[0] for z in _heavy(atom, y) if not _is_alkyl(mol, z)]
    other_keys = [_group(mol, y, z)[0] for z in _heavy(partner, x) if not _is_alkyl(mol, z)]
    own_plain = bool(_heavy(atom, y)) and not acceptors.intersection(own_keys)
    for centre, other, own in ((atom, y, True), (partner, x, False)):
        suffix = "" if own else "_other"
        column = 0 if own else 1
        n_alpha = 0
        visited = {x, y}
        for z in _heavy(centre, other):
            visited.add(z.GetIdx())
        for z in _heavy(centre, other):
            if _is_alkyl(mol, z):
                n_alpha += 1
                ppm += a["alpha" + suffix]
                for k, w in enumerate(_heavy(z, *visited)):
                    visited.add(w.GetIdx())
                    hetero = a["beta_hetero" + suffix]
                    beta = a["beta" + suffix] if (k == 0 or not own) else a["beta_extra"]
                    ppm += hetero.get(w.GetSymbol(), beta)
                    for v in _heavy(w, *visited):
                        visited.add(v.GetIdx())
                        ppm += a["gamma" + suffix]
            else:
                keys = _group(mol, centre.GetIdx(), z)
                n_func += 1
                incr, _ = _lookup(a["substituents"], keys)
                damp = 1.0
                if not own and own_plain and keys[0] in ("aryl", "vinyl"):
                    damp = a["conjugated_damping"]
                elif not own and _heavy(atom, y) and keys[0] in a["donors"]:
                    damp = a["donor_damping"]
                ppm += incr[column] * damp
            n += 1
        side_alpha.append(n_alpha)
    if acceptors.intersection(other_keys):
        ppm += a["push_pull"] * side_alpha[0]
    size = _ring_with(rings, x, y)
    if size is not None:
        ppm += a["ring"].get(str(size), 0.0)
    if side_alpha[0] >= 2:
        ppm += a["gem"]
    if side_alpha[1] >= 2:
        ppm += a["gem_other"]
    n_own = len(_heavy(atom, y))
    n_other = len(_heavy(partner, x))
    if n_own and n_other:
        if n_own == 2 or n_other == 2:
            ppm += a["cis"] * (1 + (n_own == 2 and n_other == 2))
        elif _is_cis(mol, atom, partner, rings):
            ppm += a["cis"]
    return _Prediction(
        ppm,
        math.hypot(
            sd["alkene"],
            sd["alkene_per_increment"] * math.sqrt(n),
            sd["alkene_per_group"] * math.sqrt(n_func),
        ),
        "alkene",
    )


def _is_cis(mol: Chem.Mol, atom: Chem.Atom, partner: Chem.Atom, rings: _Rings) -> bool:
    bond = mol.GetBondBetweenAtoms(atom.GetIdx(), partner.GetIdx())
    if bond.IsInRing():
        size = min(
            (len(r) for r in rings.rings if atom.GetIdx() in r and partner.GetIdx() in r),
            default=99,
        )
        if size <= 8:
            return True
    return bond.GetStereo() in (Chem.BondStereo.STEREOZ, Chem.BondStereo.STEREOCIS)


# ----------------------------------------------------------------------- sp3 carbons


def _sp3(mol: Chem.Mol, atom: Chem.Atom, rings: _Rings) -> _Prediction:
    t = _tables()
    k = t["alkane"]
    sd = t["sd"]
    x = atom.GetIdx()
    neighbours = _heavy(atom)
    n_f = sum(1 for z in neighbours if z.GetAtomicNum() == 9)
    if n_f >= 2:
        if n_f >= 3:
            acyl = any(_is_acyl(mol, z) for z in neighbours if z.GetAtomicNum() == 6)
            value = k["cf3_acyl"] if acyl else k["cf3"]
        else:
            value = k["cf2"]
        return _Prediction(value, sd["sp3_fluorinated"], "sp3-fluorinated")
    terminal = len(neighbours) <= 2
    step = (k["alpha"], k["beta"], k["gamma"], k["delta"])
    ppm = k["base"]
    n = 0
    n_hetero = 0
    n_groups = 0
    visited = {x}
    frontier = [atom]
    for level in range(4):
        following = []
        for p in frontier:
            for a in _heavy(p):
                if a.GetIdx() in visited:
                    continue
                visited.add(a.GetIdx())
                if _is_alkyl(mol, a):
                    ppm += step[level]
                    following.append(a)
                    continue
                if level >= 3:
                    continue
                g, found = _lookup(k["groups"], _group(mol, p.GetIdx(), a))
                n += 1 + (not found)
                if level == 0:
                    ppm += g[0] if terminal else g[1]
                    n_groups += 1
                    ppm += _beyond_unsaturated(mol, x, a, visited)
                    n_hetero += _is_hetero(a)
                elif level == 1 and n_hetero and _is_hetero(a):
                    ppm += g[2] * k["beta_on_hetero"]
                else:
                    ppm += g[level + 1]
        frontier = following
    if n_hetero >= 2:
        ppm += k["extra_hetero"] * (n_hetero - 1)
    n_oxygen = sum(1 for z in neighbours if z.GetAtomicNum() == 8)
    if n_oxygen >= 3:
        ppm += k["extra_oxygen"] * (n_oxygen - 2)
    if n_groups >= 2:
        ppm += k["extra_group"] * (n_groups - 1)
    ppm += _steric(mol, atom, rings)
    ppm += _ring_correction(mol, atom, rings)
    branches = max(len(neighbours) - 1, 0)  # branching makes the sums less reliable
    spread = math.hypot(
        sd["sp3"],
        sd["sp3_per_increment"] * math.sqrt(n),
        sd["sp3_per_branch"] * branches,
    )
    return _Prediction(ppm, spread, "sp3")


def _is_hetero(atom: Chem.Atom) -> bool:
    return atom.GetAtomicNum() in (7, 8, 16) or atom.GetAtomicNum() in _HALOGENS


def _ring_correction(mol: Chem.Mol, atom: Chem.Atom, rings: _Rings) -> float:
    """Ring correction of the smallest ring holding `atom` (0 when none applies)."""
    k = _tables()["alkane"]
    x = atom.GetIdx()
    own = [r for r in rings.rings if x in r]
    if not own:
        return 0.0
    ring = min(own, key=len)
    hetero = [i for i in ring if mol.GetAtomWithIdx(i).GetAtomicNum() != 6]
    if len(ring) == 3 and hetero:
        return float(k["ring3_hetero"])
    if len(ring) == 5:
        for i in ring:
            if mol.GetBondBetweenAtoms(x, i) is None:
                continue
            other = mol.GetAtomWithIdx(i)
            # next to a ring N or S, or to a ring C=C: the open-chain sum already fits
            # (pyrrolidine C2 47.1, thiolane C2 31.9, cyclopentene C3 32.3 [H])
            if other.GetAtomicNum() in (7, 16) or any(
                o.GetAtomicNum() == 6 and o.GetIdx() in ring for o, _ in _multiple(mol, other)
            ):
                return 0.0
    value = float(k["ring"].get(str(len(ring)), 0.0))
    if any(mol.GetBondBetweenAtoms(x, i) is not None for i in hetero):
        value *= k["ring_next_to_hetero"]
    return value


def _beyond_unsaturated(mol: Chem.Mol, x: int, group: Chem.Atom, visited: set[int]) -> float:
    """Return the beta/gamma effects of what sits on an aryl or vinyl group on `x`.

    An aryl or vinyl alpha group is one increment in [1]_, which cannot see what sits
    ortho on the ring or on the far alkene carbon; those atoms are gamma to `x` and get
    the gamma increment of their own group (common practice: gamma-gauche shielding of
    ortho-substituted benzylic carbons).  A further atom on the vinyl carbon itself is
    beta to `x` and gets ``vinyl_beta``.
    """
    if group.GetAtomicNum() != 6 or _is_acyl(mol, group):
        return 0.0
    if not (group.GetIsAromatic() or _multiple(mol, group, x)):
        return 0.0
    k = _tables()["alkane"]
    total = 0.0
    for b in _heavy(group, x):
        bond = mol.GetBondBetweenAtoms(group.GetIdx(), b.GetIdx())
        if not (bond.GetIsAromatic() or bond.GetBondType() == _DOUBLE):
            if b.GetIdx() not in visited:
                total += k["vinyl_beta"]
            continue
        for c in _heavy(b, group.GetIdx()):
            cb = mol.GetBondBetweenAtoms(b.GetIdx(), c.GetIdx())
            if c.GetIdx() in visited or cb.GetIsAromatic() or cb.GetBondType() != _SINGLE:
                continue
            if _is_alkyl(mol, c):
                if bond.GetIsAromatic():
                    total += k["gamma"]
                else:
                    side = _side(mol, x, group.GetIdx(), b.GetIdx(), c.GetIdx())
                    total += k["vinyl_gamma"][side]
            else:
                g, _ = _lookup(k["groups"], _group(mol, b.GetIdx(), c))
                total += g[3]
    return total


def _side(mol: Chem.Mol, x: int, a: int, b: int, c: int) -> str:
    """Tell whether `x` (on alkene carbon `a`) and `c` (on `b`) are ``cis`` or ``trans``.

    From the bond's E/Z label (RDKit sets it for its stereo atoms, the CIP-highest
    neighbours) or from a ring of at most eight atoms holding both; ``unknown`` otherwise.
    """
    bond = mol.GetBondBetweenAtoms(a, b)
    if bond.IsInRing():
        ring = [r for r in mol.GetRingInfo().AtomRings() if {a, b, x, c} <= set(r)]
        if any(len(r) <= 8 for r in ring):
            return "cis"
    stereo = bond.GetStereo()
    if stereo not in _EZ:
        return "unknown"
    refs = list(bond.GetStereoAtoms())
    if len(refs) != 2:
        return "unknown"
    ref_a, ref_b = (refs[0], refs[1]) if bond.GetBeginAtomIdx() == a else (refs[1], refs[0])
    cis = stereo in (Chem.BondStereo.STEREOZ, Chem.BondStereo.STEREOCIS)
    cis ^= (x != ref_a) ^ (c != ref_b)
    return "cis" if cis else "trans"


def _carbon_degree(atom: Chem.Atom) -> int:
    return sum(1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 6)


def _steric(mol: Chem.Mol, atom: Chem.Atom, rings: _Rings) -> float:
    k = _tables()["alkane"]
    table = k["steric"]
    own = _carbon_degree(atom)
    if own == 0:
        return 0.0
    total = 0.0
    for a in _heavy(atom):
        if _is_alkyl(mol, a):
            value = table[min(own, 4) - 1][min(_carbon_degree(a), 4) - 1]
            bond = mol.GetBondBetweenAtoms(atom.GetIdx(), a.GetIdx())
            total += value * (k["steric_ring_scale"] if bond.IsInRing() else 1.0)
    return float(total)


# ------------------------------------------------------------ C=X and sp carbons


def _hetero_double(
    mol: Chem.Mol, atom: Chem.Atom, rings: _Rings, mult: list[tuple[Chem.Atom, Any]]
) -> _Prediction | None:
    c = _tables()["carbonyl"]
    sd = _tables()["sd"]
    x = atom.GetIdx()
    doubles = [o for o, bt in mult if bt == _DOUBLE]
    if len(doubles) >= 2:
        kinds = sorted(o.GetAtomicNum() for o in doubles)
        value = {
            (8, 8): c["co2"],
            (7, 8): c["isocyanate"],
            (7, 16): c["isothiocyanate"],
            (7, 7): c["carbodiimide"],
            (6, 7): c["ketenimine"],
        }.get((kinds[0], kinds[1]), c["isocyanate"])
        return _Prediction(value, sd["carbonyl_rough"], "cumulene")
    dz = doubles[0].GetAtomicNum()
    if dz == 15:  # phosphorus ylide carbon
        return _Prediction(c["ylide"], sd["carbonyl_rough"], "ylide")
    if dz not in (7, 8, 16):
        return None
    rest = _heavy(atom, doubles[0].GetIdx())
    kinds = [r.GetAtomicNum() for r in rest]
    n_o, n_n, n_s = kinds.count(8), kinds.count(7), kinds.count(16)
    halo = any(z in _HALOGENS for z in kinds)
    rough = False
    if dz == 8:
        value, rough = _carbonyl(mol, atom, rest, rings)
    elif dz == 16:
        if n_n >= 2:
            value = c["thiourea"]
        elif n_n == 1 and (n_s or n_o):
            value = c["dithiocarbamate"]
        elif n_n == 1:
            value = c["thioamide"]
        else:
            value, rough = c["thioketone"], True
    else:  # C=N
        n_total = n_n + 1
        imine_n = doubles[0]
        if n_total >= 3:
            value = c["guanidine"]
        elif n_total == 2 or n_o or n_s:
            value = c["amidine"]
        else:
            kind = "imine"
            if any(s.GetAtomicNum() == 8 for s in _heavy(imine_n, x)):
                kind = "oxime"
            elif any(s.GetAtomicNum() == 7 for s in _heavy(imine_n, x)):
                kind = "hydrazone"
            value = c[kind + ("_ketone" if len(rest) >= 2 else "_aldehyde")]
        return _Prediction(value, sd["c_n_double"], "c=n")
    if halo and dz == 8 and not (n_o or n_n):
        value = c["acid_chloride"]
    return _Prediction(value, sd["carbonyl_rough" if rough else "carbonyl"], "carbonyl")


def _ring_with(rings: _Rings, *atoms: int) -> int | None:
    sizes = [len(r) for r in rings.rings if all(a in r for a in atoms)]
    return min(sizes) if sizes else None


def _carbonyl(
    mol: Chem.Mol, atom: Chem.Atom, rest: list[Chem.Atom], rings: _Rings
) -> tuple[float, bool]:
    """Typical C=O shift by type, lowered when conjugated with a five-ring heteroaryl."""
    c = _tables()["carbonyl"]
    value, rough = _carbonyl_type(mol, atom, rest, rings)
    # carbons on an sp3 alpha carbon deshield the carbonyl (acetic 177 < propanoic 181 <
    # isobutyric 184; acetone 206.7 < 2-butanone 209.3)
    for r in rest:
        if (
            _is_alkyl(mol, r)
            and r.GetAtomicNum() == 6
            and not mol.GetBondBetweenAtoms(atom.GetIdx(), r.GetIdx()).IsInRing()
        ):
            n_beta = sum(1 for w in _heavy(r, atom.GetIdx()) if w.GetAtomicNum() == 6)
            value += c["alpha_branch"] * min(n_beta, 3)
    info = mol.GetRingInfo()
    het5 = [
        r
        for r in rest
        if r.GetIsAromatic()
        and info.IsAtomInRingOfSize(r.GetIdx(), 5)
        and not info.IsAtomInRingOfSize(r.GetIdx(), 6)
    ]
    if het5:
        hetero = any(r.GetAtomicNum() != 6 for r in rest)
        value += c["het5_acyl" if hetero else "het5_ketone"]
    return value, rough


def _carbonyl_type(
    mol: Chem.Mol, atom: Chem.Atom, rest: list[Chem.Atom], rings: _Rings
) -> tuple[float, bool]:
    c = _tables()["carbonyl"]
    x = atom.GetIdx()
    hetero = [r for r in rest if r.GetAtomicNum() != 6]
    carbons = [r for r in rest if r.GetAtomicNum() == 6]
    kinds = sorted(r.GetAtomicNum() for r in hetero)
    conj = [r for r in carbons if _conjugating(mol, r, x)]
    if kinds == [8, 8]:
        return c["carbonate"], False
    if kinds == [7, 8]:
        return c["carbamate"], False
    if kinds == [7, 7]:
        return c["urea"], False
    if len(kinds) == 2 and 8 in kinds:
        return c["chloroformate"], True
    if kinds == [8]:
        o = hetero[0]
        if o.GetFormalCharge() < 0:
            return c["carboxylate"], True
        if not carbons:
            return c["formate"], False
        if _hs(o):
            return (c["acid_conj"] if conj else c["acid"]), False
        if any(_is_acyl(mol, s) for s in _heavy(o, x)):
            return c["anhydride"], False
        size = _ring_with(rings, x, o.GetIdx())
        if size is not None:
            if conj:
                return c["lactone_conj"], True
            return c["lactone"].get(str(size), c["ester"]), size not in (5, 6)
        return (c["ester_conj"] if conj else c["ester"]), False
    if kinds == [7]:
        nitrogen = hetero[0]
        if not carbons:
            return c["formamide"], False
        if any(_is_acyl(mol, s) for s in _heavy(nitrogen, x)):
            return c["imide"], True
        size = _ring_with(rings, x, nitrogen.GetIdx())
        if size is not None and not conj:
            return c["lactam"].get(str(size), c["amide"]), size not in (5, 6)
        if conj:
            return c["amide_conj"], False
        if any(s.GetIsAromatic() for s in _heavy(nitrogen, x)):
            return c["amide_aryl_n"], False
        return c["amide"], False
    if kinds == [16]:
        return c["thioester"], True
    if kinds and all(z in _HALOGENS for z in kinds):
        return c["acid_chloride"], False
    if kinds:
        return c["acyl_other"], True
    if not carbons:  # formaldehyde
        return c["aldehyde"], True
    alpha_halo = any(
        any(s.GetAtomicNum() in _HALOGENS for s in _heavy(r, x))
        for r in carbons
        if _is_alkyl(mol, r)
    )
    shift = c["alpha_halo_shift"] if alpha_halo else 0.0
    if len(carbons) == 1:
        return (c["aldehyde_conj"] if conj else c["aldehyde"]) + shift, False
    if any(_is_acyl(mol, r) for r in carbons):
        return c["diketone"], True
    size = rings.smallest(x)
    if len(conj) == 2:
        ring = min((r for r in rings.rings if x in r), key=len, default=())
        if len(ring) == 6 and any(i != x and _is_acyl(mol, mol.GetAtomWithIdx(i)) for i in ring):
            return c["quinone"], False
        return c["ketone_diconj"], False
    if conj:
        ring_shift = c["ketone_conj_ring5"] if size == 5 else 0.0
        return c["ketone_conj"] + shift + ring_shift, False
    if size is not None and str(size) in c["ketone_cyclic"]:
        return c["ketone_cyclic"][str(size)] + shift, False
    return c["ketone"] + shift, False


def _alkyne_sub(mol: Chem.Mol, frm: int, z: Chem.Atom | None) -> str | None:
    if z is None:
        return None
    if z.GetAtomicNum() == 14:
        return "SiR3"
    if z.GetAtomicNum() != 6:
        return "other"
    if z.GetIsAromatic():
        return "aryl"
    if _is_acyl(mol, z):
        return "carbonyl"
    mult = _multiple(mol, z, frm)
    if any(bt == _TRIPLE for _, bt in mult):
        return "alkynyl"
    if mult:
        return "vinyl"
    subs = _heavy(z, frm)
    if not subs:
        return "CH3"
    if any(s.GetAtomicNum() == 8 for s in subs):
        return "CH2O"
    if any(s.GetAtomicNum() == 7 for s in subs):
        return "CH2N"
    return "alkyl"


def _triple(mol: Chem.Mol, atom: Chem.Atom, partner: Chem.Atom) -> _Prediction:
    t = _tables()["alkyne"]
    sd = _tables()["sd"]
    x, y = atom.GetIdx(), partner.GetIdx()
    if partner.GetAtomicNum() == 7:
        if not _heavy(atom, y) and _heavy(partner, x):
            return _Prediction(t["isonitrile"], sd["carbonyl_rough"], "isonitrile")
        return _Prediction(t["nitrile"], sd["nitrile"], "nitrile")
    own = _heavy(atom, y)
    other = _heavy(partner, x)
    ppm = t["base"]
    subs = t["substituents"]
    key = _alkyne_sub(mol, x, own[0] if own else None)
    if key is not None:
        ppm += subs.get(key, subs["other"])[0]
    key = _alkyne_sub(mol, y, other[0] if other else None)
    if key is not None:
        ppm += subs.get(key, subs["other"])[1]
    return _Prediction(ppm, sd["alkyne"], "alkyne")


# -------------------------------------------------------------------------- driver


def _hybrid(mol: Chem.Mol, atom: Chem.Atom) -> str:
    mult = _multiple(mol, atom)
    if any(bt == _TRIPLE for _, bt in mult) or len(mult) >= 2:
        return "sp"
    if mult or atom.GetIsAromatic():
        return "sp2"
    return "sp3"


def _fallback(lo: float, hi: float) -> _Prediction:
    frac = _tables()["sd"]["fallback_fraction"]
    return _Prediction(0.5 * (lo + hi), max(frac * (hi - lo), 1.0), "fallback")


def _predict_atom(mol: Chem.Mol, atom: Chem.Atom, rings: _Rings) -> _Prediction | None:
    if atom.GetIsAromatic():
        return _aromatic(mol, atom, rings)
    mult = _multiple(mol, atom)
    triples = [o for o, bt in mult if bt == _TRIPLE]
    if triples:
        return _triple(mol, atom, triples[0])
    hetero = [(o, bt) for o, bt in mult if o.GetAtomicNum() != 6]
    if hetero:
        return _hetero_double(mol, atom, rings, mult)
    if mult:
        return _alkene(mol, atom, mult[0][0], rings)
    if atom.GetFormalCharge() != 0 or atom.GetNumRadicalElectrons():
        return None
    return _sp3(mol, atom, rings)


def _predict(mol: Chem.Mol) -> dict[int, _Prediction]:
    rings = _rings(mol)
    out: dict[int, _Prediction] = {}
    for atom in mol.GetAtoms():
        if atom.GetAtomicNum() != 6:
            continue
        pred = _predict_atom(mol, atom, rings)
        if pred is None or not (math.isfinite(pred.ppm) and math.isfinite(pred.sd)):
            pred = _fallback(*_CRUDE_RANGE[_hybrid(mol, atom)])
        out[atom.GetIdx()] = pred
    return out


def predict_atom_shifts(mol: Chem.Mol) -> dict[int, tuple[float, float]]:
    """Predict the 13C shift of every carbon atom by additive increments.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
        A sanitized structure; hydrogens implicit or explicit.  Not modified.

    Returns
    -------
    dict of int to (float, float)
        For every carbon atom index (0-based, input order): the predicted shift in ppm
        and the expected error of that prediction (one standard deviation, ppm).  A
        carbon that no increment scheme covers gets a crude range midpoint by
        hybridization (sp3 0–90, sp2 100–170, sp 65–125 ppm) with SD a quarter of the
        range width.

    References
    ----------
    Pretsch, Bühlmann, Badertscher (2009), chapter "13C NMR"; Grant & Paul (1964) for
    alkanes; Pascual, Meier & Simon (1966) for alkenes; Ewing (1979) for benzene
    substituent increments.  See the module docstring.

    """
    return {i: (p.ppm, p.sd) for i, p in _predict(mol).items()}


def predict_shifts(expectation: Expectation, mol: Chem.Mol | None = None) -> Expectation:
    """Fill the predicted shift and its expected error of every carbon class.

    Parameters
    ----------
    expectation : Expectation
        The expected carbon inventory.  Not modified.
    mol : rdkit.Chem.Mol, optional
        The structure the expectation was built from, atoms in the same order.  When
        omitted it is rebuilt from ``expectation.molblock``.

    Returns
    -------
    Expectation
        A new expectation whose classes carry ``predicted_ppm`` (mean of the class's
        atoms, ppm) and ``prediction_sd`` (ppm).  An atom no increment scheme covers
        takes the midpoint of its class's ``shift_range``, with SD a quarter of the
        range width; so does every class when the expectation has no molblock.

    Raises
    ------
    StructureError
        When the molblock cannot be read or the structure has fewer atoms than the
        classes refer to.

    References
    ----------
    Pretsch, Bühlmann, Badertscher (2009), chapter "13C NMR", and the tables named in
    ``verify/data/increments.toml``.

    """
    if mol is None and expectation.molblock.strip():
        mol = _read_molblock(expectation.molblock)
        if mol is None:
            raise StructureError(
                f"the molblock of {expectation.name or expectation.structure!r} cannot be "
                "read by RDKit; rebuild the expectation from the structure"
            )
    atoms: dict[int, _Prediction] = {}
    if mol is not None:
        highest = max((a for cls in expectation.classes for a in cls.atoms), default=-1)
        if highest >= mol.GetNumAtoms():
            raise StructureError(
                f"the classes refer to atom {highest + 1} but the structure has "
                f"{mol.GetNumAtoms()} atoms; pass the Mol the expectation was built from"
            )
        atoms = _predict(mol)
    classes = tuple(_fill(cls, atoms) for cls in expectation.classes)
    return replace(expectation, classes=classes)


def _read_molblock(block: str) -> Chem.Mol | None:
    """Read a molfile keeping atom order and hydrogens; fall back to partial sanitizing.

    A structure that RDKit's full sanitization refuses (unusual valence) is still read with
    ring perception and aromaticity where possible, so that its carbons get predictions.
    """
    mol = Chem.MolFromMolBlock(block, removeHs=False)
    if mol is not None:
        return mol
    mol = Chem.MolFromMolBlock(block, sanitize=False, removeHs=False)
    if mol is None:
        return None
    mol.UpdatePropertyCache(strict=False)
    Chem.SanitizeMol(
        mol,
        Chem.SanitizeFlags.SANITIZE_ALL ^ Chem.SanitizeFlags.SANITIZE_PROPERTIES,
        catchErrors=True,
    )
    return mol


def _fill(cls: CarbonClass, atoms: Mapping[int, _Prediction]) -> CarbonClass:
    lo, hi = cls.shift_range
    preds = []
    for i in cls.atoms:
        p = atoms.get(i)
        if p is None or p.method == "fallback":
            p = _fallback(lo, hi)
        preds.append(p)
    mean = sum(p.ppm for p in preds) / len(preds)
    spread = sum((p.ppm - mean) ** 2 for p in preds) / len(preds)
    sd = math.sqrt(sum(p.sd**2 for p in preds) / len(preds) + spread)
    return replace(cls, predicted_ppm=float(mean), prediction_sd=float(sd))
