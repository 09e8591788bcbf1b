"""Tests of the expected carbon inventory (verify/structure.py).

Each check names its outside reference: RDKit descriptors, textbook class counts
(from memory, marked so), the measured spectra and assigned shifts under ../shared.
"""

from __future__ import annotations

import gzip
import json
import time
import warnings
from collections import Counter
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from rdkit import Chem
from rdkit.Chem import rdMolDescriptors

from tests.conftest import shared_path
from verify.errors import CtallyWarning, InputFileError, StructureError
from verify.model import HYDROGENS, Expectation
from verify.structure import (
    expectation_to_dict,
    expected_inventory,
    format_expectation,
    load_structure,
)


def signals(smiles: str) -> dict[str, int]:
    return expected_inventory(smiles).signals()


def n_classes(smiles: str) -> int:
    return len(expected_inventory(smiles).classes)


def class_of(exp: Expectation, atom: int):
    return next(c for c in exp.classes if atom in c.atoms)


# ------------------------------------------------------------ RDKit descriptors

DESCRIPTOR_CASES = [
    "CC(C)C[C@H](N)C(=O)O",
    "O=C(O)CC(O)(CC(=O)O)C(=O)O",
    "c1ccc2ccccc2c1",
    "[2H]C([2H])([2H])S(=O)C([2H])([2H])[2H]",
    "C[n+]1ccn(C)c1.[Cl-]",
    "FC(F)(F)c1ccc(P(=O)(c2ccccc2)c2ccccc2)cc1",
]


@pytest.mark.parametrize("smiles", DESCRIPTOR_CASES)
def test_formula_and_carbon_hydrogens_match_rdkit(smiles: str) -> None:
    # Reference: RDKit's own CalcMolFormula and per-atom H counts (general-purpose library).
    exp = expected_inventory(smiles)
    mol = Chem.MolFromSmiles(smiles)
    assert exp.formula == rdMolDescriptors.CalcMolFormula(mol)
    protium_on_carbon = sum(a.GetTotalNumHs() for a in mol.GetAtoms() if a.GetAtomicNum() == 6)
    inv = exp.inventory()
    assert sum(HYDROGENS[m] * n for m, n in inv.items()) == protium_on_carbon
    assert sum(inv.values()) == sum(1 for a in mol.GetAtoms() if a.GetAtomicNum() == 6)
    # indices are input (SMILES) order: every class atom is a carbon there
    assert all(mol.GetAtomWithIdx(a).GetAtomicNum() == 6 for c in exp.classes for a in c.atoms)


# ----------------------------------------------------- textbook class counts
# All counts below are textbook facts quoted from memory (symmetry of the molecule).


def test_menthol_ten_signals() -> None:
    # From memory: (-)-menthol shows 10 carbon signals, 3 CH3, 4 CH, 3 CH2 (the two
    # isopropyl methyls are diastereotopic).
    sig = signals("CC(C)[C@@H]1CC[C@@H](C)C[C@H]1O")
    assert sig == {"C": 0, "CH": 4, "CH2": 3, "CH3": 3}


def test_menthol_unspecified_stereo_still_ten() -> None:
    # From memory, as above: the methyls stay diastereotopic whatever the configuration.
    assert n_classes("CC(C)C1CCC(C)CC1O") == 10


@pytest.mark.parametrize("smiles", ["CC(C)[C@H](N)C(=O)O", "CC(C)C(N)C(=O)O"])
def test_valine_five_signals_with_diastereotopic_methyls(smiles: str) -> None:
    # From memory: valine has 5 carbon signals (two methyl peaks ~ 17 and 19 ppm in D2O),
    # also when drawn without stereo (Calpha is a potential stereocentre).
    exp = expected_inventory(smiles)
    assert len(exp.classes) == 5
    methyls = [c for c in exp.classes if c.multiplicity == "CH3"]
    assert len(methyls) == 2
    assert all("diastereotopic" in c.flags for c in methyls)
    a, b = (exp.classes.index(c) for c in methyls)
    assert exp.classes[a].partner == b and exp.classes[b].partner == a


@pytest.mark.parametrize(
    "smiles",
    [
        "O=C(O)[C@H](O)[C@@H](O)C(=O)O",  # meso
        "O=C(O)[C@@H](O)[C@@H](O)C(=O)O",  # (R,R)
        "O=C(O)C(O)C(O)C(=O)O",  # unspecified
    ],
)
def test_tartaric_acids_two_signals(smiles: str) -> None:
    # From memory: meso-, (R,R)- and unspecified tartaric acid each give 2 carbon signals.
    exp = expected_inventory(smiles)
    assert len(exp.classes) == 2
    assert not any("diastereotopic" in c.flags for c in exp.classes)


