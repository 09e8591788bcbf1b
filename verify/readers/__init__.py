"""Read spectra in: JCAMP-DX, raw-data folders and CSV peak lists, told apart by content.

:func:`read_any` looks at what a path holds, not at its name:

* a folder with ``acqus`` and ``fid`` (or a file inside one) → raw FID
  (:func:`~verify.readers.rawdir.read_rawdir`); a ``pdata/N`` folder (or its ``1r``),
  or an experiment folder without ``fid`` but with ``pdata/1/1r`` → the processed
  spectrum; a folder holding exactly one such experiment folder → that one;
* text whose first record is ``##TITLE=`` or ``##JCAMP-DX=`` → JCAMP-DX
  (:func:`~verify.readers.jcamp.read_jcamp`);
* text whose first line is a CSV header naming ``ppm`` and ``intensity`` → peak list
  (:func:`~verify.readers.peaklist.read_peaklist`).

With a ``role`` the result is checked for that role: the nucleus must be 13C (a file
that names none is taken as 13C with a warning), and
the experiment becomes the role (the sample file wins); when the pulse program
clearly says another experiment (a DEPT-135 file given as ``carbon``) a
:class:`~verify.errors.CtallyWarning` says so.
"""

from __future__ import annotations

import os
import re
import warnings
from dataclasses import replace
from pathlib import Path

from verify.errors import CtallyWarning, InputFileError, SpectrumFormatError, UsageError
from verify.model import EXPERIMENTS, Fid, PeakSet, Spectrum
from verify.readers._common import existing_path
from verify.readers.jcamp import read_jcamp, write_jcamp
from verify.readers.peaklist import looks_like_peaklist, read_peaklist
from verify.readers.rawdir import is_rawdir, read_rawdir

__all__ = ["read_any", "read_jcamp", "read_peaklist", "read_rawdir", "sniff", "write_jcamp"]

_JCAMP_HEAD = re.compile(r"^\s*##\s*(TITLE|JCAMP[-_ ]?DX)\s*=", re.IGNORECASE | re.MULTILINE)


def sniff(path: str | os.PathLike[str]) -> tuple[str, Path]:
    """Tell what a path holds: ``"rawdir"``, ``"pdata"``, ``"jcamp"`` or ``"peaklist"``.

    Returns
    -------
    (str, Path)
        The kind and the path to read it from (the experiment folder for a file
        inside one, or the single experiment folder inside a folder).

    Raises
    ------
    InputFileError
        Missing or empty file, or a folder that is no raw-data folder.
    SpectrumFormatError
        A file of no known format (binary or other text).

    """
    p = existing_path(path)
    if p.is_dir():
        if is_rawdir(p):
            return "rawdir", p
        if (p / "1r").is_file() and p.name.isdigit() and (p.parent.parent / "acqus").is_file():
            return "pdata", p
        if (p / "acqus").is_file() and (p / "pdata" / "1" / "1r").is_file():
            return "pdata", p / "pdata" / "1"  # processed data only, no fid
        inner = sorted(q for q in p.iterdir() if is_rawdir(q))
        if len(inner) == 1:
            return "rawdir", inner[0]
        if inner:
            names = ", ".join(q.name for q in inner)
            raise InputFileError(
                f"the folder holds several experiments ({names}); name one of them", path=p
            )
        raise InputFileError("the folder is not a raw-data folder (no acqus beside a fid)", path=p)
    if p.name in ("fid", "acqus", "acqu") and is_rawdir(p.parent):
        return "rawdir", p.parent
    if (
        p.name in ("1r", "procs", "proc")
        and p.parent.name.isdigit()
        and (p.parent.parent.parent / "acqus").is_file()
    ):
        return "pdata", p.parent
    try:
        with p.open("rb") as fh:
            head = fh.read(8192)
    except OSError as exc:
        raise InputFileError(f"cannot read {p}: {exc.strerror}", path=p) from exc
    if not head.strip():
        raise InputFileError("the file is empty", path=p)
    if b"\0" in head:
        raise SpectrumFormatError(
            "the file is binary and not inside a raw-data folder; give the folder that"
            " holds acqus and fid, or a JCAMP-DX export",
            path=p,
        )
    text = head.removeprefix(b"\xef\xbb\xbf").decode("latin-1")
    first = next((ln.strip() for ln in text.splitlines() if ln.strip()), "")
    if first.startswith("##") and _JCAMP_HEAD.search(text):
        return "jcamp", p
    if looks_like_peaklist(text):
        return "peaklist", p
    raise SpectrumFormatError(
        "unknown format: not JCAMP-DX (##TITLE=), a raw-data folder, or a CSV peak"
        " list (header ppm,intensity)",
        path=p,
    )


def _experiment_agrees(role: str, found: str) -> bool:
    return found in ("unknown", role)


def read_any(path: str | os.PathLike[str], *, role: str | None = None) -> Spectrum | Fid | PeakSet:
    """Read whatever spectrum file or folder `path` is, told apart by content.

    Parameters
    ----------
    path : str or path-like
        JCAMP-DX file, raw-data folder (or its ``fid``/``acqus``, or a ``pdata/N``
        folder), or CSV peak list.
    role : str, optional
        Experiment role in the sample (one of :data:`verify.model.EXPERIMENTS`).
        When given, the nucleus is checked and the result's experiment set to it.

    Returns
    -------
    Spectrum, Fid or PeakSet
        As read (a CSV list without a role is taken as ``carbon``).

    Raises
    ------
    InputFileError
        Missing or empty file; a spectrum of another nucleus for a carbon role.
    SpectrumFormatError
        Unknown or broken format (see the readers).
    UsageError
        Unknown role.

    """
    if role is not None and role not in EXPERIMENTS:
        raise UsageError(f"unknown role {role!r}; expected one of {EXPERIMENTS}")
    kind, p = sniff(path)
    obj: Spectrum | Fid | PeakSet
    if kind == "peaklist":
        return read_peaklist(p, role or "carbon")
    if kind == "jcamp":
        obj = read_jcamp(p)
    elif kind == "pdata":
        obj = read_rawdir(p.parent.parent, processed=True, procno=int(p.name))
    else:
        obj = read_rawdir(p)
    if role is None:
        return obj
    if obj.nucleus == "unknown":
        warnings.warn(
            f"{p.name} names no observed nucleus; it is taken as 13C for the {role} role",
            CtallyWarning,
            stacklevel=2,
        )
        obj = replace(obj, nucleus="13C")
    if obj.nucleus != "13C":
        raise InputFileError(
            f"the {role} role needs a 13C spectrum but the file is {obj.nucleus}"
            " (its observe nucleus); give the carbon-13 file",
            path=p,
        )
    if not _experiment_agrees(role, obj.experiment):
        warnings.warn(
            f"{p.name}: its pulse program {obj.pulse_program!r} runs {obj.experiment}, but the"
            f" sample gives it as {role}; it is read as {role}",
            CtallyWarning,
            stacklevel=2,
        )
    prov = dict(obj.provenance)
    prov["experiment_from_file"] = obj.experiment
    return replace(obj, experiment=role, provenance=prov)
