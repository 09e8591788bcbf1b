"""The bad-input contract of the ``ctally`` command, end to end and in-process.

Contract (issues 2, 3, 5 and 6, "Bad input" / "Errors"): bad input exits 2 with exactly one
line on stderr, ``ErrorName: message``, naming the file (or the SMILES position) and what
was wrong; never a traceback; nothing on stdout; and no output file (--json/--html/--pdf)
is created or changed when the run fails.  Exit codes: 0 pass, 1 fail, 2 bad input or
usage, 3 review.

Each case builds a sample folder under ``tmp_path`` from the measured estragole spectra in
../shared/data/spectra (cheminfo/nmr-dataset1, MIT licence; see ../shared/data/LICENSES.md)
and breaks one thing in it.  The JCAMP-DX rules broken here (NPOINTS, DIF Y-checkpoints,
``##END=``) are from McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151.

Standard error is captured at the file-descriptor level (``capfd``), so that a message
RDKit or a C library prints beside the tool's own line is caught as a second line.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
import time
import tracemalloc
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import shared_path

from verify.cli import main

#: One error line: the class name of a ctally error, a colon, the message.
_ERROR_LINE = re.compile(r"^[A-Z][A-Za-z]*Error: \S.*$")


def run(argv: list[str], capfd: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    code = main(argv)
    out, err = capfd.readouterr()
    return code, out, err


def snapshot(folder: Path) -> dict[str, bytes]:
    """Every file under `folder` with its bytes (to prove nothing was written)."""
    return {
        str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()
    }


def assert_bad_input(code: int, out: str, err: str, *words: str) -> None:
    """Exit 2, nothing on stdout, one ``ErrorName: message`` line on stderr, no traceback."""
    assert code == 2, (code, out, err)
    assert out == "", out  # no partial summary either
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert _ERROR_LINE.match(lines[0]), err
    for word in words:
        assert word.lower() in err.lower(), (word, err)


# ------------------------------------------------------------------ sample folders

_SAMPLE = (
    'name = "estragole, broken"\n'
    "structure = 'C=CCc1ccc(OC)cc1'\n"
    'structure_file = "structure.mol"\n'
    'solvent = "CDCl3"\n'
    "[spectra]\n"
    'carbon = "13c.dx"\n'
    'dept135 = "dept135.dx"\n'
)


def build(work: Path, source: Path, sample: str = _SAMPLE) -> Path:
    """Copy the estragole spectra and structure into `work`; return the sample file."""
    work.mkdir(parents=True, exist_ok=True)
    for name in ("13c.dx", "dept135.dx", "structure.mol"):
        shutil.copyfile(source / name, work / name)
    path = work / "sample.toml"
    path.write_text(sample)
    return path


def _lines(path: Path) -> list[str]:
    return path.read_text(encoding="latin-1").splitlines(keepends=True)


def _xydata_range(lines: list[str]) -> tuple[int, int]:
    """0-based index of the first data line and of the ``##END=`` line of the XYDATA block."""
    start = next(i for i, ln in enumerate(lines) if ln.startswith("##XYDATA=")) + 1
    end = next(i for i in range(start, len(lines)) if lines[i].startswith("##END="))
    return start, end


