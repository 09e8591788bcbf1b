"""The report: one self-contained HTML page a chemist can read, print and sign.

:func:`render_html` turns a :class:`~verify.model.Verdict` into a single HTML page
with everything inline (CSS and SVG pictures; no script, no external font, image
or style sheet), so that it works offline, when mailed, and years later.  The page
is made with Jinja2 with autoescaping on, so text from the sample file or the data
(names, lots, SMILES, impurity names) always shows as text and never as markup; a
Content-Security-Policy in the page forbids scripts and external loads as a second
line of defence.

:func:`write_html` writes it atomically, :func:`write_pdf` prints it through a
headless Chromium, :func:`build_audit` and :func:`file_sha256` record the inputs.

Templates are looked up in the installed package (``verify/templates``, where the
wheel build force-includes the top-level ``templates/``) and, in a source or
editable checkout, in the ``templates/`` directory beside ``verify/``.

References
----------
.. [1] Jinja2 documentation, "Autoescaping" — HTML escaping of every substituted value.
.. [2] W3C, Content Security Policy Level 3 — ``default-src 'none'`` blocks scripts
   and external resources in the page.
.. [3] FIPS 180-4, Secure Hash Standard — SHA-256 of each input file.

"""

from __future__ import annotations

import functools
import hashlib
import math
import os
import shutil
import subprocess
import tempfile
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import jinja2
from markupsafe import Markup

from verify import __version__
from verify._files import atomic_write_bytes
from verify.draw import (
    MARK_STATUSES,
    PANEL_ORDER,
    Mark,
    Sticks,
    crowded_windows,
    glyph_svg,
    spectrum_stack_svg,
    stack_window,
)
from verify.draw import structure_svg as _structure_svg
from verify.errors import InputFileError, ToolMissingError, UsageError
from verify.model import MULTIPLICITIES, Sample, Signal, Spectrum, Verdict
from verify.verdict import CAUTION

__all__ = [
    "CAUTION",
    "build_audit",
    "chromium_command",
    "file_sha256",
    "find_browser",
    "html_to_pdf",
    "render_html",
    "template_dir",
    "write_html",
    "write_pdf",
]


#: The verdict in words: (headline, sentence).
VERDICT_WORDS: Mapping[str, tuple[str, str]] = {
    "pass": ("Pass", "The carbon-13 evidence agrees with the proposed structure."),
    "fail": ("Fail", "The carbon-13 evidence contradicts the proposed structure."),
    "review": (
        "Review",
        "The evidence does not settle the question; the points below need a chemist's judgement.",
    ),
}

STATUS_WORDS: Mapping[str, str] = {
    "agree": "assigned, agrees",
    "mismatch": "in a fail finding (\u201cmismatch\u201d) or a review finding (\u201ccheck\u201d)",
    "unassigned": "sample signal no carbon explains",
    "solvent": "solvent",
    "impurity": "recognised impurity",
    "artifact": "artifact",
}

EXPERIMENT_NAMES: Mapping[str, str] = {
    "carbon": "13C broadband-decoupled",
    "dept45": "DEPT-45",
    "dept90": "DEPT-90",
    "dept135": "DEPT-135",
    "apt": "APT",
}

_TEMPLATE = "report.html.j2"
_PEAK_TOL_PPM = 0.05  # a finding's peak and a signal are the same when this close


# ----------------------------------------------------------------------- hashing


def file_sha256(path: str | os.PathLike[str]) -> str:
    """SHA-256 of a file's bytes as 64 lowercase hex digits.

    Parameters
    ----------
    path : path-like
        A regular file.

    Raises
    ------
    InputFileError
        The file does not exist, is a folder, or cannot be read.

    References
    ----------
    .. [1] FIPS 180-4, Secure Hash Standard (``hashlib.sha256``).

    """
    p = Path(path)
    if not p.is_file():
        raise InputFileError(
            f"cannot hash {p}: it is not a file; give the spectrum file or raw folder", path=p
        )
    digest = hashlib.sha256()
    try:
        with p.open("rb") as fh:
            for chunk in iter(lambda: fh.read(1 << 20), b""):
                digest.update(chunk)
    except OSError as exc:
        raise InputFileError(f"cannot read {p} to hash it: {exc.strerror}", path=p) from exc
    return digest.hexdigest()


