"""Peak picking: robust noise, positive and negative lines, multiplet grouping, artefacts."""

from __future__ import annotations

import functools
import warnings

import numpy as np
import pytest
from _synth_lines import MHZ, cdcl3, spectrum

from verify.model import Spectrum
from verify.peaks import estimate_noise, pick_peaks

LINES = [(170.1, 80.0), (135.2, 150.0), (128.4, 160.0), (60.3, 140.0), (21.0, 120.0)]


def _sample(ps):
    return [p for p in ps.peaks if p.role == "sample"]


def test_noise_of_pure_gaussian_noise():
    rng = np.random.default_rng(7)
    y = rng.normal(0, 3.0, 32768)
    s = Spectrum(ppm=np.linspace(220, -5, y.size), intensity=y)
    assert estimate_noise(s) == pytest.approx(3.0, rel=0.05)


def test_noise_ignores_lines_and_baseline_roll():
    s = spectrum(LINES + cdcl3(), noise=2.0, roll=40.0)
    assert estimate_noise(s) == pytest.approx(2.0, rel=0.10)


def test_lorentzians_found_at_known_shifts_with_height_width_area():
    fwhm = 2.0
    s = spectrum(LINES, noise=1.0, roll=20.0, fwhm_hz=fwhm)
    ps = pick_peaks(s, "carbon", solvent=None)
    found = _sample(ps)
    assert len(found) == len(LINES)
    for peak, (centre, height) in zip(found, sorted(LINES, reverse=True), strict=True):
        assert peak.ppm == pytest.approx(centre, abs=0.003)
        assert peak.height == pytest.approx(height, rel=0.05)
        assert peak.snr == pytest.approx(abs(peak.height) / ps.noise)
        assert peak.width_hz == pytest.approx(fwhm, rel=0.15)
        # Lorentzian integral within ±3 FWHM: h·(w/2)·2·atan(6) (in ppm units)
        expect = height * (fwhm / 2 / MHZ) * 2 * np.arctan(6.0)
        assert peak.area == pytest.approx(expect, rel=0.1)
    assert ps.noise == pytest.approx(1.0, rel=0.1)
    assert ps.experiment == "carbon" and ps.spectrum is s


def test_negative_peaks_are_picked_with_their_sign():
    signed = [(135.2, 150.0), (128.4, -160.0), (60.3, -140.0), (21.0, 120.0)]
    s = spectrum(signed, experiment="dept135", solvent=None)
    ps = pick_peaks(s, "dept135")
    found = _sample(ps)
    assert [p.sign for p in found] == [1, -1, -1, 1]
    assert all(p.area * p.height > 0 for p in found)  # signed areas


def test_threshold_in_noise_units():
    s = spectrum([(100.0, 5.0), (50.0, 9.0)], noise=1.0, seed=3)
    found = _sample(pick_peaks(s, "carbon", threshold_snr=6.0))
    assert [round(p.ppm) for p in found] == [50]
    found3 = _sample(pick_peaks(s, "carbon", threshold_snr=3.5))
    assert {round(p.ppm) for p in found3} >= {50, 100}


def test_no_extra_peaks_on_the_wings_of_a_big_line():
    # a line 3000× the noise: its Lorentzian wings stay above threshold for many Hz,
    # with noise maxima riding on them; none may be picked
    s = spectrum([(100.0, 3000.0)], noise=1.0, fwhm_hz=3.0, seed=11)
    found = [p for p in pick_peaks(s, "carbon").peaks if p.role != "artifact"]
    assert len(found) == 1


def test_cdcl3_triplet_is_one_solvent_peak():
    s = spectrum(LINES + cdcl3(height=300.0), noise=1.0)
    ps = pick_peaks(s, "carbon", solvent="CDCl3")
    solvent = [p for p in ps.peaks if p.role == "solvent"]
    assert len(solvent) == 1
    peak = solvent[0]
    assert peak.pattern == "solvent" and len(peak.lines) == 3
    assert peak.ppm == pytest.approx(77.16, abs=0.003)
    assert peak.j_hz == pytest.approx(32.0, abs=0.5)  # as built (from memory)
    assert len(_sample(ps)) == len(LINES)


