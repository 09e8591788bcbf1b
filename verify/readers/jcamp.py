"""Read and write JCAMP-DX 1D NMR files (spectra and FIDs), checking what they promise.

Reading
-------
Labelled data records (``##LABEL=value``) are parsed line by line; labels are compared
after removing spaces, ``-``, ``/`` and ``_`` and upper-casing, as the standard asks.
``$$`` starts a comment anywhere, including at the end of a data line.  Two data
classes are read:

* ``XYDATA`` with ``(X++(Y..Y))`` and ``XYPOINTS``/``PEAK TABLE`` with ``(XY..XY)``;
* ``NTUPLES`` (``NMR SPECTRUM`` or ``NMR FID``), one ``##PAGE=`` per variable, each
  ``##DATA TABLE= (X++(R..R)), XYDATA`` (real) or ``(X++(I..I))`` (imaginary).

Ordinates may be AFFN, PAC, or ASDF (SQZ ``@A-Ia-i``, DIF ``%J-Rj-r``, DUP
``S-Zs``), mixed freely.  The decoder is vectorised: a data block becomes one string
in which every token starts with its marker character; ``str.translate`` turns the
markers into digits so numpy parses all values at once, and the Y values are the
cumulative sums of the DIF runs (exact in int64 for integer data).  Everything the
file promises is checked and a failure is refused with the line number:

* every DIF Y-checkpoint (a line that ends in DIF form must be followed by a line
  whose first ordinate repeats that last value);
* the number of decoded points against ``NPOINTS`` / ``VAR_DIM``;
* each line's abscissa against ``FIRSTX + i·DELTAX`` (tolerance half a point plus
  half the abscissa's written resolution ``XFACTOR``);
* a header count above :data:`MAX_POINTS` is refused before any decoding, and DUP
  expansion is bounded by the declared count, so a hostile header cannot make the
  reader allocate (no ``MemoryError``).

The ppm axis of a spectrum with ``XUNITS=HZ`` is built from ``##.SHIFT REFERENCE``
(point number, shift) when present, else from Bruker's ``##$OFFSET`` (shift of the
first point), dividing Hz by ``##$SF`` when present (Bruker's ppm↔Hz factor, the
reference frequency) and by ``##.OBSERVE FREQUENCY`` otherwise.  When both
references are present and disagree by more than 0.01 ppm a :class:`CtallyWarning`
is raised and the standard label wins.

Measured against nmrglue 0.12 (``nmrglue.jcampdx.read``) on the shared files, best of
three runs on the shared 2-core machine (under load, so absolute times are noisy):
16k-point XYDATA 0.02 s vs 0.06–0.08 s; 64k NTUPLES (two pages) 0.16–0.20 s vs
0.57–0.66 s; 131k NTUPLES 0.11–0.27 s vs 0.63–1.32 s; 262k NTUPLES 0.32–0.65 s vs
1.6–3.0 s; 32k FID 0.03–0.06 s vs 0.18–0.30 s — 3 to 6 times faster
(``benchmarks/bench_read.py`` prints the per-file table).  Both decode identical
ordinates on every shared file.  nmrglue checks nothing the file promises, and fails
on real-world variants: with a trailing ``$$`` comment on one data line it returned a
single value instead of 1000; with a missing DIF checkpoint (a line that starts at the
next point) it silently returned 7 of 8 values, every later one off by the lost
difference (10 12 15 19 25 32 40 instead of ... 24 30 37 45).  Its ppm axis from
``guess_udic``/``uc_from_udic`` ignores ``.SHIFT REFERENCE``/``$OFFSET`` (carrier left at
its 999.99 placeholder: estragole/13c.dx came out 89.41 … −73.50 ppm instead of
181.87 … 18.93).  This module is therefore used instead of nmrglue for JCAMP-DX;
nmrglue serves as the outside reference in the tests.  The axis built here puts the
lines of every shared spectrum where a plain FFT of the matching FID (carrier
``(SFO1 − SF)/SF``) puts them, within 0.1 point (median); the instrument's embedded
peak lists sit a constant half point lower (their own convention).

Writing
-------
:func:`write_jcamp` writes a :class:`~verify.model.Spectrum` (XYDATA or NTUPLES) or a
:class:`~verify.model.Fid` (always NTUPLES: a complex FID needs two pages) in any of
the forms AFFN, PAC, SQZ, SQZDUP (DUP with SQZ), DIF and DIFDUP, lines at most 80
characters, atomically (temporary file, then :func:`os.replace`).

References
----------
R. S. McDonald, P. A. Wilks, *Appl. Spectrosc.* 1988, 42, 151 (JCAMP-DX core, ASDF
compression, Y-checkpoints).  A. N. Davies, P. Lampen, *Appl. Spectrosc.* 1993, 47,
1093 (JCAMP-DX for NMR: ``.OBSERVE FREQUENCY``, ``.SHIFT REFERENCE``, NTUPLES).
Bruker's ``$OFFSET``/``$SF``/``$SW_p`` processing parameters: TopSpin parameter
documentation, common practice.

"""

from __future__ import annotations

import math
import os
import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from verify._files import atomic_write_text
from verify.errors import CtallyWarning, InputFileError, SpectrumFormatError, UsageError
from verify.model import Fid, Spectrum
from verify.readers._common import (
    experiment_from_pulse_program,
    group_delay_points,
    normalise_nucleus,
)

__all__ = ["FORMS", "MAX_POINTS", "MAX_POINTS_PER_BYTE", "read_jcamp", "write_jcamp"]

#: Compression forms :func:`write_jcamp` can write.
FORMS: tuple[str, ...] = ("AFFN", "PAC", "SQZ", "SQZDUP", "DIF", "DIFDUP")
_FORM_ALIASES = {"DUP": "SQZDUP", "DUPSQZ": "SQZDUP", "SQZDUP": "SQZDUP", "DUPDIF": "DIFDUP"}
#: Largest point count accepted from a header (2**26; 1D NMR data hold at most ~2**20).
MAX_POINTS: int = 1 << 26
#: Most points a header may promise per byte of file (DUP of a flat line compresses well).
MAX_POINTS_PER_BYTE: int = 1000

# --------------------------------------------------------------------------- parsing


def _norm(label: str) -> str:
    return re.sub(r"[\s\-/_]", "", label).upper()


def _strip_comment(value: str) -> str:
    i = value.find("$$")
    return (value if i < 0 else value[:i]).strip()


@dataclass
class _Table:
    """One block of data lines (``##XYDATA=``, ``##DATA TABLE=``, ``##XYPOINTS=``)."""

    label: str
    spec: str
    line: int
    page: dict[str, tuple[str, int]]
    lines: list[str] = field(default_factory=list)
    linenos: list[int] = field(default_factory=list)


@dataclass
class _Block:
    labels: dict[str, tuple[str, int]] = field(default_factory=dict)
    tables: list[_Table] = field(default_factory=list)
    ended: bool = False
    size: int = 0  # bytes of the whole file, to bound what a header may promise


_DATA_LABELS = {"XYDATA", "DATATABLE", "XYPOINTS", "PEAKTABLE"}


def _parse(text: str, path: Path) -> list[_Block]:
    """Split the file into blocks of labelled records and data tables."""
    blocks: list[_Block] = []
    block: _Block | None = None
    table: _Table | None = None
    page: dict[str, tuple[str, int]] | None = None
    last_label: str | None = None
    for no, raw in enumerate(text.splitlines(), 1):
        if raw.startswith("##"):
            table = None
            label, eq, value = raw[2:].partition("=")
            key = _norm(label)
            if not eq:
                continue  # a "##" line without "=" is not a record; ignore like a comment
            value = _strip_comment(value)
            if key == "TITLE" and (block is None or block.ended or block.tables):
                block = _Block()
                blocks.append(block)
                page = None
            if block is None:
                block = _Block()
                blocks.append(block)
            if key == "END":
                block.ended = True
                last_label = None
                continue
            if key == "PAGE":
                page = {"PAGE": (value, no)}
                last_label = None
                continue
            if key == "ENDNTUPLES":
                page = None
                continue
            if key in _DATA_LABELS:
                table = _Table(key, value, no, dict(page or {}))
                block.tables.append(table)
                last_label = None
                continue
            if page is not None:
                page[key] = (value, no)
            block.labels.setdefault(key, (value, no))
            last_label = key if block.labels[key][1] == no else None
        elif table is not None:
            table.lines.append(raw)
            table.linenos.append(no)
        elif last_label is not None and block is not None:
            s = raw.strip()
            if s and not s.startswith("$$"):
                v, n = block.labels[last_label]
                block.labels[last_label] = ((v + " " + _strip_comment(s)).strip(), n)
    return blocks