def _raw_folder_files(folder: Path) -> list[Path]:
    """List the files that define a vendor raw folder's data: fid/ser, acqus, procs, 1r/1i."""
    root = folder
    if not ((folder / "fid").is_file() or (folder / "ser").is_file()):
        # a processing folder (…/pdata/1) was given: its experiment folder is two up
        if (folder.parent.parent / "acqus").is_file():
            root = folder.parent.parent
    found = [root / n for n in ("fid", "ser", "acqus") if (root / n).is_file()]
    pdata = root / "pdata"
    procnos = sorted(pdata.iterdir()) if pdata.is_dir() else []
    if folder != root:
        procnos = [folder]
    for proc in procnos:
        found += [proc / n for n in ("procs", "1r", "1i") if (proc / n).is_file()]
    if not found:
        raise InputFileError(
            f"the folder {folder} holds no fid, ser or acqus to hash; give a raw experiment folder",
            path=folder,
        )
    return found


def build_audit(
    sample: Sample,
    parameters: Mapping[str, Any] | None = None,
    *,
    time: datetime | None = None,
) -> dict[str, Any]:
    """Record what a check used: tool version, time, inputs with SHA-256, parameters.

    Parameters
    ----------
    sample : Sample
        The sample; its TOML file, structure file and every spectrum are hashed.
        A raw folder is recorded file by file: ``fid`` (or ``ser``), ``acqus`` and
        the ``procs``/``1r``/``1i`` of its processing folders.
    parameters : mapping, optional
        The settings the check ran with (tolerances, thresholds …), kept as given.
    time : datetime, optional
        When the check ran; now (UTC) by default.

    Returns
    -------
    dict
        ``{"tool", "version", "time", "inputs": [{"role", "path", "sha256"}],
        "parameters"}`` — JSON-serialisable when `parameters` is.

    Raises
    ------
    InputFileError
        An input file is missing or unreadable.

    """
    inputs: list[dict[str, str]] = []

    def add(role: str, path: Path) -> None:
        inputs.append({"role": role, "path": str(path), "sha256": file_sha256(path)})

    if sample.path is not None:
        add("sample", sample.path)
    if sample.structure_file is not None:
        add("structure", sample.structure_file)
    for role, path in sample.spectra.items():
        p = Path(path)
        if p.is_dir():
            for f in _raw_folder_files(p):
                add(role, f)
        else:
            add(role, p)
    when = (time or datetime.now(UTC)).astimezone(UTC)
    return {
        "tool": "ctally",
        "version": __version__,
        "time": when.isoformat(timespec="seconds"),
        "inputs": inputs,
        "parameters": dict(parameters or {}),
    }


# ------------------------------------------------------------------ view models


@dataclass(frozen=True)
class _SignalView:
    index: int
    signal: Signal
    status: str
    classes: tuple[int, ...]
    atoms: str  # "C2/C6 + C9" or ""
    name: str  # solvent or impurity name
    worst: str = ""  # severest finding ("fail" or "review") the signal is part of


def _fmt(value: Any) -> str:
    """Format a value from a mapping (parameters, provenance) as one readable line."""
    if isinstance(value, float):
        return f"{value:.6g}"
    if isinstance(value, Mapping):
        return "; ".join(f"{k} = {_fmt(v)}" for k, v in value.items())
    if isinstance(value, list | tuple):
        return ", ".join(_fmt(v) for v in value)
    if isinstance(value, datetime):
        return value.isoformat(timespec="seconds")
    return str(value)


def _show_time(value: Any) -> str:
    """Format a time (datetime or ISO 8601 text) as ``YYYY-MM-DD HH:MM:SS UTC``."""
    when = value
    if isinstance(value, str):
        try:
            when = datetime.fromisoformat(value)
        except ValueError:
            return value
    if isinstance(when, datetime):
        if when.tzinfo is None:
            return when.strftime("%Y-%m-%d %H:%M:%S")
        return when.astimezone(UTC).strftime("%Y-%m-%d %H:%M:%S UTC")
    return str(value)


def _atom_list(atoms: Iterable[int]) -> str:
    return ", ".join(f"C{a + 1}" for a in sorted(set(atoms)))


