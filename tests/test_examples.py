"""The bundled examples: the script regenerates them exactly, and each gives its verdict.

The examples are synthetic (examples/make_examples.py, invented scenario); what each
should give follows from how it was made: the right structure with clean data
passes, the 3-methoxy regioisomer proposed as the 4-methoxy compound fails on its
aromatic CH count (4 distinct CH against 2 for the para-substituted ring, a
symmetry fact of the trade), and ~6 mol % ethyl acetate goes to review (the verdict
stage reviews a recognised impurity above 2 mol %).
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pytest
from html_nodes import parse

from verify.report import render_html

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def _make_examples():  # type: ignore[no-untyped-def]
    spec = importlib.util.spec_from_file_location("make_examples", EXAMPLES / "make_examples.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_script_regenerates_the_committed_files(tmp_path: Path) -> None:
    written = _make_examples().make_all(tmp_path)
    assert {p.parent.name for p in written} == {
        "lot-pass", "lot-wrong-isomer", "lot-ethyl-acetate", "reference-cholesterol",
    }  # fmt: skip
    for new in sorted(tmp_path.rglob("*")):
        if new.is_file():
            old = EXAMPLES / new.relative_to(tmp_path)
            assert old.is_file(), f"{old} is missing; run python examples/make_examples.py"
            assert old.read_bytes() == new.read_bytes(), f"{old} is stale; rerun the script"
            assert old.stat().st_size < 400_000  # small enough to ship


def _check(folder: str):  # type: ignore[no-untyped-def]
    from verify import pipeline
    from verify import sample as sample_mod

    sample = sample_mod.load_sample(EXAMPLES / folder / "sample.toml")
    return sample, pipeline.check(sample)


@pytest.mark.parametrize(
    ("folder", "verdict"),
    [
        ("lot-pass", "pass"),
        ("lot-wrong-isomer", "fail"),
        ("lot-ethyl-acetate", "review"),
        ("reference-cholesterol", "pass"),
    ],
)
def test_example_verdicts_and_reports(folder: str, verdict: str) -> None:
    sample, result = _check(folder)
    v = result.verdict
    assert v.verdict == verdict, [(f.code, f.message) for f in v.findings]
    doc = parse(render_html(v, sample=sample, audit=result.audit, candidates=result.ranked))
    assert doc.by_id("verdict").attrs["data-verdict"] == verdict
    rows = {r.attrs.get("data-atoms") for r in doc.by_id("assignment").find_all("tr")} - {None}
    assert rows == {c.label for c in v.expectation.classes}
    marks = doc.by_id("spectra").find_all("g", **{"class": "mark"})
    assert any(m.attrs.get("data-status") == "solvent" and "CDCl3" in m.text for m in marks)
    if folder == "lot-wrong-isomer":
        assert any(f.severity == "fail" and "CH" in f.code for f in v.findings)
        assert any(m.attrs.get("data-status") == "mismatch" for m in marks)
    if folder == "lot-ethyl-acetate":
        assert [i.name for i in v.impurities] == ["ethyl acetate"]
        assert "ethyl acetate" in doc.by_id("impurities").text
    if folder == "reference-cholesterol":
        # 27 carbons; the diastereotopic methyls C26/C27 may be one class or two
        assert sum(c.carbons for c in v.expectation.classes) == 27 and len(rows) in (26, 27)
        assert doc.by_id("spectra").find_all("div", **{"class": "expansion"})


def test_readme_command_on_the_pass_example(tmp_path: Path) -> None:
    from verify import cli

    out = tmp_path / "report.html"
    code = cli.main(["check", str(EXAMPLES / "lot-pass" / "sample.toml"), "--html", str(out)])
    assert code == 0  # exit 0 = pass (DEVELOPERS.md)
    assert parse(out.read_text(encoding="utf-8")).by_id("verdict").attrs["data-verdict"] == "pass"
