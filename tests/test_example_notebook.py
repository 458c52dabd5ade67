"""docs/example_notebook.py, the notebook-style tour of the Python API, runs as it stands."""

from __future__ import annotations

import runpy

import pytest

from tests.conftest import ROOT


@pytest.mark.slow
def test_the_notebook_example_runs(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    ns = runpy.run_path(str(ROOT / "docs" / "example_notebook.py"), run_name="__main__")
    out = capsys.readouterr().out
    assert "refused: python: latitude_deg: 200 is outside [-90, 90]" in out
    u = ns["u"]
    assert ns["geometry"]["alt_deg"].unit == u.deg and len(ns["geometry"]) == 9
    assert len(ns["blocks"]) > 0 and ns["blocks"]["hours"].unit == u.h
    assert ns["again"]["exposure_s"].unit == u.s and len(ns["again"]) == len(ns["blocks"])
    # The site from the EarthLocation sits where it was put (WGS84 geodetic in, geodetic out).
    assert ns["andes"].latitude_deg == pytest.approx(-24.62) and ns["andes"].height_m == pytest.approx(2600.0)