@pytest.mark.parametrize(
    ("smiles", "count"),
    [
        ("OCC(O)CO", 2),  # glycerol, from memory
        ("OC(=O)CC(O)(CC(=O)O)C(=O)O", 4),  # citric acid: enantiotopic CH2, from memory
        ("Cc1ccccc1", 5),  # toluene, from memory
        ("Cc1ccc(C)cc1", 3),  # p-xylene, from memory
        ("CC(C)O", 2),  # 2-propanol: enantiotopic methyls, common practice
        ("CC(C)(C)C", 2),  # neopentane, common practice
        ("C[C@H]1CC[C@@H](C)CC1", 3),  # cis-1,4-dimethylcyclohexane, common practice
        ("C[C@H]1CC[C@H](C)CC1", 3),  # trans-1,4-dimethylcyclohexane, common practice
    ],
)
def test_textbook_class_counts(smiles: str, count: int) -> None:
    assert n_classes(smiles) == count


def test_citric_acid_methylenes_one_class() -> None:
    # From memory: citric acid CH2 groups are enantiotopic (one peak ~ 43 ppm).
    exp = expected_inventory("OC(=O)CC(O)(CC(=O)O)C(=O)O")
    ch2 = [c for c in exp.classes if c.multiplicity == "CH2"]
    assert len(ch2) == 1 and ch2[0].carbons == 2


def test_sucrose_inventory() -> None:
    # Common practice: sucrose has 12 distinct carbons: 1 C, 8 CH, 3 CH2, no CH3.
    sig = signals("OC[C@H]1O[C@@](CO)(O[C@H]2O[C@H](CO)[C@@H](O)[C@H](O)[C@H]2O)[C@@H](O)[C@@H]1O")
    assert sig == {"C": 1, "CH": 8, "CH2": 3, "CH3": 0}


def test_large_symmetric_molecules() -> None:
    # Common practice: beta-cyclodextrin shows 6 carbon signals (C1-C6), C60 one (143 ppm).
    from benchmarks.bench_structure import STRUCTURES

    cd = expected_inventory(STRUCTURES["beta-cyclodextrin"])
    assert cd.signals() == {"C": 0, "CH": 5, "CH2": 1, "CH3": 0}
    assert all(c.carbons == 7 for c in cd.classes)
    c60 = expected_inventory(STRUCTURES["C60"])
    assert len(c60.classes) == 1 and c60.classes[0].carbons == 60
    assert c60.classes[0].shift_range[0] <= 143.2 <= c60.classes[0].shift_range[1]


def test_dmf_two_n_methyl_classes() -> None:
    # Gottlieb et al., J. Org. Chem. 1997, 62, 7512 and Fulmer et al., Organometallics
    # 2010, 29, 2176: DMF shows CHO 162.6 and two N-CH3 signals (36.5, 31.4 ppm in CDCl3).
    exp = expected_inventory("CN(C)C=O")
    assert len(exp.classes) == 3
    methyls = [c for c in exp.classes if c.multiplicity == "CH3"]
    assert len(methyls) == 2
    assert all("amide-rotation" in c.flags and c.partner is not None for c in methyls)
    for c, ppm in zip(methyls, (36.5, 31.4), strict=True):
        assert c.shift_range[0] <= ppm <= c.shift_range[1]
    cho = class_of(exp, 3)
    assert cho.environment == "carbonyl-amide" and cho.multiplicity == "CH"
    assert cho.shift_range[0] <= 162.6 <= cho.shift_range[1]


def test_tetramethylurea_single_methyl_class() -> None:
    # From memory: tetramethylurea shows one N-CH3 signal (~ 38.6 ppm) at room temperature.
    exp = expected_inventory("CN(C)C(=O)N(C)C")
    assert len(exp.classes) == 2


def test_carbamate_methyls_split() -> None:
    # From memory: methyl N,N-dimethylcarbamate shows two N-CH3 signals (slow rotation).
    exp = expected_inventory("COC(=O)N(C)C")
    assert [c.multiplicity for c in exp.classes].count("CH3") == 3
    assert class_of(exp, 2).environment == "carbonyl-carbamate"


# ----------------------------------------------------------- stereotopicity


