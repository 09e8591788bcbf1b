"""The one error hierarchy of ctally.

Every error the tool raises on purpose derives from :class:`CtallyError`, and each
subclass also inherits the built-in exception that fits, so that callers may catch
either (``except ValueError`` still works).  Errors carry the fields they are about
(path, line, value) and build their message from them: what was wrong, the value
seen, and what to do.

The command line catches :class:`CtallyError` only, prints ``ErrorName: message``
on one line and exits with code 2; anything else is a bug and shows its traceback.
"""

from __future__ import annotations

from pathlib import Path

__all__ = [
    "CtallyError",
    "CtallyWarning",
    "InputFileError",
    "ProcessingError",
    "SampleError",
    "SpectrumFormatError",
    "StructureError",
    "ToolMissingError",
    "UsageError",
]


class CtallyError(Exception):
    """Root of every error ctally raises on purpose.

    Parameters
    ----------
    message : str
        What was wrong and, where it helps, what to do about it.
    path : str or Path, optional
        The file the problem is in.
    line : int, optional
        1-based line number in `path`.
    """

    def __init__(
        self, message: str, *, path: str | Path | None = None, line: int | None = None
    ) -> None:
        self.detail = message
        self.path = Path(path) if path is not None else None
        self.line = line
        super().__init__(self._compose())

    def _compose(self) -> str:
        where = ""
        if self.path is not None:
            where = self.path.name if self.line is None else f"{self.path.name}, line {self.line}"
        text = " ".join(self.detail.split())  # always one line
        return f"{text} ({where})" if where else text


class UsageError(CtallyError, ValueError):
    """The command or call was given contradictory or missing arguments."""


class InputFileError(CtallyError, OSError):
    """A file is missing, unreadable, empty, or not what its role needs."""


class SpectrumFormatError(CtallyError, ValueError):
    """A spectrum file breaks its format or fails one of its own checks.

    Examples: NPOINTS disagrees with the decoded count, a DIF Y-checkpoint fails,
    a header promises more points than the file can hold.
    """


class SampleError(CtallyError, ValueError):
    """The sample description (TOML) is invalid or inconsistent."""


class StructureError(CtallyError, ValueError):
    """A proposed structure cannot be parsed or has nothing to check (no carbon)."""


class ProcessingError(CtallyError, RuntimeError):
    """A spectrum could not be processed (e.g. no signal, no usable reference)."""


class ToolMissingError(CtallyError, RuntimeError):
    """A program the tool calls out to (e.g. Chromium for PDF output) is missing or failed."""


class CtallyWarning(UserWarning):
    """Input is valid but doubtful; the result should be looked at (use ``stacklevel=2``)."""
