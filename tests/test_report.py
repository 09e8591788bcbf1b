"""Tests of the HTML report, its pictures and its audit record.

Verdicts are built by hand (tests/_report_cases.py), so these tests need no other
pipeline stage.  HTML is checked by parsing its elements with the standard
library's html.parser (tests/html_nodes.py), never by comparing bytes.
"""

from __future__ import annotations

import hashlib
import os
import re
import sys
from pathlib import Path

import numpy as np
import pytest
from _report_cases import SHIFTS, make_sample, make_verdict
from html_nodes import parse
from hypothesis import given, settings
from hypothesis import strategies as st
from rdkit import Chem

from verify import __version__
from verify.draw import Mark, minmax_downsample, spectrum_stack_svg, structure_svg
from verify.errors import InputFileError, ToolMissingError, UsageError
from verify.model import Finding, Sample, Signal
from verify.report import (
    CAUTION,
    build_audit,
    file_sha256,
    render_html,
    template_dir,
    write_html,
    write_pdf,
)

REVIEW = Finding(
    "shift-outlier",
    "review",
    "C5/C10 lies 4 ppm from its prediction.",
    atoms=(4, 9),
    peaks=(130.6,),
)
FAIL = Finding("count-mismatch-CH", "fail", "Two CH signals expected, three seen.", atoms=(3, 4))
INFO = Finding("impurity-found", "info", "Ethyl acetate at about 1.5 mol%.")


def _events(node):
    """Every attribute name in the tree (to look for event handlers)."""
    return {k for n in node.iter() for k in n.attrs}


# ------------------------------------------------------------------- structure


def test_page_has_verdict_caution_and_every_class_label() -> None:
    v = make_verdict(verdict="review", findings=(REVIEW, INFO), impurity={"ethyl acetate": 171.1})
    doc = parse(render_html(v, sample=make_sample()))
    verdict = doc.by_id("verdict")
    assert verdict.attrs["data-verdict"] == "review"
    assert "Review" in verdict.text
    assert CAUTION in doc.by_id("caution").text
    # every expected class label (from RDKit symmetry classes) has its assignment row
    rows = {
        n.attrs["data-atoms"]
        for n in doc.by_id("assignment").find_all("tr")
        if n.attrs.get("data-atoms")
    }
    assert rows == {c.label for c in v.expectation.classes}
    # every finding code has a row, in the severity order fail > review > info
    codes = [
        n.attrs["data-code"] for n in doc.by_id("findings").find_all("tr") if "data-code" in n.attrs
    ]
    assert codes == ["shift-outlier", "impurity-found"]
    # the metadata show as key/value pairs
    meta = doc.by_id("metadata").text
    assert "L-0007" in meta and "R. Demo" in meta


def test_page_is_self_contained() -> None:
    # no script, no external resource (W3C CSP: default-src 'none' forbids the rest)
    doc = parse(render_html(make_verdict(findings=(FAIL,), verdict="fail")))
    assert not doc.find_all("script")
    assert not doc.find_all("link") and not doc.find_all("img") and not doc.find_all("iframe")
    for n in doc.iter():
        for key in ("src", "href", "xlink:href"):
            value = n.attrs.get(key)
            assert value is None or value.startswith(("#", "data:")), (n.tag, key, value)
    csp = [
        m for m in doc.find_all("meta") if m.attrs.get("http-equiv") == "Content-Security-Policy"
    ]
    assert csp and "default-src 'none'" in (csp[0].attrs["content"] or "")
    assert not any(k.startswith("on") for k in _events(doc))


def test_spectra_panels_in_order_and_solvent_impurity_labelled() -> None:
    v = make_verdict(verdict="review", findings=(REVIEW,), impurity={"ethyl acetate": 171.1})
    doc = parse(render_html(v))
    svg = doc.by_id("spectra").find_all("svg", **{"class": "stack"})[0]
    panels = [n.attrs["data-role"] for n in svg.find_all("text") if n.attrs.get("data-role")]
    assert panels == ["carbon", "dept90", "dept135"]  # carbon on top (issue 6)
    marks = {float(n.attrs["data-ppm"]): n for n in svg.find_all("g", **{"class": "mark"})}
    assert marks[77.16].attrs["data-status"] == "solvent" and "CDCl3" in marks[77.16].text
    assert "solvent" in marks[77.16].text
    assert marks[171.1].attrs["data-status"] == "impurity"
    assert "ethyl acetate" in marks[171.1].text
    # the signal of a review finding differs in shape and words, not only in colour
    assert marks[130.6].attrs["data-status"] == "mismatch" and "check" in marks[130.6].text
    assert marks[196.8].attrs["data-status"] == "agree" and "C7" in marks[196.8].text
    # solvent table row
    solvent_rows = doc.by_id("solvent-signals").find_all("tr", data_role="solvent")
    assert solvent_rows and "CDCl3" in solvent_rows[0].text
    assert "ethyl acetate" in doc.by_id("impurities").text


