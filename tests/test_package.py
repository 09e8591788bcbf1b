"""The public surface of the package: exported names, version, error hierarchy."""

from __future__ import annotations

import importlib.metadata

import pytest

import verify
from verify import errors


def test_all_is_sorted_and_complete() -> None:
    assert list(verify.__all__) == sorted(verify.__all__)
    for name in verify.__all__:
        assert hasattr(verify, name), name


def test_version_comes_from_the_distribution() -> None:
    assert verify.__version__ == importlib.metadata.version("ctally")


@pytest.mark.parametrize(
    ("error", "builtin"),
    [
        (errors.SpectrumFormatError, ValueError),
        (errors.StructureError, ValueError),
        (errors.SampleError, ValueError),
        (errors.UsageError, ValueError),
        (errors.InputFileError, OSError),
        (errors.ProcessingError, RuntimeError),
    ],
)
def test_every_error_is_a_ctally_error_and_a_builtin(error: type, builtin: type) -> None:
    assert issubclass(error, errors.CtallyError)
    assert issubclass(error, builtin)


def test_error_message_is_one_line_with_file_and_line() -> None:
    exc = errors.SpectrumFormatError("NPOINTS says 10\nbut 8 values", path="/x/13c.dx", line=12)
    assert str(exc) == "NPOINTS says 10 but 8 values (13c.dx, line 12)"
    assert exc.line == 12