def test_isopropyl_next_to_stereocentre_is_split() -> None:
    # Common practice: 3-methylbutan-2-ol has diastereotopic isopropyl methyls (5 signals).
    exp = expected_inventory("CC(C)[C@@H](C)O")
    assert len(exp.classes) == 5
    assert "diastereotopic" in class_of(exp, 0).flags
    assert class_of(exp, 0) is not class_of(exp, 2)


@pytest.mark.parametrize(
    ("smiles", "count", "pair"),
    [
        ("CC(C)C[C@H](N)C(=O)O", 6, (0, 2)),  # L-leucine: delta-methyls ~ 21.5/22.8 ppm
        ("CC1(C)[C@@H]2CC[C@@]1(C)C(=O)C2", 10, (0, 2)),  # camphor: C8/C9 ~ 19.2/19.8 ppm
        (  # cholesterol: 27 signals, C26/C27 ~ 22.6/22.8 ppm
            "C[C@H](CCCC(C)C)[C@H]1CC[C@@H]2[C@@]1(CC[C@H]3[C@H]2CC=C4[C@@]3(CC[C@@H](C4)O)C)C",
            27,
            (6, 7),
        ),
    ],
)
def test_natural_products_diastereotopic_methyls(
    smiles: str, count: int, pair: tuple[int, int]
) -> None:
    # Textbook spectra from memory (Breitmaier & Voelter 3rd ed. 1987 shift tables):
    # the two methyls of each pair give separate peaks.
    exp = expected_inventory(smiles)
    assert len(exp.classes) == count
    a, b = (class_of(exp, i) for i in pair)
    assert a is not b and "diastereotopic" in a.flags and exp.classes[a.partner] is b


def test_gem_dimethyl_between_like_and_unlike_centres() -> None:
    # Symmetry (common practice): in 3,3-dimethylpentane-2,4-diol the gem-dimethyls are
    # homotopic in the C2-symmetric (R,R) isomer and diastereotopic in the meso isomer.
    rr = expected_inventory("C[C@@H](O)C(C)(C)[C@H](O)C")
    meso = expected_inventory("C[C@@H](O)C(C)(C)[C@@H](O)C")
    assert len(rr.classes) == 4
    assert len(meso.classes) == 5


def test_unspecified_relative_configuration_keeps_finest_split() -> None:
    # Symmetry (as above): drawn without stereo, the gem-dimethyls may be diastereotopic
    # (meso) or not (R,R); the expectation keeps them apart, flagged, with partners.
    exp = expected_inventory("CC(O)C(C)(C)C(O)C")
    a, b = class_of(exp, 4), class_of(exp, 5)
    assert a is not b and "diastereotopic" in a.flags
    assert exp.classes[a.partner] is b
    assert class_of(exp, 0) is class_of(exp, 8)
    # one centre given, the other not: still both relative configurations are tried
    half = expected_inventory("C[C@@H](O)C(C)(C)C(O)C")
    assert class_of(half, 4) is not class_of(half, 5)


@pytest.mark.parametrize(
    ("smiles", "count", "split"),
    [
        ("CC=C(C)C", 5, (3, 4)),  # 2-methylbut-2-ene: E/Z methyls (from memory: 3 CH3 peaks)
        ("C=C(C)C", 3, None),  # isobutylene: the =CH2 end is symmetric
        ("C/C=C/C", 2, None),  # (E)-but-2-ene
    ],
)
def test_e_z_methyls(smiles: str, count: int, split: tuple[int, int] | None) -> None:
    exp = expected_inventory(smiles)
    assert len(exp.classes) == count
    if split:
        a, b = (class_of(exp, i) for i in split)
        assert a is not b and "diastereotopic" in a.flags
        assert exp.classes[a.partner] is b


# ---------------------------------------------------- resonance and exchange


def test_imidazolium_resonance_averaged() -> None:
    # Common practice: 1,3-dimethylimidazolium shows 3 carbon signals (C2, C4/C5, NCH3).
    exp = expected_inventory("C[n+]1ccn(C)c1.[Cl-]")
    assert len(exp.classes) == 3
    assert "resonance-averaged" in class_of(exp, 2).flags
    assert class_of(exp, 2) is class_of(exp, 3)
    assert class_of(exp, 0) is class_of(exp, 5)


def test_emim_keeps_ring_carbons_apart() -> None:
    # Common practice: 1-ethyl-3-methylimidazolium C4 and C5 are distinct (~ 122, 124 ppm).
    exp = expected_inventory("CC[n+]1ccn(C)c1")
    assert class_of(exp, 3) is not class_of(exp, 4)