def test_axis_descends_left_to_right() -> None:
    # chemical-shift axes run from high to low ppm left to right (common practice)
    v = make_verdict()
    svg = parse(render_html(v)).by_id("spectra")
    ticks = {}
    for n in svg.find_all("text"):
        if re.fullmatch(r"-?\d+", n.text) and n.attrs.get("text-anchor") == "middle":
            ticks[int(n.text)] = float(n.attrs["x"] or 0)
    values = sorted(ticks)
    assert len(values) >= 5
    xs = [ticks[t] for t in values]
    assert all(a > b for a, b in zip(xs, xs[1:], strict=False))


def test_inventory_table_matches_model_counts() -> None:
    v = make_verdict()
    doc = parse(render_html(v))
    table = doc.by_id("inventory")
    exp, sig, seen = (
        v.expectation.inventory(),
        v.expectation.signals(),
        v.observation.signal_counts(),
    )
    checked = []
    for row in table.find_all("tr"):
        cls = row.attrs.get("data-class")
        if cls not in exp:
            continue
        cells = [c.text for c in row.children if c.tag in ("td", "th")]
        assert cells[1:4] == [str(exp[cls]), str(sig[cls]), str(seen[cls])]
        checked.append(cls)
    assert checked == ["C", "CH", "CH2", "CH3"]
    total = table.find_all("tr", data_class="all")[0]
    cells = [c.text for c in total.children if c.tag in ("td", "th")]
    assert cells[1:5] == ["9", "7", "7", "agrees"]  # C9H10O2: 9 carbons in 7 classes
    # RDKit symmetry classes of 4'-methoxyacetophenone: CH3 ×2, CH 2 classes (4 C), C ×3
    assert (exp["C"], exp["CH"], exp["CH3"]) == (3, 4, 2)


def test_inventory_leaves_out_signals_the_verdict_explained_as_impurity() -> None:
    # ethyl acetate OCH2 at 60.49 ppm in CDCl3 (Gottlieb et al. 1997, from memory),
    # called CH2 by classify but explained by the verdict stage's Impurity record
    v = make_verdict(impurity={"ethyl acetate": 60.49}, impurity_as_sample=True)
    assert v.observation.signal_counts()["CH2"] == 1  # the raw count includes it
    doc = parse(render_html(v))
    row = [r for r in doc.by_id("inventory").find_all("tr") if r.attrs.get("data-class") == "CH2"]
    cells = [c.text for c in row[0].children if c.tag in ("td", "th")]
    assert cells[1:5] == ["0", "0", "0", "agrees"]
    assert "ethyl acetate" in doc.by_id("impurities").text


def test_candidate_ranking_by_score() -> None:
    best = make_verdict(score=0.9)
    worse = make_verdict(
        verdict="fail", findings=(FAIL,), score=0.2, structure="COc1cccc(C(C)=O)c1"
    )
    doc = parse(render_html(worse, candidates=(best, worse)))
    rows = [r for r in doc.by_id("candidates").find_all("tr") if "data-verdict" in r.attrs]
    assert [r.attrs["data-verdict"] for r in rows] == ["pass", "fail"]
    assert "this report" in rows[1].text and "this report" not in rows[0].text
    single = parse(render_html(best, candidates=(best,)))
    assert not [n for n in single.iter() if n.attrs.get("id") == "candidates"]


