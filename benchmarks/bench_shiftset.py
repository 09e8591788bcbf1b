"""Pass rate on true structures and fail rate on same-formula decoys, nmrshiftdb2-derived set.

Reads ../shared/data/shifts/nmr8k-public.sdf.gz (a quarter of the CASCADE NMR8K set, itself
from nmrshiftdb2; MIT licence — cite Steinbeck et al., J. Chem. Inf. Comput. Sci. 2003, and
Guan et al., Chem. Sci. 2021, with any figure from it).  Each record's assigned carbon shifts
(``Spectrum 13C 0``: ``shift;0.0M;atomIndex|...``) become an observation; the structure's own
hydrogen counts give the multiplicities (the recorded letters are ~1 % wrong, see
LICENSES.md).

Observation models
------------------
``ideal``   one signal per distinct recorded shift, jittered by N(0, 0.02 ppm) (seeded;
            records written to 0.1 ppm are first de-rounded by U(-0.05, 0.05) ppm, as
            their equal values hide spacings below 0.1 ppm), signals closer than 0.05 ppm
            merged (an overlap, ``mixed`` when the multiplicities differ), called with
            confidence 0.95 from a full DEPT set; heights proportional to carbons
            (quaternary at 0.35) and ``carbons`` estimated as verify.classify does, from
            tallness against class-mates.
``dept135`` the same, but CH and CH3 are only "CH or CH3" (confidence 0.75).
``carbon``  the same, without any multiplicity (carbon-only data).
``spectra`` (``--spectra N``) synthetic spectra of the first N records through
            verify.simulate → verify.peaks → verify.classify, when those stages exist.

Candidates: the true structure, and every other record with the same molecular formula
(same-formula decoys), split into those whose CHn inventory (carbons per multiplicity)
differs from the truth and those with the same inventory.

Run: ``python benchmarks/bench_shiftset.py [--limit N] [--models ideal,dept135,carbon]
[--no-predict] [--spectra N]``.
"""

from __future__ import annotations

import argparse
import collections
import dataclasses
import gzip
import random
import sys
import time
import warnings
from dataclasses import dataclass
from pathlib import Path

from rdkit import Chem, RDLogger
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _bench_spectra import protium  # noqa: E402

from verify.errors import CtallyError, CtallyWarning
from verify.model import HYDROGENS, MULTIPLICITIES, Expectation, Observation, Referencing, Signal
from verify.structure import expected_inventory
from verify.verdict import VerdictConfig, judge

RDLogger.DisableLog("rdApp.*")
PREDICT_ERRORS: collections.Counter[str] = collections.Counter()
CONFIG = VerdictConfig()
DATA = Path(__file__).resolve().parents[2] / "shared" / "data" / "shifts" / "nmr8k-public.sdf.gz"


@dataclass
class Record:
    mol: Chem.Mol
    smiles: str
    formula: str
    shifts: dict[int, float]  # atom index → ppm
    ident: str


def read_records(limit: int | None) -> tuple[list[Record], collections.Counter[str]]:
    skipped: collections.Counter[str] = collections.Counter()
    out: list[Record] = []
    with gzip.open(DATA) as fh:
        for mol in Chem.ForwardSDMolSupplier(fh, removeHs=False):
            if mol is None:
                skipped["unparsable"] += 1
                continue
            keys = sorted(k for k in mol.GetPropNames() if k.startswith("Spectrum 13C"))
            if not keys:
                skipped["no 13C spectrum"] += 1
                continue
            shifts: dict[int, float] = {}
            for item in mol.GetProp(keys[0]).split("|"):
                if item.strip():
                    ppm, _, idx = item.split(";")
                    shifts[int(idx)] = float(ppm)
            carbons = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 6]
            if not carbons or any(c not in shifts for c in carbons):
                skipped["not every carbon assigned"] += 1
                continue
            out.append(
                Record(
                    mol=mol,
                    smiles=mol.GetProp("SMILES") if mol.HasProp("SMILES") else "",
                    formula=CalcMolFormula(mol),
                    shifts={c: shifts[c] for c in carbons},
                    ident=mol.GetProp("nmrshiftdb2 ID") if mol.HasProp("nmrshiftdb2 ID") else "",
                )
            )
            if limit and len(out) >= limit:
                break
    return out, skipped


