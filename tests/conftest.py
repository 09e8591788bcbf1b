"""Shared fixtures: the measured data under ../shared and seeded synthetic spectra."""

from __future__ import annotations

from pathlib import Path

import pytest

#: The shared material lies beside the checkout (../shared); CI lays it there too.
SHARED = Path(__file__).resolve().parents[2] / "shared" / "data"


def shared_path(*parts: str) -> Path:
    """Path under ../shared/data, or skip the calling test when it is absent."""
    path = SHARED.joinpath(*parts)
    if not path.exists():
        pytest.skip(f"shared data not found: {path}")
    return path


@pytest.fixture
def shared_data() -> Path:
    """Root of ../shared/data (the test is skipped when it is absent)."""
    return shared_path()


@pytest.fixture
def spectra_dir() -> Path:
    """../shared/data/spectra (the test is skipped when it is absent)."""
    return shared_path("spectra")
