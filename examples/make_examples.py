"""Regenerate the bundled example samples with ctally's own simulator.

    python examples/make_examples.py            # rewrite examples/*/
    python examples/make_examples.py OUT_DIR    # write them somewhere else

The scenario is invented: the QC laboratory of "Tarnwick Fine Chemicals", a small
contract manufacturer, releases lots of the intermediate TF-118
(4'-methoxyacetophenone) and keeps an in-house cholesterol reference standard.
People, lots, instruments and dates are made up.

Shifts (ppm, CDCl3) are typical values written down from memory, close to the
assignments usually quoted for these compounds; they are not copied from any
database and are only meant to make realistic demo spectra:

* 4'-methoxyacetophenone and 3'-methoxyacetophenone — from memory.
* ethyl acetate in CDCl3 — Gottlieb, Kotlyar & Nudelman, J. Org. Chem. 1997, 62,
  7512, Table 2 (the values also used by verify/data/impurities.toml; from memory).
* cholesterol — the usual full assignment of cholest-5-en-3β-ol in CDCl3, from
  memory; the near-coincident pairs C4/C13 (≈42.3) and C7/C8 (≈31.9) are moved
  0.1 ppm apart so that the demo does not hinge on resolving them.

Spectra: 100.6 MHz (a 400 MHz instrument), 32768 points from 230 to −10 ppm,
DIFDUP-compressed JCAMP-DX, seeded, so every run writes the same bytes.
Each sample folder gets a ``structure.mol`` whose atom order is the chemist's
numbering (C1 … Cn, then the heteroatoms), so the report's labels read as usual.
"""

from __future__ import annotations

import sys
from collections.abc import Mapping, Sequence
from pathlib import Path

from rdkit import Chem
from rdkit.Chem import rdDepictor

from verify.simulate import SyntheticCarbon, write_sample
from verify.structure import expected_inventory

HERE = Path(__file__).resolve().parent
MHZ = 100.6
POINTS = 32768
WIDTH_HZ = 1.8

LAB = {
    "site": "Tarnwick Fine Chemicals, QC laboratory (invented)",
    "instrument": "NMR-2, 400 MHz, 5 mm broadband probe (invented)",
    "operator": "I. Halvorsen",
}

# ------------------------------------------------------------------ structures

#: 4'-methoxyacetophenone with atom maps in the chemist's numbering:
#: ring C1 (ipso to the acetyl) … C6, C7 carbonyl, C8 acetyl CH3, C9 OCH3.
PARA = "[cH:2]1[cH:3][c:4]([O:11][CH3:9])[cH:5][cH:6][c:1]1[C:7](=[O:10])[CH3:8]"
#: Shifts (ppm) by atom number, from memory.
PARA_SHIFTS = {
    1: 130.3,
    2: 130.6,
    3: 113.7,
    4: 163.5,
    5: 113.7,
    6: 130.6,
    7: 196.8,
    8: 26.3,
    9: 55.5,
}

#: 3'-methoxyacetophenone, the regioisomer a wrong starting material gives.
META = "[cH:2]1[c:3]([O:11][CH3:9])[cH:4][cH:5][cH:6][c:1]1[C:7](=[O:10])[CH3:8]"
META_SHIFTS = {
    1: 138.5,
    2: 112.3,
    3: 159.8,
    4: 119.6,
    5: 129.6,
    6: 121.1,
    7: 197.9,
    8: 26.7,
    9: 55.4,
}

#: Ethyl acetate in CDCl3 (Gottlieb et al. 1997, Table 2; from memory).
ETHYL_ACETATE = (("CO", "C", 171.36), ("OCH2", "CH2", 60.49), ("CH3CO", "CH3", 21.04),
                 ("CH3", "CH3", 14.19))  # fmt: skip