def test_acetate_and_carboxylic_acid() -> None:
    # Common practice: acetate (either O drawn charged) shows 2 carbon signals.
    for smi in ("CC(=O)[O-].[Na+]", "CC([O-])=O.[Na+]", "CC(=O)O"):
        assert n_classes(smi) == 2


def test_edta_tetraanion_three_classes() -> None:
    # From memory: EDTA (as its salts, in D2O) shows 3 carbon signals (COO-, NCH2CO, NCH2CH2N).
    exp = expected_inventory("[O-]C(=O)CN(CC(=O)[O-])CCN(CC(=O)[O-])CC([O-])=O")
    assert sorted(c.carbons for c in exp.classes) == [2, 4, 4]
    assert "resonance-averaged" in class_of(exp, 1).flags


def test_hydrogen_succinate_exchange_averaged() -> None:
    # Common practice: the acid proton of hydrogen succinate exchanges fast: 2 signals.
    exp = expected_inventory("OC(=O)CCC(=O)[O-]")
    assert len(exp.classes) == 2
    assert "exchange-averaged" in class_of(exp, 3).flags
    assert class_of(exp, 3) is class_of(exp, 4)


def test_imidazole_tautomers_averaged() -> None:
    # From memory: imidazole in solution shows 2 carbon signals (C2 ~ 135, C4/C5 ~ 122 ppm).
    exp = expected_inventory("c1c[nH]cn1")
    assert len(exp.classes) == 2
    assert class_of(exp, 0) is class_of(exp, 1)
    assert all("exchange-averaged" in c.flags for c in exp.classes)


def test_methylimidazole_c4_c5_stay_distinct() -> None:
    # From memory: 4(5)-methylimidazole shows 4 carbon signals; the tautomers are averaged
    # but C4 (bearing CH3) and C5 remain different carbons.
    exp = expected_inventory("Cc1c[nH]cn1")
    assert len(exp.classes) == 4
    assert "exchange-averaged" in class_of(exp, 1).flags


def test_pyrazole_c3_c5_merge() -> None:
    # From memory: pyrazole shows 2 carbon signals (C3/C5 ~ 134, C4 ~ 105 ppm).
    exp = expected_inventory("c1cc[nH]n1")
    assert len(exp.classes) == 2
    assert class_of(exp, 0) is class_of(exp, 2)


def test_benzimidazole_averaged() -> None:
    # From memory: benzimidazole in DMSO-d6 shows 4 (often broadened) carbon signals.
    assert n_classes("c1ccc2[nH]cnc2c1") == 4


def test_guanidinium_one_class() -> None:
    # Common practice: guanidinium carbon is one signal (~ 158 ppm) whichever N is drawn +.
    exp = expected_inventory("NC(N)=[NH2+].[Cl-]")
    assert len(exp.classes) == 1
    assert exp.classes[0].environment == "amidine-guanidine"


# ------------------------------------------------------------------ amides


def test_n_formylpiperidine_five_ch2(spectra_dir: Path) -> None:
    # Measured spectrum (cheminfo/nmr-dataset1, ../shared): five CH2 peaks
    # (46.6, 40.4, 26.4, 24.9, 24.5 ppm) beside the CHO.
    exp = expected_inventory(spectra_dir / "n-formylpiperidine" / "structure.mol")
    sig = exp.signals()
    assert sig["CH2"] == 5 and sig["CH"] == 1 and len(exp.classes) == 6
    split = [c for c in exp.classes if c.multiplicity == "CH2" and c.partner is not None]
    assert len(split) == 4
    assert all("amide-rotation" in c.flags for c in split)
    peaks = _peaks(spectra_dir / "n-formylpiperidine" / "13c.dx", 20.0, 50.0, 100.0)
    assert len(peaks) == sig["CH2"]


def test_n_formylpiperidine_smiles() -> None:
    # Common practice (as the measured spectrum above): C2/C6 and C3/C5 split, C4 single.
    exp = expected_inventory("O=CN1CCCCC1")
    assert class_of(exp, 3) is not class_of(exp, 7)
    assert class_of(exp, 4) is not class_of(exp, 6)
    assert class_of(exp, 5).partner is None


def test_lactam_not_a_rotamer_and_diethylamide_split() -> None:
    # Common practice: N-methylpyrrolidone shows 5 signals with no rotamers (the C-N bond
    # is in the ring); N,N-diethylacetamide shows two CH2 and two CH3 ethyl signals.
    nmp = expected_inventory("CN1CCCC1=O")
    assert len(nmp.classes) == 5
    assert not any("amide-rotation" in c.flags for c in nmp.classes)
    deaa = expected_inventory("CCN(CC)C(C)=O")
    assert deaa.signals() == {"C": 1, "CH": 0, "CH2": 2, "CH3": 3}