def test_audit_block_shows_version_hashes_and_processing(tmp_path: Path) -> None:
    f = tmp_path / "carbon.dx"
    f.write_bytes(b"##TITLE=demo\n")
    audit = {
        "version": __version__,
        "time": "2026-01-05T09:30:00+00:00",
        "inputs": [{"role": "carbon", "path": str(f), "sha256": file_sha256(f)}],
        "parameters": {"tolerance_ppm": 2.5, "threshold_snr": 5},
    }
    doc = parse(render_html(make_verdict(), audit=audit))
    block = doc.by_id("audit")
    assert __version__ in block.text
    assert hashlib.sha256(b"##TITLE=demo\n").hexdigest() in block.text
    assert "2026-01-05 09:30:00 UTC" in block.text
    assert "tolerance_ppm" in block.text and "2.5" in block.text
    roles = [n.attrs["data-role"] for n in block.find_all("div") if n.attrs.get("data-role")]
    assert roles == ["carbon", "dept90", "dept135"]
    assert "offset 0.020 ppm" in block.text  # the Referencing of the observation


def test_sign_off_lines_present() -> None:
    doc = parse(render_html(make_verdict()))
    text = doc.by_id("signoff").text
    assert "Reviewed by" in text and "Date" in text


# --------------------------------------------------------------------- hostile


HOSTILE = '<script>alert("x")</script> & "quoted" \'single\' <b>bold</b>'


def test_hostile_text_shows_as_text_never_markup() -> None:
    bad_signal_name = '<img src=x onerror="alert(1)">'
    v = make_verdict(
        verdict="review",
        findings=(Finding("odd&<code>", "review", HOSTILE, atoms=(0,)),),
        impurity={bad_signal_name: 171.1},
        name=HOSTILE,
        structure='C<script>"&',
        solvent_label="CDCl3 <svg onload=alert(1)>",
    )
    sample = Sample(
        name=HOSTILE,
        structure='C<script>"&',
        structure_file=None,
        solvent="CDCl3 & <i>",
        spectra={},
        metadata={"lot": HOSTILE, "<th>key</th>": 'R&D "lab" <u>x</u>'},
    )
    audit = {
        "time": HOSTILE,
        "inputs": [{"role": "<i>r</i>", "path": "/tmp/<script>x</script>.dx", "sha256": "<b>"}],
        "parameters": {"<u>k</u>": HOSTILE},
    }
    doc = parse(render_html(v, sample=sample, audit=audit))
    assert not doc.find_all("script")
    assert not doc.find_all("img") and not doc.find_all("b") and not doc.find_all("u")
    assert not doc.find_all("i")
    assert not any(k.startswith("on") for k in _events(doc))
    # every hostile string is there, decoded, as text
    assert HOSTILE in doc.by_id("sample-name").text
    assert 'C<script>"&' in doc.by_id("smiles").text
    assert HOSTILE in doc.by_id("metadata").text
    assert 'R&D "lab" <u>x</u>' in doc.by_id("metadata").text
    assert "<th>key</th>" in doc.by_id("metadata").text
    assert HOSTILE in doc.by_id("findings").text
    assert bad_signal_name in doc.by_id("impurities").text
    assert bad_signal_name in doc.by_id("spectra").text  # SVG label text
    assert "CDCl3 <svg onload=alert(1)>" in doc.by_id("spectra").text
    block = doc.by_id("audit").text
    assert "/tmp/<script>x</script>.dx" in block and "<u>k</u>" in block and HOSTILE in block
    titles = doc.find_all("title")
    assert HOSTILE in titles[0].text


def test_hostile_molfile_alias_is_not_drawn() -> None:
    # a molfile atom alias ("A" line) would otherwise be drawn as a text label
    mol = Chem.MolFromSmiles("CCO")
    block = Chem.MolToMolBlock(mol).replace("M  END", "A    1\n<script>alert(1)</script>\nM  END")
    assert Chem.MolFromMolBlock(block) is not None
    svg = structure_svg(block)
    assert svg is not None
    doc = parse(svg)
    assert not doc.find_all("script") and "alert" not in doc.text


# ---------------------------------------------------------------------- drawing


def test_minmax_downsample_keeps_every_bin_extreme() -> None:
    rng = np.random.default_rng(3)
    x = np.linspace(200.0, 0.0, 20001)
    y = rng.normal(0, 1, x.size)
    y[7777] = 50.0  # a one-point spike that point-skipping would likely miss
    y[12345] = -40.0
    xs, ys = minmax_downsample(x, y, 500, 0.0, 200.0)
    assert ys.max() == 50.0 and ys.min() == -40.0
    # compare bin by bin against a plain loop over the points (independent computation)
    edges = np.linspace(0.0, 200.0, 501)
    centres = np.unique(xs)
    for k in rng.choice(len(centres), 40, replace=False):
        c = centres[k]
        b = int(np.searchsorted(edges, c) - 1)
        inside = [
            yy
            for xx, yy in zip(x, y, strict=True)
            if edges[b] <= xx < edges[b + 1] or (b == 499 and xx == 200.0)
        ]
        got = ys[xs == c]
        assert sorted(got) == [min(inside), max(inside)]
    # what skipping every 40th point would do: the spike is lost
    assert y[::40].max() < 50.0