# --------------------------------------------------------------------------- decoding

_X_RE = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]\d+)?")
_X_NUM_RE = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_BAD_CHAR_RE = re.compile(r"[^0-9@%A-Za-s+\-.\s,]")
# ASDF letters other than E/e: with none of them, an E/e is an exponent (AFFN)
_ASDF_RE = re.compile(r"[@%A-DF-Za-df-s]")
_SPACE_MAP = str.maketrans(
    {c: " " + c for c in "@%ABCDEFGHIabcdefghiJKLMNOPQRjklmnopqrSTUVWXYZs+-"}
)
_BARE_FIND_RE = re.compile(r"(?<!\S)[\d.]")
_BARE_RE = re.compile(r"(?<!\S)(?=[\d.])")
_PAC_SPLIT_RE = re.compile(r"(?<![eE])(?=[+-])")

_VAL_MAP = str.maketrans(
    {
        **{c: str(i) for i, c in enumerate("@ABCDEFGHI")},
        **{c: "-" + str(i + 1) for i, c in enumerate("abcdefghi")},
        "%": "0",
        **{c: str(i + 1) for i, c in enumerate("JKLMNOPQR")},
        **{c: "-" + str(i + 1) for i, c in enumerate("jklmnopqr")},
        **{c: str(i + 1) for i, c in enumerate("STUVWXYZs")},
    }
)
_MARK_MAP = str.maketrans("", "", "0123456789.")
# marker byte → kind: 0 absolute (SQZ/PAC/AFFN), 1 DIF, 2 DUP
_KIND = np.full(256, -1, dtype=np.int8)
for _c in "@ABCDEFGHIabcdefghi+-":
    _KIND[ord(_c)] = 0
for _c in "%JKLMNOPQRjklmnopqr":
    _KIND[ord(_c)] = 1
for _c in "STUVWXYZs":
    _KIND[ord(_c)] = 2


@dataclass
class _Decoded:
    y: npt.NDArray[np.float64]
    x_line: npt.NDArray[np.float64]  # abscissa written at the start of each line (file units)
    first_index: npt.NDArray[np.int64]  # index in y of each line's first ordinate
    linenos: list[int]
    checkpoints: int
    forms: tuple[str, ...]


def _line_of(text: str, pos: int, linenos: list[int]) -> int:
    return linenos[min(text.count("\n", 0, pos), len(linenos) - 1)]


# byte classes for the fast tokenizer
_C_BAD, _C_WS, _C_NL, _C_DIG, _C_SQZP, _C_SQZN, _C_DIFP, _C_DIFN, _C_DUP, _C_PLUS, _C_MINUS = range(
    11
)
_CLASS = np.zeros(256, dtype=np.int8)
_LEAD = np.zeros(256, dtype=np.int64)
for _c in " \t\r\f,":
    _CLASS[ord(_c)] = _C_WS
_CLASS[10] = _C_NL
for _i, _c in enumerate("0123456789"):
    _CLASS[ord(_c)], _LEAD[ord(_c)] = _C_DIG, _i
for _table_chars, _cls, _off in (
    ("@ABCDEFGHI", _C_SQZP, 0),
    ("abcdefghi", _C_SQZN, 1),
    ("%JKLMNOPQR", _C_DIFP, 0),
    ("jklmnopqr", _C_DIFN, 1),
    ("STUVWXYZs", _C_DUP, 1),
):
    for _i, _c in enumerate(_table_chars):
        _CLASS[ord(_c)], _LEAD[ord(_c)] = _cls, _i + _off
_CLASS[ord("+")], _CLASS[ord("-")] = _C_PLUS, _C_MINUS
_P10 = 10.0 ** np.arange(23)
_COMMENT_RE = re.compile(r"\$\$[^\n]*")


@dataclass
class _Tokens:
    x: npt.NDArray[np.float64]  # abscissa per data line
    vals: npt.NDArray[np.float64]  # ordinate tokens
    kind: npt.NDArray[np.int64]  # 0 absolute, 1 DIF, 2 DUP
    line: npt.NDArray[np.int64]  # index into `linenos` per token
    linenos: list[int]  # file line number per data line
    forms: tuple[str, ...]  # compression forms seen among the ordinates


def _tokens_fast(table: _Table, path: Path) -> _Tokens | None:
    """Tokenise integer ASDF/PAC/AFFN data with numpy on bytes; None when not applicable.

    Every token starts at a marker byte (SQZ, DIF, DUP, sign) or at a digit after a
    separator; its value is its lead digit times a power of ten plus its remaining
    digits, summed with :func:`numpy.bincount`.  Data with decimal points or
    exponents go to the string path.
    """
    text = "\n".join(table.lines)
    if "$$" in text:
        text = _COMMENT_RE.sub("", text)
    if "." in text or ("E+" in text or "E-" in text or "e+" in text or "e-" in text):
        return None  # decimals or exponents: the string path reads them
    b = np.frombuffer(text.encode("latin-1"), dtype=np.uint8)
    cls = _CLASS[b]
    bad = np.flatnonzero(cls == _C_BAD)
    if bad.size:
        pos = int(bad[0])
        raise SpectrumFormatError(
            f"character {chr(b[pos])!r} is not allowed in JCAMP-DX data",
            path=path,
            line=table.linenos[int(np.count_nonzero(cls[:pos] == _C_NL))],
        )
    is_e = (b == 69) | (b == 101)
    if np.any(is_e) and not np.any((cls >= _C_SQZP) & (cls <= _C_DUP) & ~is_e):
        return None  # only E/e among the letters: exponents, read by the string path
    is_dig = cls == _C_DIG
    sep_before = np.empty(b.size, dtype=bool)
    sep_before[0] = True
    sep_before[1:] = cls[:-1] <= _C_NL
    is_start = (cls > _C_DIG) | (is_dig & sep_before)
    starts = np.flatnonzero(is_start)
    if starts.size == 0:
        return None
    tok = np.cumsum(is_start) - 1
    dpos = np.flatnonzero(is_dig)
    dtok = tok[dpos]
    ntok = starts.size
    ndig = np.bincount(dtok, minlength=ntok)
    if ndig.max(initial=0) > 15:
        return None
    rank = np.arange(dpos.size) - (np.cumsum(ndig) - ndig)[dtok]
    mag = np.bincount(
        dtok, weights=_LEAD[b[dpos]] * _P10[ndig[dtok] - 1 - rank], minlength=ntok
    ).astype(np.float64)
    scls = cls[starts]
    lead = _LEAD[b[starts]]
    vals = mag.copy()
    letter = (scls >= _C_SQZP) & (scls <= _C_DUP)
    vals[letter] += lead[letter] * _P10[ndig[letter]]
    neg = (scls == _C_SQZN) | (scls == _C_DIFN) | (scls == _C_MINUS)
    vals[neg] = -vals[neg]
    sign_only = ((scls == _C_PLUS) | (scls == _C_MINUS)) & (ndig == 0)
    lines_all = np.searchsorted(np.flatnonzero(cls == _C_NL), starts)
    if np.any(sign_only):
        k = int(np.flatnonzero(sign_only)[0])
        raise SpectrumFormatError(
            "a sign without digits in the data", path=path, line=table.linenos[int(lines_all[k])]
        )
    kind = np.zeros(ntok, dtype=np.int64)
    kind[(scls == _C_DIFP) | (scls == _C_DIFN)] = 1
    kind[scls == _C_DUP] = 2
    is_x = np.empty(ntok, dtype=bool)
    is_x[0] = True
    is_x[1:] = lines_all[1:] != lines_all[:-1]
    xk = np.flatnonzero(is_x)
    if np.any(letter[xk]):
        k = int(xk[np.flatnonzero(letter[xk])[0]])
        raise SpectrumFormatError(
            "data line does not start with an abscissa (it starts with a compressed value)",
            path=path,
            line=table.linenos[int(lines_all[k])],
        )
    file_lines = lines_all[xk]
    linenos = [table.linenos[int(i)] for i in file_lines]
    line_index = np.cumsum(is_x) - 1
    y = ~is_x
    ycls = scls[y]
    forms = tuple(
        name
        for name, hit in (
            ("AFFN", np.any(ycls == _C_DIG)),
            ("PAC", np.any((ycls == _C_PLUS) | (ycls == _C_MINUS))),
            ("SQZ", np.any((ycls == _C_SQZP) | (ycls == _C_SQZN))),
            ("DIF", np.any(kind[y] == 1)),
            ("DUP", np.any(kind[y] == 2)),
        )
        if hit
    )
    return _Tokens(vals[xk], vals[y], kind[y], line_index[y], linenos, forms)