def truncate(path: Path) -> str:
    """Cut the file in the middle of a data line half-way through the data."""
    lines = _lines(path)
    start, end = _xydata_range(lines)
    mid = (start + end) // 2
    text = "".join(lines[:mid]) + lines[mid][: len(lines[mid]) // 2]
    path.write_text(text, encoding="latin-1")
    return "13c.dx"


def set_label(label: str, value: object) -> Callable[[Path], str]:
    """Set ``##label=`` of the file to `value`; the message must name the label."""

    def edit(path: Path) -> str:
        text = path.read_text(encoding="latin-1")
        text, n = re.subn(rf"(?m)^##{re.escape(label)}=.*$", f"##{label}= {value}", text)
        assert n == 1
        path.write_text(text, encoding="latin-1")
        return label

    return edit


def set_npoints(value: int) -> Callable[[Path], str]:
    return set_label("NPOINTS", value)


def truncated_copy_of(*parts: str) -> Callable[[Path], str]:
    """Put a shared file, cut in the middle of its data, in place of the carbon file."""

    def edit(path: Path) -> str:
        data = shared_path("spectra", *parts).read_bytes()
        path.write_bytes(data[: len(data) * 2 // 3])
        return "13c.dx"

    return edit


def break_checkpoint(path: Path) -> str:
    """Change the leading (checkpoint) Y value of a DIF data line by one unit.

    In DIF form the first Y of each line repeats the last Y of the line before
    (McDonald & Wilks 1988), so the reader must refuse the file at that line.
    """
    lines = _lines(path)
    start, end = _xydata_range(lines)
    i = (start + end) // 2
    m = re.match(r"^(\s*[-+]?\d+(?:\.\d*)?)([@A-Ia-i])(\d*)", lines[i])
    assert m, lines[i]
    digits = m.group(3) or "0"
    last = str((int(digits[-1]) + 1) % 10)
    lines[i] = m.group(1) + m.group(2) + digits[:-1] + last + lines[i][m.end() :]
    path.write_text("".join(lines), encoding="latin-1")
    return "checkpoint"


def as_proton(path: Path) -> str:
    text = path.read_text(encoding="latin-1")
    text, n = re.subn(r"(?m)^##\.OBSERVE NUCLEUS=.*$", "##.OBSERVE NUCLEUS= ^1H", text)
    assert n == 1
    path.write_text(text, encoding="latin-1")
    return "1H"


def empty(path: Path) -> str:
    path.write_bytes(b"")
    return "empty"


def random_bytes(path: Path) -> str:
    path.write_bytes(os.urandom(4096) + b"\0")
    return "binary"


def png(path: Path) -> str:
    # PNG signature and IHDR chunk start (PNG specification, ISO/IEC 15948, section 5.2)
    path.write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x01\x00" + os.urandom(256))
    return "binary"


def flat(path: Path) -> str:
    """A synthetic 13C spectrum holding 0 at every point (a dead export: no signal, no noise)."""
    import numpy as np

    from verify.model import Spectrum
    from verify.readers.jcamp import write_jcamp

    ppm = np.linspace(220.0, -10.0, 8192)
    write_jcamp(Spectrum(ppm=ppm, intensity=np.zeros(ppm.size), observe_mhz=100.6), path)
    return "same value"


#: Breakages of the carbon spectrum file: (id, edit returning a word the message must hold).
SPECTRUM_CASES: list[tuple[str, Callable[[Path], str]]] = [
    ("truncated", truncate),
    ("empty", empty),
    ("random-bytes", random_bytes),
    ("png", png),
    ("npoints-too-large", set_npoints(20000)),
    ("npoints-absurd", set_npoints(10**12)),
    ("dif-checkpoint", break_checkpoint),
    ("proton-as-carbon", as_proton),
    ("firstx-not-finite", set_label("FIRSTX", "nan")),
    ("flat-spectrum", flat),
    ("truncated-fid", truncated_copy_of("estragole", "13c.fid.dx")),
    ("truncated-ntuples", truncated_copy_of("estragole-ntuples", "13c.dx")),
]


def _command(kind: str, sample: Path, out: Path) -> list[str]:
    if kind == "check":
        return [
            "check",
            str(sample),
            "--json",
            str(out / "out.json"),
            "--html",
            str(out / "out.html"),
        ]
    return ["classify", str(sample), "--json", str(out / "out.json")]


COMMANDS = ["check", "classify"]


@pytest.mark.shared
@pytest.mark.parametrize("earlier", [False, True], ids=["no-outputs", "earlier-outputs"])
@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize(("case", "edit"), SPECTRUM_CASES, ids=[c[0] for c in SPECTRUM_CASES])
def test_broken_spectrum_file(
    command: str,
    case: str,
    edit: Callable[[Path], str],
    earlier: bool,
    tmp_path: Path,
    spectra_dir: Path,
    capfd: pytest.CaptureFixture[str],
) -> None:
    sample = build(tmp_path / "s", spectra_dir / "estragole")
    word = edit(tmp_path / "s" / "13c.dx")
    if earlier:
        # outputs of an earlier good run must stay byte-identical after this failed one
        (tmp_path / "out.json").write_bytes(b'{"verdict": "pass", "from": "an earlier run"}\n')
        (tmp_path / "out.html").write_bytes(b"<!doctype html><p>earlier report</p>\n")
    before = snapshot(tmp_path)
    code, out, err = run(_command(command, sample, tmp_path), capfd)
    assert_bad_input(code, out, err, "13c.dx", word)
    assert snapshot(tmp_path) == before


@pytest.mark.shared
def test_absurd_npoints_is_refused_quickly_without_allocating(
    tmp_path: Path, spectra_dir: Path, capfd: pytest.CaptureFixture[str]
) -> None:
    # 10**12 points would be 8 TB of float64: the header must be checked against the
    # file size before anything is allocated (issue 3, "Bad input").
    sample = build(tmp_path / "s", spectra_dir / "estragole")
    set_npoints(10**12)(tmp_path / "s" / "13c.dx")
    tracemalloc.start()
    t0 = time.perf_counter()
    try:
        code, out, err = run(["classify", str(sample)], capfd)
        elapsed = time.perf_counter() - t0
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert_bad_input(code, out, err, "13c.dx", "NPOINTS")
    assert elapsed < 10.0
    assert peak < 200e6  # the file is 0.14 MB; a few copies of its text, never 8 TB


# ------------------------------------------------------------------ sample-file cases


def _sample_with(**replace: str) -> str:
    text = _SAMPLE
    for old, new in replace.items():
        text = text.replace(old, new)
    return text


def _carbon_is(name: str) -> str:
    """The sample text with the carbon role pointing at `name`."""
    return _sample_with(**{'carbon = "13c.dx"': f'carbon = "{name}"'})


def _rawdir_without_fid(work: Path) -> None:
    raw = work / "raw"
    raw.mkdir()
    (raw / "acqus").write_text("##TITLE= Parameter file\n##$TD= 65536\n##$SFO1= 125.77\n##END=\n")


def _rawdir_truncated_fid(work: Path) -> None:
    # A Bruker-style raw folder (shared arborinine set) whose fid lost its second half.
    shutil.copytree(shared_path("spectra", "arborinine-raw", "11"), work / "raw")
    fid = work / "raw" / "fid"
    data = fid.read_bytes()
    fid.write_bytes(data[: len(data) // 2])


def _mol_without_carbon(path: Path) -> None:
    from rdkit import Chem

    path.write_text(Chem.MolToMolBlock(Chem.MolFromSmiles("O=O")))


def _csv(text: str) -> Callable[[Path], None]:
    def write(work: Path) -> None:
        (work / "peaks.csv").write_text(text)

    return write


#: (id, sample text, extra files, words the message must hold)
SAMPLE_CASES: list[tuple[str, str, Callable[[Path], None] | None, tuple[str, ...]]] = [
    (
        "missing-spectrum",
        _carbon_is("nothere.dx"),
        None,
        ("nothere.dx", "not exist"),
    ),
    (
        "missing-structure-file",
        _sample_with(**{'structure_file = "structure.mol"': 'structure_file = "nothere.mol"'}),
        None,
        ("nothere.mol", "not exist"),
    ),
    (
        "invalid-toml",
        'name = "unterminated\n[spectra\ncarbon = 13c.dx\n',
        None,
        ("sample.toml", "TOML"),
    ),
    (
        "unknown-role",
        _SAMPLE + 'hsqc = "13c.dx"\n',
        None,
        ("sample.toml", "hsqc", "role"),
    ),
    (
        "structure-mismatch",
        _sample_with(**{"'C=CCc1ccc(OC)cc1'": "'CC=Cc1ccc(OC)cc1'"}),
        None,
        ("sample.toml", "structure_file", "same compound"),
    ),
    (
        "unparsable-smiles",
        _sample_with(
            **{"'C=CCc1ccc(OC)cc1'": "'C=CCc1ccc(OC)cc'", 'structure_file = "structure.mol"\n': ""}
        ),
        None,
        ("sample.toml", "SMILES", "C=CCc1ccc(OC)cc", "position 6"),
    ),
    (
        "smiles-without-carbon",
        _sample_with(**{"'C=CCc1ccc(OC)cc1'": "'O=O'", 'structure_file = "structure.mol"\n': ""}),
        None,
        ("sample.toml", "carbon"),
    ),
    (
        "rawdir-without-fid",
        _carbon_is("raw"),
        _rawdir_without_fid,
        ("raw", "fid"),
    ),
    (
        "rawdir-truncated-fid",
        _carbon_is("raw"),
        _rawdir_truncated_fid,
        ("fid", "truncated"),
    ),
    (
        "structure-file-without-carbon",
        _sample_with(**{"structure = 'C=CCc1ccc(OC)cc1'\n": "", '"structure.mol"': '"o2.mol"'}),
        lambda work: _mol_without_carbon(work / "o2.mol"),
        ("o2.mol", "no carbon"),
    ),
    (
        "csv-header-only",
        _carbon_is("peaks.csv"),
        _csv("ppm,intensity\n"),
        ("peaks.csv", "no peaks"),
    ),
    (
        "csv-wrong-header",
        _carbon_is("peaks.csv"),
        _csv("shift,height\n128.0,100\n114.0,80\n"),
        ("peaks.csv", "ppm", "intensity"),
    ),
    (
        "csv-non-numeric",
        _carbon_is("peaks.csv"),
        _csv("ppm,intensity\n128.0,100\nabc,80\n"),
        ("peaks.csv", "line 3", "abc"),
    ),
]


@pytest.mark.shared
@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize(
    ("case", "text", "extra", "words"), SAMPLE_CASES, ids=[c[0] for c in SAMPLE_CASES]
)
def test_broken_sample(
    command: str,
    case: str,
    text: str,
    extra: Callable[[Path], None] | None,
    words: tuple[str, ...],
    tmp_path: Path,
    spectra_dir: Path,
    capfd: pytest.CaptureFixture[str],
) -> None:
    sample = build(tmp_path / "s", spectra_dir / "estragole", text)
    if extra is not None:
        extra(tmp_path / "s")
    before = snapshot(tmp_path)
    code, out, err = run(_command(command, sample, tmp_path), capfd)
    assert_bad_input(code, out, err, *words)
    assert snapshot(tmp_path) == before


@pytest.mark.shared
def test_check_without_any_structure(
    tmp_path: Path, spectra_dir: Path, capfd: pytest.CaptureFixture[str]
) -> None:
    # classify needs no structure, check does: the sample file is named.
    text = _sample_with(
        **{"structure = 'C=CCc1ccc(OC)cc1'\n": "", 'structure_file = "structure.mol"\n': ""}
    )
    sample = build(tmp_path / "s", spectra_dir / "estragole", text)
    before = snapshot(tmp_path)
    code, out, err = run(_command("check", sample, tmp_path), capfd)
    assert_bad_input(code, out, err, "sample.toml", "no structure")
    assert snapshot(tmp_path) == before


# ------------------------------------------------------------------ output targets


@pytest.mark.shared
@pytest.mark.parametrize("flag", ["--json", "--html", "--pdf"])
def test_output_folder_missing(
    flag: str, tmp_path: Path, spectra_dir: Path, capfd: pytest.CaptureFixture[str]
) -> None:
    sample = build(tmp_path / "s", spectra_dir / "estragole")
    target = tmp_path / "nodir" / "out.file"
    before = snapshot(tmp_path)
    code, out, err = run(["check", str(sample), flag, str(target)], capfd)
    assert_bad_input(code, out, err, "nodir", "does not exist")
    assert snapshot(tmp_path) == before
    assert not target.parent.exists()


@pytest.mark.shared
@pytest.mark.parametrize("flag", ["--html", "--pdf"])
def test_output_path_that_is_a_folder(
    flag: str, tmp_path: Path, spectra_dir: Path, capfd: pytest.CaptureFixture[str]
) -> None:
    # Found by this test: the JSON used to be written before the HTML write failed.
    sample = build(tmp_path / "s", spectra_dir / "estragole")
    (tmp_path / "report").mkdir()
    argv = ["check", str(sample), "--json", str(tmp_path / "out.json"), flag]
    before = snapshot(tmp_path)
    code, out, err = run([*argv, str(tmp_path / "report")], capfd)
    assert_bad_input(code, out, err, "report", "is a folder")
    assert snapshot(tmp_path) == before


@pytest.mark.shared
@pytest.mark.parametrize(
    ("name", "content", "words"),
    [
        ("c.txt", b"", ("c.txt", "no structure")),
        ("c.txt", b"CCO ethanol\nC1CC broken\n", ("c.txt", "line 2", "position 2")),
        ("c.txt", b"\xff\xfe\x00\x01", ("c.txt", "cannot read")),
        # Found by this test: an empty SDF raised RDKit's OSError (a traceback), and a
        # broken record printed RDKit's own two log lines beside the error.
        ("c.sdf", b"", ("c.sdf", "empty or unreadable")),
        ("c.sdf", b"$$$$\n$$$$\n", ("c.sdf", "record 1")),
    ],
    ids=["empty-list", "bad-smiles-line", "binary-list", "empty-sdf", "broken-sdf"],
)
def test_bad_candidates_file(
    name: str,
    content: bytes,
    words: tuple[str, ...],
    tmp_path: Path,
    spectra_dir: Path,
    capfd: pytest.CaptureFixture[str],
) -> None:
    (tmp_path / name).write_bytes(content)
    argv = ["check", "--carbon", str(spectra_dir / "estragole" / "13c.dx")]
    argv += ["--candidates", str(tmp_path / name), "--json", str(tmp_path / "out.json")]
    before = snapshot(tmp_path)
    code, out, err = run(argv, capfd)
    assert_bad_input(code, out, err, *words)
    assert snapshot(tmp_path) == before


@pytest.mark.shared
def test_two_outputs_on_one_file(
    tmp_path: Path, spectra_dir: Path, capfd: pytest.CaptureFixture[str]
) -> None:
    # Found by this test: the HTML silently replaced the JSON just written there.
    sample = build(tmp_path / "s", spectra_dir / "estragole")
    target = str(tmp_path / "out.txt")
    before = snapshot(tmp_path)
    code, out, err = run(["check", str(sample), "--json", target, "--html", target], capfd)
    assert_bad_input(code, out, err, "same file")
    assert snapshot(tmp_path) == before


# ------------------------------------------------------------------ expect


def _mol_garbage(path: Path) -> None:
    path.write_text("this is not a molfile\nat all\n\n  3  2  0  0\nxx yy zz\nM  END\n")


@pytest.mark.parametrize(
    ("case", "structure", "words"),
    [
        ("empty-string", "", ("empty",)),
        # the ring bond opened at position 2 (1-based) is never closed
        ("unclosed-ring", "C1CC", ("SMILES", "C1CC", "ring", "position 2")),
        ("no-carbon", "O=O", ("O=O", "carbon")),
    ],
)
def test_expect_bad_smiles(
    case: str,
    structure: str,
    words: tuple[str, ...],
    tmp_path: Path,
    capfd: pytest.CaptureFixture[str],
) -> None:
    before = snapshot(tmp_path)
    code, out, err = run(["expect", structure, "--json", str(tmp_path / "e.json")], capfd)
    assert_bad_input(code, out, err, *words)
    assert snapshot(tmp_path) == before


@pytest.mark.parametrize(
    ("case", "write", "words"),
    [
        ("missing", None, ("x.mol", "does not exist")),
        ("empty", lambda p: p.write_bytes(b""), ("x.mol", "empty")),
        ("garbage", _mol_garbage, ("x.mol", "not a valid molfile")),
        ("no-carbon", _mol_without_carbon, ("x.mol", "no carbon")),
        ("folder", lambda p: p.mkdir(), ("x.mol", "is a folder")),
    ],
)
def test_expect_bad_molfile(
    case: str,
    write: Callable[[Path], object] | None,
    words: tuple[str, ...],
    tmp_path: Path,
    capfd: pytest.CaptureFixture[str],
) -> None:
    mol = tmp_path / "x.mol"
    if write is not None:
        write(mol)
    before = snapshot(tmp_path)
    code, out, err = run(["expect", str(mol), "--json", str(tmp_path / "e.json")], capfd)
    assert_bad_input(code, out, err, *words)
    assert snapshot(tmp_path) == before


# ------------------------------------------------------------------ PDF output


@pytest.mark.shared
@pytest.mark.parametrize(
    ("browser", "words"),
    [
        (None, ("PDF", "Chromium")),  # no browser on PATH
        ("/bin/false", ("/bin/false", "no PDF")),  # a browser that prints nothing
    ],
    ids=["no-browser", "browser-fails"],
)
def test_pdf_failure_writes_no_other_output(
    browser: str | None,
    words: tuple[str, ...],
    tmp_path: Path,
    spectra_dir: Path,
    capfd: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    # Issue 6: "a clear message where none is"; the JSON and HTML of the same run must
    # not be left behind when the PDF cannot be made.
    monkeypatch.setattr("verify.report.find_browser", lambda: browser)
    sample = build(tmp_path / "s", spectra_dir / "estragole")
    (tmp_path / "out.json").write_bytes(b'{"verdict": "pass", "from": "an earlier run"}\n')
    before = snapshot(tmp_path)
    argv = _command("check", sample, tmp_path) + ["--pdf", str(tmp_path / "out.pdf")]
    code, out, err = run(argv, capfd)
    assert_bad_input(code, out, err, *words)
    assert snapshot(tmp_path) == before


# ------------------------------------------------------------------ JSON on stdout, real process


@pytest.mark.shared
def test_json_to_stdout_prints_nothing_on_failure(
    tmp_path: Path, spectra_dir: Path, capfd: pytest.CaptureFixture[str]
) -> None:
    sample = build(tmp_path / "s", spectra_dir / "estragole")
    truncate(tmp_path / "s" / "13c.dx")
    for argv in (["check", str(sample), "--json", "-"], ["classify", str(sample), "--json", "-"]):
        code, out, err = run(argv, capfd)
        assert_bad_input(code, out, err, "13c.dx", "NPOINTS")


@pytest.mark.shared
def test_installed_command_in_a_fresh_process(tmp_path: Path, spectra_dir: Path) -> None:
    # Outside pytest, warnings are not errors and RDKit/C libraries write to the real
    # stderr: the contract must hold for the command as users run it.
    sample = build(tmp_path / "s", spectra_dir / "estragole")
    break_checkpoint(tmp_path / "s" / "13c.dx")
    _mol_garbage(tmp_path / "g.mol")
    env = {**os.environ, "PYTHONWARNINGS": "default"}
    for argv in (
        [
            "check",
            str(sample),
            "--json",
            str(tmp_path / "o.json"),
            "--html",
            str(tmp_path / "o.html"),
        ],
        ["expect", str(tmp_path / "g.mol")],
    ):
        before = snapshot(tmp_path)
        proc = subprocess.run(
            [sys.executable, "-m", "verify.cli", *argv],
            capture_output=True,
            text=True,
            env=env,
            timeout=120,
            check=False,
        )
        assert_bad_input(proc.returncode, proc.stdout, proc.stderr)
        assert snapshot(tmp_path) == before


# ------------------------------------------------------------------ check with flags


@pytest.mark.shared
@pytest.mark.parametrize(
    ("case", "override", "words"),
    [
        ("missing-carbon", {"--carbon": "{s}/nothere.dx"}, ("nothere.dx", "not found")),
        ("proton-carbon", {"--carbon": "{s}/1h.dx"}, ("1h.dx", "13C")),
        ("bad-structure", {"--structure": "C=CCc1ccc(OC)cc"}, ("SMILES", "position 6")),
        ("missing-candidates", {"--candidates": "{s}/nothere.txt"}, ("nothere.txt", "not found")),
        ("file-and-flags", {"": "{s}/sample.toml"}, ("either a sample file or spectrum flags",)),
    ],
)
def test_check_with_flags(
    case: str,
    override: dict[str, str],
    words: tuple[str, ...],
    tmp_path: Path,
    spectra_dir: Path,
    capfd: pytest.CaptureFixture[str],
) -> None:
    # `ctally check --carbon F --structure S ...` (issue 5); "" is the positional sample file.
    folder = tmp_path / "s"
    build(folder, spectra_dir / "estragole")
    shutil.copyfile(folder / "13c.dx", folder / "1h.dx")
    as_proton(folder / "1h.dx")
    given = {"--carbon": str(folder / "13c.dx"), "--structure": "C=CCc1ccc(OC)cc1"}
    given.update({k: v.format(s=folder) for k, v in override.items()})
    argv = ["check"]
    for flag, value in given.items():
        argv += [flag, value] if flag else [value]
    argv += ["--json", str(tmp_path / "out.json"), "--html", str(tmp_path / "out.html")]
    before = snapshot(tmp_path)
    code, out, err = run(argv, capfd)
    assert_bad_input(code, out, err, *words)
    assert snapshot(tmp_path) == before