def test_minmax_downsample_short_trace_unchanged() -> None:
    x = np.array([3.0, 2.0, 1.0])
    xs, ys = minmax_downsample(x, [1.0, 2.0, 3.0], 10, 0.0, 5.0)
    assert xs.tolist() == [1.0, 2.0, 3.0] and ys.tolist() == [3.0, 2.0, 1.0]
    with pytest.raises(ValueError, match="hi > lo"):
        minmax_downsample(x, x, 10, 5.0, 5.0)


def test_structure_marks_sit_on_the_rdkit_atoms() -> None:
    mol = Chem.MolFromSmiles("COc1ccc(C(C)=O)cc1")
    svg = structure_svg(Chem.MolToMolBlock(mol), [4, 9])
    assert svg is not None
    doc = parse(svg)
    rings = {n.attrs["class"]: n for n in doc.find_all("ellipse")}
    marks = doc.find_all("g", **{"class": "marked-atom"})
    assert len(marks) == 2
    # RDKit draws the highlight disc of atom i as an ellipse of class atom-i; the
    # diamond path starts 15 px above the same centre.
    for atom, g in zip((4, 9), marks, strict=True):
        e = rings[f"atom-{atom}"]
        path = g.find_all("path")[0].attrs["d"] or ""
        x, y = map(float, re.match(r"M([\d.]+) ([\d.]+)", path).groups())  # type: ignore[union-attr]
        assert abs(x - float(e.attrs["cx"] or 0)) < 0.2
        assert abs(y + 15 - float(e.attrs["cy"] or 0)) < 0.2
    # one atom note (number) per carbon: 9 carbons
    assert len(doc.find_all("path", **{"class": "note"})) >= 9


def test_structure_svg_rejects_unreadable_molfile() -> None:
    assert structure_svg("") is None
    assert structure_svg("not a molfile") is None


def test_mark_status_is_checked() -> None:
    with pytest.raises(ValueError, match="unknown mark status"):
        Mark(ppm=1.0, text="x", status="green")


def test_stack_empty_without_traces() -> None:
    assert spectrum_stack_svg([], []) == ""


def test_carbon_only_signals_show_unknown_call() -> None:
    v = make_verdict()
    obs = v.observation
    signals = tuple(
        Signal(ppm=s.ppm, multiplicity=None, confidence=0.3, role=s.role, label=s.label)
        for s in obs.signals
    )
    from dataclasses import replace

    v2 = replace(v, observation=replace(obs, signals=signals, mode="carbon-only"))
    doc = parse(render_html(v2))
    rows = [
        r
        for r in doc.by_id("inventory").find_all("tr")
        if r.attrs.get("data-class") == "not classified"
    ]
    assert rows and str(len(SHIFTS)) in rows[0].text
    # no per-class comparison is claimed without edited spectra
    ch = doc.by_id("inventory").find_all("tr", data_class="CH")[0]
    assert "not measured" in ch.text and "differs" not in ch.text


# --------------------------------------------------------------------- audit


def test_file_sha256_matches_fips_example(tmp_path: Path) -> None:
    # FIPS 180-2, appendix B.1: SHA-256("abc")
    f = tmp_path / "abc.txt"
    f.write_bytes(b"abc")
    assert file_sha256(f) == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    with pytest.raises(InputFileError, match="not a file"):
        file_sha256(tmp_path)


