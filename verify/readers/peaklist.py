"""Read a carbon peak list from CSV (header ``ppm,intensity`` and optional columns).

Columns, by header name (case and surrounding spaces ignored): ``ppm`` (shift, ppm)
and ``intensity`` (signed height) are required; ``snr``, ``area`` and ``width_hz``
(full width at half height, Hz) are optional; other columns are ignored.  ``#``
starts a comment line.

Noise rule.  A list holds only lines somebody judged to be peaks, so its noise is
unknown.  When an ``snr`` column is present the noise is the median of
``|intensity| / snr``.  Otherwise the weakest listed peak is taken to sit at the
usual detection limit of three times the noise (common practice: limit of detection
= 3σ of the blank), i.e. ``noise = min|intensity| / 3`` and each peak's SNR is
``3·|intensity| / min|intensity|``; the PeakSet's ``threshold_snr`` is then 3.

References
----------
IUPAC Compendium of Chemical Terminology, "limit of detection" (3σ criterion,
common practice).  RFC 4180 (CSV).

"""

from __future__ import annotations

import csv
import io
import math
import os
from pathlib import Path

from verify.errors import InputFileError, SpectrumFormatError, UsageError
from verify.model import EXPERIMENTS, Peak, PeakSet

__all__ = ["DETECTION_SNR", "looks_like_peaklist", "read_peaklist"]

#: SNR assigned to the weakest peak of a list without an ``snr`` column.
DETECTION_SNR = 3.0


def looks_like_peaklist(head: str) -> bool:
    """Tell whether the first non-comment line is a CSV header with ``ppm`` and ``intensity``."""
    for line in head.lstrip("\ufeff").splitlines():
        s = line.strip()
        if not s or s.startswith("#"):
            continue
        cols = [c.strip().lower() for c in s.split(",")]
        return "ppm" in cols and "intensity" in cols
    return False


def read_peaklist(path: str | os.PathLike[str], role: str) -> PeakSet:
    """Read a CSV peak list as the :class:`PeakSet` of one experiment.

    Parameters
    ----------
    path : str or path-like
        The CSV file.
    role : str
        Experiment the list belongs to (one of :data:`verify.model.EXPERIMENTS`).

    Returns
    -------
    PeakSet
        Peaks sorted by descending ppm, ``noise`` by the rule in the module
        docstring, ``spectrum`` None.

    Raises
    ------
    InputFileError
        Missing or empty file.
    SpectrumFormatError
        No ``ppm,intensity`` header, a value that is not a finite number (with its
        line), or no peaks at all.
    UsageError
        Unknown role.

    References
    ----------
    See the module docstring (noise rule).

    """
    p = Path(path)
    if role not in EXPERIMENTS:
        raise UsageError(f"unknown role {role!r}; expected one of {EXPERIMENTS}")
    if not p.is_file():
        raise InputFileError(f"no such file: {p}; check the path", path=p)
    raw = p.read_bytes()
    if not raw.strip():
        raise InputFileError("the peak list is empty", path=p)
    if b"\0" in raw:
        raise SpectrumFormatError("the file is binary, not a CSV peak list", path=p)
    text = raw.decode("utf-8-sig", errors="replace")
    rows = [
        (no, r)
        for no, r in enumerate(csv.reader(io.StringIO(text)), 1)
        if r and any(c.strip() for c in r) and not r[0].lstrip().startswith("#")
    ]
    if not rows:
        raise SpectrumFormatError("the peak list holds no header", path=p)
    head_no, header = rows[0]
    cols = [c.strip().lower() for c in header]
    if "ppm" not in cols or "intensity" not in cols:
        raise SpectrumFormatError(
            f"the header should name the columns ppm,intensity; got {','.join(header)!r}",
            path=p,
            line=head_no,
        )
    idx = {
        name: cols.index(name)
        for name in ("ppm", "intensity", "snr", "area", "width_hz")
        if name in cols
    }
    parsed: list[dict[str, float]] = []
    for no, r in rows[1:]:
        entry: dict[str, float] = {}
        for name, i in idx.items():
            cell = r[i].strip() if i < len(r) else ""
            if not cell and name not in ("ppm", "intensity"):
                continue
            try:
                v = float(cell)
            except ValueError:
                raise SpectrumFormatError(
                    f"column {name} should be a number, got {cell!r}", path=p, line=no
                ) from None
            if not math.isfinite(v):
                raise SpectrumFormatError(f"column {name} is not finite ({cell})", path=p, line=no)
            if name in ("snr", "width_hz") and v < 0:
                raise SpectrumFormatError(
                    f"column {name} cannot be negative ({cell})", path=p, line=no
                )
            entry[name] = v
        parsed.append(entry)
    if not parsed:
        raise SpectrumFormatError("the peak list holds a header but no peaks", path=p)
    heights = [abs(e["intensity"]) for e in parsed]
    with_snr = [abs(e["intensity"]) / e["snr"] for e in parsed if e.get("snr")]
    if with_snr:
        with_snr.sort()
        noise = with_snr[len(with_snr) // 2]
        threshold = 0.0
    else:
        weakest = min(h for h in heights) if any(heights) else 0.0
        noise = weakest / DETECTION_SNR
        threshold = DETECTION_SNR
    peaks = []
    for e in parsed:
        h = e["intensity"]
        snr = e["snr"] if "snr" in e else (abs(h) / noise if noise > 0 else 0.0)
        peaks.append(
            Peak(
                ppm=e["ppm"],
                height=h,
                area=e.get("area", 0.0),
                snr=snr,
                width_hz=e.get("width_hz", 1.0),
            )
        )
    return PeakSet(experiment=role, peaks=tuple(peaks), noise=noise, threshold_snr=threshold)