def relative_heights(merged: list[list], heights: list[float]) -> list[int]:
    """``Signal.carbons`` as the classifier estimates it: tallness against class-mates.

    Mirrors verify.classify's rule (at least four class-mates of the main multiplicity,
    1.8× their median height or more, rounded, at most 4); other signals count 1.
    """
    main = [collections.Counter(m).most_common(1)[0][0] for _, m in merged]
    out = [1] * len(merged)
    for mult in set(main):
        idx = [i for i, m in enumerate(main) if m == mult]
        if len(idx) < 4:
            continue
        for i in idx:
            others = sorted(heights[k] for k in idx if k != i)
            med = (
                others[len(others) // 2]
                if len(others) % 2
                else 0.5 * (others[len(others) // 2 - 1] + others[len(others) // 2])
            )
            ratio = heights[i] / med
            if ratio >= 1.8:
                out[i] = int(min(4, round(ratio)))
    return out


def observe(rec: Record, model: str, rng: random.Random) -> Observation:
    """Signals from the recorded shifts (see the module docstring)."""
    by_shift: dict[float, list[int]] = collections.defaultdict(list)
    for atom, ppm in rec.shifts.items():
        by_shift[ppm].append(atom)
    # Records written to 0.1 ppm lose the spacing of close lines: de-round them.
    coarse = all(abs(p * 10 - round(p * 10)) < 1e-6 for p in by_shift)
    raw = []
    for ppm, atoms in by_shift.items():
        if coarse:
            ppm += rng.uniform(-0.05, 0.05)
        mults = [MULTIPLICITIES[min(3, protium(rec.mol.GetAtomWithIdx(a)))] for a in atoms]
        raw.append([ppm + rng.gauss(0.0, 0.02), mults])
    raw.sort(key=lambda r: -r[0])
    merged: list[list] = []
    for ppm, mults in raw:
        if merged and abs(merged[-1][0] - ppm) < 0.05:
            prev = merged[-1]
            n0, n1 = len(prev[1]), len(mults)
            prev[0] = (prev[0] * n0 + ppm * n1) / (n0 + n1)
            prev[1] = prev[1] + mults
        else:
            merged.append([ppm, list(mults)])
    heights = [sum(0.35 if m == "C" else 1.0 for m in mults) for _, mults in merged]
    rel = relative_heights(merged, heights)
    sigs = []
    for (ppm, mults), n_rel in zip(merged, rel, strict=True):
        counts = collections.Counter(mults)
        main = max(counts, key=lambda m: (counts[m], -MULTIPLICITIES.index(m)))
        mixed = len(counts) > 1
        height = sum(0.35 if m == "C" else 1.0 for m in mults)
        call: str | None = main
        conf = 0.95
        cands: tuple[str, ...] = tuple(sorted(counts, key=MULTIPLICITIES.index)) if mixed else ()
        if model == "carbon":
            call, conf, cands, mixed = None, 0.0, (), False
        elif model == "dept135" and main in ("CH", "CH3") and not mixed:
            cands, conf = ("CH", "CH3"), 0.75
        sigs.append(
            Signal(
                ppm=round(ppm, 3),
                multiplicity=call,  # type: ignore[arg-type]
                confidence=conf,
                candidates=cands,
                mixed=mixed,
                carbons=n_rel,
                height=height,
                snr=60.0 * height,
            )
        )
    experiments = {
        "ideal": ("carbon", "dept90", "dept135"),
        "dept135": ("carbon", "dept135"),
        "carbon": ("carbon",),
    }[model]
    mode = {"ideal": "full", "dept135": "dept135", "carbon": "carbon-only"}[model]
    return Observation(
        signals=tuple(sigs),
        experiments=experiments,
        mode=mode,
        referencing=Referencing(method="solvent", solvent="CDCl3"),
    )


def expectation(rec: Record, use_predict: bool) -> Expectation | None:
    try:
        exp = expected_inventory(rec.mol)
    except CtallyError:
        return None
    if use_predict:
        try:
            from verify.predict import predict_shifts
        except ImportError:
            return exp
        try:
            exp = predict_shifts(exp)
        except Exception as exc:  # noqa: BLE001 - a benchmark reports and carries on
            PREDICT_ERRORS[type(exc).__name__] += 1
    return exp


def inventory_key(exp: Expectation) -> tuple[int, ...]:
    inv = exp.inventory()
    return tuple(inv[m] for m in MULTIPLICITIES)


def pct(n: int, d: int) -> str:
    return f"{100.0 * n / d:6.2f} % ({n}/{d})" if d else "   n/a"


def run_model(
    records: list[Record],
    exps: list[Expectation | None],
    model: str,
    max_decoys: int,
    seed: int,
) -> None:
    rng = random.Random(seed)
    by_formula: dict[str, list[int]] = collections.defaultdict(list)
    for i, r in enumerate(records):
        if exps[i] is not None:
            by_formula[r.formula].append(i)
    true_v: collections.Counter[str] = collections.Counter()
    why: collections.Counter[str] = collections.Counter()
    decoy = {"differs": collections.Counter(), "same": collections.Counter()}
    ranked_first = ranked_total = 0
    t0 = time.perf_counter()
    n_judged = 0
    examples: list[str] = []
    for i, rec in enumerate(records):
        exp = exps[i]
        if exp is None:
            continue
        obs = observe(rec, model, rng)
        v = judge(exp, obs, config=CONFIG)
        n_judged += 1
        true_v[v.verdict] += 1
        worst = [f for f in v.findings if f.severity == v.verdict] if v.verdict != "pass" else []
        for code in {f.code for f in worst}:
            why[f"{v.verdict}:{code}"] += 1
        if v.verdict == "fail" and len(examples) < 8:
            examples.append(
                f"    {rec.ident} {rec.smiles}: "
                + "; ".join(f.message for f in v.findings if f.severity == "fail")[:300]
            )
        others = [j for j in by_formula[rec.formula] if j != i][:max_decoys]
        for j in others:
            dexp = exps[j]
            assert dexp is not None
            if dexp.structure == exp.structure:
                continue  # the same compound recorded twice
            dv = judge(dexp, obs, config=CONFIG)
            n_judged += 1
            kind = "differs" if inventory_key(dexp) != inventory_key(exp) else "same"
            decoy[kind][dv.verdict] += 1
            ranked_total += 1
            ranked_first += v.score > dv.score
    dt = time.perf_counter() - t0
    n_true = sum(true_v.values())
    print(f"\n== observation model: {model} ==")
    print(f"true structures      : {n_true}")
    print(f"  pass               : {pct(true_v['pass'], n_true)}")
    print(f"  not fail           : {pct(true_v['pass'] + true_v['review'], n_true)}")
    print(f"  review / fail      : {true_v['review']} / {true_v['fail']}")
    for kind, label in (("differs", "inventory differs"), ("same", "same inventory")):
        c = decoy[kind]
        tot = sum(c.values())
        print(
            f"decoys, {label:<17}: fail {pct(c['fail'], tot)}; not pass {pct(tot - c['pass'], tot)}"
        )
    print(f"true scores above decoy: {pct(ranked_first, ranked_total)}")
    print(f"time: {dt:.1f} s for {n_judged} verdicts ({1000 * dt / max(1, n_judged):.1f} ms each)")
    if why:
        print("reasons on true structures (verdict:code → count):")
        for k, n in why.most_common(12):
            print(f"    {k:<40} {n}")
    if examples:
        print("first true-structure fails:")
        print("\n".join(examples))


def run_spectra(
    records: list[Record],
    exps: list[Expectation | None],
    n: int,
    seed: int,
    snr: float = 100.0,
    experiments: tuple[str, ...] = ("carbon", "dept90", "dept135"),
) -> None:
    try:
        from verify import classify, peaks, simulate  # noqa: F401
    except ImportError as exc:
        print(f"\n== spectra: skipped ({exc}) ==")
        return
    from _bench_spectra import observe_by_spectra

    counts: collections.Counter[str] = collections.Counter()
    decoy = {"differs": collections.Counter(), "same": collections.Counter()}
    by_formula: dict[str, list[int]] = collections.defaultdict(list)
    for i, r in enumerate(records):
        if exps[i] is not None:
            by_formula[r.formula].append(i)
    done = 0
    t0 = time.perf_counter()
    why: collections.Counter[str] = collections.Counter()
    # Records that have decoys first, so that both rates are measured on a small budget.
    order = sorted(range(len(records)), key=lambda i: (len(by_formula[records[i].formula]) < 2, i))
    for i in order:
        if done >= n:
            break
        exp = exps[i]
        if exp is None:
            continue
        rec = records[i]
        obs = observe_by_spectra(rec.shifts, rec.mol, seed + i, snr=snr, experiments=experiments)
        if obs is None:
            continue
        done += 1
        v = judge(exp, obs, config=CONFIG)
        counts[v.verdict] += 1
        if v.verdict != "pass":
            for code in {f.code for f in v.findings if f.severity == v.verdict}:
                why[f"{v.verdict}:{code}"] += 1
        for j in [j for j in by_formula[rec.formula] if j != i][:3]:
            dexp = exps[j]
            assert dexp is not None
            if dexp.structure == exp.structure:
                continue
            kind = "differs" if inventory_key(dexp) != inventory_key(exp) else "same"
            decoy[kind][judge(dexp, obs, config=CONFIG).verdict] += 1
    dt = time.perf_counter() - t0
    print(
        f"\n== synthetic spectra → pick → classify ({done} records, {'+'.join(experiments)}, "
        f"SNR {snr:g}, {dt:.0f} s) =="
    )
    print(f"  pass     : {pct(counts['pass'], done)}")
    print(f"  not fail : {pct(counts['pass'] + counts['review'], done)}")
    for kind in ("differs", "same"):
        c = decoy[kind]
        tot = sum(c.values())
        print(f"  decoys ({kind}): fail {pct(c['fail'], tot)}")
    for k, m in why.most_common(10):
        print(f"    {k:<40} {m}")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--limit", type=int, default=None, help="read only the first N usable records")
    ap.add_argument("--models", default="ideal,dept135,carbon")
    ap.add_argument("--no-predict", action="store_true", help="do not fill predicted shifts")
    ap.add_argument("--max-decoys", type=int, default=5)
    ap.add_argument("--spectra", type=int, default=0, help="also run N records through spectra")
    ap.add_argument("--spectra-snr", type=float, default=100.0)
    ap.add_argument("--spectra-experiments", default="carbon,dept90,dept135")
    ap.add_argument("--seed", type=int, default=20260)
    ap.add_argument(
        "--set", action="append", default=[], metavar="NAME=VALUE", help="VerdictConfig field"
    )
    args = ap.parse_args()
    global CONFIG
    fields = {f.name: f.type for f in dataclasses.fields(VerdictConfig)}
    changes = {}
    for item in args.set:
        name, _, value = item.partition("=")
        changes[name] = int(value) if fields[name] in ("int", int) else float(value)
    CONFIG = VerdictConfig(**changes)
    if changes:
        print(f"config changes: {changes}")
    if not DATA.exists():
        print(f"shift set not found: {DATA}")
        return 1
    warnings.simplefilter("ignore", CtallyWarning)
    t0 = time.perf_counter()
    records, skipped = read_records(args.limit)
    exps = [expectation(r, not args.no_predict) for r in records]
    print(
        f"records used: {len(records)}; skipped: {dict(skipped)}; "
        f"no expectation: {sum(e is None for e in exps)}; "
        f"predictions: {'off' if args.no_predict else 'on'}; "
        f"read+expect {time.perf_counter() - t0:.0f} s"
    )
    # Sanity: the expectation's multiplicities are the structure's own.
    for rec, exp in zip(records, exps, strict=True):
        if exp is None:
            continue
        for c in exp.classes:
            for a in c.atoms:
                atom = rec.mol.GetAtomWithIdx(a)
                assert atom.GetAtomicNum() == 6, (rec.ident, a)
                assert HYDROGENS[c.multiplicity] == min(3, protium(atom)) or "deuterated" in c.flags
    for model in filter(None, (m.strip() for m in args.models.split(","))):
        run_model(records, exps, model, args.max_decoys, args.seed)
    if args.spectra:
        run_spectra(
            records,
            exps,
            args.spectra,
            args.seed,
            snr=args.spectra_snr,
            experiments=tuple(args.spectra_experiments.split(",")),
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