def _signal_views(verdict: Verdict) -> list[_SignalView]:
    exp, obs = verdict.expectation, verdict.observation
    assigned: dict[int, tuple[int, ...]] = {}
    for a in verdict.assignment:
        assigned[a.signal] = assigned.get(a.signal, ()) + tuple(a.classes)
    impurity_of: dict[int, str] = {}
    for imp in verdict.impurities:
        for i in imp.signals:
            impurity_of.setdefault(i, imp.name)
    bad = [f for f in verdict.findings if f.severity in ("fail", "review")]
    views = []
    for i, s in enumerate(obs.signals):
        classes = tuple(c for c in assigned.get(i, ()) if 0 <= c < len(exp.classes))
        atoms = " + ".join(exp.classes[c].label for c in classes)
        class_atoms = {a for c in classes for a in exp.classes[c].atoms}
        name = ""
        hits = {
            f.severity
            for f in bad
            if class_atoms & set(f.atoms) or any(abs(s.ppm - p) <= _PEAK_TOL_PPM for p in f.peaks)
        }
        worst = "fail" if "fail" in hits else ("review" if hits else "")
        if i in impurity_of or s.role == "impurity":
            status, name = "impurity", impurity_of.get(i) or s.label or "impurity"
        elif s.role == "solvent":
            status = "solvent"
            name = s.label or obs.referencing.solvent or "solvent"
        elif s.role == "artifact":
            status, name = "artifact", s.label or "artifact"
        elif worst:
            status = "mismatch"
        elif not classes:
            status = "unassigned"
        else:
            status = "agree"
        views.append(_SignalView(i, s, status, classes, atoms, name, worst))
    return views


def _mark_for(v: _SignalView) -> Mark:
    s = v.signal
    call = s.multiplicity or "?"
    shown = s.multiplicity or ""  # carbon-only data: no call to show beside the atom
    short = ""
    if v.status in ("solvent", "impurity", "artifact") and v.atoms:  # shared with the sample
        text, short = f"{v.atoms} {shown} + {v.name}", v.atoms
    elif v.status in ("solvent", "impurity", "artifact"):
        text = v.name if v.name == v.status else f"{v.name} ({v.status})"
    elif not v.atoms:
        word = "unexplained" if v.status == "mismatch" else "unassigned"
        text = f"{shown} {word}".strip()
    else:
        text, short = f"{v.atoms} {shown}".strip(), v.atoms
        if v.status == "mismatch":  # a fail contradicts; a review asks for a look
            text += " mismatch" if v.worst == "fail" else " check"
    detail = (
        f"{s.ppm:.2f} ppm · call {call} (confidence {s.confidence:.2f}) · "
        f"{STATUS_WORDS[v.status]}" + (f" · {s.reason}" if s.reason else "")
    )
    return Mark(ppm=s.ppm, text=text, status=v.status, detail=detail, short=short)


def _groups(views: Sequence[_SignalView], observe_mhz: float) -> list[list[_SignalView]]:
    """Signals in shift order, the lines of one solvent multiplet gathered into one group.

    Neighbouring solvent lines of the same name closer than 40 Hz belong together:
    one-bond C–D couplings of the common solvents are 19–32 Hz (Fulmer et al.,
    Organometallics 2010, 29, 2176; from memory), so a multiplet's lines are one J apart.
    """
    gap_ppm = 40.0 / observe_mhz
    groups: list[list[_SignalView]] = []
    for v in sorted(views, key=lambda v: -v.signal.ppm):
        last = groups[-1][-1] if groups else None
        if (
            last is not None
            and v.status == "solvent"
            and last.status == "solvent"
            and v.name == last.name
            and last.signal.ppm - v.signal.ppm <= gap_ppm
        ):
            groups[-1].append(v)
        else:
            groups.append([v])
    return groups


def _group_mark(group: Sequence[_SignalView]) -> Mark:
    if len(group) == 1:
        return _mark_for(group[0])
    centre = sum(v.signal.ppm for v in group) / len(group)
    lo, hi = group[-1].signal.ppm, group[0].signal.ppm
    return Mark(
        ppm=centre,
        text=f"{group[0].name} (solvent)",
        status="solvent",
        detail=f"{group[0].name}: {len(group)} lines, {hi:.2f}–{lo:.2f} ppm (solvent multiplet)",
    )


