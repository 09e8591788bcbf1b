"""Read (+ process) time per shared file beside nmrglue's plain read of the same file.

For each JCAMP-DX file and raw-data folder under ../shared/data/spectra, one run of:

* ``read_any(path)`` (decode + all checks),
* ``verify.process.prepare`` on the result when that module is importable (a processed
  spectrum passes through unchanged; an FID is apodised, transformed, phased and
  baseline-corrected), and
* nmrglue's plain read (``nmrglue.jcampdx.read`` / ``nmrglue.bruker.read``), which
  decodes but checks nothing and builds no ppm axis.

Imports are warmed up first so that no column pays for them.  Run:
``python benchmarks/bench_read.py``.
"""

from __future__ import annotations

import sys
import time
import warnings
from pathlib import Path

import nmrglue as ng

from verify.readers import read_any

try:
    from verify.process import prepare
except ImportError:  # the processing stage is not there yet: time the read alone
    prepare = None

SPECTRA = Path(__file__).resolve().parents[2] / "shared" / "data" / "spectra"


def _targets() -> list[Path]:
    files = sorted(SPECTRA.glob("*/*.dx"))
    folders = sorted(p.parent for p in SPECTRA.glob("*/*/acqus"))
    return files + folders


def _nmrglue_read(path: Path) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        if path.is_dir():
            ng.bruker.read(str(path))
        else:
            ng.jcampdx.read(str(path))


def _timed(fn, *args):  # noqa: ANN001, ANN202 - a tiny local helper
    t0 = time.perf_counter()
    out = fn(*args)
    return out, time.perf_counter() - t0


def main() -> int:
    if not SPECTRA.is_dir():
        print(f"shared data not found: {SPECTRA}")
        return 1
    targets = _targets()
    # warm-up: imports and first-call costs, not measured
    _nmrglue_read(targets[0])
    read_any(targets[0])
    head = "read+process" if prepare is not None else "read (no process.py)"
    print(
        f"{'file':44s} {'points':>8s} {'kind':>8s} {'read s':>8s} {head:>13s} "
        f"{'nmrglue s':>10s} {'ratio':>6s}"
    )
    totals = [0.0, 0.0]
    for path in targets:
        rel = path.relative_to(SPECTRA).as_posix()
        obj, t_read = _timed(read_any, path)
        t_total = t_read
        if prepare is not None:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                _, t_proc = _timed(prepare, obj)
            t_total += t_proc
        _, t_ng = _timed(_nmrglue_read, path)
        points = getattr(obj, "points", None) or obj.data.size
        kind = type(obj).__name__
        totals[0] += t_total
        totals[1] += t_ng
        print(
            f"{rel:44s} {points:8d} {kind:>8s} {t_read:8.3f} {t_total:13.3f} {t_ng:10.3f} "
            f"{t_total / t_ng:6.2f}"
        )
    print(
        f"{'total':44s} {'':8s} {'':8s} {'':8s} {totals[0]:13.3f} {totals[1]:10.3f} "
        f"{totals[0] / totals[1]:6.2f}"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