def test_c_f_doublet_grouped_only_when_the_structure_has_fluorine():
    # aryl C–F: 1J ~245 Hz, 2J ~21 Hz (handbook ranges, from memory); each line half
    j1, j2 = 245.0 / MHZ, 21.0 / MHZ
    lines = [(162.0 + j1 / 2, 60.0), (162.0 - j1 / 2, 60.0)]
    lines += [(115.3 + j2 / 2, 90.0), (115.3 - j2 / 2, 90.0)]
    lines += [(21.0, 120.0)]
    s = spectrum(lines, noise=1.0)
    plain = _sample(pick_peaks(s, "carbon"))
    assert len(plain) == 5
    grouped = _sample(pick_peaks(s, "carbon", hetero=frozenset({"19F"})))
    assert len(grouped) == 3
    cf = sorted((p for p in grouped if p.pattern == "C-F"), key=lambda p: -p.ppm)
    assert [p.ppm for p in cf] == pytest.approx([162.0, 115.3], abs=0.005)
    assert cf[0].j_hz == pytest.approx(245.0, abs=1.0)
    assert cf[1].j_hz == pytest.approx(21.0, abs=0.5)
    assert len(cf[0].lines) == 2


def test_cf3_quartet():
    # CF3: 1J ~272 Hz, 1:3:3:1 (from memory); the ipso carbon 2J ~32 Hz, also 1:3:3:1
    j = 272.0 / MHZ
    lines = [(124.2 + (k - 1.5) * j, 30.0 * w) for k, w in enumerate((1, 3, 3, 1))]
    lines += [(21.0, 120.0)]
    s = spectrum(lines, noise=1.0)
    found = _sample(pick_peaks(s, "carbon", hetero=frozenset({"19F"})))
    assert len(found) == 2
    q = next(p for p in found if p.pattern == "C-F")
    assert len(q.lines) == 4 and q.ppm == pytest.approx(124.2, abs=0.01)


def test_unequal_pair_is_not_a_c_f_doublet():
    j = 21.0 / MHZ
    s = spectrum([(115.3 + j / 2, 150.0), (115.3 - j / 2, 40.0), (21.0, 120.0)], noise=1.0)
    found = _sample(pick_peaks(s, "carbon", hetero=frozenset({"19F"})))
    assert len(found) == 3


def test_single_point_spike_is_an_artifact():
    s = spectrum(LINES, noise=1.0)
    y = np.array(s.intensity)
    i = int(np.argmin(np.abs(s.ppm - 95.0)))
    y[i] += 200.0
    spiked = Spectrum(ppm=s.ppm, intensity=y, observe_mhz=MHZ)
    ps = pick_peaks(spiked, "carbon")
    spike = [p for p in ps.peaks if abs(p.ppm - 95.0) < 0.01]
    assert len(spike) == 1 and spike[0].role == "artifact"
    assert len(_sample(ps)) == len(LINES)


def test_broad_hump_is_an_artifact():
    s = spectrum(LINES, noise=1.0)
    hump = 40.0 * np.exp(-0.5 * ((s.ppm - 90.0) / 0.6) ** 2)  # ~170 Hz wide
    humped = Spectrum(ppm=s.ppm, intensity=s.intensity + hump, observe_mhz=MHZ)
    found = _sample(pick_peaks(humped, "carbon"))
    assert all(abs(p.ppm - 90.0) > 1.0 for p in found)


def test_ascending_axis_gives_the_same_peaks():
    s = spectrum(LINES + cdcl3(), noise=1.0)
    rev = Spectrum(ppm=s.ppm[::-1], intensity=s.intensity[::-1], observe_mhz=MHZ)
    a = [round(p.ppm, 4) for p in pick_peaks(s, "carbon", solvent="CDCl3").peaks]
    b = [round(p.ppm, 4) for p in pick_peaks(rev, "carbon", solvent="CDCl3").peaks]
    assert a == b


# ------------------------------------------------------------- measured spectra

#: Distinct carbons expected from the structures (symmetry-equivalent carbons count
#: once): estragole 8 (para-disubstituted ring: two pairs of equivalent CH), ethyl
#: crotonate 6, propionanilide 7 (monosubstituted ring: 4 signals), coumarin 9,
#: 1-naphthoic acid 11, N-formylpiperidine 6 (slow amide rotation makes C2/C6 and
#: C3/C5 distinct: five ring carbons and the CHO), panthenol 9 (the two methyls are
#: diastereotopic; in this spectrum one carbon sits under the DMSO-d6 septet),
#: arborinine 16 (no symmetry).  Spectra: cheminfo nmr-dataset1 / nmredata-data-test.
EXPECTED = [
    ("estragole/13c.dx", "CDCl3", 8),
    ("estragole/13c.fid.dx", "CDCl3", 8),
    ("ethyl-crotonate/13c.dx", "CDCl3", 6),
    ("ethyl-crotonate/13c.fid.dx", "CDCl3", 6),
    ("propionanilide/13c.dx", "CDCl3", 7),
    ("propionanilide/13c.fid.dx", "CDCl3", 7),
    ("coumarin/13c.dx", "CDCl3", 9),
    ("1-naphthoic-acid/13c.dx", "Acetone", 11),
    ("1-naphthoic-acid/13c.fid.dx", "Acetone", 11),
    ("n-formylpiperidine/13c.dx", "CDCl3", 6),
    ("panthenol/13c.dx", "CDCl3", 9),
    ("arborinine-raw/11", "CDCl3", 16),
]


