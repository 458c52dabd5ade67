"""Every CSV of the plan folder has an ECSV twin that astropy reads back as a QTable with units and times;
the units follow the column names."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import planner
from planner.outputs.layout import ECSV_TWINS, ecsv_twin

u = pytest.importorskip("astropy.units", reason="astropy reads the ECSV files")
QTable = pytest.importorskip("astropy.table", reason="astropy reads the ECSV files").QTable


@pytest.mark.parametrize("csv_name", ECSV_TWINS)
def test_each_csv_has_a_twin_with_the_same_values(demo_folder, csv_name):
    csv = pd.read_csv(demo_folder / csv_name, keep_default_na=False, na_values=[""])
    qt = QTable.read(demo_folder / ecsv_twin(csv_name), format="ascii.ecsv")
    assert qt.colnames == list(csv.columns) and len(qt) == len(csv)
    assert qt.meta["table"] == csv_name.removesuffix(".csv") and qt.meta["phasewise_version"] == planner.__version__
    for name in qt.colnames:
        col = qt[name]
        if name.endswith("_utc"):
            iso = [("" if m else s[:19] + "Z") for s, m in zip(col.isot, np.ma.getmaskarray(col), strict=True)]
            assert iso == csv[name].fillna("").tolist(), name
        elif isinstance(col, u.Quantity):
            assert np.allclose(col.value, csv[name].to_numpy(dtype=float), rtol=1e-12, equal_nan=True), name


def test_units_come_from_the_names_and_agree_with_each_other(demo_folder):
    geo = QTable.read(demo_folder / "geometry.ecsv", format="ascii.ecsv")
    assert geo["alt_deg"].unit == u.deg and geo["helio_dist_au"].unit == u.AU
    assert geo["motion_arcsec_per_min"].unit == u.arcsec / u.min
    # Independent route: 1″ at distance Δ spans Δ · (π / 648000) (small angle); with the au of IAU 2012
    # Resolution B2 (149 597 870.7 km) that is 725.27 km per au, the km_per_arcsec column.
    span = (geo["obs_dist_au"] * (1 * u.arcsec).to_value(u.rad)).to(u.km)
    # Both columns are written to 6 significant digits (geometry.csv), so they agree to about 1e-5.
    assert np.allclose((geo["km_per_arcsec"] * u.arcsec).to_value(u.km), span.to_value(u.km), rtol=2e-5)
    plan = QTable.read(demo_folder / "plan.ecsv", format="ascii.ecsv")
    # The block's length in hours is its end minus start, read through the Time columns.
    length = (plan["end_utc"] - plan["start_utc"]).to(u.h)
    assert np.allclose(length.value, plan["hours"].to_value(u.h), atol=1e-6)


def test_as_qtable_on_a_geometry_result():
    from planner.inputs.targets import load_target
    from tests.conftest import DEMO_DIR

    Time = pytest.importorskip("astropy.time").Time
    target = load_target(DEMO_DIR / "c2034-b3-quillfeather.toml")
    times = Time(["2034-03-19T00:00", "2034-03-19T01:00"], scale="utc")
    qt = planner.as_qtable(planner.geometry(target, times))
    assert qt.colnames[0] == "site" and list(qt["site"]) == ["geocentre", "geocentre"]
    assert (qt["time_utc"] - times).to_value(u.s) == pytest.approx([0.0, 0.0], abs=1e-6)
    assert qt.meta["target"] == target.name and qt["ra_deg"].unit == u.deg