def _other_rows(groups: Sequence[Sequence[_SignalView]], loose: set[int]) -> list[dict[str, str]]:
    rows = []
    for g in groups:
        v = g[0]
        if not (v.status in ("solvent", "artifact") or v.index in loose):
            continue
        centre = sum(x.signal.ppm for x in g) / len(g)
        shift = f"{centre:.2f}"
        if len(g) > 1:
            shift += f" ({len(g)} lines, {g[0].signal.ppm:.2f}–{g[-1].signal.ppm:.2f})"
        rows.append(
            {
                "status": v.status,
                "name": v.name or v.status,
                "shift": shift,
                "reason": v.signal.reason,
            }
        )
    return rows


def _summary(verdict: Verdict, views: Sequence[_SignalView]) -> str:
    """One sentence of counts: classes assigned, sample signals, unexplained ones."""
    n_classes = len(verdict.expectation.classes)
    assigned = {c for a in verdict.assignment for c in a.classes}
    own = [v for v in views if v.signal.role == "sample" and v.status != "impurity"]
    loose = sum(1 for v in own if not v.classes)
    text = (
        f"{len(assigned)} of {n_classes} expected carbon classes matched to "
        f"{sum(1 for v in own if v.classes)} of {len(own)} sample signals"
    )
    if loose:
        text += f"; {loose} sample signal{'s' if loose > 1 else ''} left unexplained"
    if verdict.impurities:
        text += f"; impurities: {', '.join(i.name for i in verdict.impurities)}"
    return text + "."


def _traces(verdict: Verdict) -> list[tuple[str, Spectrum | Sticks]]:
    """Per experiment, its spectrum, or its peaks as sticks when only a list was given."""
    out: list[tuple[str, Spectrum | Sticks]] = []
    for role in PANEL_ORDER:
        ps = verdict.observation.peaksets.get(role)
        if ps is None:
            continue
        if ps.spectrum is not None:
            out.append((role, ps.spectrum))
        elif ps.peaks:
            out.append(
                (role, Sticks(tuple(p.ppm for p in ps.peaks), tuple(p.height for p in ps.peaks)))
            )
    return out


def _own_signals(verdict: Verdict) -> list[Signal]:
    """Sample-role signals that the verdict did not explain as an impurity.

    Observation.signal_counts() counts every sample-role signal; the verdict stage may
    since have explained some of them as an impurity, and those are not the sample's.
    """
    explained = {i for imp in verdict.impurities for i in imp.signals}
    return [
        s
        for i, s in enumerate(verdict.observation.signals)
        if s.role == "sample" and i not in explained
    ]


def _inventory_rows(verdict: Verdict) -> list[dict[str, Any]]:
    exp = verdict.expectation
    carbons, signals = exp.inventory(), exp.signals()
    own = _own_signals(verdict)
    seen = dict.fromkeys(MULTIPLICITIES, 0)
    seen_c = dict.fromkeys(MULTIPLICITIES, 0)
    for s in own:
        if s.multiplicity is not None:
            seen[s.multiplicity] += 1
            seen_c[s.multiplicity] += s.carbons
    rows: list[dict[str, Any]] = []
    for m in MULTIPLICITIES:
        diff = seen[m] - signals[m]
        rows.append(
            {
                "cls": m,
                "carbons": carbons[m],
                "expected": signals[m],
                "observed": seen[m],
                "observed_carbons": seen_c[m],
                "agrees": diff == 0,
                "word": "agrees" if diff == 0 else f"differs by {diff:+d}",
            }
        )
    unknown = sum(1 for s in own if s.multiplicity is None)
    if unknown and unknown == len(own):  # carbon spectrum only: no class can be compared
        for r in rows:
            r.update(observed="–", observed_carbons="–", agrees=None, word="not measured")
    if unknown:
        rows.append(
            {
                "cls": "not classified",
                "carbons": 0,
                "expected": 0,
                "observed": unknown,
                "observed_carbons": unknown,
                "agrees": None,
                "word": "no edited spectrum tells",
            }
        )
    want, got = sum(signals.values()), len(own)
    rows.append(
        {
            "cls": "all",
            "carbons": sum(carbons.values()),
            "expected": want,
            "observed": got,
            "observed_carbons": sum(s.carbons for s in own),
            "agrees": want == got,
            "word": "agrees" if want == got else f"differs by {got - want:+d}",
        }
    )
    return rows


