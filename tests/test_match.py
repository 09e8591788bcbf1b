"""Tests of verify.match: optimal assignment of observed signals to expected carbon classes.

Observed shifts are published assigned values: the CDCl3 carbon shifts of Gottlieb, Kotlyar &
Nudelman, J. Org. Chem. 1997, 62, 7512, Table 2 (written from memory).  The classes are built
by hand here, with handbook-style shift ranges (Pretsch et al., Structure Determination of
Organic Compounds, 2009, 13C chapter; ranges from memory), so the assignment is tested on its
own, independent of the structure stage.
"""

from __future__ import annotations

import itertools

from hypothesis import given, settings
from hypothesis import strategies as st

from verify.match import agreement, assign, overlap_kind, pair_cost, range_distance
from verify.model import CarbonClass, Coupling, Expectation, Observation, Signal
from verify.verdict import VerdictConfig

FULL = ("carbon", "dept90", "dept135")


def cls(atoms: tuple[int, ...], mult: str, lo: float, hi: float, **kw: object) -> CarbonClass:
    return CarbonClass(
        atoms=atoms, multiplicity=mult, environment="test", shift_range=(lo, hi), **kw
    )  # type: ignore[arg-type]


def sig(ppm: float, mult: str | None, conf: float = 0.95, **kw: object) -> Signal:
    kw.setdefault("snr", 50.0)
    kw.setdefault("height", 10.0)
    return Signal(ppm=ppm, multiplicity=mult, confidence=conf, **kw)  # type: ignore[arg-type]


def obs(*signals: Signal, mode: str = "full") -> Observation:
    return Observation(signals=signals, experiments=FULL, mode=mode)


def table(exp: Expectation, o: Observation) -> dict[str, float]:
    """Class label → assigned shift."""
    return {
        exp.classes[k].label: o.signals[a.signal].ppm for a in assign(exp, o) for k in a.classes
    }


# Ethyl acetate CH3-CH2-O-C(=O)-CH3, atoms 0..5 (SMILES CCOC(C)=O).
ETOAC = Expectation(
    structure="CCOC(C)=O",
    formula="C4H8O2",
    classes=(
        cls((0,), "CH3", 5, 35),  # CH3 of ethyl
        cls((1,), "CH2", 55, 75),  # OCH2
        cls((3,), "C", 160, 180),  # ester C=O
        cls((4,), "CH3", 15, 35),  # CH3CO
    ),
)
# Gottlieb 1997 Table 2, CDCl3 (from memory).
ETOAC_OBS = obs(sig(171.36, "C"), sig(60.49, "CH2"), sig(21.04, "CH3"), sig(14.19, "CH3"))


def test_ethyl_acetate_assignment() -> None:
    got = table(ETOAC, ETOAC_OBS)
    assert got["C2"] == 60.49 and got["C4"] == 171.36
    assert {got["C1"], got["C5"]} == {14.19, 21.04}


def test_prediction_decides_between_same_range_classes() -> None:
    # Ethyl CH3 predicted at 14, acetyl CH3 at 21 (additivity estimates, Pretsch 2009): the
    # prediction, not the order of input, decides which methyl takes which peak.
    c = list(ETOAC.classes)
    c[0] = cls((0,), "CH3", 5, 35, predicted_ppm=14.0)
    c[3] = cls((4,), "CH3", 5, 35, predicted_ppm=21.0)
    got = table(Expectation("CCOC(C)=O", "C4H8O2", tuple(c)), ETOAC_OBS)
    assert got["C1"] == 14.19 and got["C5"] == 21.04
    c[0], c[3] = (
        cls((0,), "CH3", 5, 35, predicted_ppm=21.0),
        cls((4,), "CH3", 5, 35, predicted_ppm=14.0),
    )
    got = table(Expectation("CCOC(C)=O", "C4H8O2", tuple(c)), ETOAC_OBS)
    assert got["C1"] == 21.04 and got["C5"] == 14.19


