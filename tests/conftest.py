"""Shared fixtures: the invented sample winter forcing and its default run (both once per session)."""

from __future__ import annotations

from pathlib import Path

import pytest

import icecolumn as ic

SAMPLE = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_winter.csv"


@pytest.fixture(scope="session")
def sample_forcing_path() -> Path:
    """Path of the invented sample forcing ``forcing_samples/station_winter.csv``."""
    return SAMPLE


@pytest.fixture(scope="session")
def sample_forcing(sample_forcing_path):
    """The sample winter forcing, read once per session (do not modify it in a test)."""
    return ic.read_forcing(sample_forcing_path)


@pytest.fixture(scope="session")
def sample_run(sample_forcing):
    """The default-configuration run on the sample winter, computed once per session."""
    return ic.run(sample_forcing, ic.default_config())