def _assignment_rows(verdict: Verdict, views: Sequence[_SignalView]) -> list[dict[str, Any]]:
    exp = verdict.expectation
    by_class: dict[int, list[_SignalView]] = {}
    for v in views:
        for c in v.classes:
            by_class.setdefault(c, []).append(v)
    bad_atoms = {a for f in verdict.findings if f.severity != "info" for a in f.atoms}
    rows = []
    for ci, cls in sorted(enumerate(exp.classes), key=lambda t: t[1].atoms[0]):
        hits = by_class.get(ci, [])
        notes = [a.note for a in verdict.assignment if ci in a.classes and a.note]
        if not hits:
            rows.append(
                {
                    "label": cls.label,
                    "expected": cls.multiplicity,
                    "environment": cls.environment,
                    "predicted": cls.predicted_ppm,
                    "ppm": None,
                    "observed": None,
                    "confidence": None,
                    "delta": None,
                    "status": "mismatch" if set(cls.atoms) & bad_atoms else "unassigned",
                    "word": "not found",
                    "note": "; ".join(notes),
                    "carbons": cls.carbons,
                }
            )
            continue
        for v in hits:
            s = v.signal
            delta = None if cls.predicted_ppm is None else s.ppm - cls.predicted_ppm
            word = {
                "agree": "agrees",
                "impurity": f"shared with {v.name}",
                "solvent": f"under {v.name}",
                "artifact": "on an artifact",
                "mismatch": "mismatch" if v.worst == "fail" else "check",
            }.get(v.status, "unassigned")
            rows.append(
                {
                    "label": cls.label,
                    "expected": cls.multiplicity,
                    "environment": cls.environment,
                    "predicted": cls.predicted_ppm,
                    "ppm": s.ppm,
                    "observed": s.multiplicity or "?",
                    "confidence": s.confidence,
                    "delta": delta,
                    "status": v.status,
                    "word": word,
                    "note": "; ".join(notes + ([s.reason] if s.reason else [])),
                    "carbons": cls.carbons,
                }
            )
    return rows


def _processing_rows(verdict: Verdict) -> list[dict[str, Any]]:
    rows: list[dict[str, Any]] = []
    obs = verdict.observation
    for role in PANEL_ORDER:
        ps = obs.peaksets.get(role)
        if ps is None:
            if role in obs.experiments:
                rows.append({"role": role, "name": EXPERIMENT_NAMES[role], "items": []})
            continue
        items: list[tuple[str, str]] = []
        spec = ps.spectrum
        if spec is not None:
            if spec.source is not None:
                items.append(("source", str(spec.source)))
            items.append(("points", str(spec.points)))
            items.append(("observe frequency", f"{spec.observe_mhz:.4f} MHz"))
            if spec.pulse_program:
                items.append(("pulse program", spec.pulse_program))
            items += [(str(k), _fmt(v)) for k, v in spec.provenance.items()]
        else:
            items.append(("source", "peak list (no spectrum)"))
        items.append(("noise (robust s.d.)", f"{ps.noise:.4g}"))
        items.append(("picking threshold", f"{ps.threshold_snr:g} × noise"))
        items.append(("signals picked", str(len(ps.peaks))))
        if role in obs.inverted:
            items.append(("phase", "stored phase found inverted and corrected"))
        rows.append({"role": role, "name": EXPERIMENT_NAMES[role], "items": items})
    return rows