def test_prediction_sd_widens_the_cost() -> None:
    c = cls((0,), "CH3", 5, 35, predicted_ppm=14.0)
    wide = cls((0,), "CH3", 5, 35, predicted_ppm=14.0, prediction_sd=10.0)
    s = sig(24.0, "CH3")
    assert pair_cost(wide, s) < pair_cost(c, s)


def test_confident_contradiction_is_not_assigned() -> None:
    # The OCH2 class has no CH2 peak: a confident CH at 60.5 is left unassigned rather
    # than forced onto it.
    o = obs(sig(171.36, "C"), sig(60.49, "CH"), sig(21.04, "CH3"), sig(14.19, "CH3"))
    held = {k for a in assign(ETOAC, o) for k in a.classes}
    assert 1 not in held


def test_unsure_call_is_candidate_and_assigned() -> None:
    # DEPT-135-only data: 60.49 is "CH2" for sure but the methyls are "CH or CH3".
    o = obs(
        sig(171.36, "C"),
        sig(60.49, "CH2"),
        sig(21.04, "CH", 0.55, candidates=("CH", "CH3")),
        sig(14.19, "CH3", 0.6, candidates=("CH", "CH3")),
        mode="dept135",
    )
    assert len({k for a in assign(ETOAC, o) for k in a.classes}) == 4
    assert agreement("CH3", o.signals[2]) == "candidate"


def test_carbon_only_assigns_by_range() -> None:
    o = obs(*[sig(s.ppm, None, 0.0) for s in ETOAC_OBS.signals], mode="carbon-only")
    got = table(ETOAC, o)
    assert got["C2"] == 60.49 and got["C4"] == 171.36
    assert agreement("CH2", o.signals[1]) == "unknown"


def test_partner_pair_coincides_cheaply() -> None:
    # 3-methylbutan-2-ol, CC(C)C(C)O: the isopropyl methyls C1/C3 are diastereotopic
    # (a stereocentre next door); at 100 MHz they may show as one peak (common practice).
    classes = (
        cls((0,), "CH3", 5, 35, partner=2, flags=("diastereotopic",)),
        cls((1,), "CH", 20, 50),
        cls((2,), "CH3", 5, 35, partner=0, flags=("diastereotopic",)),
        cls((3,), "CH", 60, 80),
        cls((4,), "CH3", 10, 30),
    )
    exp = Expectation("CC(C)C(C)O", "C5H12O", classes)
    # Shifts approximately as reported for 3-methylbutan-2-ol in CDCl3 (from memory):
    # 72.7 CH-O, 35.1 CH, 20.0 CH3, 18.1 (C1+C3, one peak).
    o = obs(sig(72.7, "CH"), sig(35.1, "CH"), sig(20.0, "CH3"), sig(18.1, "CH3"))
    a = assign(exp, o)
    shared = [x for x in a if len(x.classes) == 2]
    assert len(shared) == 1 and set(shared[0].classes) == {0, 2}
    assert "coincident pair" in shared[0].note
    assert overlap_kind(exp, o.signals[shared[0].signal], shared[0].classes) == "partner"


def test_overlap_evidence_from_intensity() -> None:
    # Two CH3 classes of different environments on one peak: supported when the peak is
    # tall enough for two carbons, unsupported when it is not.
    classes = (
        CarbonClass((0,), "CH3", "sp3-CH3", (5, 35)),
        CarbonClass((1,), "CH3", "CH3-CO", (5, 35)),
        cls((2,), "C", 160, 180),
    )
    exp = Expectation("x", "x", classes)
    tall = obs(sig(21.0, "CH3", carbons=2, height=20.0), sig(171.0, "C"))
    short = obs(sig(21.0, "CH3"), sig(171.0, "C"))
    (a_tall,) = [x for x in assign(exp, tall) if len(x.classes) == 2]
    (a_short,) = [x for x in assign(exp, short) if len(x.classes) == 2]
    assert overlap_kind(exp, tall.signals[a_tall.signal], a_tall.classes) == "supported"
    assert overlap_kind(exp, short.signals[a_short.signal], a_short.classes) == "unsupported"
    assert a_short.cost > a_tall.cost
    # Alike carbons (one environment label) coincide often: possible, not unsupported.
    alike = Expectation("x", "x", (cls((0,), "CH3", 5, 35), cls((1,), "CH3", 5, 35)))
    (a_alike,) = assign(alike, obs(sig(21.0, "CH3")))
    assert overlap_kind(alike, short.signals[0], a_alike.classes) == "possible"
    # With predictions, they decide: 3 ppm apart is not a plausible coincidence.
    apart = Expectation(
        "x",
        "x",
        (
            cls((0,), "CH3", 5, 35, predicted_ppm=19.5),
            cls((1,), "CH3", 5, 35, predicted_ppm=22.5),
        ),
    )
    assert overlap_kind(apart, short.signals[0], (0, 1)) == "unsupported"


