"""File helpers shared by the readers and the report: atomic writes and checksums."""

from __future__ import annotations

import hashlib
import os
import tempfile
from pathlib import Path

from verify.errors import InputFileError

__all__ = ["atomic_write_bytes", "atomic_write_text", "sha256_path"]


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> Path:
    """Write `data` to `path` so that the file is either complete or untouched.

    The bytes go to a temporary file in the same folder, which then replaces the
    target with :func:`os.replace` (atomic on POSIX and Windows).

    Raises
    ------
    InputFileError
        When the folder does not exist or cannot be written.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise InputFileError(f"cannot write {target}: folder {folder} does not exist", path=target)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise InputFileError(f"cannot write into {folder}: {exc.strerror}", path=target) from exc
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target


def atomic_write_text(path: str | os.PathLike[str], text: str) -> Path:
    """Write UTF-8 `text` atomically (see :func:`atomic_write_bytes`)."""
    return atomic_write_bytes(path, text.encode("utf-8"))


def sha256_path(path: str | os.PathLike[str]) -> str:
    """SHA-256 of a file, or of a raw-data folder's files in sorted relative order.

    For a folder every regular file below it is hashed with its relative path, so the
    digest changes when any acquisition or processing file changes.
    """
    p = Path(path)
    h = hashlib.sha256()
    if p.is_dir():
        for f in sorted(q for q in p.rglob("*") if q.is_file()):
            h.update(f.relative_to(p).as_posix().encode())
            h.update(b"\0")
            h.update(f.read_bytes())
        return h.hexdigest()
    with p.open("rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()