def _tokens_slow(table: _Table, path: Path, *, force_asdf: bool = False) -> _Tokens:
    """Tokenise any data (decimals, exponents) with regular expressions, line by line.

    Without ASDF letters other than E/e, an E/e is read as an exponent (AFFN); with
    ``force_asdf`` it is read as SQZ 5 (the caller retries so when the AFFN reading
    fails, as for SQZ data whose values all start with a 5).
    """
    xs: list[str] = []
    rests: list[str] = []
    linenos: list[int] = []
    stripped = [_strip_comment(raw) for raw in table.lines]
    asdf = force_asdf or any(_ASDF_RE.search(s) for s in stripped)
    x_re = _X_RE if asdf else _X_NUM_RE  # without ASDF letters 1.5E3 is an exponent
    for no, s in zip(table.linenos, stripped, strict=True):
        if not s:
            continue
        m = x_re.match(s)
        if m is None:
            raise SpectrumFormatError(
                f"data line does not start with an abscissa: {s[:24]!r}", path=path, line=no
            )
        xs.append(m.group(0))
        rests.append(s[m.end() :].replace(",", " "))
        linenos.append(no)
    if not linenos:
        raise SpectrumFormatError(
            "the data table holds no data lines; the file is truncated or empty",
            path=path,
            line=table.line,
        )
    ytext = "\n".join(rests)
    bad = _BAD_CHAR_RE.search(ytext)
    if bad:
        raise SpectrumFormatError(
            f"character {bad.group(0)!r} is not allowed in JCAMP-DX data",
            path=path,
            line=_line_of(ytext, bad.start(), linenos),
        )
    nlines = len(linenos)
    if asdf:
        spaced = ytext.translate(_SPACE_MAP)
        if _BARE_FIND_RE.search(spaced):
            spaced = _BARE_RE.sub("+", spaced)
        marks = np.frombuffer(spaced.translate(_MARK_MAP).encode("latin-1"), dtype=np.uint8)
        values_text = spaced.translate(_VAL_MAP)
        is_nl = marks == 10
        is_tok = (marks != 32) & ~is_nl & (marks != 9) & (marks != 13)
        kind = _KIND[marks[is_tok]].astype(np.int64)
        line_of_tok = np.cumsum(is_nl)[is_tok]
    else:
        spaced = _PAC_SPLIT_RE.sub(" ", ytext)
        values_text = spaced
        counts = [len(r.split()) for r in spaced.split("\n")]
        kind = np.zeros(sum(counts), dtype=np.int64)
        line_of_tok = np.repeat(np.arange(nlines), counts)
    try:
        vals = np.array(values_text.split(), dtype=np.float64)
    except ValueError:
        for i, r in enumerate(values_text.split("\n")):
            try:
                np.array(r.split(), dtype=np.float64)
            except ValueError:
                raise SpectrumFormatError(
                    f"cannot read the ordinates {rests[i][:30]!r}", path=path, line=linenos[i]
                ) from None
        raise SpectrumFormatError("cannot read the ordinates", path=path, line=table.line) from None
    if vals.size != kind.size:
        raise SpectrumFormatError(
            "the data could not be split into values", path=path, line=table.line
        )
    return _Tokens(
        np.array(xs, dtype=np.float64),
        vals,
        kind,
        line_of_tok.astype(np.int64),
        linenos,
        _forms_seen(kind, ytext, asdf),
    )


def _decode_xy(table: _Table, path: Path, limit: int) -> _Decoded:
    """Decode an ``(X++(Y..Y))`` block, verifying checkpoints; abscissae are returned."""
    toks = _tokens_fast(table, path)
    if toks is not None:
        return _assemble(toks, table, path, limit)
    try:
        return _assemble(_tokens_slow(table, path), table, path, limit)
    except SpectrumFormatError:
        if not any(("E" in s or "e" in s) for s in table.lines):
            raise
        return _assemble(_tokens_slow(table, path, force_asdf=True), table, path, limit)


def _assemble(toks: _Tokens, table: _Table, path: Path, limit: int) -> _Decoded:
    """Expand DUP, add up DIF runs and verify the Y-checkpoints of tokenised data."""
    vals, kind, line_of_tok, linenos = toks.vals, toks.kind, toks.line, toks.linenos
    nlines = len(linenos)
    if vals.size == 0:
        raise SpectrumFormatError("the data table holds no values", path=path, line=table.line)
    forms = toks.forms
    # each line must start with an absolute value
    starts = np.flatnonzero(np.r_[True, line_of_tok[1:] != line_of_tok[:-1]])
    lines_with_tokens = line_of_tok[starts]
    if lines_with_tokens.size != nlines:
        empty = sorted(set(range(nlines)) - set(lines_with_tokens.tolist()))[0]
        raise SpectrumFormatError(
            "data line holds an abscissa but no ordinate", path=path, line=linenos[empty]
        )
    bad_start = np.flatnonzero(kind[starts] != 0)
    if bad_start.size:
        k = int(bad_start[0])
        what = "a difference (DIF)" if kind[starts[k]] == 1 else "a repeat count (DUP)"
        raise SpectrumFormatError(
            f"data line starts with {what} instead of a value", path=path, line=linenos[k]
        )
    # DUP: the preceding token occurs `count` times in all
    dup = np.flatnonzero(kind == 2)
    if dup.size:
        if np.any(kind[dup - 1] == 2):
            k = int(line_of_tok[dup[np.flatnonzero(kind[dup - 1] == 2)[0]]])
            raise SpectrumFormatError(
                "two repeat counts (DUP) in a row", path=path, line=linenos[k]
            )
        counts_dup = vals[dup]
        if np.any(counts_dup < 1) or np.any(counts_dup != np.round(counts_dup)):
            k = int(line_of_tok[dup[0]])
            raise SpectrumFormatError(
                "a repeat count (DUP) is not a whole number ≥ 1", path=path, line=linenos[k]
            )
        rep = np.ones(vals.size, dtype=np.int64)
        rep[dup - 1] = counts_dup.astype(np.int64)
        keep = kind != 2
        total = int(rep[keep].sum())
        if total > limit + nlines:
            raise SpectrumFormatError(
                f"repeat counts expand the data to {total} values, more than the header"
                f" allows ({limit})",
                path=path,
                line=table.line,
            )
        vals = np.repeat(vals[keep], rep[keep])
        kind = np.repeat(kind[keep], rep[keep])
        line_of_tok = np.repeat(line_of_tok[keep], rep[keep])
        starts = np.flatnonzero(np.r_[True, line_of_tok[1:] != line_of_tok[:-1]])
    elif vals.size > limit + nlines:
        raise SpectrumFormatError(
            f"the data hold {vals.size} values, more than the header allows ({limit})",
            path=path,
            line=table.line,
        )
    # Y: absolute values start segments; DIF values add up within a segment
    is_abs = kind == 0
    integral = bool(np.all(vals == np.round(vals))) and float(np.max(np.abs(vals))) < 2.0**52 / max(
        vals.size, 1
    )
    work: npt.NDArray[Any] = vals.astype(np.int64) if integral else vals
    csum = np.cumsum(work)
    seg_start = np.flatnonzero(is_abs)
    seg_id = np.cumsum(is_abs) - 1
    base = csum[seg_start] - work[seg_start]
    y_all = csum - base[seg_id]
    # Y-checkpoints: a line ending in DIF form is followed by its last value
    ends = np.r_[starts[1:] - 1, vals.size - 1]
    need = np.flatnonzero(kind[ends[:-1]] == 1)  # line indices i whose successor repeats
    prev_last = y_all[ends[need]]
    next_first = y_all[starts[need + 1]]
    if integral:
        ok = prev_last == next_first
    else:
        ok = np.isclose(prev_last, next_first, rtol=1e-9, atol=1e-9)
    if not np.all(ok):
        i = int(need[np.flatnonzero(~ok)[0]])
        raise SpectrumFormatError(
            f"Y-checkpoint failed: line {linenos[i]} ends in DIF form with {prev_last[~ok][0]:.12g}"
            f" but the next line starts with {next_first[~ok][0]:.12g} (a value or a checkpoint is"
            " missing or corrupt)",
            path=path,
            line=linenos[i + 1],
        )
    keep_mask = np.ones(vals.size, dtype=bool)
    keep_mask[starts[need + 1]] = False
    y = y_all[keep_mask].astype(np.float64)
    first_index = (np.cumsum(keep_mask)[starts] - 1).astype(np.int64)
    # a line whose first value was dropped starts at the previous line's last index
    first_index[need + 1] = np.cumsum(keep_mask)[starts[need + 1]] - 1
    return _Decoded(y, toks.x, first_index, linenos, int(need.size), forms)