def test_build_audit_hashes_files_and_raw_folder_parts(tmp_path: Path) -> None:
    raw = tmp_path / "11"
    (raw / "pdata" / "1").mkdir(parents=True)
    (raw / "fid").write_bytes(b"\x00\x01" * 64)
    (raw / "acqus").write_text("##$SFO1= 100.6\n")
    (raw / "pdata" / "1" / "procs").write_text("##$SI= 32768\n")
    dx = tmp_path / "dept135.dx"
    dx.write_text("##TITLE=x\n")
    toml = tmp_path / "sample.toml"
    toml.write_text('name = "x"\n')
    sample = Sample(
        name="x", structure="C", structure_file=None, solvent=None,
        spectra={"carbon": raw, "dept135": dx}, path=toml,
    )  # fmt: skip
    audit = build_audit(sample, {"tolerance_ppm": 2.5})
    got = {(i["role"], Path(i["path"]).name): i["sha256"] for i in audit["inputs"]}
    assert set(got) == {
        ("sample", "sample.toml"), ("carbon", "fid"), ("carbon", "acqus"),
        ("carbon", "procs"), ("dept135", "dept135.dx"),
    }  # fmt: skip
    assert got[("carbon", "fid")] == hashlib.sha256(b"\x00\x01" * 64).hexdigest()
    assert audit["version"] == __version__ and audit["parameters"] == {"tolerance_ppm": 2.5}
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\+00:00", audit["time"])
    # a processing folder given directly is traced back to its experiment
    sample2 = Sample(name="x", structure="C", structure_file=None, solvent=None,
                     spectra={"carbon": raw / "pdata" / "1"})  # fmt: skip
    names = [Path(i["path"]).name for i in build_audit(sample2)["inputs"]]
    assert names == ["fid", "acqus", "procs"]
    empty = tmp_path / "empty"
    empty.mkdir()
    bad = Sample(
        name="x", structure="C", structure_file=None, solvent=None, spectra={"carbon": empty}
    )
    with pytest.raises(InputFileError, match="no fid, ser or acqus"):
        build_audit(bad)


# ---------------------------------------------------------------------- files


