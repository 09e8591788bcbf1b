"""Atomic file writes shared by the readers, the simulator, the report and the CLI."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from verify.errors import InputFileError

__all__ = ["atomic_write_bytes", "atomic_write_text"]


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
        os.chmod(tmp, 0o666 & ~_umask())  # mkstemp makes 0600; outputs are ordinary files
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except OSError as exc:
        Path(tmp).unlink(missing_ok=True)
        raise InputFileError(f"cannot write {target.name}: {exc.strerror}", path=target) from exc
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return target


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def atomic_write_text(path: str | os.PathLike[str], text: str) -> Path:
    """Write UTF-8 `text` atomically (see :func:`atomic_write_bytes`)."""
    return atomic_write_bytes(path, text.encode("utf-8"))