def _candidate_rows(verdict: Verdict, candidates: Sequence[Verdict]) -> list[dict[str, Any]]:
    pool = list(candidates)
    if pool and not any(c is verdict for c in pool):
        pool.append(verdict)
    if len(pool) < 2:
        return []
    ranked = sorted(pool, key=lambda c: -c.score)
    rows = []
    for rank, c in enumerate(ranked, start=1):
        counts = dict.fromkeys(MULTIPLICITIES, 0)
        for sig in _own_signals(c):
            if sig.multiplicity is not None:
                counts[sig.multiplicity] += 1
        want = c.expectation.signals()
        picture = (
            _structure_svg(c.expectation.molblock, numbered=False, size=(180, 120))
            if c.expectation.molblock
            else None
        )
        rows.append(
            {
                "rank": rank,
                "name": c.expectation.name or c.expectation.structure,
                "smiles": c.expectation.structure,
                "formula": c.expectation.formula,
                "verdict": c.verdict,
                "verdict_word": VERDICT_WORDS[c.verdict][0],
                "score": c.score,
                "fails": sum(1 for f in c.findings if f.severity == "fail"),
                "reviews": sum(1 for f in c.findings if f.severity == "review"),
                "counts": " · ".join(f"{m} {counts[m]}/{want[m]}" for m in MULTIPLICITIES),
                "this": c is verdict,
                "picture": Markup(picture) if picture else None,
            }
        )
    return rows


# -------------------------------------------------------------------- rendering


def template_dir() -> Path:
    """Folder holding ``report.html.j2``: the installed package's, else the checkout's.

    Raises
    ------
    InputFileError
        No template was found (a broken installation).

    """
    here = Path(__file__).resolve().parent
    tried = [here / "templates", here.parent / "templates"]
    for folder in tried:
        if (folder / _TEMPLATE).is_file():
            return folder
    raise InputFileError(
        f"the report template {_TEMPLATE} is in neither {tried[0]} nor {tried[1]}; "
        "reinstall ctally",
        path=tried[0] / _TEMPLATE,
    )


@functools.cache
def _environment(folder: str) -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(folder),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["ppm"] = lambda v, d=2: "–" if v is None else f"{float(v):.{d}f}"
    env.filters["num"] = lambda v, d=2: (
        "–" if v is None or (isinstance(v, float) and math.isnan(v)) else f"{float(v):.{d}f}"
    )
    env.filters["fmt"] = _fmt
    return env


def _metadata(sample: Sample | None) -> list[tuple[str, str]]:
    if sample is None:
        return []
    return [(str(k).replace("_", " "), _fmt(v)) for k, v in sample.metadata.items()]