def test_imide_is_not_a_rotamer_site(capfd: pytest.CaptureFixture[str]) -> None:
    # Common practice: N-methylphthalimide shows 5 carbon signals (C=O pair equivalent).
    exp = expected_inventory("CN1C(=O)c2ccccc2C1=O")
    assert len(exp.classes) == 5
    assert not any("amide-rotation" in c.flags for c in exp.classes)
    assert capfd.readouterr().err == ""  # no stray RDKit messages


# ------------------------------------------------------------- panthenol


def _peaks(path: Path, lo: float, hi: float, snr: float) -> list[float]:
    """Peak positions (ppm) above `snr` x noise in [lo, hi] of a processed JCAMP-DX file."""
    import nmrglue as ng
    from scipy.signal import find_peaks

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # nmrglue warns about empty Bruker keys
        dic, data = ng.jcampdx.read(str(path))
    y = np.asarray(data[0] if isinstance(data, list) else data, float)
    first = float(str(dic["FIRST"][0]).split(",")[0])
    last = float(str(dic["LAST"][0]).split(",")[0])
    off = float(dic["$OFFSET"][0])
    sf = float(dic["$SF"][0])
    ppm = off - (first - np.linspace(first, last, y.size)) / sf
    noise = 1.4826 * np.median(np.abs(y - np.median(y)))
    sel = (ppm > lo) & (ppm < hi)
    idx, _ = find_peaks(y[sel], height=snr * noise, prominence=snr * noise)
    return [float(p) for p in ppm[sel][idx]]


def test_panthenol_two_methyl_classes(spectra_dir: Path) -> None:
    # Measured spectrum (cheminfo/nmr-dataset1, ../shared): two methyl peaks (21.4, 20.9 ppm).
    exp = expected_inventory(spectra_dir / "panthenol" / "structure.mol")
    methyls = [c for c in exp.classes if c.multiplicity == "CH3"]
    assert len(methyls) == 2
    assert all("diastereotopic" in c.flags for c in methyls)
    peaks = _peaks(spectra_dir / "panthenol" / "13c.dx", 15.0, 30.0, 20.0)
    assert len(peaks) == len(methyls)
    for c in methyls:
        assert all(c.shift_range[0] <= p <= c.shift_range[1] for p in peaks)


# ------------------------------------------------------------- deuterium


def test_cdcl3_one_deuterated_quaternary() -> None:
    # Fulmer et al., Organometallics 2010: CDCl3 carbon 77.16 ppm, 1:1:1 triplet, J(C,D) 32 Hz.
    exp = expected_inventory("[2H]C(Cl)(Cl)Cl")
    (c,) = exp.classes
    assert c.multiplicity == "C" and "deuterated" in c.flags
    (j,) = c.couplings
    assert j.nucleus == "2H" and j.partners == 1
    assert j.j_range_hz[0] <= 32.0 <= j.j_range_hz[1]
    assert c.shift_range[0] <= 77.16 <= c.shift_range[1]


def test_dmso_d6() -> None:
    # Fulmer et al. 2010: DMSO-d6 39.52 ppm, septet, J(C,D) 21 Hz; CD3 counts as "C".
    exp = expected_inventory("[2H]C([2H])([2H])S(=O)C([2H])([2H])[2H]")
    (c,) = exp.classes
    assert c.multiplicity == "C" and c.carbons == 2
    (j,) = c.couplings
    assert j.partners == 3 and j.j_range_hz[0] <= 21.0 <= j.j_range_hz[1]
    assert exp.inventory() == {"C": 2, "CH": 0, "CH2": 0, "CH3": 0}


@pytest.mark.parametrize(
    ("smiles", "ppm", "partners", "j"),
    [
        ("[2H]c1c([2H])c([2H])c([2H])c([2H])c1[2H]", 128.06, 1, 24.3),  # C6D6
        ("[2H]C([2H])([2H])O[2H]", 49.00, 3, 21.4),  # CD3OD
        ("[2H]C([2H])([2H])C(=O)C([2H])([2H])[2H]", 29.84, 3, 19.4),  # acetone-d6 methyl
    ],
)
def test_deuterated_solvents(smiles: str, ppm: float, partners: int, j: float) -> None:
    # Fulmer et al., Organometallics 2010, 29, 2176 (13C of deuterated solvents; from memory).
    c = expected_inventory(smiles).classes[0]
    assert c.multiplicity == "C" and "deuterated" in c.flags
    assert c.shift_range[0] <= ppm <= c.shift_range[1]
    (coupling,) = c.couplings
    assert coupling.partners == partners
    assert coupling.j_range_hz[0] <= j <= coupling.j_range_hz[1]


