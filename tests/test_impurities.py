"""Tests of verify.impurities: residual solvents and laboratory impurities among left-over signals.

Shift values below are the Gottlieb, Kotlyar & Nudelman (J. Org. Chem. 1997, 62, 7512) Table 2
carbon shifts, as remembered (from memory, like the table in verify/data/impurities.toml).
"""

from __future__ import annotations

from collections import Counter

import pytest
from rdkit import Chem

from verify.errors import UsageError
from verify.impurities import SOLVENTS, MatchRules, canonical_solvent, identify, load_table
from verify.model import MULTIPLICITIES, Observation, Referencing, Signal

FULL = ("carbon", "dept90", "dept135")


def sig(ppm: float, mult: str | None, height: float = 10.0, **kw: object) -> Signal:
    return Signal(ppm=ppm, multiplicity=mult, confidence=0.95, height=height, snr=50.0, **kw)


def obs(*signals: Signal, solvent: str | None = "CDCl3", method: str = "solvent") -> Observation:
    return Observation(
        signals=signals,
        experiments=FULL,
        mode="full",
        referencing=Referencing(method=method, solvent=solvent),
    )


def idx(o: Observation, *ppms: float) -> list[int]:
    return [i for i, s in enumerate(o.signals) if any(abs(s.ppm - p) < 1e-6 for p in ppms)]


# Ethyl acetate in CDCl3 (Gottlieb 1997 Table 2, from memory): 14.19 CH3, 21.04 CH3,
# 60.49 CH2, 171.36 C.
ETOAC_CDCL3 = [(14.19, "CH3"), (21.04, "CH3"), (60.49, "CH2"), (171.36, "C")]


def test_ethyl_acetate_found_with_mol_percent() -> None:
    # A sample of three CH/CH3 signals of height 10 per carbon; ethyl acetate at height 2.
    sample = [sig(128.5, "CH"), sig(21.5, "CH3"), sig(129.2, "CH")]
    imp = [sig(p, m, height=2.0 if m != "C" else 0.5) for p, m in ETOAC_CDCL3]
    o = obs(*sample, *imp)
    found = identify(o, idx(o, *[p for p, _ in ETOAC_CDCL3]), "CDCl3")
    assert [f.name for f in found] == ["ethyl acetate"]
    assert sorted(o.signals[i].ppm for i in found[0].signals) == sorted(p for p, _ in ETOAC_CDCL3)
    # height per carbon 2 against 10 → 0.2 mol per mol sample → 0.2 / 1.2 = 16.7 mol %
    assert found[0].mol_percent == pytest.approx(16.7, abs=0.1)
    assert "Gottlieb" in found[0].source and "memory" in found[0].source


def test_ethyl_acetate_without_its_carbonyl_is_still_found() -> None:
    # Carbonyl lines are often lost in the noise (common practice): 3 of 4 suffice.
    o = obs(sig(128.5, "CH"), *[sig(p, m) for p, m in ETOAC_CDCL3 if m != "C"])
    found = identify(o, idx(o, 14.19, 21.04, 60.49), "CDCl3")
    assert [f.name for f in found] == ["ethyl acetate"]


def test_lone_ch2_at_60_5_is_not_ethyl_acetate() -> None:
    o = obs(sig(128.5, "CH"), sig(60.49, "CH2"))
    assert identify(o, idx(o, 60.49), "CDCl3") == ()


def test_multiplicity_contradiction_rejects_a_line() -> None:
    # The 60.49 line called CH3 instead of CH2: the protonated OCH2 is then missing.
    lines = [(14.19, "CH3"), (21.04, "CH3"), (60.49, "CH3"), (171.36, "C")]
    o = obs(*[sig(p, m) for p, m in lines])
    assert all(f.name != "ethyl acetate" for f in identify(o, range(4), "CDCl3"))


def test_single_line_impurity_needs_its_multiplicity() -> None:
    # Dichloromethane in CDCl3: 53.52 CH2 (Gottlieb 1997, from memory).
    ok = obs(sig(53.52, "CH2"))
    assert [f.name for f in identify(ok, [0], "CDCl3")] == ["dichloromethane"]
    wrong = obs(sig(53.52, "CH"))
    assert identify(wrong, [0], "CDCl3") == ()
    unknown = obs(sig(53.52, None))  # carbon-only data cannot prove a one-line impurity
    assert identify(unknown, [0], "CDCl3") == ()