def render_html(
    verdict: Verdict,
    *,
    sample: Sample | None = None,
    audit: Mapping[str, Any] | None = None,
    candidates: Sequence[Verdict] = (),
) -> str:
    """Render the report of one checked candidate as a self-contained HTML page.

    Parameters
    ----------
    verdict : Verdict
        The candidate to report; its observation's peak sets supply the spectra
        (ppm) that are drawn.
    sample : Sample, optional
        The sample file's content, for the name and metadata (lot, operator …).
    audit : mapping, optional
        As made by :func:`build_audit`: version, time, input hashes, parameters.
    candidates : sequence of Verdict
        Every candidate checked against the same observation; with two or more
        the page shows their ranking by score.

    Returns
    -------
    str
        The HTML page (UTF-8 text).

    Raises
    ------
    InputFileError
        The template cannot be found.

    """
    exp, obs = verdict.expectation, verdict.observation
    views = _signal_views(verdict)
    notes = dict.fromkeys(obs.inverted, "stored phase inverted, corrected")
    traces = _traces(verdict)
    spectra = [t for _, t in traces if isinstance(t, Spectrum)]
    groups = _groups(views, spectra[0].observe_mhz if spectra else 100.0)
    marks = [_group_mark(g) for g in groups]
    stack, expansions = "", []
    if traces:
        lo, hi = stack_window([t for _, t in traces], marks)
        windows = crowded_windows(marks, lo, hi)
        stack = spectrum_stack_svg(traces, marks, notes=notes, compact=windows)
        for a, b in windows:
            title = f"Expansion {b:.0f}\u2013{a:.0f} ppm"
            svg = spectrum_stack_svg(traces, marks, notes=notes, ppm_range=(a, b), title=title)
            expansions.append(Markup(svg))
    marked_atoms = sorted({a for f in verdict.findings if f.severity != "info" for a in f.atoms})
    carbons = sum(c.carbons for c in exp.classes)
    big = carbons > 18  # a large structure gets the full page width
    size = (640, 440) if big else (440, 330)
    structure = _structure_svg(exp.molblock, marked_atoms, size=size) if exp.molblock else None
    audit = dict(audit or {})
    now = _show_time(datetime.now(UTC))
    severity_rank = {"fail": 0, "review": 1, "info": 2}
    findings = sorted(verdict.findings, key=lambda f: severity_rank.get(f.severity, 3))
    name = (sample.name if sample is not None else "") or exp.name or "unnamed sample"
    named = {i for imp in verdict.impurities for i in imp.signals}
    loose = {v.index for v in views if v.status == "impurity" and v.index not in named}
    shown_statuses = [st for st in MARK_STATUSES if any(m.status == st for m in marks)]
    context = {
        "name": name,
        "sample": sample,
        "metadata": _metadata(sample),
        "solvent": (sample.solvent if sample is not None else None) or obs.referencing.solvent,
        "verdict": verdict,
        "words": VERDICT_WORDS[verdict.verdict],
        "summary": _summary(verdict, views),
        "caution": CAUTION,
        "exp": exp,
        "obs": obs,
        "experiments": [EXPERIMENT_NAMES.get(e, e) for e in obs.experiments],
        "stack": Markup(stack) if stack else None,
        "expansions": expansions,
        "legend": [
            (Markup(_legend_glyph(st)), STATUS_WORDS[st]) for st in shown_statuses or ["agree"]
        ],
        "structure": Markup(structure) if structure else None,
        "big_structure": big,
        "marked_atoms": _atom_list(marked_atoms),
        "inventory": _inventory_rows(verdict),
        "assignment": _assignment_rows(verdict, views),
        "signals": views,
        "findings": [
            {
                "code": f.code,
                "severity": f.severity,
                "message": f.message,
                "atoms": _atom_list(f.atoms),
                "peaks": ", ".join(f"{p:.2f}" for p in f.peaks),
            }
            for f in findings
        ],
        "impurities": [
            {
                "name": imp.name,
                "peaks": ", ".join(
                    f"{obs.signals[i].ppm:.2f}" for i in imp.signals if 0 <= i < len(obs.signals)
                ),
                "mol_percent": imp.mol_percent,
                "source": imp.source,
            }
            for imp in verdict.impurities
        ],
        "others": _other_rows(groups, loose),
        "candidates": _candidate_rows(verdict, candidates),
        "processing": _processing_rows(verdict),
        "referencing": obs.referencing,
        "version": __version__,
        "generated": now,
        "checked": _show_time(audit.get("time", "")) or now,
        "inputs": list(audit.get("inputs", ())),
        "parameters": [(str(k), _fmt(v)) for k, v in dict(audit.get("parameters", {})).items()],
        "audit_version": str(audit.get("version", __version__)),
    }
    template = _environment(str(template_dir())).get_template(_TEMPLATE)
    return template.render(context)


def _legend_glyph(status: str) -> str:
    return (
        '<svg class="glyph" viewBox="0 0 14 14" width="14" height="14" aria-hidden="true">'
        + glyph_svg(status, 7, 7, 4.5)
        + "</svg>"
    )


# -------------------------------------------------------------------- writing


def write_html(verdict: Verdict, path: str | os.PathLike[str], **kw: Any) -> Path:
    """Render the report and write it to `path` atomically (temporary file + rename).

    Parameters
    ----------
    verdict : Verdict
        The candidate to report.
    path : path-like
        Where to write; an existing file is replaced only once the new one is complete.
    **kw
        Passed to :func:`render_html` (``sample``, ``audit``, ``candidates``).

    Returns
    -------
    Path
        The written file.

    Raises
    ------
    InputFileError
        The folder does not exist or cannot be written.

    """
    target = Path(path)
    return atomic_write_bytes(target, render_html(verdict, **kw).encode("utf-8"))


def find_browser() -> str | None:
    """Path of a Chromium on PATH (``chromium`` or ``chromium-browser``), or None."""
    for name in ("chromium", "chromium-browser"):
        found = shutil.which(name)
        if found:
            return found
    return None


def chromium_command(browser: str, profile: str | os.PathLike[str], *extra: str) -> list[str]:
    """Command line running `browser` headless, offline-quiet, with a throw-away profile."""
    return [
        browser,
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        "--no-default-browser-check",
        f"--user-data-dir={os.fspath(profile)}",
        *extra,
    ]


