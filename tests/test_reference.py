"""Referencing on the solvent multiplet (or TMS) and aligning the experiments of a sample."""

from __future__ import annotations

import functools
import warnings

import numpy as np
import pytest
from _synth_lines import MHZ, cdcl3, spectrum

from verify.model import Spectrum
from verify.reference import canonical_solvent, reference_sample, solvent_signals

# A made-up sample's carbon lines (ppm, height), none inside the CDCl3 window.
SAMPLE = [(170.1, 80.0), (135.2, 150.0), (128.4, 160.0), (60.3, 140.0), (21.0, 120.0)]


@pytest.mark.parametrize(
    ("written", "canonical"),
    [
        ("CDCl3", "CDCl3"),
        ("Chloroform-D1 (CDCl3)", "CDCl3"),
        ("chloroform-d", "CDCl3"),
        ("Acetone", "acetone-d6"),
        ("acetone-d6", "acetone-d6"),
        ("DMSO", "DMSO-d6"),
        ("DMSO-d6", "DMSO-d6"),
        ("Methanol-D4 (CD3OD)", "CD3OD"),
        ("C6D6", "C6D6"),
        ("CD2Cl2", "CD2Cl2"),
        ("CD3CN", "CD3CN"),
        ("D2O", "D2O"),
        ("  cdcl3 ", "CDCl3"),
        ("unobtainium-d9", None),
        ("", None),
        (None, None),
    ],
)
def test_canonical_solvent(written, canonical):
    # spellings as Bruker/JCAMP files and users write them (the shared samples use
    # "CDCl3" and "Acetone"; TopSpin lists "Chloroform-D1 (CDCl3)"; common practice)
    assert canonical_solvent(written) == canonical


def test_solvent_table_matches_fulmer():
    # Fulmer et al., Organometallics 2010, 29, 2176, Table 1 (13C of the solvents)
    expect = {
        "CDCl3": (77.16, 3),
        "DMSO-d6": (39.52, 7),
        "CD3OD": (49.00, 7),
        "acetone-d6": (29.84, 7),
        "C6D6": (128.06, 3),
        "CD2Cl2": (53.84, 5),
        "CD3CN": (1.32, 7),
    }
    for name, (ppm, lines) in expect.items():
        primary = solvent_signals(name)[0]
        assert primary.ppm == pytest.approx(ppm)
        assert len(primary.pattern) == lines
    # spin-1 multiplet intensities: 1:1:1, 1:2:3:2:1, 1:3:6:7:6:3:1 (first-order, common practice)
    assert solvent_signals("DMSO")[0].pattern == (1, 3, 6, 7, 6, 3, 1)
    assert solvent_signals("CD2Cl2")[0].pattern == (1, 2, 3, 2, 1)
    assert solvent_signals("D2O") == ()


def test_mis_referenced_axis_is_corrected():
    # axis 1.3 ppm off: every line (sample and solvent) appears 1.3 ppm low
    s = spectrum(SAMPLE + cdcl3(), shift=-1.3, roll=3.0)
    out, ref = reference_sample({"carbon": s}, "CDCl3")
    assert ref.method == "solvent" and ref.solvent == "CDCl3"
    assert ref.offset_ppm == pytest.approx(1.3, abs=0.02)
    assert ref.found_ppm == pytest.approx(77.16 - 1.3, abs=0.02)
    assert ref.reference_ppm == 77.16
    corrected = out["carbon"]
    assert corrected is not s
    assert np.allclose(corrected.ppm, s.ppm + ref.offset_ppm)
    assert corrected.provenance["referencing"]["offset_ppm"] == pytest.approx(ref.offset_ppm)
    assert "referencing" not in s.provenance  # the input is untouched


def test_taller_sample_line_near_77_is_not_taken_for_the_solvent():
    # a sample C–O carbon at 76.6, taller than the triplet, inside the search window
    s = spectrum(SAMPLE + [(76.6, 900.0)] + cdcl3(height=200.0), shift=0.4)
    _, ref = reference_sample({"carbon": s}, "CDCl3")
    assert ref.offset_ppm == pytest.approx(-0.4, abs=0.02)


