"""Accuracy, calibration and speed of the increment shift predictor (verify/predict.py).

Reads the open assigned-shift set ../shared/data/shifts/nmr8k-public.sdf.gz (NMR8K
subset of CASCADE, Guan et al., Chem. Sci. 2021, drawn from NMRShiftDB, Steinbeck et al.,
J. Chem. Inf. Comput. Sci. 2003; MIT licence) and prints MAE, RMSE and the 95th-percentile
absolute error overall and per environment, the fraction of errors within 1 and 2
predicted SDs, the worst molecules, and the time per molecule.

    python benchmarks/bench_predict.py [--limit N] [--worst K] [--by-method]
"""

from __future__ import annotations

import argparse
import gzip
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from rdkit import Chem, RDLogger

from verify.predict import predict_atom_shifts

SHIFTSET = (
    Path(__file__).resolve().parents[2] / "shared" / "data" / "shifts" / "nmr8k-public.sdf.gz"
)


@dataclass(frozen=True)
class Record:
    """One molecule of the set with its assigned carbon shifts (atom index → ppm)."""

    mol: Chem.Mol
    smiles: str
    shifts: dict[int, float]


def load_shiftset(path: Path = SHIFTSET, limit: int | None = None) -> Iterator[Record]:
    """Molecules with their first ``Spectrum 13C`` field (``shift;0.0M;atomIndex|...``)."""
    RDLogger.DisableLog("rdApp.*")
    with gzip.open(path, "rb") as fh:
        count = 0
        for mol in Chem.ForwardSDMolSupplier(fh):
            if mol is None:
                continue
            fields = sorted(k for k in mol.GetPropNames() if k.startswith("Spectrum 13C"))
            if not fields:
                continue
            shifts: dict[int, float] = {}
            for item in mol.GetProp(fields[0]).split("|"):
                parts = item.split(";")
                if len(parts) < 3 or not parts[2].strip():
                    continue
                idx = int(parts[2])
                if idx < mol.GetNumAtoms() and mol.GetAtomWithIdx(idx).GetAtomicNum() == 6:
                    shifts.setdefault(idx, float(parts[0]))
            if shifts:
                yield Record(mol, mol.GetProp("SMILES") if mol.HasProp("SMILES") else "", shifts)
                count += 1
                if limit is not None and count >= limit:
                    return


def environment(mol: Chem.Mol, idx: int) -> str:
    """Coarse label of a carbon: aromatic, alkene, sp3, carbonyl (C=X) or sp."""
    atom = mol.GetAtomWithIdx(idx)
    kinds = [
        (b.GetBondType(), b.GetOtherAtom(atom).GetAtomicNum())
        for b in atom.GetBonds()
        if b.GetBondType() in (Chem.BondType.DOUBLE, Chem.BondType.TRIPLE)
    ]
    if any(t == Chem.BondType.TRIPLE for t, _ in kinds):
        return "sp"
    if any(z != 6 for _, z in kinds):
        return "carbonyl"
    if atom.GetIsAromatic():
        return "aromatic"
    if kinds:
        return "alkene"
    return "sp3"


def simple(mol: Chem.Mol, idx: int) -> str | None:
    """Label the easy cases the handbook schemes were built on, or None.

    ``benzene<=2`` a carbon of a lone (unfused) benzene ring with at most two substituents;
    ``alkyl-sp3`` an sp3 carbon whose neighbours and their neighbours are all sp3 carbons.
    """
    atom = mol.GetAtomWithIdx(idx)
    info = mol.GetRingInfo()
    if atom.GetIsAromatic():
        rings = [r for r in info.AtomRings() if idx in r]
        if len(rings) != 1 or len(rings[0]) != 6:
            return None
        ring = rings[0]
        if any(mol.GetAtomWithIdx(i).GetAtomicNum() != 6 or info.NumAtomRings(i) > 1 for i in ring):
            return None
        subs = sum(
            1
            for i in ring
            for n in mol.GetAtomWithIdx(i).GetNeighbors()
            if n.GetIdx() not in ring and n.GetAtomicNum() > 1
        )
        return "benzene<=2" if subs <= 2 else None

    def sp3_carbon(a: Chem.Atom) -> bool:
        return a.GetAtomicNum() == 6 and a.GetHybridization() == Chem.HybridizationType.SP3

    if not sp3_carbon(atom):
        return None
    for n in atom.GetNeighbors():
        if n.GetAtomicNum() > 1 and not sp3_carbon(n):
            return None
        for m in n.GetNeighbors():
            if m.GetAtomicNum() > 1 and not sp3_carbon(m):
                return None
    return "alkyl-sp3"


def evaluate(records: list[Record]) -> dict[str, np.ndarray]:
    """Per environment (and "all", and the easy subsets): rows (error ppm, predicted SD ppm)."""
    rows: dict[str, list[tuple[float, float]]] = {}
    for rec in records:
        pred = predict_atom_shifts(rec.mol)
        for idx, obs in rec.shifts.items():
            ppm, sd = pred[idx]
            row = (ppm - obs, sd)
            rows.setdefault("all", []).append(row)
            rows.setdefault(environment(rec.mol, idx), []).append(row)
            easy = simple(rec.mol, idx)
            if easy is not None:
                rows.setdefault(easy, []).append(row)
    return {k: np.array(v) for k, v in rows.items()}


def summary(arr: np.ndarray) -> dict[str, float]:
    """MAE, RMSE, P95 (ppm) and fractions within 1 and 2 SD."""
    err, sd = np.abs(arr[:, 0]), arr[:, 1]
    return {
        "n": float(len(err)),
        "mae": float(err.mean()),
        "rmse": float(np.sqrt((err**2).mean())),
        "p95": float(np.percentile(err, 95)),
        "within1": float((err <= sd).mean()),
        "within2": float((err <= 2 * sd).mean()),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--limit", type=int, default=None)
    parser.add_argument("--worst", type=int, default=10)
    args = parser.parse_args()
    records = list(load_shiftset(limit=args.limit))
    t0 = time.perf_counter()
    result = evaluate(records)
    elapsed = time.perf_counter() - t0
    print(
        f"{len(records)} molecules from {SHIFTSET.name} "
        "(NMRShiftDB via CASCADE NMR8K; Steinbeck 2003, Guan 2021)"
    )
    print(
        f"{'environment':<10} {'n':>6} {'MAE':>6} {'RMSE':>6} {'P95':>6} {'<=1SD':>6} {'<=2SD':>6}"
    )
    for env in ("all", "aromatic", "alkene", "sp3", "carbonyl", "sp", "benzene<=2", "alkyl-sp3"):
        if env not in result:
            continue
        s = summary(result[env])
        print(
            f"{env:<10} {int(s['n']):>6} {s['mae']:6.2f} {s['rmse']:6.2f} {s['p95']:6.2f} "
            f"{s['within1']:6.1%} {s['within2']:6.1%}"
        )
    print(f"time: {1000 * elapsed / max(len(records), 1):.2f} ms per molecule")
    if args.worst:
        worst = []
        for rec in records:
            pred = predict_atom_shifts(rec.mol)
            for idx, obs in rec.shifts.items():
                worst.append((abs(pred[idx][0] - obs), rec.smiles, idx, obs, pred[idx][0]))
        worst.sort(reverse=True)
        print("worst carbons (|error|, SMILES, atom, observed, predicted):")
        for err, smi, idx, obs, ppm in worst[: args.worst]:
            print(f"  {err:6.1f}  {smi}  C{idx} obs {obs:.1f} pred {ppm:.1f}")


if __name__ == "__main__":
    main()