def test_write_html_is_atomic_and_readable(tmp_path: Path) -> None:
    target = tmp_path / "report.html"
    target.write_text("old")
    out = write_html(make_verdict(), target, sample=make_sample())
    assert out == target
    assert (
        parse(target.read_text(encoding="utf-8")).by_id("verdict").attrs["data-verdict"] == "pass"
    )
    assert [p.name for p in tmp_path.iterdir()] == ["report.html"]  # no temp file left
    if sys.platform != "win32":  # an ordinary file, not mkstemp's private 0600
        assert target.stat().st_mode & 0o777 == 0o666 & ~_umask()
    with pytest.raises(InputFileError, match="does not exist"):
        write_html(make_verdict(), tmp_path / "missing" / "r.html")


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def test_write_pdf_without_chromium_says_so(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    html = write_html(make_verdict(), tmp_path / "r.html")
    monkeypatch.setattr("verify.report.shutil.which", lambda name: None)
    with pytest.raises(ToolMissingError, match="needs a Chromium"):
        write_pdf(html, tmp_path / "r.pdf")
    with pytest.raises(InputFileError, match="no HTML report"):
        write_pdf(tmp_path / "none.html", tmp_path / "r.pdf")
    with pytest.raises(UsageError, match="use A4 or Letter"):
        write_pdf(html, tmp_path / "r.pdf", paper="A5")
    assert not (tmp_path / "r.pdf").exists()


def test_template_found_in_checkout() -> None:
    folder = template_dir()
    assert (folder / "report.html.j2").is_file()
    assert (folder / "report.css").is_file()


# ------------------------------------------------------------------ shared data


@pytest.mark.shared
@pytest.mark.slow
def test_reports_of_shared_samples_label_the_solvent(spectra_dir: Path) -> None:
    from verify import pipeline
    from verify import sample as sample_mod

    # solvent carbon shifts (ppm): Fulmer et al., Organometallics 2010, 29, 2176
    solvents = {"coumarin": ("CDCl3", (77.16,)), "1-naphthoic-acid": ("acetone", (29.84, 206.26))}
    for name, (solvent_name, shifts) in solvents.items():
        sample = sample_mod.load_sample(spectra_dir / name / "sample.toml")
        try:
            result = pipeline.check(sample)
        except ImportError as exc:  # a stage not built yet
            pytest.skip(f"pipeline stage missing: {exc}")
        html = render_html(result.verdict, sample=sample, audit=result.audit)
        doc = parse(html)
        marks = doc.by_id("spectra").find_all("g", **{"class": "mark"})
        solvent = [m for m in marks if m.attrs.get("data-status") == "solvent"]
        assert solvent, f"{name}: no solvent signal labelled"
        for m in solvent:
            assert solvent_name.lower() in m.text.lower(), m.text
        for shift in shifts:
            assert any(abs(float(m.attrs["data-ppm"] or 0) - shift) < 0.5 for m in solvent)
        # a multiplet is one label, not one per line (acetone-d6 CD3 is a septet)
        assert len(solvent) == len(shifts)
        assert doc.by_id("verdict").attrs["data-verdict"] == result.verdict.verdict
        assert len(html) < 1_500_000  # the page stays small enough to mail


def test_crowded_region_gets_an_expansion() -> None:
    from verify.draw import crowded_windows

    dense = [Mark(ppm=20.0 + 1.1 * i, text=f"C{i + 1} CH2", short=f"C{i + 1}") for i in range(18)]
    sparse = [Mark(ppm=150.0, text="C30 C"), Mark(ppm=120.0, text="C31 CH")]
    windows = crowded_windows(dense + sparse, 10.0, 160.0)
    assert len(windows) == 1
    lo, hi = windows[0]
    assert lo <= 20.0 and hi >= 20.0 + 1.1 * 17 and hi - lo < 30
    assert crowded_windows(sparse, 10.0, 160.0) == []
    # the overview uses the short labels inside the expanded region, full ones outside
    v = make_verdict()
    spec = v.observation.peaksets["carbon"].spectrum
    assert spec is not None
    svg = parse(spectrum_stack_svg([("carbon", spec)], dense + sparse, compact=windows))
    texts = {n.text for n in svg.find_all("text")}
    assert "C1" in texts and "C1 CH2" not in texts and "C31 CH" in texts


def test_solvent_multiplet_is_one_label_and_one_row() -> None:
    # CDCl3 triplet, 1J(C,D) ≈ 32 Hz (from memory): three lines 0.32 ppm apart at 100.6 MHz
    v = make_verdict(solvent_lines=True)
    assert sum(s.role == "solvent" for s in v.observation.signals) == 3
    doc = parse(render_html(v))
    marks = doc.by_id("spectra").find_all("g", data_status="solvent")
    assert len(marks) == 1 and abs(float(marks[0].attrs["data-ppm"] or 0) - 77.16) < 0.01
    rows = doc.by_id("solvent-signals").find_all("tr", data_role="solvent")
    assert len(rows) == 1 and "3 lines" in rows[0].text


def test_ids_unique_and_references_resolve_with_expansions() -> None:
    from verify.draw import crowded_windows

    v = make_verdict()
    spec = v.observation.peaksets["carbon"].spectrum
    assert spec is not None
    dense = [Mark(ppm=20.0 + 1.1 * i, text=f"C{i + 1} CH2", short=f"C{i + 1}") for i in range(18)]
    windows = crowded_windows(dense, 10.0, 160.0)
    page = "".join(
        [spectrum_stack_svg([("carbon", spec)], dense, compact=windows)]
        + [spectrum_stack_svg([("carbon", spec)], dense, ppm_range=w) for w in windows]
    )
    doc = parse(page)
    ids = [n.attrs["id"] for n in doc.iter() if n.attrs.get("id")]
    assert len(ids) == len(set(ids)) >= 2
    for svg in doc.find_all("svg"):
        own = {n.attrs.get("id") for n in svg.iter()}
        for n in svg.iter():
            ref = re.fullmatch(r"url\(#(.+)\)", n.attrs.get("clip-path") or "")
            if ref:
                assert ref.group(1) in own  # each stack clips with its own rectangles
    # and the real report's page as a whole
    full = parse(render_html(make_verdict(findings=(REVIEW,), verdict="review")))
    ids = [n.attrs["id"] for n in full.iter() if n.attrs.get("id")]
    assert len(ids) == len(set(ids))


def test_candidates_show_a_structure_thumbnail_each() -> None:
    best = make_verdict(score=0.9)
    worse = make_verdict(verdict="fail", findings=(FAIL,), score=0.2)
    doc = parse(render_html(worse, candidates=(best, worse)))
    rows = [r for r in doc.by_id("candidates").find_all("tr") if "data-verdict" in r.attrs]
    assert all(r.find_all("svg") for r in rows)
    # thumbnails carry no atom numbers (RDKit draws atom notes as paths of class "note")
    assert not [p for r in rows for p in r.find_all("path", **{"class": "note"})]


@given(
    st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=3, max_size=400),
    st.integers(1, 60),
)
@settings(max_examples=60, deadline=None)
def test_downsample_is_independent_of_axis_direction_and_keeps_extremes(
    values: list[float], bins: int
) -> None:
    # invariant (house style): reversing the ppm axis changes nothing
    x = np.linspace(100.0, 0.0, len(values))
    y = np.array(values)
    a = minmax_downsample(x, y, bins, 0.0, 100.0)
    b = minmax_downsample(x[::-1], y[::-1], bins, 0.0, 100.0)
    assert np.array_equal(a[0], b[0]) and np.array_equal(a[1], b[1])
    assert a[1].max() == y.max() and a[1].min() == y.min()
    assert np.all(np.diff(a[0]) >= 0)