def test_inverted_and_mis_phased_spectra_are_referenced():
    s = spectrum(SAMPLE + cdcl3(), shift=0.7)
    inverted = Spectrum(ppm=s.ppm, intensity=-s.intensity, observe_mhz=MHZ)
    _, ref = reference_sample({"carbon": inverted}, "CDCl3")
    assert ref.offset_ppm == pytest.approx(-0.7, abs=0.02)
    # 25° zero-order error: absorption·cos + dispersion·sin (Lorentzian pair)
    x = s.ppm
    disp = np.zeros_like(x)
    for centre, h in SAMPLE + cdcl3():
        u = (x - centre - 0.7) * MHZ / 1.0
        disp += h * u / (1 + u**2)
    phi = np.deg2rad(25.0)
    mis = Spectrum(ppm=x, intensity=s.intensity * np.cos(phi) + disp * np.sin(phi), observe_mhz=MHZ)
    _, ref2 = reference_sample({"carbon": mis}, "CDCl3")
    assert ref2.offset_ppm == pytest.approx(-0.7, abs=0.02)


def test_offset_beyond_tolerance_is_reported_not_corrected():
    s = spectrum(SAMPLE + cdcl3(), shift=3.0)
    _, ref = reference_sample({"carbon": s}, "CDCl3")
    assert ref.method == "file" and ref.offset_ppm == 0.0
    assert ref.found_ppm == pytest.approx(80.16, abs=0.02)
    assert "beyond" in ref.note


def test_no_solvent_multiplet_found():
    s = spectrum(SAMPLE)
    _, ref = reference_sample({"carbon": s}, "CDCl3")
    assert ref.method == "file" and ref.offset_ppm == 0.0
    assert "not found" in ref.note


def test_d2o_has_no_carbon_signal():
    s = spectrum(SAMPLE, solvent="D2O")
    _, ref = reference_sample({"carbon": s}, "D2O")
    assert ref.method == "file" and ref.offset_ppm == 0.0
    assert "D2O" in ref.note


def test_dmso_septet_and_a_solvent_other_than_stated():
    # DMSO-d6 septet, J(C,D) ~21 Hz (from memory), 1:3:6:7:6:3:1, 0.25 ppm off
    d = 21.0 / MHZ
    weights = (1, 3, 6, 7, 6, 3, 1)
    septet = [(39.52 + k * d, 60.0 * w) for k, w in zip(range(-3, 4), weights, strict=True)]
    s = spectrum(SAMPLE + septet, shift=0.25)
    _, ref = reference_sample({"carbon": s}, "DMSO-d6")
    assert ref.solvent == "DMSO-d6" and ref.offset_ppm == pytest.approx(-0.25, abs=0.02)
    # stated CDCl3 but the spectrum shows DMSO-d6: referenced on it, and said so
    _, ref2 = reference_sample({"carbon": s}, "CDCl3")
    assert ref2.solvent == "DMSO-d6" and ref2.offset_ppm == pytest.approx(-0.25, abs=0.02)
    assert "CDCl3" in ref2.note and "DMSO-d6" in ref2.note


def test_tms_when_no_solvent_multiplet():
    s = spectrum(SAMPLE + [(0.0, 200.0)], shift=0.3)
    _, ref = reference_sample({"carbon": s}, None)
    assert ref.method == "tms" and ref.offset_ppm == pytest.approx(-0.3, abs=0.02)


def _dept_of(lines, shift, seed=5):
    return spectrum(lines, shift=shift, seed=seed, experiment="dept135", solvent=None)


def test_edited_spectra_follow_the_carbon_axis():
    carbon = spectrum(SAMPLE + cdcl3(), shift=-0.5)
    dept_lines = [(135.2, 150.0), (128.4, 160.0), (60.3, -140.0), (21.0, 120.0)]
    same_axis = _dept_of(dept_lines, -0.5)
    out, ref = reference_sample({"carbon": carbon, "dept135": same_axis}, "CDCl3")
    assert ref.offset_ppm == pytest.approx(0.5, abs=0.02)
    assert out["dept135"].provenance["referencing"]["alignment_ppm"] == 0.0
    assert np.allclose(out["dept135"].ppm, same_axis.ppm + ref.offset_ppm)
    # the DEPT file axis itself 0.35 ppm off from the carbon's: moved onto it
    other_axis = _dept_of(dept_lines, -0.5 + 0.35)
    out2, ref2 = reference_sample({"carbon": carbon, "dept135": other_axis}, "CDCl3")
    moved = out2["dept135"].provenance["referencing"]["offset_ppm"]
    assert moved == pytest.approx(ref2.offset_ppm - 0.35, abs=0.01)
    assert "dept135" in ref2.note


def test_inputs_are_not_modified():
    s = spectrum(SAMPLE + cdcl3(), shift=0.2)
    before = s.ppm.copy()
    reference_sample({"carbon": s}, "CDCl3")
    assert np.array_equal(before, s.ppm)