def test_carbon_only_data_still_find_multi_line_impurities() -> None:
    o = obs(*[sig(p, None) for p, _ in ETOAC_CDCL3])
    assert [f.name for f in identify(o, range(4), "CDCl3")] == ["ethyl acetate"]


def test_solvent_column_is_used() -> None:
    # Ethyl acetate in DMSO-d6 (Gottlieb 1997, from memory): 14.40, 20.68, 59.74, 170.31.
    dmso = [(14.40, "CH3"), (20.68, "CH3"), (59.74, "CH2"), (170.31, "C")]
    o = obs(*[sig(p, m) for p, m in dmso], solvent="DMSO-d6")
    assert [f.name for f in identify(o, range(4), "DMSO-d6")] == ["ethyl acetate"]
    # The same peaks are not ethyl acetate in CDCl3 (59.74 is 0.75 ppm from 60.49).
    assert all(f.name != "ethyl acetate" for f in identify(o, range(4), "CDCl3"))


def test_toluene_and_thf_together() -> None:
    # Toluene (21.46, 125.33, 128.26, 129.07, 137.89) and THF (25.62, 67.97) in CDCl3.
    tol = [(21.46, "CH3"), (125.33, "CH"), (128.26, "CH"), (129.07, "CH"), (137.89, "C")]
    thf = [(25.62, "CH2"), (67.97, "CH2")]
    o = obs(*[sig(p, m) for p, m in tol + thf], sig(40.0, "CH2"))
    found = identify(o, range(len(o.signals)), "CDCl3")
    assert sorted(f.name for f in found) == ["tetrahydrofuran", "toluene"]
    explained = {i for f in found for i in f.signals}
    assert [o.signals[i].ppm for i in range(len(o.signals)) if i not in explained] == [40.0]


def test_nmr_solvent_signal_recognised_without_amount() -> None:
    o = obs(sig(77.16, "C", pattern="solvent"), sig(30.0, "CH2"))
    found = identify(o, [0, 1], "Chloroform-D1 (CDCl3)")
    assert [f.name for f in found] == ["NMR solvent (CDCl3)"]
    assert found[0].mol_percent is None


def test_unknown_solvent_uses_wider_tentative_match() -> None:
    o = obs(*[sig(p + 0.3, m) for p, m in ETOAC_CDCL3], solvent=None)
    found = identify(o, range(4), None)
    assert [f.name for f in found] == ["ethyl acetate"]
    assert "tentative" in found[0].source
    # With the solvent known, 0.3 ppm errors are too large when the lines do not move
    # together (a common offset of the whole pattern is allowed: see the toluene test).
    scattered = obs(
        *[sig(p + d, m) for (p, m), d in zip(ETOAC_CDCL3, (0.3, -0.3, 0.3, -0.3), strict=True)],
        solvent=None,
    )
    assert "ethyl acetate" not in [f.name for f in identify(scattered, range(4), "CDCl3")]
    # ... unless the axis was not referenced.
    o2 = obs(*[sig(p + 0.25, m) for p, m in ETOAC_CDCL3], method="none")
    assert [f.name for f in identify(o2, range(4), "CDCl3")] == ["ethyl acetate"]
    # Tolerances set by the caller are honoured (the line tolerance and the window for a
    # common offset of the whole pattern).
    strict = MatchRules(unreferenced_tolerance_ppm=0.1, common_offset_ppm=0.0)
    assert identify(o2, range(4), "CDCl3", rules=strict) == ()


def test_only_unassigned_signals_are_considered() -> None:
    o = obs(*[sig(p, m) for p, m in ETOAC_CDCL3])
    assert identify(o, [], "CDCl3") == ()


def test_bad_index_raises() -> None:
    o = obs(sig(53.52, "CH2"))
    with pytest.raises(UsageError, match="outside the observation"):
        identify(o, [3], "CDCl3")


@pytest.mark.parametrize(
    ("written", "canonical"),
    [
        # Spellings as nmrshiftdb2 records and JCAMP-DX files write them (common practice).
        ("Chloroform-D1 (CDCl3)", "CDCl3"),
        ("CDCl3", "CDCl3"),
        ("DMSO-D6", "DMSO-d6"),
        ("Dimethylsulphoxide-D6 (DMSO-D6, C2D6SO)", "DMSO-d6"),
        ("Methanol-D4 (CD3OD)", "CD3OD"),
        ("acetone-d6", "acetone-d6"),
        ("Benzene-D6 (C6D6)", "C6D6"),
        ("Deuteriumoxide (D2O)", "D2O"),
        ("CD2Cl2", "CD2Cl2"),
        (None, None),
    ],
)
def test_canonical_solvent(written: str | None, canonical: str | None) -> None:
    assert canonical_solvent(written) == canonical