@functools.cache
def _carbon(path):
    from verify import readers
    from verify.process import prepare

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return prepare(readers.read_any(path, role="carbon"), experiment="carbon")


@pytest.mark.shared
@pytest.mark.parametrize(("rel", "solvent", "count"), EXPECTED)
def test_sample_signal_count_on_measured_spectra(spectra_dir, rel, solvent, count):
    from verify.reference import reference_sample

    s = _carbon(spectra_dir / rel)
    out, ref = reference_sample({"carbon": s}, solvent)
    ps = pick_peaks(out["carbon"], "carbon", solvent=solvent, referencing=ref)
    assert len(_sample(ps)) == count


@pytest.mark.shared
def test_fluorine_coupled_carbons_group_onto_the_decoupled_shifts(spectra_dir):
    # 1-(4-fluorophenyl)ethylamine measured twice: 13C{1H} (C–F doublets) and
    # 13C{1H,19F} (singlets).  Each doublet of the first must be one C-F signal at
    # the shift of the second's singlet, with J in its handbook range (from memory:
    # 1J ~245, 2J ~21, 3J ~8, 4J ~3 Hz).  The toluene-like impurity lines are not
    # judged here (that is the impurity stage's job).
    from verify.reference import reference_sample

    picked = {}
    for rel, hetero in (
        ("fluoromethylbenzylamine/13c1h-dec.dx", frozenset({"19F"})),
        ("fluoromethylbenzylamine/13c-1h19f-dec.dx", frozenset()),
    ):
        s = _carbon(spectra_dir / rel)
        out, ref = reference_sample({"carbon": s}, "CDCl3")
        ps = pick_peaks(out["carbon"], "carbon", solvent="CDCl3", hetero=hetero, referencing=ref)
        picked[rel.split("/")[1]] = ps
    coupled = [p for p in picked["13c1h-dec.dx"].peaks if p.pattern == "C-F"]
    decoupled = [p for p in picked["13c-1h19f-dec.dx"].peaks if p.snr > 100]
    ranges = {161.4: (240, 250), 143.3: (1, 4), 127.0: (5, 10), 114.8: (17, 25)}
    assert len(coupled) == 4
    for approx_ppm, (lo, hi) in ranges.items():
        cf = min(coupled, key=lambda p: abs(p.ppm - approx_ppm))
        single = min(decoupled, key=lambda p: abs(p.ppm - approx_ppm))
        assert cf.ppm == pytest.approx(single.ppm, abs=0.02)
        assert lo <= cf.j_hz <= hi and len(cf.lines) == 2


def test_weak_doublet_around_a_tall_line_is_a_decoupling_residue():
    # Incomplete 19F decoupling leaves a tall singlet and a weak copy of its 1J C–F
    # doublet (~245 Hz, from memory) centred on it: one carbon, not two (common practice).
    j1 = 245.0 / MHZ
    lines = [(161.4, 400.0), (161.4 + j1 / 2, 20.0), (161.4 - j1 / 2, 20.0), (25.6, 300.0)]
    s = spectrum(lines, noise=1.0)
    peaks = _sample(pick_peaks(s, "carbon", hetero=frozenset({"19F"})))
    assert [round(p.ppm, 2) for p in peaks] == [161.4, 25.6]
    assert all(p.pattern is None for p in peaks)


def test_real_c_f_doublet_with_a_small_line_at_its_centre_stays_grouped():
    # The other way round: a genuine doublet keeps its grouping when a line at its
    # centre is weaker than its own lines (no residue).
    j1 = 245.0 / MHZ
    lines = [(161.4 + j1 / 2, 60.0), (161.4 - j1 / 2, 60.0), (161.4, 30.0)]
    s = spectrum(lines, noise=1.0)
    peaks = _sample(pick_peaks(s, "carbon", hetero=frozenset({"19F"})))
    assert any(p.pattern == "C-F" and abs(p.ppm - 161.4) < 0.01 for p in peaks)