#: Cholesterol, steroid numbering as atom maps (C1–C27, O28).
CHOLESTEROL_MAPPED = (
    "[CH2:1]1[CH2:2][CH:3]([OH:28])[CH2:4][C:5]2=[CH:6][CH2:7][CH:8]3[CH:9]([CH2:11][CH2:12]"
    "[C:13]4([CH3:18])[CH:14]3[CH2:15][CH2:16][CH:17]4[CH:20]([CH3:21])[CH2:22][CH2:23][CH2:24]"
    "[CH:25]([CH3:26])[CH3:27])[C:10]12[CH3:19]"
)
#: Cholesterol with its stereocentres (3S,8S,9S,10R,13R,14S,17R,20R).
CHOLESTEROL_STEREO = (
    "C[C@H](CCCC(C)C)[C@H]1CC[C@@H]2[C@@]1(CC[C@H]3[C@H]2CC=C4[C@@]3(CC[C@@H](C4)O)C)C"
)
#: Shifts (ppm) by steroid number, from memory (C4/C13 and C7/C8 split by 0.1 ppm).
CHOLESTEROL_SHIFTS = {
    1: 37.3, 2: 31.7, 3: 71.8, 4: 42.35, 5: 140.8, 6: 121.7, 7: 31.95, 8: 31.85, 9: 50.1,
    10: 36.5, 11: 21.1, 12: 39.8, 13: 42.25, 14: 56.8, 15: 24.3, 16: 28.2, 17: 56.2,
    18: 11.9, 19: 19.4, 20: 35.8, 21: 18.7, 22: 36.2, 23: 23.8, 24: 39.5, 25: 28.0,
    26: 22.6, 27: 22.8,
}  # fmt: skip


def numbered_mol(mapped: str, stereo: str | None = None) -> Chem.Mol:
    """The molecule with atoms in atom-map order (map 1 first); stereo from `stereo`."""
    mol = Chem.MolFromSmiles(mapped)
    order = sorted(range(mol.GetNumAtoms()), key=lambda i: mol.GetAtomWithIdx(i).GetAtomMapNum())
    if stereo is not None:
        ref = Chem.MolFromSmiles(stereo)
        plain = Chem.Mol(mol)
        for a in plain.GetAtoms():
            a.SetAtomMapNum(0)
        match = ref.GetSubstructMatch(plain)
        if len(match) != mol.GetNumAtoms():
            raise ValueError("the stereo SMILES is not the same constitution as the mapped one")
        mol = Chem.RenumberAtoms(ref, [match[i] for i in order])
    else:
        mol = Chem.RenumberAtoms(mol, order)
        for a in mol.GetAtoms():
            a.SetAtomMapNum(0)
    rdDepictor.Compute2DCoords(mol)
    return mol


def carbons_of(mol: Chem.Mol, shifts: Mapping[int, float], scale: int = 1) -> list[SyntheticCarbon]:
    """One SyntheticCarbon per carbon class of ctally's structure stage, `scale` units each.

    Carbons of one class given different shifts are diastereotopic (the isopropyl
    methyls C26/C27 of cholesterol) and get one signal each.
    """
    out = []
    for cls in sorted(expected_inventory(mol).classes, key=lambda c: c.atoms):
        by_shift: dict[float, list[int]] = {}
        for i in cls.atoms:
            by_shift.setdefault(shifts[i + 1], []).append(i)
        for ppm, members in by_shift.items():
            out.append(_carbon(mol, ppm, members, scale))
    return out


def _carbon(mol: Chem.Mol, ppm: float, members: list[int], scale: int) -> SyntheticCarbon:
    numbers = [i + 1 for i in members]
    h = mol.GetAtomWithIdx(members[0]).GetTotalNumHs()
    return SyntheticCarbon(
        ppm=ppm,
        multiplicity=("C", "CH", "CH2", "CH3")[h],  # type: ignore[arg-type]
        carbons=len(members) * scale,
        width_hz=WIDTH_HZ,
        label="/".join(f"C{n}" for n in numbers),
    )