def test_cd2h_is_ch() -> None:
    # Common practice: a CHD2 carbon has one protium, so it appears as CH in DEPT.
    exp = expected_inventory("[2H]C([2H])O")
    assert exp.classes[0].multiplicity == "CH"
    assert exp.classes[0].couplings[0].partners == 2


# ------------------------------------------------------------- couplings


def _j(cls, nucleus: str, bonds: int):
    return next(j for j in cls.couplings if j.nucleus == nucleus and j.bonds == bonds)


def test_fluorobenzene_couplings() -> None:
    # Pretsch et al. 4th ed. 2009 (from memory): fluorobenzene 1J 245.3, 2J 21.0,
    # 3J 7.7, 4J 3.2 Hz.
    exp = expected_inventory("Fc1ccccc1")
    assert len(exp.classes) == 4
    for atom, bonds, value in ((1, 1, 245.3), (2, 2, 21.0), (3, 3, 7.7), (4, 4, 3.2)):
        c = class_of(exp, atom)
        j = _j(c, "19F", bonds)
        assert j.j_range_hz[0] <= value <= j.j_range_hz[1]
        assert j.partners == 1
    assert "coupled-F" in class_of(exp, 3).flags


def test_trifluorotoluene_quartets() -> None:
    # Pretsch et al. 4th ed. 2009 (from memory): PhCF3 1J 272, 2J(ipso) 32, 3J(ortho) 3.8 Hz,
    # each a quartet (three equivalent F).
    exp = expected_inventory("FC(F)(F)c1ccccc1")
    for atom, bonds, value in ((1, 1, 272.0), (4, 2, 32.0), (5, 3, 3.8)):
        j = _j(class_of(exp, atom), "19F", bonds)
        assert j.partners == 3
        assert j.j_range_hz[0] <= value <= j.j_range_hz[1]
    assert class_of(exp, 1).environment == "CF3"


def test_triphenylphosphine_oxide() -> None:
    # Pretsch et al. 4th ed. 2009 (from memory): Ph3PO 1J 104, 2J 10, 3J 12 Hz (para ~ 3 Hz).
    exp = expected_inventory("O=P(c1ccccc1)(c1ccccc1)c1ccccc1")
    assert len(exp.classes) == 4
    for atom, bonds, value in ((2, 1, 104.0), (3, 2, 10.0), (4, 3, 12.0)):
        c = class_of(exp, atom)
        assert "coupled-P" in c.flags
        j = _j(c, "31P", bonds)
        assert j.j_range_hz[0] <= value <= j.j_range_hz[1]
    assert "coupled-P" not in class_of(exp, 5).flags


def test_phosphonate_couplings() -> None:
    # Pretsch et al. 4th ed. 2009 (from memory): diethyl methylphosphonate P-CH3 1J ~ 144 Hz,
    # O-CH2 2J ~ 6 Hz, CH3 (of OEt) 3J ~ 6 Hz.
    exp = expected_inventory("CCOP(C)(=O)OCC")
    assert (
        _j(class_of(exp, 4), "31P", 1).j_range_hz[0]
        <= 144
        <= _j(class_of(exp, 4), "31P", 1).j_range_hz[1]
    )
    assert "coupled-P" in class_of(exp, 1).flags and "coupled-P" in class_of(exp, 0).flags


# ------------------------------------------------------------- fragments


def test_two_to_one_salt_merges_identical_fragments() -> None:
    # Common practice: in bis(methylammonium) oxalate both cations give one CH3 signal.
    exp = expected_inventory("C[NH3+].C[NH3+].O=C([O-])C([O-])=O")
    assert len(exp.classes) == 2
    me = class_of(exp, 0)
    assert me.atoms == (0, 2) and me.carbons == 2
    assert exp.fragments[me.fragment] == "C[NH3+]"
    assert class_of(exp, 5).fragment != me.fragment


def test_solvate_fragments_classed_apart() -> None:
    # Common practice: a solvate keeps the solvent's own signals (ethanol 2 classes here).
    exp = expected_inventory("CC(=O)Nc1ccc(O)cc1.CCO")
    assert len(exp.classes) == 6 + 2
    assert len({c.fragment for c in exp.classes}) == 2


