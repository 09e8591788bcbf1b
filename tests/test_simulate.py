"""The physical model of DEPT/APT and the synthetic-spectrum generator.

Outside references: the DEPT closed form is checked against an independent
density-matrix (Liouville–von Neumann) simulation of the pulse sequence written here
with numpy/scipy; the APT signs against Patt & Shoolery, J. Magn. Reson. 1982, 46, 535;
the textbook rule of thumb for edited spectra is common practice.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.linalg import expm

from verify.errors import UsageError
from verify.model import HYDROGENS
from verify.simulate import (
    SyntheticCarbon,
    apt_intensity,
    dept_intensity,
    edited_response,
    synthesize,
    typical_j_hz,
)

# ----------------------------------------------------------- density-matrix DEPT

_SX = np.array([[0, 1], [1, 0]], dtype=complex) / 2
_SY = np.array([[0, -1j], [1j, 0]], dtype=complex) / 2
_SZ = np.array([[1, 0], [0, -1]], dtype=complex) / 2


def _op(single: np.ndarray, k: int, n_spins: int) -> np.ndarray:
    out = np.array([[1.0 + 0j]])
    for j in range(n_spins):
        out = np.kron(out, single if j == k else np.eye(2))
    return out


def _dept_density_matrix(n_h: int, theta_deg: float, j_hz: float, j_set_hz: float) -> float:
    """In-phase carbon signal after DEPT on a CHn spin system (spin 0 = 13C, 1..n = 1H).

    Sequence: 90x(H) – τ – 180x(H), 90x(C) – τ – θy(H), 180x(C) – τ – acquire with
    1H decoupling, τ = 1/(2·J_set).  Starting from proton polarisation only (the
    phase cycle removes natural carbon magnetisation); the in-phase carbon signal is
    the coefficient of S_x (decoupling removes antiphase terms).  Weak coupling
    H = 2πJ·Σ I_kz S_z, ideal pulses.
    """
    n = n_h + 1
    s = {a: _op(m, 0, n) for a, m in zip("xyz", (_SX, _SY, _SZ), strict=True)}
    i = {
        a: sum(_op(m, k, n) for k in range(1, n))
        for a, m in zip("xyz", (_SX, _SY, _SZ), strict=True)
    }
    ham = 2 * np.pi * j_hz * sum(_op(_SZ, k, n) @ s["z"] for k in range(1, n))
    free = expm(-1j * ham / (2 * j_set_hz))

    def pulse(op: np.ndarray, deg: float) -> np.ndarray:
        return expm(-1j * math.radians(deg) * op)

    rho = i["z"]
    for u in (
        pulse(i["x"], 90),
        free,
        pulse(i["x"], 180) @ pulse(s["x"], 90),
        free,
        pulse(i["y"], theta_deg) @ pulse(s["x"], 180),
        free,
    ):
        rho = u @ rho @ u.conj().T
    return float(np.trace(rho @ s["x"]).real / np.trace(s["x"] @ s["x"]).real)


@pytest.mark.parametrize("n_h", [1, 2, 3])
@pytest.mark.parametrize("theta", [30.0, 45.0, 85.0, 90.0, 95.0, 135.0, 140.0])
@pytest.mark.parametrize("j_hz", [120.0, 145.0, 165.0, 200.0, 250.0])
def test_dept_formula_matches_density_matrix(n_h: int, theta: float, j_hz: float) -> None:
    # Doddrell, Pegg & Bendall, J. Magn. Reson. 1982, 48, 323: closed form vs an
    # independent density-matrix simulation of the sequence (written above).
    expected = _dept_density_matrix(n_h, theta, j_hz, 145.0)
    assert dept_intensity(n_h, theta, j_hz, 145.0) == pytest.approx(expected, abs=1e-9)


def test_dept_density_matrix_other_set_coupling() -> None:
    # Same check with the delays set for 160 Hz (aromatic) instead of 145 Hz.
    for n_h in (1, 2, 3):
        expected = _dept_density_matrix(n_h, 135.0, 128.0, 160.0)
        assert dept_intensity(n_h, 135.0, 128.0, 160.0) == pytest.approx(expected, abs=1e-9)


def test_dept_matched_coupling_reduces_to_textbook_angles() -> None:
    # Doddrell, Pegg & Bendall 1982: at matched J, CH ∝ sinθ, CH2 ∝ 2 sinθ cosθ,
    # CH3 ∝ 3 sinθ cos²θ.
    for theta in (45.0, 90.0, 135.0, 60.0):
        t = math.radians(theta)
        assert dept_intensity(1, theta) == pytest.approx(math.sin(t))
        assert dept_intensity(2, theta) == pytest.approx(2 * math.sin(t) * math.cos(t))
        assert dept_intensity(3, theta) == pytest.approx(3 * math.sin(t) * math.cos(t) ** 2)
    assert dept_intensity(0, 90.0) == 0.0


def test_textbook_rule_of_thumb() -> None:
    # Common practice: DEPT-90 shows only CH; DEPT-135 shows CH and CH3 up, CH2 down;
    # neither shows quaternary carbons.
    assert dept_intensity(1, 90) > 0.9
    assert abs(dept_intensity(2, 90)) < 1e-12 and abs(dept_intensity(3, 90)) < 1e-12
    assert dept_intensity(1, 135) > 0 and dept_intensity(3, 135) > 0
    assert dept_intensity(2, 135) < 0
    assert dept_intensity(0, 135) == 0.0 and dept_intensity(0, 90) == 0.0


def test_residuals_are_small_but_real_off_match() -> None:
    # The physics behind the classifier: a mismatched J leaves small CH2/CH3 stumps in
    # DEPT-90 (formula checked above), while a CH keeps the DEPT-90/DEPT-135 ratio
    # sin 90°/sin 135° whatever J is (n = 1 has no bracket term).
    for j in (120.0, 165.0, 200.0):
        assert 0 < dept_intensity(2, 90, j) < 0.5
        assert 0 < dept_intensity(3, 90, j) < 0.5
        ratio = dept_intensity(1, 90, j) / dept_intensity(1, 135, j)
        assert ratio == pytest.approx(math.sqrt(2))


def _apt_density_matrix(n_h: int, j_hz: float, delay_s: float) -> float:
    """In-phase carbon signal after 90x(C) and J-evolution Δ (the APT spin echo refocuses
    shifts, so only the coupling acts), relative to the signal at Δ = 0."""
    n = n_h + 1
    s = {a: _op(m, 0, n) for a, m in zip("xyz", (_SX, _SY, _SZ), strict=True)}
    ham = (
        2
        * np.pi
        * j_hz
        * sum((_op(_SZ, k, n) @ s["z"] for k in range(1, n)), np.zeros((2**n, 2**n)))
    )
    u = expm(-1j * ham * delay_s) @ expm(-1j * math.pi / 2 * s["x"])
    rho = u @ s["z"] @ u.conj().T
    return float(-np.trace(rho @ s["y"]).real / np.trace(s["y"] @ s["y"]).real)


@pytest.mark.parametrize("n_h", [0, 1, 2, 3])
@pytest.mark.parametrize("j_hz", [125.0, 145.0, 160.0, 250.0])
def test_apt_formula_matches_density_matrix(n_h: int, j_hz: float) -> None:
    assert apt_intensity(n_h, j_hz, 1 / 145) == pytest.approx(
        _apt_density_matrix(n_h, j_hz, 1 / 145), abs=1e-9
    )


def test_apt_signs() -> None:
    # Patt & Shoolery 1982: at Δ = 1/J, C and CH2 one phase, CH and CH3 the other.
    signs = {m: math.copysign(1, apt_intensity(n)) for m, n in HYDROGENS.items()}
    assert signs["C"] == signs["CH2"] == 1
    assert signs["CH"] == signs["CH3"] == -1
    assert apt_intensity(2, 145.0) == pytest.approx(1.0)


def test_typical_couplings_by_region() -> None:
    # Pretsch et al., Structure Determination of Organic Compounds, 2009 (from memory):
    # sp3 125–135, O-CH3 140–145, aromatic 155–165, aldehyde 170–175 Hz.
    assert 125 <= typical_j_hz(20.0, "CH3") <= 135
    assert 140 <= typical_j_hz(55.5, "CH3") <= 145
    assert 155 <= typical_j_hz(128.5, "CH") <= 165
    assert 170 <= typical_j_hz(200.0, "CH") <= 175


def test_edited_response_rejects_unknown_experiment() -> None:
    with pytest.raises(UsageError, match="not an edited experiment"):
        edited_response("carbon", 1, 145.0)
    with pytest.raises(UsageError, match="0 to 3 protons"):
        dept_intensity(4, 90.0)


# ------------------------------------------------------------------- synthesis

CARBONS = (
    SyntheticCarbon(170.0, "C"),
    SyntheticCarbon(128.0, "CH", carbons=2),
    SyntheticCarbon(115.0, "CH2"),
    SyntheticCarbon(55.2, "CH3"),
    SyntheticCarbon(30.0, "CH2"),
)


def _height_at(spec, ppm: float) -> float:
    idx = int(np.argmin(np.abs(spec.ppm - ppm)))
    window = spec.intensity[max(idx - 3, 0) : idx + 4]
    return float(window[np.argmax(np.abs(window))])


def test_synthetic_edited_spectra_follow_the_model() -> None:
    spectra = synthesize(CARBONS, experiments=("carbon", "dept90", "dept135", "apt"), snr=1e5)
    d135, d90, apt = spectra["dept135"], spectra["dept90"], spectra["apt"]
    # DEPT-135: CH/CH3 up, CH2 down, C absent (common practice).
    assert _height_at(d135, 128.0) > 0 and _height_at(d135, 55.2) > 0
    assert _height_at(d135, 115.0) < 0 and _height_at(d135, 30.0) < 0
    assert abs(_height_at(d135, 170.0)) < 1e-3 * abs(_height_at(d135, 128.0))
    # DEPT-90 keeps only the CH (with matched J the residuals vanish).
    assert abs(_height_at(d90, 55.2)) < 1e-3 * _height_at(d90, 128.0)
    # APT: C and CH2 share the solvent's phase, CH and CH3 the other (Patt & Shoolery).
    solvent_sign = np.sign(_height_at(apt, 77.16))
    assert np.sign(_height_at(apt, 170.0)) == solvent_sign
    assert np.sign(_height_at(apt, 30.0)) == solvent_sign
    assert np.sign(_height_at(apt, 128.0)) == -solvent_sign


def test_synthetic_snr_inversion_and_offset() -> None:
    spectra = synthesize(CARBONS, snr=50.0, invert=("dept135",), reference_offset_ppm=0.8, seed=3)
    carbon = spectra["carbon"]
    noise = float(np.std(carbon.intensity[(carbon.ppm > 190) & (carbon.ppm < 225)]))
    strongest = max(abs(_height_at(carbon, c.ppm + 0.8)) for c in CARBONS)
    assert strongest / noise == pytest.approx(50.0, rel=0.15)
    # inverted phase: the CH2 at 30 ppm now points up in DEPT-135
    assert _height_at(spectra["dept135"], 30.8) > 0
    # the CDCl3 triplet (Fulmer 2010: 77.16 ppm, 1:1:1) sits at 77.16 + offset
    quiet = synthesize(CARBONS, snr=1e5, reference_offset_ppm=0.8, seed=3)["carbon"]
    j_ppm = 32.0 / 125.77

    def area(ppm: float) -> float:  # area over ±4 Hz: independent of where the points fall
        sel = np.abs(quiet.ppm - ppm) < 4.0 / quiet.observe_mhz
        return float(quiet.intensity[sel].sum())

    centre = area(77.96)
    assert area(77.96 + j_ppm) == pytest.approx(centre, rel=0.05)
    assert area(77.96 - j_ppm) == pytest.approx(centre, rel=0.05)


def test_synthesis_is_seeded_and_pure() -> None:
    a = synthesize(CARBONS, seed=7, points=4096)
    b = synthesize(CARBONS, seed=7, points=4096)
    assert np.array_equal(a["dept135"].intensity, b["dept135"].intensity)
    assert a["carbon"].ppm[0] > a["carbon"].ppm[-1]  # descending, as NMR files store it


def test_fluorine_doublet_and_cd3_septet() -> None:
    # Line patterns of first-order multiplets: spin-½ partner → 1:1, three deuterons →
    # 1:3:6:7:6:3:1 (common practice).
    cf = SyntheticCarbon(162.0, "C", couplings=(("19F", 245.0, 1),), width_hz=1.0)
    cd3 = SyntheticCarbon(20.0, "C", couplings=(("2H", 19.5, 3),), width_hz=1.0)
    spec = synthesize((cf, cd3), experiments=("carbon",), snr=1e6, solvent=None)["carbon"]
    mhz = spec.observe_mhz
    assert _height_at(spec, 162.0 + 122.5 / mhz) == pytest.approx(
        _height_at(spec, 162.0 - 122.5 / mhz), rel=0.05
    )
    outer = _height_at(spec, 20.0 + 3 * 19.5 / mhz)
    centre = _height_at(spec, 20.0)
    assert centre / outer == pytest.approx(7.0, rel=0.1)


def test_bad_synthetic_input() -> None:
    with pytest.raises(UsageError, match="unknown multiplicity"):
        SyntheticCarbon(10.0, "CH4")  # type: ignore[arg-type]
    with pytest.raises(UsageError, match="unknown experiment"):
        synthesize(CARBONS, experiments=("proton",))
    with pytest.raises(UsageError, match="no carbon data for solvent"):
        synthesize(CARBONS, solvent="unobtainium-d8")


def test_write_sample_round_trip(tmp_path) -> None:
    # The files written must load through the project's own sample loader and readers
    # and give back the lines where the model put them.
    import tomllib

    from verify.readers import read_any
    from verify.sample import load_sample
    from verify.simulate import write_sample

    carbons = tuple(
        SyntheticCarbon(c.ppm, c.multiplicity, c.carbons, width_hz=2.5) for c in CARBONS
    )
    path = write_sample(
        tmp_path / "lot-7",
        carbons,
        structure="CC",
        name="synthetic lot 7",
        solvent="CDCl3",
        metadata={"lot": "L-0007", "operator": "A. Example"},
        points=32768,
        snr=300.0,
        seed=1,
    )
    data = tomllib.loads(path.read_text("utf-8"))
    assert data["name"] == "synthetic lot 7" and data["lot"] == "L-0007"
    assert set(data["spectra"]) == {"carbon", "dept90", "dept135"}
    sample = load_sample(path)
    spec = read_any(sample.spectra["dept135"], role="dept135")
    y = np.asarray(spec.intensity)
    ppm = np.asarray(spec.ppm)
    # DEPT-135: CH2 at 30 ppm down, CH3 at 55.2 up (common practice)
    assert y[np.argmin(np.abs(ppm - 30.0))] < 0 < y[np.argmin(np.abs(ppm - 55.2))]
    with pytest.raises(UsageError, match="reserved"):
        write_sample(tmp_path / "x", carbons, structure="CC", name="x", metadata={"spectra": "no"})
    assert not (tmp_path / "x").exists()  # nothing written
