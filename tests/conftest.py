"""Shared test set-up: no network, astropy kept offline, paths to the bundled demo files."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import settings

from planner.skydata import no_iers_download

ROOT = Path(__file__).resolve().parent.parent

no_iers_download()

# Property tests draw the same examples on every run, so CI cannot pass or fail by luck of the draw.
settings.register_profile("phasewise", derandomize=True, deadline=None, print_blob=True)
settings.load_profile("phasewise")


@pytest.fixture
def root() -> Path:
    return ROOT