# ------------------------------------------------------------ input paths


def test_molfile_with_interleaved_hydrogens_keeps_numbering(tmp_path: Path) -> None:
    # RDKit (general-purpose library) writes the molfile; the numbering is the file's.
    mol = Chem.AddHs(Chem.MolFromSmiles("CC(C)O"))
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    hs = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() == 1]
    order = hs[:2] + heavy + hs[2:]
    shuffled = Chem.RenumberAtoms(mol, order)
    path = tmp_path / "ipa.mol"
    path.write_text(Chem.MolToMolBlock(shuffled))
    exp = expected_inventory(path)
    methyl = next(c for c in exp.classes if c.multiplicity == "CH3")
    assert methyl.atoms == (2, 4)  # file indices of the heavy atoms 0 and 2
    back = Chem.MolFromMolBlock(exp.molblock, removeHs=False)
    assert all(back.GetAtomWithIdx(i).GetAtomicNum() == 6 for i in methyl.atoms)


def test_sdf_string_path_and_mol_input(tmp_path: Path) -> None:
    mol = Chem.MolFromSmiles("CCO")
    path = tmp_path / "x.sdf"
    with Chem.SDWriter(str(path)) as w:
        w.write(mol)
    a = expected_inventory(str(path))
    b = expected_inventory(mol)
    c = expected_inventory("CCO")
    assert a.signals() == b.signals() == c.signals()
    assert load_structure(mol).GetNumAtoms() == 3
    assert mol.GetNumAtoms() == 3  # the input is not modified


def test_errors() -> None:
    with pytest.raises(StructureError, match="empty"):
        expected_inventory("  ")
    with pytest.raises(StructureError, match="position"):
        expected_inventory("CC(C")
    with pytest.raises(StructureError, match="cannot parse"):
        expected_inventory("C1CC")
    with pytest.raises(StructureError, match="no carbon"):
        expected_inventory("[Na+].[Cl-]")
    with pytest.raises(StructureError, match="valence|not a valid"):
        expected_inventory("C(C)(C)(C)(C)C")
    with pytest.raises(InputFileError, match="does not exist") as info:
        expected_inventory("missing/nothing.mol")
    assert info.value.path == Path("missing/nothing.mol")


def test_multi_record_sdf_warns(tmp_path: Path) -> None:
    path = tmp_path / "two.sdf"
    with Chem.SDWriter(str(path)) as w:
        w.write(Chem.MolFromSmiles("CCO"))
        w.write(Chem.MolFromSmiles("CCC"))
    with pytest.warns(CtallyWarning, match="only the first"):
        exp = expected_inventory(path)
    assert len(exp.classes) == 2


def test_empty_file(tmp_path: Path) -> None:
    path = tmp_path / "empty.mol"
    path.write_text("")
    with pytest.raises(InputFileError, match="empty"):
        expected_inventory(path)


# ------------------------------------------------------------ output shape


def test_json_shape() -> None:
    # The key names are fixed by the project issue (ctally expect --json).
    exp = expected_inventory("CN(C)C=O", name="DMF")
    d = json.loads(json.dumps(expectation_to_dict(exp)))
    assert set(d) >= {"structure", "formula", "classes", "inventory", "signals"}
    assert d["inventory"] == {"C": 0, "CH": 1, "CH2": 0, "CH3": 2}
    assert d["signals"] == {"C": 0, "CH": 1, "CH2": 0, "CH3": 2}
    first = d["classes"][0]
    assert set(first) >= set("atoms multiplicity carbons environment shift_range".split())
    assert {"predicted_ppm", "flags", "label", "fragment", "partner", "couplings"} <= set(first)
    assert first["predicted_ppm"] is None and len(first["shift_range"]) == 2
    assert exp.name == "DMF"


def test_format_table() -> None:
    text = format_expectation(expected_inventory("Fc1ccccc1"))
    assert "aromatic-C-F" in text and "coupled-F" in text
    assert "signals:" in text and "CH 3" in text


# ---------------------------------------------------------------- property

PROPERTY_CASES = [
    "CC(C)[C@@H]1CC[C@@H](C)C[C@H]1O",
    "O=CN1CCCCC1",
    "C[n+]1ccn(C)c1",
    "OC(=O)CC(O)(CC(=O)O)C(=O)O",
    "CC=C(C)C",
    "O=C(O)[C@H](O)[C@@H](O)C(=O)O",
    "CC(C)(CO)C(O)C(=O)NCCCO",
    "CC(O)C(C)(C)C(O)C",  # two unspecified centres: every configuration is tried
    "c1c[nH]cn1",
    "FC(F)(F)c1ccc(cc1)[C@@H](C)N(C)C=O",
]


