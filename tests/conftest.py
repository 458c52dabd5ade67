"""Shared test set-up: no network, astropy kept offline, paths to the bundled demo files."""

from __future__ import annotations

from pathlib import Path

import pytest

from planner.skydata import no_iers_download

ROOT = Path(__file__).resolve().parent.parent

no_iers_download()


@pytest.fixture
def root() -> Path:
    return ROOT
