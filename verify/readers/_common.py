"""Helpers shared by the readers: nucleus names, pulse programs, file sniffing.

References
----------
Pulse-program names and the experiments they run are the Bruker library names in
common use (``zgpg30``, ``zgdc30``, ``dept135``, ``jmod`` ...); the mapping lives in
``verify/data/pulse_programs.toml`` with its source beside it.

"""

from __future__ import annotations

import os
import re
import tomllib
import warnings
from functools import lru_cache
from pathlib import Path

from verify.errors import CtallyWarning, InputFileError

__all__ = [
    "existing_path",
    "experiment_from_pulse_program",
    "group_delay_points",
    "normalise_nucleus",
]

_NUCLEUS_RE = re.compile(r"\^?\s*(\d+)\s*([A-Za-z]{1,2})|([A-Za-z]{1,2})\s*(\d+)")


def normalise_nucleus(text: str | None) -> str:
    """Write a nucleus as mass number then symbol (``"^13C"``, ``"C13"`` → ``"13C"``).

    Parameters
    ----------
    text : str or None
        Nucleus as a file writes it.

    Returns
    -------
    str
        ``"13C"``-style name, or ``"unknown"`` when nothing is recognisable.

    """
    if not text:
        return "unknown"
    m = _NUCLEUS_RE.search(text.strip().strip("<>"))
    if not m:
        return "unknown"
    if m.group(1):
        mass, sym = m.group(1), m.group(2)
    else:
        mass, sym = m.group(4), m.group(3)
    return f"{int(mass)}{sym[0].upper()}{sym[1:].lower()}"


@lru_cache(maxsize=1)
def _pulse_table() -> tuple[tuple[str, str, str], ...]:
    text = (Path(__file__).resolve().parents[1] / "data" / "pulse_programs.toml").read_text("utf-8")
    rows = tomllib.loads(text)["rule"]
    return tuple((r["match"], r["kind"], r["experiment"]) for r in rows)


def experiment_from_pulse_program(name: str | None) -> str:
    """Experiment a pulse program runs, from its name.

    Parameters
    ----------
    name : str or None
        Pulse-program name as the file gives it (case ignored, ``<>`` stripped).

    Returns
    -------
    str
        One of ``carbon``, ``dept45``, ``dept90``, ``dept135``, ``apt`` or ``unknown``.

    References
    ----------
    ``verify/data/pulse_programs.toml`` (Bruker pulse-program library names,
    common practice).

    """
    if not name:
        return "unknown"
    key = name.strip().strip("<>").strip().lower()
    for pattern, kind, experiment in _pulse_table():
        if kind == "exact" and key == pattern:
            return experiment
        if kind == "prefix" and key.startswith(pattern):
            return experiment
        if kind == "regex" and re.fullmatch(pattern, key):
            return experiment
    return "unknown"


def existing_path(path: str | os.PathLike[str]) -> Path:
    """Return the path as a :class:`Path`, or :class:`InputFileError` when it does not exist."""
    p = Path(path)
    if not p.exists():
        raise InputFileError(f"no such file or folder: {p}; check the path", path=p)
    return p


def group_delay_points(
    decim: float | None,
    dspfvs: float | None,
    grpdly: float | None,
    digmod: float | None = None,
) -> tuple[float, str]:
    """Digital-filter group delay in complex points.

    Parameters
    ----------
    decim, dspfvs, grpdly, digmod : float or None
        Bruker acquisition parameters ``DECIM``, ``DSPFVS``, ``GRPDLY`` and ``DIGMOD``
        (0 = analogue filter: no group delay).

    Returns
    -------
    (float, str)
        The delay and where it came from (``"GRPDLY"``, ``"DSP table"``, ``"none"``).

    References
    ----------
    W. M. Westler, F. Abildgaard, "DMX digital filters and the delay", Bruker
    user note (1996), the table nmrglue ships as ``nmrglue.fileio.bruker.bruker_dsp_table``.

    """
    if digmod is not None and digmod == 0:
        return 0.0, "analogue (DIGMOD 0)"
    if grpdly is not None and grpdly > 0:
        return float(grpdly), "GRPDLY"
    if decim is None or dspfvs is None:
        return 0.0, "none"
    from nmrglue.fileio.bruker import bruker_dsp_table

    table = bruker_dsp_table.get(int(dspfvs))
    if table is None or int(decim) not in table or decim != int(decim):
        warnings.warn(
            f"no digital-filter delay known for DECIM={decim:g}, DSPFVS={dspfvs:g};"
            " the FID is taken as analogue (group delay 0)",
            CtallyWarning,
            stacklevel=3,
        )
        return 0.0, "unknown"
    return float(table[int(decim)]), "DSP table"