def test_cf_doublet_prefers_fluorine_coupled_class() -> None:
    # Two CH classes in the same range; only one couples to 19F (2J ~ 21 Hz, Pretsch 2009).
    classes = (
        cls((0,), "CH", 110, 135, couplings=(Coupling("19F", 2, (15.0, 26.0)),)),
        cls((1,), "CH", 110, 135),
    )
    exp = Expectation("x", "x", classes)
    o = obs(
        sig(115.3, "CH", pattern="C-F", j_hz=21.3, lines=(115.4, 115.2)),
        sig(129.9, "CH"),
    )
    got = {k: o.signals[a.signal].ppm for a in assign(exp, o) for k in a.classes}
    assert got == {0: 115.3, 1: 129.9}


def test_range_distance() -> None:
    c = cls((0,), "CH2", 55, 75)
    assert range_distance(c, 60.0) == 0.0
    assert range_distance(c, 50.0) == 5.0
    assert range_distance(c, 80.5) == 5.5


def test_solvent_role_signals_take_no_part() -> None:
    o = obs(*ETOAC_OBS.signals, sig(77.16, "C", role="solvent"))
    assert all(o.signals[a.signal].role == "sample" for a in assign(ETOAC, o))


def test_far_peak_is_left_unassigned() -> None:
    # A CH2 peak 100 ppm from any CH2 class is not worth assigning.
    o = obs(*ETOAC_OBS.signals, sig(160.0, "CH2"))
    assert all(o.signals[a.signal].ppm != 160.0 for a in assign(ETOAC, o))


def test_empty_inputs() -> None:
    assert assign(ETOAC, obs()) == ()


@settings(max_examples=25, deadline=None)
@given(st.permutations(list(range(4))), st.floats(-0.02, 0.02))
def test_assignment_does_not_depend_on_input_order(perm: list[int], jitter: float) -> None:
    # Invariant: the signals' input order (and a tiny common shift) changes nothing.
    base = list(ETOAC_OBS.signals)
    shuffled = obs(*[Signal(**{**vars(base[i]), "ppm": base[i].ppm + jitter}) for i in perm])
    got = {lbl: round(p - jitter, 6) for lbl, p in table(ETOAC, shuffled).items()}
    assert got == table(ETOAC, ETOAC_OBS)


def test_deterministic_on_interchangeable_classes() -> None:
    # Five identical aromatic-CH classes and five CH peaks: repeated runs agree exactly.
    classes = tuple(cls((i,), "CH", 110, 140) for i in range(5))
    exp = Expectation("x", "x", classes)
    o = obs(*[sig(p, "CH") for p in (125.3, 128.2, 129.0, 130.1, 133.3)])
    runs = [assign(exp, o) for _ in range(3)]
    assert all(r == runs[0] for r in runs)
    assert sorted(itertools.chain.from_iterable(a.classes for a in runs[0])) == list(range(5))


def test_config_costs_are_used() -> None:
    # With a prohibitive overlap cost and a cheap missing cost, no class shares a peak.
    classes = (cls((0,), "CH3", 5, 35), cls((1,), "CH3", 5, 35))
    exp = Expectation("x", "x", classes)
    o = obs(sig(21.0, "CH3"))
    assert len(assign(exp, o)[0].classes) == 2
    cfg = VerdictConfig(overlap_cost=50.0, supported_overlap_cost=50.0, missing_cost=1.0)
    assert len(assign(exp, o, config=cfg)[0].classes) == 1
