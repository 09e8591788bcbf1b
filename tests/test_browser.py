"""The report in a real headless Chromium: it loads cleanly and shows what matters.

Locally these tests skip when no Chromium is installed; under CI (``CI=true``) a
missing Chromium is a failure (.ci/run installs Debian's ``chromium``).

Console messages are read from Chromium's own log (``--enable-logging=stderr
--v=0`` writes every console message, uncaught error and Content-Security-Policy
violation as a ``CONSOLE`` line); a page with a deliberate error is loaded first
to prove that the check can see one.  The screenshot goes to ``test-artifacts/``.
"""

from __future__ import annotations

import os
import re
import subprocess
from pathlib import Path

import pytest
from _report_cases import make_sample, make_verdict
from html_nodes import parse

from verify.model import Finding
from verify.report import chromium_command, find_browser, html_to_pdf, write_html, write_pdf

pytestmark = pytest.mark.browser

ARTIFACTS = Path(__file__).resolve().parents[1] / "test-artifacts"
FINDINGS = (
    Finding("shift-outlier", "review", "C5/C10 lies 4 ppm from its prediction.", atoms=(4, 9)),
    Finding("impurity-found", "info", "Ethyl acetate at about 1.5 mol%."),
)


@pytest.fixture(scope="module")
def browser() -> str:
    exe = find_browser()
    if exe is None:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("CI=true but no chromium/chromium-browser on PATH; install chromium")
        pytest.skip("no Chromium on PATH")
    return exe


def _run(browser: str, tmp: Path, page: Path, *extra: str) -> subprocess.CompletedProcess[str]:
    cmd = chromium_command(
        browser, tmp / "profile", "--enable-logging=stderr", "--v=0", *extra, page.as_uri()
    )
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)


def _console(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if ":CONSOLE" in line or "Uncaught" in line]


def test_console_check_sees_an_error(browser: str, tmp_path: Path) -> None:
    # positive control: without it a silent log would pass the next test vacuously
    page = tmp_path / "bad.html"
    page.write_text("<!DOCTYPE html><p>x</p><script>missing_function();</script>")
    run = _run(browser, tmp_path, page, "--dump-dom")
    assert any("missing_function" in line for line in _console(run.stderr))


def test_report_loads_without_console_errors_and_shows_key_elements(
    browser: str, tmp_path: Path
) -> None:
    v = make_verdict(verdict="review", findings=FINDINGS, impurity={"ethyl acetate": 171.1})
    page = write_html(v, tmp_path / "report.html", sample=make_sample())
    run = _run(browser, tmp_path, page, "--dump-dom")
    assert run.returncode == 0, run.stderr[-2000:]
    assert _console(run.stderr) == []
    doc = parse(run.stdout)  # the DOM as the browser built it
    assert doc.by_id("verdict").attrs["data-verdict"] == "review"
    assert "Review" in doc.by_id("verdict").text
    labels = {
        n.text
        for n in doc.by_id("assignment").find_all("th")
        if "atom" in (n.attrs.get("class") or "")
    }
    assert labels == {c.label for c in v.expectation.classes}
    codes = {n.attrs.get("data-code") for n in doc.by_id("findings").find_all("tr")} - {None}
    assert codes == {f.code for f in FINDINGS}
    assert doc.by_id("spectra").find_all("svg") and doc.by_id("structure").find_all("svg")

    ARTIFACTS.mkdir(exist_ok=True)
    shot = ARTIFACTS / "report.png"
    shot.unlink(missing_ok=True)
    run = _run(browser, tmp_path, page, f"--screenshot={shot}", "--window-size=1200,3200")
    assert shot.is_file() and shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n", run.stderr[-2000:]


def test_report_prints_to_pdf(browser: str, tmp_path: Path) -> None:
    page = write_html(make_verdict(), tmp_path / "report.html", sample=make_sample())
    pdf = write_pdf(page, tmp_path / "report.pdf", browser=browser)
    data = pdf.read_bytes()
    assert data.startswith(b"%PDF")
    pages = len(re.findall(rb"/Type\s*/Page[^s]", data))
    assert 1 <= pages <= 6
    # page boxes are A4 (595 × 842 pt) or Letter (612 × 792 pt) — ISO 216 / ANSI sizes
    box = re.search(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)
    assert box is not None
    size = (round(float(box.group(1))), round(float(box.group(2))))
    assert size in {(595, 842), (612, 792)}
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / "report.pdf").write_bytes(data)
    # asked for A4, the page box is A4 (ISO 216: 210 × 297 mm = 595 × 842 pt)
    a4 = html_to_pdf(page.read_text(encoding="utf-8"), tmp_path / "a4.pdf", paper="A4")
    box = re.search(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", a4.read_bytes())
    assert box is not None
    assert (round(float(box.group(1))), round(float(box.group(2)))) == (595, 842)


def test_example_report_in_the_browser(browser: str, tmp_path: Path) -> None:
    # the bundled review example end to end: the page a chemist would open
    from verify import pipeline
    from verify import sample as sample_mod

    examples = Path(__file__).resolve().parents[1] / "examples"
    sample = sample_mod.load_sample(examples / "lot-ethyl-acetate" / "sample.toml")
    result = pipeline.check(sample)
    page = write_html(result.verdict, tmp_path / "example.html", sample=sample, audit=result.audit)
    run = _run(browser, tmp_path, page, "--dump-dom")
    assert run.returncode == 0 and _console(run.stderr) == []
    doc = parse(run.stdout)
    assert doc.by_id("verdict").attrs["data-verdict"] == result.verdict.verdict
    rows = {r.attrs.get("data-atoms") for r in doc.by_id("assignment").find_all("tr")} - {None}
    assert rows == {c.label for c in result.verdict.expectation.classes}
    codes = {n.attrs.get("data-code") for n in doc.by_id("findings").find_all("tr")} - {None}
    assert codes == {f.code for f in result.verdict.findings}
    ARTIFACTS.mkdir(exist_ok=True)
    shot = ARTIFACTS / "example-lot-ethyl-acetate.png"
    shot.unlink(missing_ok=True)
    _run(browser, tmp_path, page, f"--screenshot={shot}", "--window-size=1200,3200")
    assert shot.is_file() and shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