@pytest.mark.shared
def test_fluorine_decoupled_spectrum_gives_each_carbon_once(spectra_dir):
    # 1-(4-fluorophenyl)ethylamine, 13C{1H,19F}: the C–F carbon near 161.4 ppm is one
    # signal even though weak residual doublet lines remain (measured file, shared data).
    from verify.reference import reference_sample

    s = _carbon(spectra_dir / "fluoromethylbenzylamine/13c-1h19f-dec.dx")
    out, ref = reference_sample({"carbon": s}, "CDCl3")
    ps = pick_peaks(
        out["carbon"], "carbon", solvent="CDCl3", hetero=frozenset({"19F"}), referencing=ref
    )
    near = [p for p in _sample(ps) if abs(p.ppm - 161.4) < 1.5]
    assert len(near) == 1 and near[0].pattern is None


@pytest.mark.shared
@pytest.mark.parametrize(
    ("rel", "negative"),
    [
        # estragole DEPT-135: CH2 at ~39.4 (allyl) and ~115.5 (=CH2) negative
        ("estragole/dept135.dx", (39.4, 115.5)),
        # ethyl crotonate DEPT-135: OCH2 at ~60.2 negative
        ("ethyl-crotonate/dept135.dx", (60.2,)),
    ],
)
def test_dept135_signs(spectra_dir, rel, negative):
    from verify import readers

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s = readers.read_any(spectra_dir / rel, role="dept135")
    found = _sample(pick_peaks(s, "dept135", threshold_snr=10.0))
    assert len(found) >= 4
    for p in found:
        assert p.snr >= 10.0  # a clear sign
        is_ch2 = any(abs(p.ppm - c) < 0.5 for c in negative)
        assert p.sign == (-1 if is_ch2 else 1), p


def test_truncation_ripples_are_not_carbons():
    # A FID cut at AQ = 0.55 s while T2 = 1.5 s, transformed without apodization:
    # each line carries sinc side lobes ~1/AQ Hz apart (Fourier theory; Keeler,
    # Understanding NMR Spectroscopy, ch. 5).  Only the four lines are carbons.
    from _synth_lines import fid

    from verify.process import process_fid

    lines = [(150.0, 1.0), (120.0, 0.3), (60.0, 0.8), (30.0, 0.5)]
    f = fid(lines, n=16384, t2_s=1.5, noise=0.002, sw_hz=30000.0)
    s = process_fid(f, line_broadening_hz=0.0)
    found = _sample(pick_peaks(s, "carbon"))
    assert [round(p.ppm, 2) for p in found] == [150.0, 120.0, 60.0, 30.0]


def test_13c_satellites_and_sidebands_are_artifacts():
    # 13C–13C satellites: 0.55 % each at ±1J(C,C)/2 (1J ~56 Hz aromatic, from memory);
    # spinning sidebands: a symmetric weak pair at ±20 Hz·k (common practice).
    j = 56.0 / MHZ
    big = [(129.6, 5000.0)]
    sat = [(129.6 - j / 2, 27.0), (129.6 + j / 2, 27.0)]
    side = [(60.3 - 640 / MHZ, 30.0), (60.3 + 640 / MHZ, 30.0), (60.3, 4000.0)]
    s = spectrum(big + sat + side, noise=1.0)
    found = _sample(pick_peaks(s, "carbon"))
    assert [round(p.ppm, 1) for p in found] == [129.6, 60.3]


def test_cd3_septet_of_a_deuterated_sample_carbon():
    # a CD3 group: 1:3:6:7:6:3:1 septet, 1J(C,D) ~20 Hz (= 1J(C,H)/6.51, from memory)
    j = 20.0 / MHZ
    septet = [
        (52.0 + k * j, 15.0 * w) for k, w in zip(range(-3, 4), (1, 3, 6, 7, 6, 3, 1), strict=True)
    ]
    s = spectrum(LINES + septet, noise=1.0)
    plain = _sample(pick_peaks(s, "carbon"))
    assert len(plain) == len(LINES) + 7
    found = _sample(pick_peaks(s, "carbon", hetero=frozenset({"2H"})))
    assert len(found) == len(LINES) + 1
    cd = next(p for p in found if p.pattern == "C-D")
    assert cd.ppm == pytest.approx(52.0, abs=0.005) and len(cd.lines) == 7
    assert cd.j_hz == pytest.approx(20.0, abs=0.3)