def test_peak_list_without_spectrum_is_drawn_as_sticks() -> None:
    from dataclasses import replace

    from verify.model import Peak, PeakSet

    v = make_verdict()
    peaks = tuple(Peak(ppm=s.ppm, height=s.height or 1.0) for s in v.observation.signals)
    obs = replace(
        v.observation,
        peaksets={"carbon": PeakSet(experiment="carbon", peaks=peaks, noise=0.0)},
        experiments=("carbon",),
        mode="carbon-only",
    )
    doc = parse(render_html(replace(v, observation=obs)))
    sticks = doc.by_id("spectra").find_all("path", **{"class": "sticks"})
    assert len(sticks) == 1
    assert (sticks[0].attrs["d"] or "").count("M") == len(peaks)  # one stick per listed peak
    assert "peak list" in doc.by_id("audit").text


def test_signal_shared_by_sample_and_impurity_keeps_both_names() -> None:
    from dataclasses import replace

    from verify.model import Impurity

    v = make_verdict()
    i = next(k for k, s in enumerate(v.observation.signals) if s.ppm == SHIFTS[7])  # acetyl CH3
    v = replace(v, impurities=(Impurity(name="acetone", signals=(i,), mol_percent=0.5),))
    doc = parse(render_html(v))
    mark = doc.by_id("spectra").find_all("g", data_ppm=f"{SHIFTS[7]:.2f}")[0]
    assert mark.attrs["data-status"] == "impurity"
    assert "C8" in mark.text and "acetone" in mark.text
    row = doc.by_id("assignment").find_all("tr", data_atoms="C8")[0]
    assert "shared with acetone" in row.text


@pytest.mark.parametrize(
    ("window", "first", "step"), [((-5.0, 215.0), "0", 20.0), ((29.0, 31.0), "29.0", 0.1)]
)
def test_axis_ticks_step_through_the_1_2_5_series(
    window: tuple[float, float], first: str, step: float
) -> None:
    spec = make_verdict().observation.peaksets["carbon"].spectrum
    assert spec is not None
    svg = parse(spectrum_stack_svg([("carbon", spec)], [], ppm_range=window))
    labels = [n.text for n in svg.find_all("text") if n.attrs.get("text-anchor") == "middle"]
    values = sorted(float(t) for t in labels)
    assert labels[0] == first and "-0" not in labels
    assert np.allclose(np.diff(values), step)


def test_signal_of_a_fail_finding_says_mismatch() -> None:
    # FAIL names atoms 3 and 4 (C4/C11 and C5/C10 of the fixture)
    doc = parse(render_html(make_verdict(verdict="fail", findings=(FAIL, REVIEW))))
    marks = {float(n.attrs["data-ppm"] or 0): n for n in doc.by_id("spectra").find_all("g")
             if n.attrs.get("class") == "mark"}  # fmt: skip
    for ppm in (113.7, 130.6):
        assert marks[ppm].attrs["data-status"] == "mismatch" and "mismatch" in marks[ppm].text
    row = doc.by_id("assignment").find_all("tr", data_atoms="C5/C10")[0]
    assert "mismatch" in row.text
    assert marks[196.8].attrs["data-status"] == "agree"


def test_summary_sentence_counts_classes_and_signals() -> None:
    doc = parse(render_html(make_verdict()))
    assert doc.by_id("summary").text == (
        "7 of 7 expected carbon classes matched to 7 of 7 sample signals."
    )
    v = make_verdict(impurity={"ethyl acetate": 60.49}, impurity_as_sample=True)
    text = parse(render_html(v)).by_id("summary").text
    assert text.startswith("7 of 7 expected carbon classes matched to 7 of 7 sample signals")
    assert "impurities: ethyl acetate" in text