def _rdkit_classes(smiles: str) -> Counter[tuple[str, int]]:
    """(multiplicity by protium, class size) per symmetry class, from RDKit."""
    mol = Chem.MolFromSmiles(smiles)
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    groups: dict[int, list[Chem.Atom]] = {}
    for atom in mol.GetAtoms():
        if atom.GetSymbol() == "C":
            groups.setdefault(ranks[atom.GetIdx()], []).append(atom)
    out: Counter[tuple[str, int]] = Counter()
    for atoms in groups.values():
        protium = sum(
            1 for nb in atoms[0].GetNeighbors() if nb.GetSymbol() == "H" and nb.GetIsotope() != 2
        )
        out[(MULTIPLICITIES[atoms[0].GetTotalNumHs() + protium], len(atoms))] += 1
    return out


# Rows that list lines RDKit's topological symmetry merges: the two N-methyls of an amide
# differ by slow C-N rotation (common practice).
_ROTAMERS = {"N,N-dimethylacetamide", "N,N-dimethylformamide"}


@pytest.mark.parametrize("entry", load_table(), ids=lambda e: e.name)
def test_table_rows_agree_with_rdkit(entry: object) -> None:
    from verify.impurities import ImpurityEntry

    assert isinstance(entry, ImpurityEntry)
    for ln in entry.lines:
        assert ln.multiplicity in MULTIPLICITIES
        assert ln.shifts and set(ln.shifts) <= set(SOLVENTS)
        assert all(-5.0 < v < 230.0 for v in ln.shifts.values())
        assert "memory" in ln.source
    if not entry.smiles:
        return  # mixtures (grease)
    table = Counter((ln.multiplicity, ln.carbons) for ln in entry.lines)
    expected = _rdkit_classes(entry.smiles)
    if entry.name in _ROTAMERS:
        # One RDKit class of two N-methyls is two table lines of one.
        expected[("CH3", 2)] -= 1
        expected[("CH3", 1)] += 2
        expected = +expected
    assert table == expected


# Toluene in CDCl3 (Fulmer et al. 2010 Table 2, from memory): 137.89 C, 129.07 CH,
# 128.26 CH, 125.33 CH, 21.46 CH3.
TOLUENE_CDCL3 = [(137.89, "C"), (129.07, "CH"), (128.26, "CH"), (125.33, "CH"), (21.46, "CH3")]


def test_impurity_lines_moved_together_are_still_recognised() -> None:
    # The measured 1-(4-fluorophenyl)ethylamine sample (shared data) shows its toluene
    # lines about 0.33 ppm below the table once the axis is set on CDCl3: every line
    # moves together, so the pattern is still toluene.
    shifted = [sig(p - 0.33, m, height=2.0) for p, m in TOLUENE_CDCL3]
    o = obs(sig(50.3, "CH"), sig(25.6, "CH3"), *shifted)
    found = identify(o, idx(o, *[p - 0.33 for p, _ in TOLUENE_CDCL3]), "CDCl3")
    assert [f.name for f in found] == ["toluene"]
    assert len(found[0].signals) == 5


def test_lines_scattered_beyond_the_tolerance_are_not_an_impurity() -> None:
    # The same lines moved by different amounts (±0.3 ppm) do not keep toluene's pattern.
    moves = [0.3, -0.3, 0.3, -0.3, 0.3]
    scattered = [sig(p + d, m) for (p, m), d in zip(TOLUENE_CDCL3, moves, strict=True)]
    o = obs(sig(50.3, "CH"), *scattered)
    found = identify(o, idx(o, *[s.ppm for s in scattered]), "CDCl3")
    assert "toluene" not in [f.name for f in found]


def test_a_single_line_gets_no_common_offset() -> None:
    # Dichloromethane (one CH2, 53.52 in CDCl3; Gottlieb 1997, from memory) 0.3 ppm off
    # is not dichloromethane: one line cannot show a common offset.
    o = obs(sig(128.5, "CH"), sig(53.22, "CH2"))
    found = identify(o, idx(o, 53.22), "CDCl3")
    assert "dichloromethane" not in [f.name for f in found]