def write_example(
    folder: Path,
    mol: Chem.Mol,
    carbons: Sequence[SyntheticCarbon],
    *,
    name: str,
    metadata: Mapping[str, str],
    seed: int,
    snr: Mapping[str, float],
) -> Path:
    """Write one sample folder: spectra, structure.mol, sample.toml."""
    path = write_sample(
        folder,
        carbons,
        structure=Chem.MolToSmiles(mol),
        name=name,
        solvent="CDCl3",
        metadata={**LAB, **metadata},
        jcamp_form="DIFDUP",
        experiments=("carbon", "dept90", "dept135"),
        observe_mhz=MHZ,
        points=POINTS,
        snr=snr,
        seed=seed,
    )
    (folder / "structure.mol").write_text(Chem.MolToMolBlock(mol), encoding="utf-8")
    text = path.read_text(encoding="utf-8")
    first, rest = text.split("\n", 1)
    path.write_text(first + '\nstructure_file = "structure.mol"\n' + rest, encoding="utf-8")
    return path


TF118 = "TF-118 (4'-methoxyacetophenone)"


def make_all(root: Path) -> list[Path]:
    """Write every example under `root`; return the sample files."""
    para = numbered_mol(PARA)
    meta = numbered_mol(META)
    chol = numbered_mol(CHOLESTEROL_MAPPED, CHOLESTEROL_STEREO)
    edited = {"carbon": 400.0, "dept90": 120.0, "dept135": 120.0}
    etoac = [
        SyntheticCarbon(ppm=p, multiplicity=m, width_hz=WIDTH_HZ, label=f"EtOAc {lab}")  # type: ignore[arg-type]
        for lab, m, p in ETHYL_ACETATE
    ]
    # (folder, proposed structure, what the tube holds, name, lot, acquired, seed, snr, extra)
    plan = [
        ("lot-pass", para, carbons_of(para, PARA_SHIFTS), "TF-118 lot 25-0412",
         "TFC-25-0412", "2025-03-11", 412, edited, {}),
        # made from 3-methoxy starting material: the spectra are of the meta isomer
        # while the sample file still proposes the para structure
        ("lot-wrong-isomer", para, carbons_of(meta, META_SHIFTS), "TF-118 lot 25-0419",
         "TFC-25-0419", "2025-03-18", 419, edited, {}),
        # residual ethyl acetate from the recrystallisation, about 6 mol % (16
        # intensity units per product carbon against 1 per solvent carbon)
        ("lot-ethyl-acetate", para, carbons_of(para, PARA_SHIFTS, scale=16) + etoac,
         "TF-118 lot 25-0427", "TFC-25-0427", "2025-03-26", 427,
         {"carbon": 1500.0, "dept90": 30.0, "dept135": 30.0},
         {"note": "dried 6 h at 40 °C after recrystallisation from ethyl acetate"}),
        ("reference-cholesterol", chol, carbons_of(chol, CHOLESTEROL_SHIFTS),
         "Cholesterol reference standard RS-0093", "TFC-RS-0093", "2025-02-04", 93,
         {"carbon": 300.0, "dept90": 80.0, "dept135": 80.0},
         {"product": "cholesterol, in-house reference standard",
          "purpose": "identity of a reference standard", "operator": "M. Okafor-Lind"}),
    ]  # fmt: skip
    out = []
    for folder, mol, carbons, name, lot, acquired, seed, snr, extra in plan:
        metadata = {"product": TF118, "lot": lot, "acquired": acquired, "purpose": "lot release"}
        out.append(
            write_example(
                root / folder,
                mol,
                carbons,
                name=name,
                metadata={**metadata, **extra},
                seed=seed,
                snr=snr,
            )
        )
    return out


if __name__ == "__main__":
    target = Path(sys.argv[1]) if len(sys.argv) > 1 else HERE
    for p in make_all(target):
        print(p)
