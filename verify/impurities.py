"""Recognise residual solvents and common laboratory impurities among unassigned signals.

A signal left over after the assignment is compared, line by line, with the carbon shifts
*and multiplicities* of each compound in ``verify/data/impurities.toml`` (Gottlieb 1997 and
Fulmer 2010, Table 2, per NMR solvent).  An impurity is reported only when most of its lines
are found, so that "21.0 CH3 + 60.5 CH2 + 171.4 C + 14.2 CH3" becomes "ethyl acetate" rather
than four unexplained peaks, while a lone CH2 at 60.5 ppm does not.

Rules (all in :class:`MatchRules`):

* a line matches a signal within ``tolerance_ppm`` whose multiplicity agrees: the same call,
  a call among the signal's candidates, or no call at all (carbon-only data) — never a
  contradicting call;
* every protonated line must be found (one may be missing when there are four or more), and
  at least half of all lines: quaternary and carbonyl lines may be lost in the noise, as they
  relax slowly and lack the NOE (common practice);
* an impurity found by a single line (dichloromethane, methanol, or acetone without its weak
  carbonyl …) needs that line protonated and exactly called, since a bare shift coincidence
  with one line proves little; the NMR solvent's own C–D multiplet is accepted from its
  grouping pattern instead (and, when the solvent is not known, only from it);
* each signal explains at most one impurity; impurities with more matched lines, then smaller
  shift errors, are taken first (deterministic).

The amount is a rough mole percentage from peak *height per carbon*, protonated lines of the
impurity against the sample's CH and CH3 signals.  Carbon-13 heights depend on relaxation, NOE
and line width, so this is an order of magnitude, not a quantitation (common practice: use the
proton spectrum or quantitative carbon conditions for a number that matters).

References
----------
.. [1] H. E. Gottlieb, V. Kotlyar, A. Nudelman, J. Org. Chem. 1997, 62, 7512-7515 (Table 2).
.. [2] G. R. Fulmer et al., Organometallics 2010, 29, 2176-2179 (Table 2).

"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cache
from importlib import resources
from statistics import median

from verify.errors import UsageError
from verify.model import HYDROGENS, Impurity, Observation, Signal
from verify.reference import canonical_solvent as _shared_canonical

__all__ = [
    "SOLVENTS",
    "ImpurityLine",
    "ImpurityEntry",
    "MatchRules",
    "canonical_solvent",
    "identify",
    "load_table",
]

#: NMR solvents with a column in the table (canonical names).
SOLVENTS: tuple[str, ...] = (
    "CDCl3",
    "acetone-d6",
    "DMSO-d6",
    "C6D6",
    "CD3CN",
    "CD3OD",
    "D2O",
    "CD2Cl2",
)

_SOURCE = "Gottlieb 1997 / Fulmer 2010, Table 2 ({column} column; values from memory)"


def canonical_solvent(name: str | None) -> str | None:
    """Canonical NMR-solvent name for a spelling as files and users write it.

    Uses :func:`verify.reference.canonical_solvent`, so the whole tool agrees on one
    spelling; an unknown name is returned stripped.

    Parameters
    ----------
    name : str or None
        E.g. ``"Chloroform-D1 (CDCl3)"``, ``"dmso"``, ``"Methanol-d4"``.

    Returns
    -------
    str or None
        The shared module's name when it knows the spelling (it may name solvents this
        table has no column for, e.g. ``"THF-d8"``); else one of :data:`SOLVENTS`, the
        input stripped when it is not recognised, or None for None/blank input.

    """
    if name is None or not name.strip():
        return None
    return _shared_canonical(name) or name.strip()


@dataclass(frozen=True)
class ImpurityLine:
    """One carbon line of a table compound.

    Parameters
    ----------
    label : str
        Which carbon (e.g. ``"OCH2"``).
    multiplicity : str
        ``"C"``, ``"CH"``, ``"CH2"`` or ``"CH3"``.
    carbons : int
        Equivalent carbons behind the line.
    shifts : mapping of str to float
        Shift in ppm per canonical NMR solvent.
    source : str
        Where the row comes from.

    """

    label: str
    multiplicity: str
    carbons: int
    shifts: Mapping[str, float]
    source: str


@dataclass(frozen=True)
class ImpurityEntry:
    """A compound of the impurity table.

    Parameters
    ----------
    name : str
        Compound name.
    kind : str
        ``"impurity"`` or ``"nmr-solvent"``.
    lines : tuple of ImpurityLine
        Its carbon lines.
    smiles : str
        Its structure (blank for mixtures such as grease).

    """

    name: str
    kind: str
    lines: tuple[ImpurityLine, ...]
    smiles: str = ""


@dataclass(frozen=True)
class MatchRules:
    """Tolerances of :func:`identify`.

    Parameters
    ----------
    tolerance_ppm : float
        Largest |observed − table| shift in ppm for a line to match.  0.15 ppm: carbon
        shifts of these small molecules move by ~0.1 ppm with concentration and
        temperature once the axis is referenced to the solvent (Gottlieb 1997, text).
    unreferenced_tolerance_ppm : float
        Used instead when the axis was not referenced (method ``"none"``/``"file"``):
        a file's own reference may be off by a few tenths of a ppm.
    other_solvent_tolerance_ppm : float
        Used when the NMR solvent has no column or is unknown: the CDCl3 values are
        used, and medium effects on carbon shifts are mostly below 0.5 ppm but reach
        ~1-2 ppm for polar groups (compare the columns of Gottlieb 1997), so matches
        made this way are tentative.
    common_offset_ppm : float
        A compound whose lines all sit off the table by one common amount up to this
        (ppm) still matches when each line keeps within the line tolerance of that
        common offset: a concentrated or differently referenced sample moves every line
        of a small molecule together (a measured 1-(4-fluorophenyl)ethylamine sample in
        CDCl3 shows its toluene lines 0.3 ppm low once the axis is set on the solvent).
    common_offset_lines : int
        Lines that must be found before a common offset is accepted; a pattern of three
        lines or more moving together is hard to meet by chance, a single line is not.

    """

    tolerance_ppm: float = 0.15
    unreferenced_tolerance_ppm: float = 0.3
    other_solvent_tolerance_ppm: float = 0.5
    common_offset_ppm: float = 0.5
    common_offset_lines: int = 3


@cache
def load_table() -> tuple[ImpurityEntry, ...]:
    """Read ``verify/data/impurities.toml``.

    Returns
    -------
    tuple of ImpurityEntry
        In file order.

    References
    ----------
    .. [1] Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512 (Table 2).
    .. [2] Fulmer et al., Organometallics 2010, 29, 2176 (Table 2).

    """
    text = resources.files("verify").joinpath("data", "impurities.toml").read_text("utf-8")
    data = tomllib.loads(text)
    entries = []
    for raw in data["impurity"]:
        lines = []
        for row in raw["carbons"]:
            shifts = {k: float(v) for k, v in row.items() if k in SOLVENTS}
            lines.append(
                ImpurityLine(
                    label=str(row["label"]),
                    multiplicity=str(row["mult"]),
                    carbons=int(row["n"]),
                    shifts=shifts,
                    source=str(row["source"]),
                )
            )
        entries.append(
            ImpurityEntry(
                name=str(raw["name"]),
                kind=str(raw.get("kind", "impurity")),
                lines=tuple(lines),
                smiles=str(raw.get("smiles", "")),
            )
        )
    return tuple(entries)


def _compatible(line: ImpurityLine, sig: Signal) -> bool:
    if sig.multiplicity is None and not sig.candidates:
        return True  # no information (carbon-only data)
    if sig.multiplicity == line.multiplicity:
        return True
    return line.multiplicity in sig.candidates


def _exact(line: ImpurityLine, sig: Signal, kind: str) -> bool:
    if kind == "nmr-solvent" and sig.pattern in ("solvent", "C-D"):
        return True
    return sig.multiplicity == line.multiplicity


def _required(lines: Sequence[ImpurityLine], found: Sequence[bool]) -> bool:
    protonated = [f for ln, f in zip(lines, found, strict=True) if HYDROGENS[ln.multiplicity] > 0]
    allowed_missing = 1 if len(protonated) >= 4 else 0
    if protonated and sum(protonated) < len(protonated) - allowed_missing:
        return False
    return sum(found) >= max(1, math.ceil(len(lines) / 2))


def _match_shifted(
    entry: ImpurityEntry,
    column: str,
    tol: float,
    signals: Sequence[Signal],
    free: Sequence[int],
    rules: MatchRules,
) -> tuple[list[int | None], float] | None:
    """Match with one common offset of all lines (see ``MatchRules.common_offset_ppm``).

    Every compatible (line, signal) pair within the offset window proposes an offset;
    the one that matches most lines, then with the smallest residual error, is kept.
    """
    lines = [ln for ln in entry.lines if column in ln.shifts]
    if len(lines) < rules.common_offset_lines:
        return None
    offsets = sorted(
        {
            round(signals[i].ppm - ln.shifts[column], 3)
            for ln in lines
            for i in free
            if abs(signals[i].ppm - ln.shifts[column]) <= rules.common_offset_ppm
            and _compatible(ln, signals[i])
        }
    )
    best: tuple[int, float, list[int | None]] | None = None
    for off in offsets:
        got = _match_entry(entry, column, tol, signals, free, offset=off)
        if got is None:
            continue
        picks, err = got
        found = sum(p is not None for p in picks)
        if found < rules.common_offset_lines:
            continue
        if best is None or (-found, err) < (-best[0], best[1]):
            best = (found, err, picks)
    return None if best is None else (best[2], best[1] + 1.0)  # shifted matches rank later


def _match_entry(
    entry: ImpurityEntry,
    column: str,
    tol: float,
    signals: Sequence[Signal],
    free: Sequence[int],
    *,
    offset: float = 0.0,
) -> tuple[list[int | None], float] | None:
    """Best line → signal matching of one compound, or None when it is not there.

    `offset` (ppm) is added to every table shift before comparing.
    """
    lines = [ln for ln in entry.lines if column in ln.shifts]
    if not lines:
        return None
    picks: list[int | None] = []
    used: set[int] = set()
    err = 0.0
    for ln in lines:
        best: tuple[float, int] | None = None
        for i in free:
            if i in used:
                continue
            d = abs(signals[i].ppm - ln.shifts[column] - offset)
            if d <= tol and _compatible(ln, signals[i]) and (best is None or (d, i) < best):
                best = (d, i)
        if best is None:
            picks.append(None)
        else:
            picks.append(best[1])
            used.add(best[1])
            err += best[0]
    found = [p is not None for p in picks]
    if not _required(lines, found):
        return None
    if sum(found) == 1:
        # One line proves little: it must be protonated (or the solvent's own multiplet)
        # and carry exactly the table's multiplicity.
        ln, p = next((ln, p) for ln, p in zip(lines, picks, strict=True) if p is not None)
        if not _exact(ln, signals[p], entry.kind):
            return None
        if entry.kind != "nmr-solvent" and HYDROGENS[ln.multiplicity] == 0:
            return None
    # Re-key picks on the full line list (lines absent from this column get None).
    full: list[int | None] = []
    it = iter(picks)
    for ln in entry.lines:
        full.append(next(it) if column in ln.shifts else None)
    return full, err


def _sample_height_per_carbon(
    obs: Observation, excluded: set[int], sample_carbons: Mapping[int, int] | None
) -> float | None:
    for wanted in (("CH", "CH3"), ("CH2",), ("C", "CH", "CH2", "CH3", None)):
        vals = []
        for i, s in enumerate(obs.signals):
            if i in excluded or s.role != "sample" or s.height <= 0:
                continue
            if s.multiplicity in wanted:
                n = (sample_carbons or {}).get(i, s.carbons)
                vals.append(s.height / max(1, n))
        if vals:
            return float(median(vals))
    return None


def identify(
    observation: Observation,
    unassigned: Sequence[int],
    solvent: str | None,
    *,
    rules: MatchRules | None = None,
    sample_carbons: Mapping[int, int] | None = None,
) -> tuple[Impurity, ...]:
    """Explain unassigned signals as residual solvents or laboratory impurities.

    Parameters
    ----------
    observation : Observation
        The classified signals (shifts in ppm on the referenced axis).
    unassigned : sequence of int
        Indices into ``observation.signals`` left over by the assignment.
    solvent : str or None
        NMR solvent as written anywhere (normalised by :func:`canonical_solvent`).
        Unknown or untabulated solvents use the CDCl3 column with a wider tolerance.
    rules : MatchRules, optional
        Tolerances in ppm; defaults as documented there.
    sample_carbons : mapping of int to int, optional
        Carbons behind each assigned sample signal (from the assignment), for the
        height-per-carbon reference; default each signal's own ``carbons``.

    Returns
    -------
    tuple of Impurity
        Recognised compounds, the NMR solvent's own signal included (with
        ``mol_percent`` None); ordered by descending amount.

    Raises
    ------
    UsageError
        When an index is outside ``observation.signals``.

    References
    ----------
    .. [1] Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512 (Table 2).
    .. [2] Fulmer et al., Organometallics 2010, 29, 2176 (Table 2).

    """
    rules = rules or MatchRules()
    n = len(observation.signals)
    for i in unassigned:
        if not 0 <= i < n:
            raise UsageError(
                f"unassigned signal index {i} is outside the observation's {n} signals; "
                "pass indices into Observation.signals"
            )
    canon = canonical_solvent(solvent)
    if canon in SOLVENTS and canon != "CD2Cl2":
        column = canon
        ref_method = observation.referencing.method
        tol = (
            rules.unreferenced_tolerance_ppm
            if ref_method in ("none", "file")
            else rules.tolerance_ppm
        )
        tentative = False
    else:
        column, tol, tentative = "CDCl3", rules.other_solvent_tolerance_ppm, True
    signals = observation.signals
    free = sorted(set(unassigned))

    candidates: list[tuple[int, float, int, ImpurityEntry, list[int | None]]] = []
    for order, entry in enumerate(load_table()):
        if entry.kind == "nmr-solvent":
            # The solvent actually used; when it is not known, any NMR solvent whose own
            # signal shows as a C-D multiplet (grouping pattern) at its shift.
            if canon in SOLVENTS:
                if entry.name != f"NMR solvent ({canon})":
                    continue
                got = _match_entry(entry, canon, rules.tolerance_ppm * 2, signals, free)
            else:
                col = next(iter(entry.lines[0].shifts))
                patterned = [i for i in free if signals[i].pattern in ("solvent", "C-D")]
                got = _match_entry(entry, col, rules.tolerance_ppm * 2, signals, patterned)
        else:
            got = _match_entry(entry, column, tol, signals, free)
            if got is None:
                got = _match_shifted(entry, column, tol, signals, free, rules)
        if got is not None:
            picks, err = got
            found = sum(p is not None for p in picks)
            candidates.append((-found, err, order, entry, picks))
    candidates.sort(key=lambda c: (c[0], c[1], c[2]))

    taken: set[int] = set()
    chosen: list[tuple[ImpurityEntry, list[int | None]]] = []
    for _, _, _, entry, picks in candidates:
        idx = [p for p in picks if p is not None]
        if taken.intersection(idx):
            continue  # a signal explains one compound only (the better one came first)
        taken.update(idx)
        chosen.append((entry, picks))

    ref = _sample_height_per_carbon(observation, set(free), sample_carbons)
    ratios: list[float | None] = []
    for entry, picks in chosen:
        per_c = [
            signals[p].height / ln.carbons
            for ln, p in zip(entry.lines, picks, strict=True)
            if p is not None and HYDROGENS[ln.multiplicity] > 0 and signals[p].height > 0
        ]
        if entry.kind == "nmr-solvent" or ref is None or not per_c:
            ratios.append(None)
        else:
            ratios.append(float(median(per_c)) / ref)
    total = 1.0 + sum(r for r in ratios if r is not None)
    out = []
    for (entry, picks), r in zip(chosen, ratios, strict=True):
        src = _SOURCE.format(column=column)
        if tentative:
            src += f"; tentative: NMR solvent {canon or 'unknown'} has no column of its own"
        out.append(
            Impurity(
                name=entry.name,
                signals=tuple(sorted(p for p in picks if p is not None)),
                mol_percent=None if r is None else round(100.0 * r / total, 1),
                source=src,
            )
        )
    out.sort(key=lambda imp: (-(imp.mol_percent or 0.0), imp.name))
    return tuple(out)