def _signature(exp: Expectation) -> Counter[tuple[str, int, tuple[str, ...]]]:
    return Counter((c.multiplicity, c.carbons, c.flags) for c in exp.classes)


@settings(max_examples=40, deadline=None)
@given(case=st.sampled_from(PROPERTY_CASES), data=st.data())
def test_atom_order_permutes_classes(case: str, data: st.DataObject) -> None:
    # Invariant: renumbering the atoms (RDKit RenumberAtoms) only permutes the classes.
    mol = Chem.MolFromSmiles(case)
    order = data.draw(st.permutations(list(range(mol.GetNumAtoms()))))
    shuffled = Chem.RenumberAtoms(mol, list(order))
    a = expected_inventory(mol)
    b = expected_inventory(shuffled)
    assert _signature(a) == _signature(b)
    new_of_old = {old: new for new, old in enumerate(order)}
    assert {tuple(sorted(new_of_old[i] for i in c.atoms)) for c in a.classes} == {
        c.atoms for c in b.classes
    }


def test_hundred_heavy_atoms_fast() -> None:
    # Requirement of the project issue: 100 heavy atoms well under a second.
    peptide = (
        "N[C@@H](CC(C)C)C(=O)"
        + "N[C@@H](CC(C)C)C(=O)N[C@@H](C(C)C)C(=O)N[C@@H](Cc1ccccc1)C(=O)" * 3
        + "NCC(=O)O"
    )
    mol = Chem.MolFromSmiles(peptide)
    assert 90 <= mol.GetNumHeavyAtoms() <= 140
    start = time.perf_counter()
    exp = expected_inventory(mol)
    assert time.perf_counter() - start < 1.0
    assert sum(exp.inventory().values()) == sum(1 for a in mol.GetAtoms() if a.GetAtomicNum() == 6)


# --------------------------------------------------- assigned shifts (nmrshiftdb2)


@pytest.fixture(scope="module")
def shift_set() -> dict[str, float]:
    """Range coverage and multiplicity agreement over the nmrshiftdb2-derived set."""
    path = shared_path("shifts", "nmr8k-public.sdf.gz")
    inside = total = agree = letters = 0
    letter_of = {"S": "C", "D": "CH", "T": "CH2", "Q": "CH3"}
    with gzip.open(path) as fh:
        supplier = Chem.ForwardSDMolSupplier(fh, removeHs=False)
        from rdkit import rdBase

        with rdBase.BlockLogs():
            mols = list(supplier)
    for mol in mols:
        if mol is None:  # RDKit rejects a few molfiles (e.g. pentavalent nitro N)
            continue
        spectra = [mol.GetProp(k) for k in mol.GetPropNames() if k.startswith("Spectrum 13C")]
        if not spectra:
            continue
        exp = expected_inventory(mol)
        cls = {a: c for c in exp.classes for a in c.atoms}
        seen: set[int] = set()
        for item in spectra[0].split("|"):
            if not item.strip():
                continue
            shift, code, idx_text = item.split(";")
            idx = int(idx_text)
            if idx in seen or idx not in cls:
                continue
            seen.add(idx)
            c = cls[idx]
            total += 1
            inside += c.shift_range[0] <= float(shift) <= c.shift_range[1]
            letter = code.strip()[-1:]
            if letter in letter_of:
                letters += 1
                agree += letter_of[letter] == c.multiplicity
    return {
        "coverage": inside / total,
        "agreement": agree / letters,
        "total": total,
    }


def test_shift_ranges_cover_assigned_shifts(shift_set: dict[str, float]) -> None:
    # nmrshiftdb2 via CASCADE (Steinbeck 2003; Guan 2021), ../shared: >= 97 % of the
    # assigned carbons fall inside their class's handbook range (measured 99.64 % of
    # 16,676; some bounds were widened after looking at this same set, so this is an
    # in-sample figure, see shift_ranges.toml).
    assert shift_set["total"] > 10000
    assert shift_set["coverage"] >= 0.97


def test_multiplicities_agree_with_recorded_letters(shift_set: dict[str, float]) -> None:
    # Same set: ~1 % of the recorded S/D/T/Q letters disagree with the structure
    # (LICENSES.md); the multiplicities by attached protium must agree with >= 98 %
    # (measured 99.57 %).
    assert shift_set["agreement"] >= 0.98
