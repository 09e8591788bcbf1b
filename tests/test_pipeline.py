"""The whole job on the measured spectra in ../shared/data/spectra (cheminfo open datasets,
MIT licence; see ../shared/data/LICENSES.md).

Each sample must not fail with its own structure (review at worst, with the reason), and
must fail with a wrong structure chosen here: a homologue, an isomer with another CHn
inventory, or a positional isomer.  Carbon-only data cannot measure multiplicities, so
there the wrong structure must at least not pass.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import pytest
from conftest import SHARED

from verify.model import Verdict
from verify.pipeline import CheckResult, check
from verify.sample import load_sample

SAMPLES = sorted(
    p.relative_to(SHARED / "spectra") for p in (SHARED / "spectra").glob("*/sample*.toml")
)

# Wrong structures (SMILES written here): why each must fail is in the comment.
WRONG = {
    # anethole: the allyl CH2 and =CH2 become CH3 and =CH (CH2 count 2 → 0)
    "estragole": "C/C=C/c1ccc(OC)cc1",
    "estragole-ntuples": "C/C=C/c1ccc(OC)cc1",
    # ethyl but-3-enoate: same formula, =CH2 and a CH2 instead of CH3-CH=
    "ethyl-crotonate": "C=CCC(=O)OCC",
    # the next homologue (butananilide): one CH2 more
    "propionanilide": "CCCC(=O)Nc1ccccc1",
    # 3-methylcoumarin: a CH3 and one CH fewer
    "coumarin": "Cc1cc2ccccc2oc1=O",
    # the lower homologue of panthenol (2-hydroxyethyl amide): one CH2 fewer
    "panthenol": "CC(C)(CO)C(O)C(=O)NCCO",
    # N-acetylpyrrolidine: a CH3 instead of the formyl CH, one CH2 fewer
    "n-formylpiperidine": "CC(=O)N1CCCC1",
    # 1-naphthylacetic acid: one CH2 more
    "1-naphthoic-acid": "OC(=O)Cc1cccc2ccccc12",
    # arborinine without its 1-hydroxy group's neighbour methoxy: one CH3 fewer
    "arborinine-raw": "COc1cc2c(c(O)c1)c(=O)c1ccccc1n2C",
    # the ortho isomer: no ring symmetry, 8 carbon signals instead of 6
    "fluoromethylbenzylamine": "CC(N)c1ccccc1F",
}


def _run(rel: Path, structures: tuple[str, ...] = ()) -> CheckResult:
    sample = load_sample(SHARED / "spectra" / rel)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # doubtful-input warnings are tested elsewhere
        return check(sample, structures=structures)


def _reasons(v: Verdict) -> str:
    return "; ".join(f"{f.code}: {f.message}" for f in v.findings if f.severity != "info")


@pytest.mark.shared
@pytest.mark.slow
@pytest.mark.parametrize("rel", SAMPLES, ids=str)
def test_own_structure_is_not_failed_and_a_wrong_one_is(rel: Path) -> None:
    wrong = WRONG[rel.parts[0]]
    result = _run(rel, (wrong,))
    own, other = result.verdicts
    assert own.verdict in ("pass", "review"), _reasons(own)
    if own.verdict == "review":
        assert _reasons(own), "a review verdict must say why"
    if result.observation.mode == "carbon-only":
        assert other.verdict != "pass", _reasons(other)
    else:
        assert other.verdict == "fail", _reasons(other)
    # The proposed structure fits the data better than the wrong one.
    assert result.ranked[0] is own


@pytest.mark.shared
def test_panthenol_labelled_cdcl3_is_referenced_on_the_solvent_found() -> None:
    # The panthenol files say CDCl3, but the spectrum holds the DMSO-d6 septet
    # (39.52 ppm, Fulmer et al. 2010): the axis is set on what is there, and said so.
    if not (SHARED / "spectra" / "panthenol").is_dir():
        pytest.skip("shared data not found")
    obs = _run(Path("panthenol/sample.toml")).observation
    assert obs.referencing.solvent == "DMSO-d6"
    assert obs.referencing.reference_ppm == pytest.approx(39.52)