# ------------------------------------------------------------- measured spectra

#: CDCl3 samples of the shared set (cheminfo nmr-dataset1, ../shared/data/LICENSES.md)
CDCL3_CARBON = [
    "estragole/13c.dx",
    "estragole/13c.fid.dx",
    "ethyl-crotonate/13c.dx",
    "ethyl-crotonate/13c.fid.dx",
    "propionanilide/13c.dx",
    "coumarin/13c.dx",
    "n-formylpiperidine/13c.dx",
    "arborinine-raw/11",
]


@functools.cache
def _read(path):
    from verify import readers
    from verify.process import prepare

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return prepare(readers.read_any(path, role="carbon"), experiment="carbon")


@pytest.mark.shared
@pytest.mark.parametrize("rel", CDCL3_CARBON)
def test_cdcl3_found_at_77_16(spectra_dir, rel):
    from verify.peaks import pick_peaks

    s = _read(spectra_dir / rel)
    out, ref = reference_sample({"carbon": s}, "CDCl3")
    assert ref.method == "solvent" and abs(ref.offset_ppm) < 2.0
    ps = pick_peaks(out["carbon"], "carbon", solvent="CDCl3", referencing=ref)
    solvent = [p for p in ps.peaks if p.pattern == "solvent"]
    assert len(solvent) == 1 and len(solvent[0].lines) == 3
    # Fulmer et al. 2010: CDCl3 13C at 77.16 ppm; J(C,D) ~32 Hz (from memory)
    assert solvent[0].ppm == pytest.approx(77.16, abs=0.01)
    assert solvent[0].j_hz == pytest.approx(32.0, abs=2.0)


@pytest.mark.shared
def test_acetone_septet_of_1_naphthoic_acid(spectra_dir):
    s = _read(spectra_dir / "1-naphthoic-acid/13c.dx")
    _, ref = reference_sample({"carbon": s}, "Acetone")
    assert ref.method == "solvent" and ref.solvent == "acetone-d6"
    assert ref.found_ppm + ref.offset_ppm == pytest.approx(29.84, abs=1e-6)


def test_edited_spectra_alone_cannot_be_referenced_on_the_solvent():
    # DEPT shows no CDn carbon (no attached protium): nothing to reference on
    dept = _dept_of([(135.2, 150.0), (128.4, 160.0), (60.3, -140.0)], 0.3)
    out, ref = reference_sample({"dept135": dept}, "CDCl3")
    assert ref.method == "file" and ref.offset_ppm == 0.0
    assert "No carbon or APT" in ref.note
    assert np.array_equal(out["dept135"].ppm, dept.ppm)


def test_apt_file_axis_aligned_on_the_carbon():
    carbon = spectrum(SAMPLE + cdcl3(), shift=0.2)
    apt_lines = [(c, -h if i % 2 else h) for i, (c, h) in enumerate(SAMPLE + cdcl3())]
    apt = spectrum(apt_lines, shift=0.2 - 0.12, seed=9, experiment="apt")
    out, ref = reference_sample({"carbon": carbon, "apt": apt}, "CDCl3")
    assert ref.offset_ppm == pytest.approx(-0.2, abs=0.02)
    assert out["apt"].provenance["referencing"]["alignment_ppm"] == pytest.approx(0.12, abs=0.01)


def test_three_sample_lines_are_not_taken_for_another_solvent():
    # stated CDCl3 absent; three unequal aromatic lines ~24 Hz apart near 128 ppm
    # must not be read as the C6D6 triplet (1:1:1, Fulmer 2010; J ~24.5 Hz from memory)
    d = 24.0 / MHZ
    s = spectrum([(128.3 - d, 100.0), (128.3, 160.0), (128.3 + d, 120.0), (21.0, 120.0)])
    _, ref = reference_sample({"carbon": s}, "CDCl3")
    assert ref.method == "file" and ref.solvent == "CDCl3"


@pytest.mark.parametrize("on_line", [0, 1, -1])
def test_triplet_with_a_sample_line_on_one_of_its_lines(on_line):
    # a sample carbon exactly under one CDCl3 line (C–O carbons often sit at ~77 ppm)
    pos = 77.16 + on_line * 32.0 / MHZ
    s = spectrum(SAMPLE + cdcl3(height=60.0) + [(pos, 600.0)], shift=-0.3)
    _, ref = reference_sample({"carbon": s}, "CDCl3")
    assert ref.method == "solvent" and ref.offset_ppm == pytest.approx(0.3, abs=0.02)
