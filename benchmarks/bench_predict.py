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
    """MAE, median, RMSE, P95 (ppm), fractions within 1 and 2 SD and beyond 4 SD."""
    err, sd = np.abs(arr[:, 0]), arr[:, 1]
    return {
        "n": float(len(err)),
        "mae": float(err.mean()),
        "median": float(np.median(err)),
        "rmse": float(np.sqrt((err**2).mean())),
        "p95": float(np.percentile(err, 95)),
        "within1": float((err <= sd).mean()),
        "within2": float((err <= 2 * sd).mean()),
        "beyond4": float((err > 4 * sd).mean()),
    }


def _inventory(mol: Chem.Mol, atoms: list[int]) -> dict[int, list[int]]:
    out: dict[int, list[int]] = {}
    for i in atoms:
        out.setdefault(mol.GetAtomWithIdx(i).GetTotalNumHs(), []).append(i)
    return out


def misfit(observed: dict[int, list[float]], mol: Chem.Mol) -> float:
    """Mean squared z-score of the best assignment of observed shifts, per H count."""
    from scipy.optimize import linear_sum_assignment

    pred = predict_atom_shifts(mol)
    groups = _inventory(mol, list(pred))
    total, count = 0.0, 0
    for nh, values in observed.items():
        atoms = groups.get(nh, [])
        if len(atoms) < len(values):
            return float("inf")
        cost = np.array([[((v - pred[a][0]) / pred[a][1]) ** 2 for a in atoms] for v in values])
        rows, cols = linear_sum_assignment(cost)
        total += float(cost[rows, cols].sum())
        count += len(values)
    return total / max(count, 1)


def isomer_test(records: list[Record]) -> tuple[int, int]:
    """Same-formula, same-CHn-inventory pairs: (pairs, pairs where the true one fits better).

    Only molecules with every carbon assigned are used; each molecule's observed shifts are
    matched against its own predictions and against each decoy's.
    """
    from rdkit.Chem import rdMolDescriptors

    full = []
    for rec in records:
        carbons = [a.GetIdx() for a in rec.mol.GetAtoms() if a.GetAtomicNum() == 6]
        if set(carbons) != set(rec.shifts):
            continue
        groups = _inventory(rec.mol, carbons)
        observed = {nh: [rec.shifts[i] for i in atoms] for nh, atoms in groups.items()}
        key = (
            rdMolDescriptors.CalcMolFormula(rec.mol),
            tuple(sorted((nh, len(v)) for nh, v in groups.items())),
        )
        full.append((key, observed, rec.mol))
    pairs = wins = 0
    for key, observed, mol in full:
        own = misfit(observed, mol)
        for other_key, _, other in full:
            if other_key == key and other is not mol:
                pairs += 1
                wins += own < misfit(observed, other)
    return pairs, wins


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
    s = summary(result["all"])
    print(f"median |error| {s['median']:.2f} ppm; beyond 4 SD: {s['beyond4']:.1%}")
    pairs, wins = isomer_test(records)
    print(
        f"same-formula, same-CHn isomer pairs: {pairs}; true structure fits better in "
        f"{wins} ({wins / max(pairs, 1):.1%})"
    )
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