def _forms_seen(kind: npt.NDArray[np.int64], ytext: str, asdf: bool) -> tuple[str, ...]:
    hits = (
        ("AFFN", re.search(r"(?<!\S)[\d.]", ytext) is not None),
        ("PAC", re.search(r"(?<![eE])[+-]", ytext) is not None),
        ("SQZ", asdf and re.search(r"[@A-Ia-i]", ytext) is not None),
        ("DIF", bool(np.any(kind == 1))),
        ("DUP", bool(np.any(kind == 2))),
    )
    return tuple(name for name, hit in hits if hit)


def _decode_points(table: _Table, path: Path) -> tuple[npt.NDArray[np.float64], ...]:
    """Decode an ``(XY..XY)`` block of AFFN pairs into x and y arrays."""
    text = "\n".join(_strip_comment(r) for r in table.lines)
    tokens = re.split(r"[\s,;]+", text.strip())
    try:
        vals = np.array([t for t in tokens if t], dtype=np.float64)
    except ValueError as exc:
        raise SpectrumFormatError(
            f"cannot read the (XY..XY) pairs: {exc}", path=path, line=table.line
        ) from None
    if vals.size % 2 or vals.size < 4:
        raise SpectrumFormatError(
            f"(XY..XY) data hold {vals.size} numbers, not an even count of at least 4",
            path=path,
            line=table.line,
        )
    return vals[0::2].copy(), vals[1::2].copy()


# --------------------------------------------------------------------------- header values


def _num(labels: dict[str, tuple[str, int]], key: str, path: Path) -> float | None:
    if key not in labels:
        return None
    text, no = labels[key]
    text = text.strip().strip("<>").strip()
    if not text:
        return None
    try:
        value = float(text.split()[0].rstrip(","))
    except ValueError:
        raise SpectrumFormatError(
            f"##{key}= should be a number, got {text[:30]!r}", path=path, line=no
        ) from None
    if not math.isfinite(value):
        raise SpectrumFormatError(
            f"##{key}= should be a finite number, got {text[:30]!r}", path=path, line=no
        )
    return value


def _text(labels: dict[str, tuple[str, int]], key: str) -> str | None:
    if key not in labels:
        return None
    v = labels[key][0].strip().strip("<>").strip()
    return v or None


def _columns(labels: dict[str, tuple[str, int]], key: str) -> list[str]:
    if key not in labels:
        return []
    return [c.strip() for c in labels[key][0].split(",")]


def _col_num(labels: dict[str, tuple[str, int]], key: str, col: int, path: Path) -> float | None:
    cols = _columns(labels, key)
    if col >= len(cols) or not cols[col]:
        return None
    try:
        value = float(cols[col])
    except ValueError:
        value = math.nan
    if not math.isfinite(value):
        raise SpectrumFormatError(
            f"##{key}= column {col + 1} should be a finite number, got {cols[col]!r}",
            path=path,
            line=labels[key][1],
        )
    return value


_PROVENANCE_KEYS = (
    "$DECIM",
    "$DSPFVS",
    "$GRPDLY",
    "$TD",
    "$SWH",
    "$SWP",
    "$LB",
    "$GB",
    "$PHC0",
    "$PHC1",
    "$SI",
    "$OFFSET",
    "$SF",
    "$SFO1",
    "$BF1",
    "$O1",
    "$NS",
    "$DS",
    "$RG",
    "$WDW",
    "$BYTORDA",
    "$DTYPA",
    "$NCPROC",
    "$FTSIZE",
    "$SR",
    "$STSR",
    "$STSI",
)
_PROVENANCE_NAMES = {"$SWH": "SW_h", "$SWP": "SW_p", "$NCPROC": "NC_proc"}


