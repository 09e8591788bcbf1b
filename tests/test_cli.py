"""The ``ctally`` command, run in-process through ``verify.cli.main``.

Exit codes (issue contract): 0 pass, 1 fail, 2 bad input or usage, 3 needs review.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from conftest import shared_path

from verify.cli import main


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def assert_one_line_error(err: str) -> None:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert ":" in lines[0]


# --------------------------------------------------------------------- expect


def test_expect_prints_table_and_json_keys(capsys: pytest.CaptureFixture[str]) -> None:
    # Toluene: 5 carbon signals (textbook count, from memory): CH3, ipso C, o/m/p CH.
    code, out, err = run(["expect", "Cc1ccccc1", "--json", "-"], capsys)
    assert code == 0, err
    data = json.loads(out)
    assert set(data) >= {"structure", "formula", "classes", "inventory", "signals"}
    assert data["formula"] == "C7H8"
    assert data["signals"] == {"C": 1, "CH": 3, "CH2": 0, "CH3": 1}
    assert data["inventory"] == {"C": 1, "CH": 5, "CH2": 0, "CH3": 1}
    for cls in data["classes"]:
        assert set(cls) >= {
            "atoms",
            "multiplicity",
            "carbons",
            "environment",
            "shift_range",
            "predicted_ppm",
            "flags",
        }
    assert "CH3" in err  # the readable table goes to stderr when JSON takes stdout


def test_expect_writes_json_file(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    target = tmp_path / "exp.json"
    code, out, _ = run(["expect", "CC(=O)OCC", "--json", str(target)], capsys)
    assert code == 0
    assert json.loads(target.read_text())["signals"] == {"C": 1, "CH": 0, "CH2": 1, "CH3": 2}
    assert "CH2" in out


@pytest.mark.parametrize(
    ("argv", "pattern"),
    [
        (["expect", ""], "empty"),
        (["expect", "C1CC"], "SMILES"),
        (["expect", "O=O"], "carbon"),
        (["expect", "/nonexistent/x.mol"], "x.mol"),
        (["frobnicate"], "invalid choice"),
        ([], "required"),
        (["check"], "sample file"),
    ],
)
def test_bad_input_exits_2_with_one_line(
    argv: list[str], pattern: str, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, err = run(argv, capsys)
    assert code == 2
    assert_one_line_error(err)
    assert pattern.lower() in err.lower()


# ------------------------------------------------------------------ measured data


@pytest.mark.shared
def test_classify_json_keys_on_a_measured_sample(capsys: pytest.CaptureFixture[str]) -> None:
    toml = shared_path("spectra", "estragole", "sample.toml")
    code, out, err = run(["classify", str(toml), "--json", "-"], capsys)
    assert code == 0, err
    observed = json.loads(out)["observed"]
    assert set(observed["signals"]) == {"C", "CH", "CH2", "CH3"}
    roles = {p["role"] for p in observed["peaks"]}
    assert "solvent" in roles  # CDCl3 triplet (Fulmer et al. 2010: 77.16 ppm)
    for p in observed["peaks"]:
        assert set(p) >= {"ppm", "multiplicity", "confidence", "role"}
    # Estragole (structure file): 2 C, 4 CH (two of them 2-carbon aromatic pairs), 2 CH2, 1 CH3
    # expected classes; DEPT-135 is present without DEPT-90, so CH and CH3 may stay uncertain.
    assert observed["signals"]["CH2"] == 2
    assert observed["signals"]["C"] == 2


@pytest.mark.shared
def test_check_measured_sample_passes_or_reviews(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    toml = shared_path("spectra", "ethyl-crotonate", "sample.toml")
    out_json = tmp_path / "v.json"
    code, out, err = run(["check", str(toml), "--json", str(out_json)], capsys)
    assert code in (0, 3), out + err
    data = json.loads(out_json.read_text())
    assert set(data) >= {"verdict", "expected", "observed", "assignment", "findings"}
    assert data["verdict"] in ("pass", "review")
    for f in data["findings"]:
        assert set(f) >= {"code", "severity", "message", "atoms", "peaks"}
    assert "qualified person" in out


@pytest.mark.shared
def test_check_wrong_structure_fails_with_flags(capsys: pytest.CaptureFixture[str]) -> None:
    # Ethyl crotonate measured; propose methyl crotonate (one CH2 fewer, another OCH3):
    # the CHn inventory differs, so the verdict must be fail (exit 1).
    folder = shared_path("spectra", "ethyl-crotonate")
    code, out, err = run(
        [
            "check",
            "--structure",
            "C/C=C/C(=O)OC",
            "--carbon",
            str(folder / "13c.dx"),
            "--dept135",
            str(folder / "dept135.dx"),
            "--solvent",
            "CDCl3",
        ],
        capsys,
    )
    assert code == 1, out + err


@pytest.mark.shared
def test_failed_run_writes_nothing(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    folder = shared_path("spectra", "estragole")
    work = tmp_path / "s"
    work.mkdir()
    shutil.copy(folder / "structure.mol", work / "structure.mol")
    (work / "13c.dx").write_bytes(b"##TITLE= truncated\n##JCAMP-DX= 5.01\n##NPOINTS= 16384\n")
    (work / "sample.toml").write_text(
        'name = "t"\nstructure_file = "structure.mol"\nsolvent = "CDCl3"\n'
        '[spectra]\ncarbon = "13c.dx"\n'
    )
    html, js = tmp_path / "r.html", tmp_path / "r.json"
    code, _, err = run(
        ["check", str(work / "sample.toml"), "--html", str(html), "--json", str(js)], capsys
    )
    assert code == 2
    assert_one_line_error(err)
    assert "13c.dx" in err
    assert not html.exists() and not js.exists()


def test_pdf_without_browser_exits_2_and_writes_nothing(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    import verify.report

    monkeypatch.setattr(verify.report, "find_browser", lambda: None)
    example = Path(__file__).resolve().parents[1] / "examples" / "lot-pass" / "sample.toml"
    js, pdf = tmp_path / "r.json", tmp_path / "r.pdf"
    code, _, err = run(["check", str(example), "--json", str(js), "--pdf", str(pdf)], capsys)
    assert code == 2
    assert_one_line_error(err)
    assert "Chromium" in err
    assert not js.exists() and not pdf.exists()


def test_warnings_show_as_one_line(capsys: pytest.CaptureFixture[str]) -> None:
    import warnings

    from verify import cli
    from verify.errors import CtallyWarning

    def doubtful(args: object) -> int:
        warnings.warn("first part\nsecond part", CtallyWarning, stacklevel=2)
        return 0

    with warnings.catch_warnings():
        warnings.simplefilter("always")
        original = cli._COMMANDS["expect"]
        cli._COMMANDS["expect"] = doubtful
        try:
            code = main(["expect", "CC"])
        finally:
            cli._COMMANDS["expect"] = original
    err = capsys.readouterr().err
    assert code == 0
    assert err == "CtallyWarning: first part second part\n"


def test_native_prints_never_reach_json_on_stdout() -> None:
    # Native libraries (the HiGHS solver behind scipy's milp) may write to file
    # descriptor 1 directly; with --json - only the JSON may reach stdout.
    import subprocess
    import sys

    code = (
        "import os, verify.cli as c\n"
        "orig = c._COMMANDS['expect']\n"
        "def noisy(a):\n"
        "    os.write(1, b'native noise\\n')\n"
        "    return orig(a)\n"
        "c._COMMANDS['expect'] = noisy\n"
        "raise SystemExit(c.main(['expect', 'CCO', '--json', '-']))\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=False
    )
    assert done.returncode == 0, done.stderr
    # Ethanol: one CH3 and one CH2 signal (textbook, from memory).
    assert json.loads(done.stdout)["signals"] == {"C": 0, "CH": 0, "CH2": 1, "CH3": 1}
    assert "native noise" in done.stderr
