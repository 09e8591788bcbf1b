"""ctally: check a proposed structure against its carbon-13 and DEPT/APT evidence.

The import package is ``verify``; the distribution and the command are ``ctally``.
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

from verify.errors import (
    CtallyError,
    CtallyWarning,
    InputFileError,
    ProcessingError,
    SampleError,
    SpectrumFormatError,
    StructureError,
    UsageError,
)

try:
    __version__ = version("ctally")
except PackageNotFoundError:  # running from a source tree that was not installed
    from verify._version import __version__

__all__ = [
    "CtallyError",
    "CtallyWarning",
    "InputFileError",
    "ProcessingError",
    "SampleError",
    "SpectrumFormatError",
    "StructureError",
    "UsageError",
    "__version__",
]
