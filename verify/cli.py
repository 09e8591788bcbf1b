"""The ``ctally`` command: a thin shell over :mod:`verify.pipeline`.

Sub-commands::

    ctally expect STRUCTURE [--json PATH|-]
    ctally classify SAMPLE.toml [--json PATH|-]
    ctally check [SAMPLE.toml] [--structure S ...] [--candidates FILE]
                 [--carbon F] [--dept90 F] [--dept135 F] [--dept45 F] [--apt F]
                 [--solvent NAME] [--name TEXT]
                 [--html PATH] [--json PATH|-] [--pdf PATH]

Exit codes: 0 pass (or success for expect/classify), 1 fail, 2 bad input or usage,
3 needs review.  Only :class:`verify.errors.CtallyError` is caught, printed as
``ErrorName: message`` on one line; anything else is a bug and shows its traceback.
Output files are written only after every computation has succeeded, each one
atomically, so a failed run leaves nothing half-written.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import sys
import warnings
from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any, NoReturn, TextIO

from verify import __version__
from verify._files import atomic_write_text
from verify.errors import CtallyError, ToolMissingError, UsageError

__all__ = ["EXIT_CODES", "main"]

#: Exit code per verdict; 2 is bad input or usage.
EXIT_CODES = {"pass": 0, "fail": 1, "review": 3}
EXIT_BAD_INPUT = 2


class _Parser(argparse.ArgumentParser):
    """An argument parser that reports usage errors as :class:`UsageError`."""

    def error(self, message: str) -> NoReturn:
        raise UsageError(f"{message} (see `{self.prog} --help`)")


def _parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="ctally",
        description="Check a proposed structure against its carbon-13 and DEPT/APT spectra.",
    )
    parser.add_argument("--version", action="version", version=f"ctally {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True

    p = sub.add_parser("expect", help="list the carbon classes a structure should show")
    p.add_argument("structure", help="SMILES, or a MOL/SDF file")
    p.add_argument("--json", metavar="PATH", help="write JSON to PATH (- for standard output)")

    p = sub.add_parser("classify", help="pick and classify the signals of a sample's spectra")
    p.add_argument("sample", help="sample file (TOML)")
    p.add_argument("--json", metavar="PATH", help="write JSON to PATH (- for standard output)")

    p = sub.add_parser("check", help="check spectra against the proposed structure(s)")
    p.add_argument("sample", nargs="?", help="sample file (TOML); or give the flags below")
    p.add_argument(
        "--structure",
        action="append",
        default=[],
        metavar="S",
        help="SMILES or MOL/SDF file; repeat to rank several candidates",
    )
    p.add_argument("--candidates", metavar="FILE", help="file of candidate SMILES or an SDF")
    for role, text in (
        ("carbon", "broadband-decoupled carbon-13 spectrum"),
        ("dept90", "DEPT-90 spectrum"),
        ("dept135", "DEPT-135 spectrum"),
        ("dept45", "DEPT-45 spectrum"),
        ("apt", "APT spectrum"),
    ):
        p.add_argument(f"--{role}", metavar="F", help=f"{text} (file or raw-data folder)")
    p.add_argument("--solvent", metavar="NAME", help="NMR solvent, e.g. CDCl3")
    p.add_argument("--name", metavar="TEXT", help="sample name for the report")
    p.add_argument("--html", metavar="PATH", help="write the HTML report to PATH")
    p.add_argument("--json", metavar="PATH", help="write JSON to PATH (- for standard output)")
    p.add_argument("--pdf", metavar="PATH", help="write a PDF of the report (needs Chromium)")
    return parser


def _dump(data: Any) -> str:
    return json.dumps(data, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


#: Where the command's own standard output goes (see :func:`_guard_stdout`).
_out: TextIO | None = None


def _emit(text: str, data: Any | None, json_target: str | None) -> None:
    """Print the summary and write JSON; the summary goes to stderr when JSON takes stdout."""
    out = _out or sys.stdout
    if not text.endswith("\n"):
        text += "\n"
    if json_target == "-":
        sys.stderr.write(text)
        out.write(_dump(data))
    else:
        out.write(text)
    out.flush()


@contextlib.contextmanager
def _guard_stdout() -> Iterator[TextIO]:
    """Send file descriptor 1 to stderr while the command runs; yield the real stdout.

    Native libraries may print to file descriptor 1 behind Python's back (the HiGHS
    solver behind :func:`scipy.optimize.milp` does, now and then).  Such lines must never
    mix into ``--json -`` output, so only the command's own output reaches stdout.
    Where stdout is not a real file descriptor (tests capturing it), nothing is changed.
    """
    try:
        fd = sys.stdout.fileno()
        err_fd = sys.stderr.fileno()
    except (AttributeError, OSError, ValueError):
        yield sys.stdout
        return
    sys.stdout.flush()
    saved = os.dup(fd)
    os.dup2(err_fd, fd)
    real = os.fdopen(os.dup(saved), "w", encoding="utf-8")
    try:
        yield real
    finally:
        real.close()
        sys.stdout.flush()
        os.dup2(saved, fd)
        os.close(saved)


def _check_target(path: str | None) -> None:
    """Refuse an output path that cannot be written, before any work is done.

    A missing or read-only folder, or a path that is itself a folder, would otherwise
    fail only at writing time, after the other outputs of the run had been written.
    """
    if path is None or path == "-":
        return
    target = Path(path).expanduser().resolve()
    folder = target.parent
    if not folder.is_dir():
        raise UsageError(f"cannot write {path}: folder {folder} does not exist")
    if target.is_dir():
        raise UsageError(f"cannot write {path}: it is a folder; give a file name")
    if not os.access(folder, os.W_OK):
        raise UsageError(f"cannot write {path}: folder {folder} is not writable")


def _cmd_expect(args: argparse.Namespace) -> int:
    from verify.structure import expectation_to_dict, expected_inventory, format_expectation

    _check_target(args.json)
    exp = expected_inventory(args.structure)
    data = expectation_to_dict(exp)
    if args.json and args.json != "-":
        atomic_write_text(args.json, _dump(data))
    _emit(format_expectation(exp), data, args.json)
    return 0


def _cmd_classify(args: argparse.Namespace) -> int:
    from verify.classify import format_observation, observation_to_dict
    from verify.pipeline import hetero_nuclei, load_candidates, observe
    from verify.sample import load_sample

    _check_target(args.json)
    sample = load_sample(args.sample)
    hetero: frozenset[str] = frozenset()
    if sample.structure or sample.structure_file:
        hetero = hetero_nuclei(load_candidates(sample))
    obs = observe(sample, hetero=hetero)
    data = {"sample": sample.name, "observed": observation_to_dict(obs)}
    if args.json and args.json != "-":
        atomic_write_text(args.json, _dump(data))
    _emit(format_observation(obs), data, args.json)
    return 0


def _cmd_check(args: argparse.Namespace) -> int:
    from verify.pipeline import check, sample_from_flags
    from verify.sample import load_sample

    for target in (args.html, args.json, args.pdf):
        _check_target(target)
    named = [t for t in (args.html, args.json, args.pdf) if t and t != "-"]
    if len({Path(t).expanduser().resolve() for t in named}) < len(named):
        raise UsageError("--html, --json and --pdf name the same file; give each its own")
    if args.pdf:
        from verify.report import find_browser

        if find_browser() is None:
            raise ToolMissingError(
                "--pdf needs a Chromium browser ('chromium' or 'chromium-browser' on PATH); "
                "install one, or drop --pdf and print the HTML report from any browser"
            )
    roles = ("carbon", "dept90", "dept135", "dept45", "apt")
    flagged = {r: getattr(args, r) for r in roles if getattr(args, r)}
    if args.sample:
        if flagged:
            raise UsageError("give either a sample file or spectrum flags, not both")
        sample = load_sample(args.sample)
        structures = list(args.structure)
    else:
        if not flagged:
            raise UsageError("give a sample file, or --carbon (and the DEPT/APT flags) instead")
        if not args.structure and not args.candidates:
            raise UsageError("without a sample file, --structure (or --candidates) is required")
        first = args.structure[0] if args.structure else None
        sample = sample_from_flags(
            structure=first, spectra=flagged, solvent=args.solvent, name=args.name
        )
        structures = list(args.structure[1:])
    result = check(sample, structures=structures, candidates_file=args.candidates)
    data = _check_json(result)
    html = None
    if args.html or args.pdf:
        from verify.report import render_html

        html = render_html(
            result.verdict, sample=result.sample, audit=result.audit, candidates=result.ranked
        )
    # Every output is computed above; only now is anything written.  The PDF goes first:
    # it is the one step that can still fail (the browser), and then nothing is written.
    if html is not None and args.pdf:
        from verify.report import html_to_pdf

        html_to_pdf(html, args.pdf)
    if args.json and args.json != "-":
        atomic_write_text(args.json, _dump(data))
    if html is not None and args.html:
        atomic_write_text(args.html, html)
    _emit(_check_text(result, args), data, args.json)
    return EXIT_CODES[result.verdict.verdict]


def _check_json(result: Any) -> dict[str, Any]:
    from verify.verdict import verdict_to_dict

    v = result.verdict
    data: dict[str, Any] = {
        "sample": result.sample.name if result.sample else None,
        "metadata": dict(result.sample.metadata) if result.sample else {},
    }
    data.update(verdict_to_dict(v))  # verdict, findings, assignment, expected, observed …
    if len(result.verdicts) > 1:
        data["candidates"] = [
            {
                "structure": c.expectation.structure,
                "name": c.expectation.name,
                "verdict": c.verdict,
                "score": c.score,
            }
            for c in result.ranked
        ]
    data["audit"] = result.audit
    return data


def _check_text(result: Any, args: argparse.Namespace) -> str:
    from verify.verdict import format_verdict

    lines = [format_verdict(result.verdict).rstrip("\n")]
    if len(result.verdicts) > 1:
        from verify.verdict import compare_text

        lines.append(compare_text(list(result.ranked)).rstrip("\n"))
    for label, target in (("HTML report", args.html), ("JSON", args.json), ("PDF", args.pdf)):
        if target and target != "-":
            lines.append(f"{label}: {target}")
    return "\n".join(lines) + "\n"


_COMMANDS = {"expect": _cmd_expect, "classify": _cmd_classify, "check": _cmd_check}


def _one_line_warning(
    message: Warning | str,
    category: type[Warning],
    filename: str,
    lineno: int,
    file: Any = None,
    line: str | None = None,
) -> None:
    """Show a warning as ``WarningName: message`` on one line of stderr."""
    text = " ".join(str(message).split())
    sys.stderr.write(f"{category.__name__}: {text}\n")


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``ctally`` command; returns the exit code (see module docstring)."""
    global _out
    shown = warnings.showwarning
    warnings.showwarning = _one_line_warning
    try:
        args = _parser().parse_args(argv)
        with _guard_stdout() as _out:
            return _COMMANDS[args.command](args)
    except CtallyError as exc:
        sys.stderr.write(f"{type(exc).__name__}: {exc}\n")
        return EXIT_BAD_INPUT
    finally:
        _out = None
        warnings.showwarning = shown


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