def _params(labels: dict[str, tuple[str, int]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key in _PROVENANCE_KEYS:
        if key in labels:
            raw = labels[key][0].strip()
            name = _PROVENANCE_NAMES.get(key, key[1:])
            try:
                out[name] = float(raw.split()[0]) if raw else None
            except ValueError:
                out[name] = raw
    return out


# --------------------------------------------------------------------------- reading


def _read_text(path: Path) -> str:
    if not path.exists():
        raise InputFileError(f"no such file: {path}; check the path", path=path)
    if path.is_dir():
        raise InputFileError(f"{path} is a folder, not a JCAMP-DX file", path=path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputFileError(f"cannot read {path}: {exc.strerror}", path=path) from exc
    if not data.strip():
        raise InputFileError("the file is empty; export the spectrum again", path=path)
    head = data[:65536]
    binary = (
        head.count(b"\0") > 0
        or sum(head.count(bytes([c])) for c in range(1, 32) if c not in (9, 10, 12, 13))
        > len(head) // 100
    )
    if binary:
        raise SpectrumFormatError(
            "the file is binary, not JCAMP-DX text (a raw FID is read from its folder)",
            path=path,
        )
    if data.startswith(b"\xef\xbb\xbf"):  # a UTF-8 byte-order mark
        data = data[3:]
    return data.decode("latin-1")


def _pick_block(blocks: list[_Block], path: Path) -> _Block:
    if not blocks or not any(b.labels for b in blocks):
        raise SpectrumFormatError(
            "no JCAMP-DX labelled records (##TITLE=, ##JCAMP-DX=) found", path=path
        )
    with_data = [b for b in blocks if b.tables]
    if not with_data:
        raise SpectrumFormatError(
            "the file holds no data table (##XYDATA= or ##DATA TABLE=); it is truncated"
            " or holds only parameters",
            path=path,
        )
    for b in with_data:
        dtype = (_text(b.labels, "DATATYPE") or "").upper()
        if "NMR" in dtype or "$SFO1" in b.labels or ".OBSERVEFREQUENCY" in b.labels:
            return b
    dtype = _text(with_data[0].labels, "DATATYPE") or "unknown"
    raise SpectrumFormatError(
        f"not an NMR file: ##DATA TYPE= {dtype}",
        path=path,
        line=with_data[0].labels.get("DATATYPE", ("", None))[1],
    )


def read_jcamp(path: str | os.PathLike[str]) -> Spectrum | Fid:
    """Read a JCAMP-DX 1D NMR spectrum or FID.

    Parameters
    ----------
    path : str or path-like
        The ``.dx``/``.jdx`` file.

    Returns
    -------
    Spectrum or Fid
        A :class:`Spectrum` (ppm axis in the file's order, real intensities) for
        ``NMR SPECTRUM`` data, a :class:`Fid` (complex points as written, dwell time
        in s, observe frequency in MHz, carrier in ppm, group delay in complex points)
        for ``NMR FID`` data.  ``provenance`` holds the format, compression forms,
        checkpoints verified, how the axis was made, and the acquisition and
        processing parameters found.

    Raises
    ------
    InputFileError
        Missing or empty file.
    SpectrumFormatError
        Binary or non-JCAMP content, a non-NMR or 2D file, a failed Y-checkpoint, a
        point count that disagrees with NPOINTS/VAR_DIM, an abscissa off its place,
        an absurd header count — each with the line number.

    References
    ----------
    McDonald & Wilks 1988; Davies & Lampen 1993 (see the module docstring).

    """
    p = Path(path)
    text = _read_text(p)
    blocks = _parse(text, p)
    block = _pick_block(blocks, p)
    labels = block.labels
    dclass = (_text(labels, "DATACLASS") or "").upper()
    dtype = (_text(labels, "DATATYPE") or "").upper()
    block.size = len(text)
    if "NTUPLES" in labels or dclass.startswith("NTUPLES"):
        return _read_ntuples(block, p, dtype)
    return _read_xydata(block, p, dtype)


def _check_count(
    count: float | None,
    key: str,
    labels: dict[str, tuple[str, int]],
    path: Path,
    size: int = 0,
) -> int | None:
    """Validate a header point count before anything is allocated from it.

    The count must be a whole number ≥ 2, at most :data:`MAX_POINTS`, and at most
    :data:`MAX_POINTS_PER_BYTE` times the file size (DUP compression of a flat line
    is the only way to beat one character per point).
    """
    if count is None:
        return None
    if count != int(count) or count < 2:
        raise SpectrumFormatError(
            f"##{key}= {count:g} is not a point count ≥ 2",
            path=path,
            line=labels.get(key, ("", None))[1],
        )
    if count > MAX_POINTS:
        raise SpectrumFormatError(
            f"##{key}= {int(count)} is absurdly large (more than {MAX_POINTS} points);"
            " the header is corrupt",
            path=path,
            line=labels.get(key, ("", None))[1],
        )
    if size and count > MAX_POINTS_PER_BYTE * size:
        raise SpectrumFormatError(
            f"##{key}= {int(count)} points cannot fit in a file of {size} bytes; the header"
            " is corrupt or the file truncated",
            path=path,
            line=labels.get(key, ("", None))[1],
        )
    return int(count)


def _x_check(dec: _Decoded, first: float, delta: float, xfactor: float, path: Path) -> None:
    """Each line's abscissa must sit where its first ordinate belongs."""
    expected = first + dec.first_index * delta
    actual = dec.x_line * xfactor
    tol = 0.5 * abs(delta) + 0.5 * abs(xfactor) * 1.000001 + 1e-9 * abs(first)
    off = np.abs(actual - expected) > tol
    if np.any(off):
        i = int(np.flatnonzero(off)[0])
        raise SpectrumFormatError(
            f"the line starts at x = {actual[i]:.6g} but its first value is point"
            f" {int(dec.first_index[i]) + 1}, at x = {expected[i]:.6g}: points are missing"
            " or extra",
            path=path,
            line=dec.linenos[i],
        )


def _abscissa_step(
    dec: _Decoded,
    labels: dict[str, tuple[str, int]],
    firstx: float,
    lastx: float | None,
    deltax: float | None,
    n: int,
    xfactor: float,
    path: Path,
) -> float:
    """Abscissa step of an XYDATA table, checked against every line's abscissa.

    ``(LASTX − FIRSTX)/(NPOINTS − 1)`` is preferred; when ``DELTAX`` disagrees, the
    one that the data lines' own abscissae confirm is used and a warning names the
    other.
    """
    if lastx is None and deltax is None:
        raise SpectrumFormatError(
            "neither ##LASTX= nor ##DELTAX= is given", path=path, line=labels["FIRSTX"][1]
        )
    if lastx is None or deltax is None:
        delta = (lastx - firstx) / (n - 1) if lastx is not None else float(deltax or 0.0)
        _x_check(dec, firstx, delta, xfactor, path)
        return delta
    from_last = (lastx - firstx) / (n - 1)
    if math.isclose(from_last, deltax, rel_tol=1e-5, abs_tol=1e-12):
        _x_check(dec, firstx, from_last, xfactor, path)
        return from_last
    try:
        _x_check(dec, firstx, from_last, xfactor, path)
        used, other = from_last, f"##DELTAX= {deltax:g}"
    except SpectrumFormatError:
        _x_check(dec, firstx, deltax, xfactor, path)  # raises when neither fits
        used, other = deltax, f"##LASTX= {lastx:g}"
    warnings.warn(
        f"{path.name}: {other} disagrees with the other axis labels and the data lines;"
        f" the step {used:g} that the lines confirm is used",
        CtallyWarning,
        stacklevel=4,
    )
    return used


def _read_xydata(block: _Block, path: Path, dtype: str) -> Spectrum | Fid:
    labels = block.labels
    usable = [t for t in block.tables if t.label in ("XYDATA", "XYPOINTS")]
    if not usable:
        raise SpectrumFormatError(
            "the file holds only a peak table, not a spectrum; export the spectrum, or give"
            " the peaks as a CSV peak list (ppm,intensity)",
            path=path,
            line=block.tables[0].line,
        )
    table = next((t for t in usable if t.label == "XYDATA"), usable[0])
    if "FID" in dtype:
        raise SpectrumFormatError(
            "an NMR FID needs real and imaginary parts (NTUPLES); this XYDATA file has one",
            path=path,
            line=table.line,
        )
    npoints = _check_count(_num(labels, "NPOINTS", path), "NPOINTS", labels, path, block.size)
    yfactor = _num(labels, "YFACTOR", path) or 1.0
    xfactor = _num(labels, "XFACTOR", path) or 1.0
    xunits = (_text(labels, "XUNITS") or "HZ").upper()
    params: dict[str, Any] = {"format": "JCAMP-DX", "data_class": "XYDATA"}
    if table.label in ("XYPOINTS", "PEAKTABLE") or "XY..XY" in table.spec.replace(" ", ""):
        x, y = _decode_points(table, path)
        x = x * xfactor
        y = y * yfactor
        if npoints is not None and npoints != x.size:
            raise SpectrumFormatError(
                f"NPOINTS says {npoints} but the data hold {x.size} pairs",
                path=path,
                line=labels["NPOINTS"][1],
            )
        params["compression"] = ("AFFN",)
    else:
        limit = npoints if npoints is not None else MAX_POINTS
        dec = _decode_xy(table, path, limit)
        n = dec.y.size
        if npoints is not None and n != npoints:
            raise SpectrumFormatError(
                f"NPOINTS says {npoints} but the data hold {n} values",
                path=path,
                line=labels["NPOINTS"][1],
            )
        firstx = _num(labels, "FIRSTX", path)
        lastx = _num(labels, "LASTX", path)
        deltax = _num(labels, "DELTAX", path)
        if firstx is None:
            raise SpectrumFormatError("##FIRSTX= is missing", path=path, line=table.line)
        delta = _abscissa_step(dec, labels, firstx, lastx, deltax, n, xfactor, path)
        x = np.asarray(firstx + np.arange(n) * delta, dtype=np.float64)
        y = dec.y * yfactor
        _check_first_last(y, _num(labels, "FIRSTY", path), None, labels, "FIRSTY", path)
        params.update(compression=dec.forms, checkpoints_verified=dec.checkpoints)
    return _spectrum(labels, path, x, y, xunits, params)


def _check_first_last(
    y: npt.NDArray[np.float64],
    first: float | None,
    last: float | None,
    labels: dict[str, tuple[str, int]],
    key: str,
    path: Path,
) -> None:
    tol = 1e-6 * float(np.max(np.abs(y))) + 1e-9
    for promised, got, what in ((first, y[0], "first"), (last, y[-1], "last")):
        if promised is not None and abs(promised - got) > tol + 1e-6 * abs(promised):
            warnings.warn(
                f"{path.name}: the header gives the {what} ordinate as {promised:g} but the"
                f" data decode to {got:g} (##{key}=, line {labels.get(key, ('', '?'))[1]})",
                CtallyWarning,
                stacklevel=4,
            )


def _read_ntuples(block: _Block, path: Path, dtype: str) -> Spectrum | Fid:
    labels = block.labels
    symbols = [s.upper() for s in _columns(labels, "SYMBOL")]
    names = [s.upper() for s in _columns(labels, "VARNAME")]
    if not symbols:
        raise SpectrumFormatError("NTUPLES without ##SYMBOL=", path=path)
    if any("FREQUENCY1" in n or "FREQUENCY2" in n for n in names) or any(
        re.search(r"F1\s*=", t.page.get("PAGE", ("", 0))[0]) for t in block.tables
    ):
        raise SpectrumFormatError(
            "this is a 2D data set; ctally reads 1D spectra and FIDs only", path=path
        )
    ntname = (_text(labels, "NTUPLES") or "").upper()
    is_fid = "FID" in dtype or "FID" in ntname
    xcol = next((i for i, s in enumerate(symbols) if s == "X"), 0)
    pages: dict[str, npt.NDArray[np.float64]] = {}
    forms: set[str] = set()
    checkpoints = 0
    x: npt.NDArray[np.float64] | None = None
    for table in block.tables:
        m = re.match(r"\(\s*(\w+)\s*\+\+\s*\(\s*(\w+)\s*\.\.\s*\w+\s*\)\s*\)", table.spec.strip())
        if not m:
            raise SpectrumFormatError(
                f"unsupported data table form {table.spec!r}; expected (X++(R..R))",
                path=path,
                line=table.line,
            )
        sym = m.group(2).upper()
        if sym not in symbols:
            raise SpectrumFormatError(
                f"data table variable {sym} is not in ##SYMBOL=", path=path, line=table.line
            )
        col = symbols.index(sym)
        dim = _check_count(
            _col_num(labels, "VARDIM", col, path), "VARDIM", labels, path, block.size
        )
        page_np = _check_count(
            _num(table.page, "NPOINTS", path), "NPOINTS", table.page, path, block.size
        )
        if dim is None and page_np is None:
            raise SpectrumFormatError("##VAR_DIM= is missing", path=path, line=table.line)
        npts = page_np if page_np is not None else dim
        assert npts is not None
        dec = _decode_xy(table, path, npts)
        if dec.y.size != npts:
            key, src = ("NPOINTS", table.page) if page_np is not None else ("VARDIM", labels)
            raise SpectrumFormatError(
                f"{'NPOINTS' if key == 'NPOINTS' else 'VAR_DIM'} says {npts} but page"
                f" {sym} holds {dec.y.size} values",
                path=path,
                line=src[key][1],
            )
        xf = _col_num(labels, "FACTOR", xcol, path) or 1.0
        x0 = _col_num(labels, "FIRST", xcol, path)
        x1 = _col_num(labels, "LAST", xcol, path)
        if x0 is None or x1 is None:
            raise SpectrumFormatError(
                "##FIRST=/##LAST= of the abscissa are missing", path=path, line=table.line
            )
        delta = (x1 - x0) / (npts - 1)
        _x_check(dec, x0, delta, xf, path)
        yf = _col_num(labels, "FACTOR", col, path) or 1.0
        y = dec.y * yf
        _check_first_last(
            y,
            _col_num(labels, "FIRST", col, path),
            _col_num(labels, "LAST", col, path),
            labels,
            "FIRST",
            path,
        )
        pages[sym] = y
        x = np.asarray(x0 + np.arange(npts) * delta, dtype=np.float64)
        forms.update(dec.forms)
        checkpoints += dec.checkpoints
    assert x is not None
    real_sym = next((s for s, n in zip(symbols, names, strict=False) if "REAL" in n), "R")
    imag_sym = next((s for s, n in zip(symbols, names, strict=False) if "IMAG" in n), "I")
    if real_sym not in pages:
        raise SpectrumFormatError("no real page (SYMBOL R) in the NTUPLES", path=path)
    units = [u.upper() for u in _columns(labels, "UNITS")]
    xunits = units[xcol] if xcol < len(units) else "HZ"
    params: dict[str, Any] = {
        "format": "JCAMP-DX",
        "data_class": "NTUPLES",
        "compression": tuple(sorted(forms)),
        "checkpoints_verified": checkpoints,
    }
    if is_fid:
        if imag_sym not in pages:
            raise SpectrumFormatError("an FID needs an imaginary page (SYMBOL I)", path=path)
        if pages[imag_sym].size != pages[real_sym].size:
            raise SpectrumFormatError(
                f"real and imaginary pages differ in length ({pages[real_sym].size} vs"
                f" {pages[imag_sym].size})",
                path=path,
            )
        if xunits and not xunits.startswith(("SEC", "S", "TIME")):
            raise SpectrumFormatError(
                f"an FID needs a time axis, got UNITS {xunits}",
                path=path,
                line=labels.get("UNITS", ("", None))[1],
            )
        return _fid(labels, path, pages[real_sym] + 1j * pages[imag_sym], x, params)
    return _spectrum(labels, path, x, pages[real_sym], xunits, params)


def _common_fields(labels: dict[str, tuple[str, int]]) -> dict[str, Any]:
    nucleus = normalise_nucleus(_text(labels, ".OBSERVENUCLEUS") or _text(labels, "$NUC1"))
    pulse = _text(labels, ".PULSESEQUENCE") or _text(labels, "$PULPROG")
    solvent = _text(labels, ".SOLVENTNAME") or _text(labels, "$SOLVENT")
    return {
        "nucleus": nucleus,
        "pulse_program": pulse,
        "solvent": solvent,
        "experiment": experiment_from_pulse_program(pulse),
    }


def _shift_reference(labels: dict[str, tuple[str, int]], path: Path) -> tuple[int, float] | None:
    if ".SHIFTREFERENCE" not in labels:
        return None
    value, no = labels[".SHIFTREFERENCE"]
    parts = [p.strip() for p in value.strip("()").split(",")]
    if len(parts) < 2:
        raise SpectrumFormatError(f"cannot read ##.SHIFT REFERENCE= {value!r}", path=path, line=no)
    try:
        return int(float(parts[-2])), float(parts[-1])
    except ValueError:
        raise SpectrumFormatError(
            f"##.SHIFT REFERENCE= {value!r} should end with point number, shift",
            path=path,
            line=no,
        ) from None


def _spectrum(
    labels: dict[str, tuple[str, int]],
    path: Path,
    x: npt.NDArray[np.float64],
    y: npt.NDArray[np.float64],
    xunits: str,
    params: dict[str, Any],
) -> Spectrum:
    fields = _common_fields(labels)
    obs = _num(labels, ".OBSERVEFREQUENCY", path)
    sf = _num(labels, "$SF", path)
    factor = sf if sf else obs
    params.update(_params(labels))
    params["jcamp_version"] = _text(labels, "JCAMPDX")
    if xunits.startswith("PPM"):
        ppm = x.astype(np.float64)
        params["axis"] = "XUNITS=PPM"
    elif xunits.startswith("HZ"):
        if not factor:
            raise SpectrumFormatError(
                "the axis is in Hz but the file gives no observe frequency (##.OBSERVE FREQUENCY=)",
                path=path,
            )
        ref = _shift_reference(labels, path)
        offset = _num(labels, "$OFFSET", path)
        via_offset = offset + (x - x[0]) / factor if offset is not None else None
        if ref is not None:
            point, shift = ref
            if not 1 <= point <= x.size:
                raise SpectrumFormatError(
                    f"##.SHIFT REFERENCE= names point {point}, outside 1..{x.size}",
                    path=path,
                    line=labels[".SHIFTREFERENCE"][1],
                )
            ppm = shift + (x - x[point - 1]) / factor
            params["axis"] = f"SHIFT REFERENCE point {point} = {shift} ppm, Hz / {factor} MHz"
            if via_offset is not None and abs(via_offset[0] - ppm[0]) > 0.01:
                warnings.warn(
                    f"{path.name}: ##.SHIFT REFERENCE= puts the first point at {ppm[0]:.4f}"
                    f" ppm but ##$OFFSET= at {offset:.4f} ppm; the standard label is used",
                    CtallyWarning,
                    stacklevel=3,
                )
        elif via_offset is not None:
            ppm = via_offset
            params["axis"] = f"$OFFSET {offset} ppm at point 1, Hz / {factor} MHz"
        else:
            ppm = x / factor
            params["axis"] = f"Hz / {factor} MHz (no shift reference in the file)"
        params["ppm_per_hz_factor_mhz"] = factor
    else:
        raise SpectrumFormatError(
            f"unsupported x units {xunits!r}; expected HZ or PPM",
            path=path,
            line=labels.get("XUNITS", ("", None))[1],
        )
    observe = obs or sf or 100.0
    try:
        return Spectrum(
            ppm=ppm,
            intensity=y,
            observe_mhz=float(factor or observe),
            source=path,
            provenance=params,
            **fields,
        )
    except ValueError as exc:
        raise SpectrumFormatError(f"the decoded spectrum is unusable: {exc}", path=path) from None


def _fid(
    labels: dict[str, tuple[str, int]],
    path: Path,
    data: npt.NDArray[np.complex128],
    t: npt.NDArray[np.float64],
    params: dict[str, Any],
) -> Fid:
    fields = _common_fields(labels)
    params.update(_params(labels))
    params["jcamp_version"] = _text(labels, "JCAMPDX")
    sw = _num(labels, "$SWH", path)
    dwell = 1.0 / sw if sw else float(t[1] - t[0])
    if sw and not math.isclose(dwell, float(t[1] - t[0]), rel_tol=1e-3):
        warnings.warn(
            f"{path.name}: SW_h gives a dwell of {dwell:.6g} s but the time axis steps"
            f" {t[1] - t[0]:.6g} s; SW_h is used",
            CtallyWarning,
            stacklevel=3,
        )
    sfo1 = _num(labels, "$SFO1", path) or _num(labels, ".OBSERVEFREQUENCY", path)
    if not sfo1:
        raise SpectrumFormatError(
            "the FID gives no observe frequency (##.OBSERVE FREQUENCY=)", path=path
        )
    sf = _num(labels, "$SF", path) or _num(labels, "$BF1", path)
    if sf:
        carrier = (sfo1 - sf) * 1e6 / sf
        params["carrier"] = "(SFO1 - SF) / SF"
    else:
        ref = _shift_reference(labels, path)
        carrier = 100.0
        params["carrier"] = "assumed 100 ppm"
        warnings.warn(
            f"{path.name}: no reference frequency ($SF/$BF1); the spectral centre is taken"
            f" as {carrier} ppm and must be fixed by solvent referencing",
            CtallyWarning,
            stacklevel=3,
        )
        del ref
    gd, gd_src = group_delay_points(
        _num(labels, "$DECIM", path),
        _num(labels, "$DSPFVS", path),
        _num(labels, "$GRPDLY", path),
        _num(labels, "$DIGMOD", path),
    )
    params["group_delay_source"] = gd_src
    try:
        return Fid(
            data=data,
            dwell_s=dwell,
            observe_mhz=sfo1,
            carrier_ppm=carrier,
            group_delay=gd,
            source=path,
            provenance=params,
            **fields,
        )
    except ValueError as exc:
        raise SpectrumFormatError(f"the decoded FID is unusable: {exc}", path=path) from None


# --------------------------------------------------------------------------- writing

_SQZ_POS = "@ABCDEFGHI"
_SQZ_NEG = "@abcdefghi"
_DIF_POS = "%JKLMNOPQR"
_DIF_NEG = "%jklmnopqr"
_DUP = "STUVWXYZs"
_LINE = 80


def _sqz(v: int) -> str:
    s = str(abs(v))
    return (_SQZ_NEG if v < 0 else _SQZ_POS)[int(s[0])] + s[1:]


def _dif(v: int) -> str:
    s = str(abs(v))
    return (_DIF_NEG if v < 0 else _DIF_POS)[int(s[0])] + s[1:]


def _dup(n: int) -> str:
    s = str(n)
    return _DUP[int(s[0]) - 1] + s[1:]


def _f(v: float) -> str:
    return repr(float(v))


def _fmt_x(v: float) -> str:
    r = round(v)
    return str(int(r)) if abs(v - r) < 1e-9 else repr(float(v))


def _encode(values: list[int], xs: list[float], form: str) -> list[str]:
    """Encode the data lines of one ``(X++(Y..Y))`` table; ``xs[i]`` is the abscissa of point i."""
    lines: list[str] = []
    n = len(values)
    if form in ("AFFN", "PAC", "SQZ", "SQZDUP"):
        i = 0
        while i < n:
            line = _fmt_x(xs[i])
            j = i
            while j < n:
                v = values[j]
                run = 1
                if form == "SQZDUP":
                    while j + run < n and values[j + run] == v:
                        run += 1
                if form == "AFFN":
                    tok = " " + str(v)
                elif form == "PAC":
                    tok = ("+" if v >= 0 else "-") + str(abs(v))
                else:
                    tok = _sqz(v) + (_dup(run) if run > 1 else "")
                if len(line) + len(tok) > _LINE and j > i:
                    break
                line += tok
                j += run
            lines.append(line)
            i = j
        return lines
    # DIF forms: a line starts with SQZ, then differences; a line ending in DIF form
    # is followed by its last value again (the Y-checkpoint).
    i = 0
    while i < n:
        line = _fmt_x(xs[i]) + _sqz(values[i])
        j = i + 1
        last_dif = False
        while j < n:
            d = values[j] - values[j - 1]
            run = 1
            if form == "DIFDUP":
                while j + run < n and values[j + run] - values[j + run - 1] == d:
                    run += 1
            tok = _dif(d) + (_dup(run) if run > 1 else "")
            if len(line) + len(tok) > _LINE:
                if run > 1:  # try a shorter run that fits
                    while (
                        run > 1
                        and len(line) + len(_dif(d) + (_dup(run) if run > 1 else "")) > _LINE
                    ):
                        run //= 2
                    tok = _dif(d) + (_dup(run) if run > 1 else "")
                    if len(line) + len(tok) > _LINE:
                        break
                else:
                    break
            line += tok
            j += run
            last_dif = True
        lines.append(line)
        if last_dif:
            i = j - 1  # checkpoint: the next line repeats the last value
            if j >= n:
                lines.append(_fmt_x(xs[n - 1]) + _sqz(values[n - 1]))
                break
        else:
            i = j
    return lines


def _scale(arrays: list[npt.NDArray[Any]]) -> tuple[float, list[list[int]]]:
    allv = np.concatenate([np.asarray(a, dtype=np.float64) for a in arrays])
    big = float(np.max(np.abs(allv))) if allv.size else 0.0
    if np.all(allv == np.round(allv)) and big < 2.0**53:
        factor = 1.0
    else:
        factor = big / 2.0**30 if big > 0 else 1.0
    return factor, [
        [int(v) for v in np.round(np.asarray(a, dtype=np.float64) / factor)] for a in arrays
    ]


def _even_axis(ppm: npt.NDArray[np.float64]) -> float:
    step = (ppm[-1] - ppm[0]) / (ppm.size - 1)
    if not np.allclose(np.diff(ppm), step, rtol=1e-6, atol=abs(step) * 1e-6):
        raise UsageError("write_jcamp needs an evenly spaced ppm axis")
    return float(step)


def write_jcamp(
    obj: Spectrum | Fid,
    path: str | os.PathLike[str],
    *,
    form: str = "DIFDUP",
    ntuples: bool = False,
    title: str = "ctally export",
) -> None:
    """Write a spectrum or FID as JCAMP-DX 5.01 text.

    Parameters
    ----------
    obj : Spectrum or Fid
        What to write.  A spectrum is written on a Hz axis (``XFACTOR`` = one point,
        the last point at 0 Hz, as Bruker writes it) with ``##.SHIFT REFERENCE=``
        giving the ppm of point 1 and ``##.OBSERVE FREQUENCY=`` its ``observe_mhz``;
        an FID on a time axis in seconds with ``$SFO1``, ``$SF``, ``$SW_h`` and
        ``$GRPDLY`` so that :func:`read_jcamp` gives back its carrier, dwell and delay.
    path : str or path-like
        Target file; written atomically (nothing is left behind on error).
    form : {"AFFN", "PAC", "SQZ", "SQZDUP", "DIF", "DIFDUP"}
        Ordinate compression (case, spaces and ``_-/+`` ignored; ``"DUP"`` and
        ``"SQZ_DUP"`` mean SQZDUP, DUP with SQZ).
    ntuples : bool
        Write a spectrum as NTUPLES (one real page) instead of XYDATA.  An FID is
        always NTUPLES (real and imaginary pages).
    title : str
        ``##TITLE=`` text.

    Raises
    ------
    UsageError
        Unknown form or an unevenly spaced axis.
    InputFileError
        The target folder does not exist or cannot be written.

    References
    ----------
    McDonald & Wilks 1988 (forms, checkpoints, 80-character lines).

    """
    form = _FORM_ALIASES.get(re.sub(r"[\s_\-/+]", "", form.upper()), form.upper())
    if form not in FORMS:
        raise UsageError(f"unknown JCAMP-DX form {form!r}; expected one of {FORMS}")
    vform = "AFFN" if form in ("AFFN", "PAC") else "ASDF"
    out = [f"##TITLE= {title}", "##JCAMP-DX= 5.01 $$ ctally"]
    nuc = obj.nucleus
    m = re.match(r"(\d+)([A-Za-z]+)", nuc)
    nuc_text = f"^{m.group(1)}{m.group(2)}" if m else nuc
    pp = obj.pulse_program or ""
    common = [
        f"##.OBSERVE NUCLEUS= {nuc_text}",
        f"##.SOLVENT NAME= {obj.solvent or ''}",
        f"##.PULSE SEQUENCE= {pp}",
        f"##$PULPROG= <{pp}>",
    ]
    if isinstance(obj, Fid):
        n = obj.data.size
        sf = obj.observe_mhz / (1.0 + obj.carrier_ppm * 1e-6)
        yf, (re_v, im_v) = _scale([obj.data.real, obj.data.imag])
        xs = [float(k) for k in range(n)]
        out += [
            "##DATA TYPE= NMR FID",
            "##DATA CLASS= NTUPLES",
            "##ORIGIN= ctally",
            "##OWNER= ctally",
            f"##.OBSERVE FREQUENCY= {_f(obj.observe_mhz)}",
            *common,
            f"##$SFO1= {_f(obj.observe_mhz)}",
            f"##$SF= {_f(sf)}",
            f"##$BF1= {_f(sf)}",
            f"##$SW_h= {_f(1.0 / obj.dwell_s)}",
            f"##$TD= {2 * n}",
            f"##$GRPDLY= {_f(obj.group_delay)}" if obj.group_delay > 0 else "##$GRPDLY= -1",
            "##NTUPLES= NMR FID",
            "##VAR_NAME= TIME, FID/REAL, FID/IMAG",
            "##SYMBOL= X, R, I",
            "##VAR_TYPE= INDEPENDENT, DEPENDENT, DEPENDENT",
            f"##VAR_FORM= AFFN, {vform}, {vform}",
            f"##VAR_DIM= {n}, {n}, {n}",
            "##UNITS= SECONDS, ARBITRARY UNITS, ARBITRARY UNITS",
            f"##FACTOR= {_f(obj.dwell_s)}, {_f(yf)}, {_f(yf)}",
            f"##FIRST= 0, {_f(re_v[0] * yf)}, {_f(im_v[0] * yf)}",
            f"##LAST= {_f((n - 1) * obj.dwell_s)}, {_f(re_v[-1] * yf)}, {_f(im_v[-1] * yf)}",
        ]
        for k, (sym, vals) in enumerate((("R", re_v), ("I", im_v)), 1):
            out += [
                f"##PAGE= N={k}",
                f"##NPOINTS= {n}",
                f"##DATA TABLE= (X++({sym}..{sym})), XYDATA",
            ]
            out += _encode(vals, xs, form)
        out += ["##END NTUPLES= NMR FID", "##END="]
    else:
        n = obj.ppm.size
        step = _even_axis(np.asarray(obj.ppm))
        dhz = abs(step) * obj.observe_mhz
        # Hz axis: descending ppm → descending Hz; the lowest point sits at 0 Hz
        idx = np.arange(n)
        xunits = (n - 1 - idx) if step < 0 else idx
        xs = [float(v) for v in xunits]
        delta = -dhz if step < 0 else dhz
        yf, (vals,) = _scale([obj.intensity])
        shiftref = f"##.SHIFT REFERENCE= INTERNAL, {obj.solvent or 'unknown'}, 1, {_f(obj.ppm[0])}"
        head = [
            "##DATA TYPE= NMR SPECTRUM",
            "##ORIGIN= ctally",
            "##OWNER= ctally",
            f"##.OBSERVE FREQUENCY= {_f(obj.observe_mhz)}",
            *common,
            shiftref,
        ]
        if ntuples:
            out += head[:1] + ["##DATA CLASS= NTUPLES"] + head[1:]
            out += [
                "##NTUPLES= NMR SPECTRUM",
                "##VAR_NAME= FREQUENCY, SPECTRUM/REAL",
                "##SYMBOL= X, R",
                "##VAR_TYPE= INDEPENDENT, DEPENDENT",
                f"##VAR_FORM= AFFN, {vform}",
                f"##VAR_DIM= {n}, {n}",
                "##UNITS= HZ, ARBITRARY UNITS",
                f"##FACTOR= {_f(dhz)}, {_f(yf)}",
                f"##FIRST= {_f(xs[0] * dhz)}, {_f(vals[0] * yf)}",
                f"##LAST= {_f(xs[-1] * dhz)}, {_f(vals[-1] * yf)}",
                "##PAGE= N=1",
                f"##NPOINTS= {n}",
                "##DATA TABLE= (X++(R..R)), XYDATA",
            ]
            out += _encode(vals, xs, form)
            out += ["##END NTUPLES= NMR SPECTRUM", "##END="]
        else:
            out += head[:1] + ["##DATA CLASS= XYDATA"] + head[1:]
            out += [
                "##XUNITS= HZ",
                "##YUNITS= ARBITRARY UNITS",
                f"##XFACTOR= {_f(dhz)}",
                f"##YFACTOR= {_f(yf)}",
                f"##FIRSTX= {_f(xs[0] * dhz)}",
                f"##LASTX= {_f(xs[-1] * dhz)}",
                f"##DELTAX= {_f(delta)}",
                f"##FIRSTY= {_f(vals[0] * yf)}",
                f"##NPOINTS= {n}",
                "##XYDATA= (X++(Y..Y))",
            ]
            out += _encode(vals, xs, form)
            out += ["##END="]
    atomic_write_text(path, "\n".join(out) + "\n")