@pytest.mark.parametrize("on_line", [0, 1, -1])
def test_sample_line_under_a_solvent_line_stays_a_carbon(on_line):
    # a C–O carbon exactly under one CDCl3 line (common near 77 ppm)
    pos = 77.16 + on_line * 32.0 / MHZ
    s = spectrum(LINES + cdcl3(height=60.0) + [(pos, 600.0)], noise=1.0)
    ps = pick_peaks(s, "carbon", solvent="CDCl3")
    solvent = [p for p in ps.peaks if p.role == "solvent"]
    assert len(solvent) == 1 and len(solvent[0].lines) == 2
    assert solvent[0].ppm == pytest.approx(77.16, abs=0.005)
    found = _sample(ps)
    assert len(found) == len(LINES) + 1
    assert any(abs(p.ppm - pos) < 0.005 for p in found)


@pytest.mark.parametrize(
    ("experiment", "threshold", "match"),
    [
        ("cosy", 6.0, "unknown experiment"),
        ("carbon", 0.0, "threshold_snr"),
        ("carbon", float("nan"), "threshold_snr"),
    ],
)
def test_bad_picking_arguments(experiment, threshold, match):
    from verify.errors import UsageError

    s = spectrum(LINES)
    with pytest.raises(UsageError, match=match):
        pick_peaks(s, experiment, threshold_snr=threshold)


def test_input_spectrum_is_not_modified():
    s = spectrum(LINES + cdcl3(), roll=10.0)
    before = s.intensity.copy()
    pick_peaks(s, "carbon", solvent="CDCl3")
    assert np.array_equal(before, s.intensity)


def test_area_of_close_lines_is_split_between_them():
    # two equal Lorentzians 8 Hz apart (4 FWHM): each area is its own, not the pair's
    d = 8.0 / MHZ
    s = spectrum([(100.0, 200.0), (100.0 + d, 200.0)], noise=0.5, fwhm_hz=2.0)
    found = _sample(pick_peaks(s, "carbon"))
    assert len(found) == 2
    # integral of one Lorentzian over ±(half the spacing) = ±2 FWHM plus the
    # neighbour's wing inside it: between 0.8 and 1.1 of h·(w/2)·π (analytic)
    full = 200.0 * (1.0 / MHZ) * np.pi
    for p in found:
        assert 0.8 * full < p.area < 1.1 * full


def test_c_p_doublets_and_unrelated_aromatic_pairs():
    # phosphonate: P–CH2 1J ~140 Hz, P–O–CH2 2J ~6 Hz (handbook ranges, from memory)
    j1, j2 = 140.0 / MHZ, 6.5 / MHZ
    lines = [(33.5 + j1 / 2, 70.0), (33.5 - j1 / 2, 70.0)]
    lines += [(62.1 + j2 / 2, 90.0), (62.1 - j2 / 2, 90.0)]
    # two aromatic CH of other carbons, 25 Hz apart but of clearly different height
    lines += [(128.9, 160.0), (128.9 - 25.0 / MHZ, 100.0)]
    s = spectrum(lines, noise=1.0)
    found = _sample(pick_peaks(s, "carbon", hetero=frozenset({"31P"})))
    cp = sorted((p for p in found if p.pattern == "C-P"), key=lambda p: -p.ppm)
    assert [p.ppm for p in cp] == pytest.approx([62.1, 33.5], abs=0.005)
    assert [p.j_hz for p in cp] == pytest.approx([6.5, 140.0], abs=0.5)
    assert len(found) == 4  # the two aromatic lines stay two carbons


@pytest.mark.shared
def test_noise_matches_a_signal_free_region_of_a_measured_spectrum(spectra_dir):
    # estragole has no carbon between 160 and 180 ppm (no carbonyl; an anisole's
    # aryl C–O carbon lies near 158 ppm: common practice): the plain SD there, after
    # removing a straight line, is an independent noise estimate.
    s = _carbon(spectra_dir / "estragole/13c.fid.dx")
    m = (s.ppm > 162.0) & (s.ppm < 180.0)
    seg = s.intensity[m]
    x = np.arange(seg.size)
    resid = seg - np.polyval(np.polyfit(x, seg, 1), x)
    assert estimate_noise(s) == pytest.approx(float(np.std(resid)), rel=0.15)