def write_pdf(
    html_path: str | os.PathLike[str],
    pdf_path: str | os.PathLike[str],
    *,
    browser: str | None = None,
    timeout_s: float = 120.0,
    paper: str | None = None,
) -> Path:
    """Print an HTML report to PDF with a headless Chromium.

    Parameters
    ----------
    html_path : path-like
        The report written by :func:`write_html`.
    pdf_path : path-like
        Where to write the PDF (replaced atomically).
    browser : str, optional
        Chromium executable; by default ``chromium`` or ``chromium-browser`` on PATH.
    timeout_s : float
        Seconds to wait for the browser.
    paper : {"A4", "Letter"} or None
        Paper size; None leaves it to the browser's default (Letter for Chromium's
        default locale).  The page layout fits both (ISO 216 A4 and ANSI Letter).

    Returns
    -------
    Path
        The written PDF.

    Raises
    ------
    ToolMissingError
        No Chromium is installed, or it ran and produced no PDF.
    InputFileError
        The HTML file is missing or the PDF folder does not exist.
    UsageError
        `paper` is neither A4 nor Letter.

    """
    src, dst = Path(html_path).resolve(), Path(pdf_path)
    if not src.is_file():
        raise InputFileError(f"no HTML report at {src} to print; write it first", path=src)
    if not dst.parent.is_dir():
        raise InputFileError(
            f"cannot write {dst.name}: the folder {dst.parent} does not exist", path=dst
        )
    size = None
    if paper is not None:
        size = {"a4": "A4", "letter": "letter"}.get(paper.strip().lower())
        if size is None:
            raise UsageError(f"paper size {paper!r} is not known; use A4 or Letter")
    exe = browser or find_browser()
    if exe is None:
        raise ToolMissingError(
            "PDF output needs a Chromium browser, and neither 'chromium' nor 'chromium-browser' "
            "is on PATH; install one (e.g. apt-get install chromium) or print the HTML report "
            "from any browser"
        )
    with tempfile.TemporaryDirectory(prefix="ctally-chromium-") as profile:
        out = Path(profile) / "report.pdf"
        if size is not None:  # a copy of the page that asks for the paper size
            page = Path(profile) / "sized.html"
            text = src.read_text(encoding="utf-8")
            rule = f"<style>@page {{ size: {size}; }}</style>"
            page.write_text(text.replace("</head>", rule + "</head>", 1), encoding="utf-8")
            src = page
        cmd = chromium_command(
            exe,
            Path(profile) / "profile",
            f"--print-to-pdf={out}",
            "--no-pdf-header-footer",
            src.as_uri(),
        )
        try:
            run = subprocess.run(cmd, capture_output=True, timeout=timeout_s, check=False)
        except FileNotFoundError as exc:
            raise ToolMissingError(f"the browser {exe!r} could not be started: {exc}") from exc
        except subprocess.TimeoutExpired as exc:
            raise ToolMissingError(
                f"the browser {exe!r} did not finish printing within {timeout_s:g} s"
            ) from exc
        data = out.read_bytes() if out.is_file() else b""
        if not data.startswith(b"%PDF"):
            tail = run.stderr.decode("utf-8", "replace").strip().splitlines()[-1:] or [""]
            raise ToolMissingError(
                f"the browser {exe!r} exited with code {run.returncode} and wrote no PDF "
                f"({tail[0][:200]})"
            )
    return atomic_write_bytes(dst, data)


def html_to_pdf(
    html: str,
    pdf_path: str | os.PathLike[str],
    *,
    browser: str | None = None,
    paper: str | None = None,
) -> Path:
    """Print HTML text (as made by :func:`render_html`) to a PDF file.

    The text is written to a temporary file and printed with :func:`write_pdf`.

    Raises
    ------
    ToolMissingError
        No Chromium is installed, or it produced no PDF.
    InputFileError
        The PDF folder does not exist.

    """
    with tempfile.TemporaryDirectory(prefix="ctally-report-") as folder:
        src = Path(folder) / "report.html"
        src.write_text(html, encoding="utf-8")
        return write_pdf(src, pdf_path, browser=browser, paper=paper)
