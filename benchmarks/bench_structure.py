"""Time expected_inventory on structures of about 100 heavy atoms.

Run: python benchmarks/bench_structure.py [--renumber]
The project issue asks for well under one second per 100-heavy-atom structure.
``--renumber`` also runs every structure of ../shared/data/shifts/nmr8k-public.sdf.gz
(nmrshiftdb2 via CASCADE) twice, the second time with its atoms shuffled, and counts
structures whose classes (multiplicity, size, flags) differ (should be 0).
"""

from __future__ import annotations

import gzip
import random
import statistics
import sys
import time
from pathlib import Path

from rdkit import Chem

from verify.structure import expected_inventory

RESIDUES = {
    "Leu": "N[C@@H](CC(C)C)C(=O)",
    "Val": "N[C@@H](C(C)C)C(=O)",
    "Phe": "N[C@@H](Cc1ccccc1)C(=O)",
    "Ser": "N[C@@H](CO)C(=O)",
    "Lys": "N[C@@H](CCCCN)C(=O)",
    "Asp": "N[C@@H](CC(=O)O)C(=O)",
    "His": "N[C@@H](Cc1c[nH]cn1)C(=O)",
    "Pro": "N1CCC[C@H]1C(=O)",
}


def peptide(seq: str) -> str:
    return "".join(RESIDUES[r] for r in seq.split("-")) + "O"


STRUCTURES = {
    # 14-residue peptide, with histidines (tautomer averaging) and many diastereotopic pairs
    "peptide-14": peptide("Leu-Val-Phe-Ser-Lys-Asp-His-Leu-Val-Phe-Ser-Lys-Asp-His"),
    # proline-rich peptide: tertiary amides (rotamer treatment)
    "peptide-Pro": peptide("Pro-Leu-Pro-Val-Pro-Phe-Pro-Leu-Pro-Val-Pro-Phe-Pro"),
    # hexakis(4-tert-butoxycarbonylphenyl)benzene: 90 atoms, six-fold symmetry
    "hexaaryl-benzene": "c1("
    + ")c(".join(["-c2ccc(C(=O)OC(C)(C)C)cc2"] * 5)
    + ")c1-c1ccc(C(=O)OC(C)(C)C)cc1",
    # polypropionate-like chain with 48 stereocentres
    "polyketide": "CC" + "[C@H](O)[C@@H](C)" * 24 + "C(=O)O",
    # the same chain without stereo (unspecified centres get a fixed configuration)
    "polyketide-flat": "CC" + "C(O)C(C)" * 24 + "C(=O)O",
    # beta-cyclodextrin: seven-fold symmetric, 35 stereocentres
    "beta-cyclodextrin": "OC[C@H]1O[C@@H]2O[C@@H]3[C@@H](CO)O[C@H](O[C@@H]4[C@@H](CO)O[C@H]"
    "(O[C@@H]5[C@@H](CO)O[C@H](O[C@@H]6[C@@H](CO)O[C@H](O[C@@H]7[C@@H](CO)O[C@H]"
    "(O[C@@H]8[C@@H](CO)O[C@H](O[C@H]1[C@H](O)[C@H]2O)[C@H](O)[C@H]8O)[C@H](O)[C@H]7O)"
    "[C@H](O)[C@H]6O)[C@H](O)[C@H]5O)[C@H](O)[C@H]4O)[C@H](O)[C@H]3O",
    # C60: one class of 60
    "C60": "c12c3c4c5c1c6c7c8c2c9c%10c3c%11c%12c4c%13c%14c5c%15c6c%16c7c%17c%18c8c9c%19c%20"
    "c%10c%11c%21c%22c%12c%13c%23c%24c%14c%15c%25c%16c%26c%17c%27c%18c%19c%28c%20c%21c%29"
    "c%22c%23c%30c%24c%25c%26c%31c%27c%28c%29c%30%31",
    # 2:1 salt of a large zwitterion-free cation with a dicarboxylate
    "salt": "CCCCCCCCCCCCCCCC[N+](C)(C)C.CCCCCCCCCCCCCCCC[N+](C)(C)C.O=C([O-])c1ccc(cc1)C(=O)[O-]",
}


def main() -> None:
    print(f"{'structure':18s} {'heavy':>5s} {'classes':>7s} {'median/ms':>9s} {'max/ms':>7s}")
    for name, smi in STRUCTURES.items():
        mol = Chem.MolFromSmiles(smi)
        times = []
        for _ in range(3):
            start = time.perf_counter()
            exp = expected_inventory(mol)
            times.append(1000 * (time.perf_counter() - start))
        print(
            f"{name:18s} {mol.GetNumHeavyAtoms():5d} {len(exp.classes):7d} "
            f"{statistics.median(times):9.1f} {max(times):7.1f}"
        )


def renumber_check() -> None:
    path = Path(__file__).resolve().parents[2] / "shared" / "data" / "shifts"
    path = path / "nmr8k-public.sdf.gz"
    from rdkit import rdBase

    rng = random.Random(1)
    n = differ = 0
    start = time.perf_counter()
    with rdBase.BlockLogs(), gzip.open(path) as fh:
        mols = [m for m in Chem.ForwardSDMolSupplier(fh) if m is not None]
    for mol in mols:
        order = list(range(mol.GetNumAtoms()))
        rng.shuffle(order)
        a = expected_inventory(mol)
        b = expected_inventory(Chem.RenumberAtoms(mol, order))
        n += 1
        sig_a = sorted((c.multiplicity, c.carbons, c.flags) for c in a.classes)
        sig_b = sorted((c.multiplicity, c.carbons, c.flags) for c in b.classes)
        if sig_a != sig_b:
            differ += 1
            print("differs:", Chem.MolToSmiles(mol))
    took = time.perf_counter() - start
    print(f"renumbered {n} structures: {differ} differ ({took:.0f} s for both passes)")


if __name__ == "__main__":
    main()
    if "--renumber" in sys.argv:
        renumber_check()
