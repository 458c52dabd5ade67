"""Every CSV of the plan folder has an ECSV twin that astropy reads back as a QTable with units and times;
the units follow the column names."""

from __future__ import annotations

import csv as csv_module

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


def _texts(col) -> list[str]:
    """A text column read back from ECSV as plain strings: astropy reads an empty field (``""``) as a masked,
    missing cell, as pandas reads the CSV's empty field as missing; both mean the empty text."""
    return [str(s) for s in (col.filled("") if hasattr(col, "filled") else col)]


@pytest.mark.parametrize("csv_name", ECSV_TWINS)
def test_text_and_flags_read_back_as_the_csv_holds_them(demo_folder, csv_name):
    # ECSV (Aldcroft 2015, APE 6 "Enhanced Character Separated Values", from memory): a text column is
    # `datatype: string`; the `subtype: json` form is for object and multidimensional columns only.
    text = (demo_folder / ecsv_twin(csv_name)).read_text(encoding="utf-8")
    assert "subtype: json" not in text
    cells = pd.read_csv(demo_folder / csv_name, keep_default_na=False, dtype=str)  # every cell as its text
    qt = QTable.read(demo_folder / ecsv_twin(csv_name), format="ascii.ecsv")
    checked = 0
    for name in qt.colnames:
        kind = getattr(qt[name], "dtype", np.dtype("M")).kind  # a Time column has no dtype
        if kind == "U":
            assert _texts(qt[name]) == cells[name].tolist(), name
        elif kind in "bi" and not isinstance(qt[name], u.Quantity):
            assert [str(v) for v in qt[name].tolist()] == cells[name].tolist(), name
        checked += kind in "Ubi"
    assert checked >= 2  # every table has at least a site and a night, or a site and a flag


def test_plain_text_in_the_plan_twin(demo_folder):
    text = (demo_folder / "plan.ecsv").read_text(encoding="utf-8")
    assert "# - {name: site, datatype: string}" in text and "# - {name: cautions, datatype: string}" in text
    # A name with a space is quoted once, as a space-delimited CSV field (Python csv, QUOTE_MINIMAL).
    qt = QTable.read(demo_folder / "plan.ecsv", format="ascii.ecsv")
    assert f'"{qt["site"][0]}"' in text.splitlines()[-len(qt)]


def _awkward_frame() -> pd.DataFrame:
    """Values that trip number and text writers: NaN, ±inf, -0.0, tiny and huge exponents, whole numbers,
    empty text, text with spaces, quotes, commas, a hash, a backslash, non-ASCII."""
    x = [np.nan, np.inf, -np.inf, -0.0, 1e-05, 1e16, 123456789.123, 1e300, 5e-324, 4.0, 0.1 + 0.2, -2.5e-7]
    n = len(x)
    return pd.DataFrame(
        {
            "site": [
                "Scale Site 01",
                "",
                'say "hi"',
                "a,b",
                "Site #2",
                "plain",
                "x\\y",
                "Δ r",
                " lead",
                "",
                "é",
                "'q'",
            ],
            "alt_deg": x,
            "ratio": x[::-1],
            "hours": np.linspace(-1e7, 1e7, n),
            "flag": [i % 3 == 0 for i in range(n)],
            "n_exposures": np.arange(n, dtype=np.int64) * 1_000_003 - 7,
            # Not first on the line (a first cell "#..." is quoted here, unlike astropy's writer: see below).
            "note": ["#hash", "", "a b", "", '"', "tab\tin", "new\nline", ",", "plain", "#", "''", " "],
            "time_utc": np.datetime64("2034-03-15T00:00", "ns")
            + (np.arange(n) * 3_600.0005e9).astype("timedelta64[ns]"),
        }
    )


@pytest.mark.parametrize("float_format", [None, "%.6g", "%.4g", "%.10g", "%.17g", "%.3f"])
def test_fast_ecsv_text_is_astropys_text_on_awkward_values(float_format):
    from planner.outputs.tablefiles import ecsv_data_lines, ecsv_table_text, ecsv_table_text_slow

    qt = planner.as_qtable(_awkward_frame(), {"table": "awkward", "note": 'a "quoted" note'})
    assert ecsv_data_lines(qt, float_format) is not None  # the fast path, not its fallback
    assert ecsv_table_text(qt, float_format) == ecsv_table_text_slow(qt, float_format)


def test_fast_ecsv_text_is_astropys_text_on_the_demo_tables(demo_plan):
    from planner.outputs.planfolder import folder_tables
    from planner.outputs.tablefiles import ecsv_data_lines, ecsv_table_text, ecsv_table_text_slow

    for name, (df, float_format) in folder_tables(demo_plan[1]).items():
        qt = planner.as_qtable(df, {"table": name})
        assert ecsv_data_lines(qt, float_format) is not None, name
        assert ecsv_table_text(qt, float_format) == ecsv_table_text_slow(qt, float_format), name


def test_a_missing_time_leaves_the_whole_table_to_astropy():
    from planner.outputs.tablefiles import ecsv_data_lines, ecsv_table_text, ecsv_table_text_slow

    df = _awkward_frame()
    df.loc[3, "time_utc"] = pd.NaT
    qt = planner.as_qtable(df)
    assert ecsv_data_lines(qt, "%.6g") is None
    assert ecsv_table_text(qt, "%.6g") == ecsv_table_text_slow(qt, "%.6g")
    assert QTable.read(ecsv_table_text(qt), format="ascii.ecsv")["time_utc"].mask.tolist()[2:5] == [False, True, False]


def test_awkward_values_read_back_as_the_csv_holds_them(tmp_path):
    from planner.outputs.tablefiles import csv_text, ecsv_text, table_for_files

    df = _awkward_frame()
    (tmp_path / "t.csv").write_text(csv_text(table_for_files(df), "%.6g"), encoding="utf-8")
    (tmp_path / "t.ecsv").write_text(ecsv_text(df, None, "%.6g"), encoding="utf-8")
    csv = pd.read_csv(tmp_path / "t.csv", keep_default_na=False, na_values={"alt_deg": [""], "ratio": [""]})
    qt = QTable.read(tmp_path / "t.ecsv", format="ascii.ecsv")
    # "", quotes, commas, '#' intact; astropy's writer strips spaces at either end of a text (" lead").
    assert csv["site"].tolist() == df["site"].tolist()
    assert _texts(qt["site"]) == [s.strip() for s in csv["site"]]
    assert qt["site"].mask.tolist() == [s.strip() == "" for s in df["site"]]  # empty: missing, as in the CSV
    assert _texts(qt["note"]) == [s.strip(" \t") for s in csv["note"]]
    assert qt["time_utc"].scale == "utc"
    assert [s[:19] + "Z" for s in qt["time_utc"].isot] == csv["time_utc"].tolist()
    assert qt["alt_deg"].unit == u.deg and qt["hours"].unit == u.h
    # Both files hold the numbers rounded to 6 significant digits (the unitless `ratio` as it is, in full).
    assert np.array_equal(qt["alt_deg"].value, csv["alt_deg"].to_numpy(dtype=float), equal_nan=True)
    assert np.array_equal(qt["ratio"], df["ratio"].to_numpy(), equal_nan=True)
    assert np.signbit(qt["alt_deg"].value[3]) and qt["alt_deg"].value[4] == 1e-05
    assert qt["flag"].tolist() == csv["flag"].tolist() and qt["n_exposures"].tolist() == csv["n_exposures"].tolist()
    # The data lines split by Python's csv reader (space delimiter) give the same text cells back.
    body = [line for line in (tmp_path / "t.ecsv").read_text(encoding="utf-8").splitlines() if not line.startswith("#")]
    rows = list(csv_module.reader(body[1:], delimiter=" "))
    assert [r[0] for r in rows] == [s.strip() for s in df["site"]]


def test_a_first_cell_starting_with_a_hash_keeps_its_row(tmp_path):
    # ECSV 1.0 (astropy APE 6, Aldcroft; from memory): a line starting with "#" is a comment. astropy's writer
    # leaves a bare first cell "#3" unquoted, so its own reader drops that row (astropy 8.0, checked
    # below); the twins quote it, and every other line stays astropy's text.
    from planner.outputs.tablefiles import as_qtable, ecsv_table_text, ecsv_table_text_slow

    df = pd.DataFrame({"site": ["Ridge", "#3", "#4 East", "Vale"], "alt_deg": [10.0, 20.0, 30.0, 40.0]})
    qt = as_qtable(df)
    (tmp_path / "astropy.ecsv").write_text(ecsv_table_text_slow(qt), encoding="utf-8")
    assert len(QTable.read(tmp_path / "astropy.ecsv", format="ascii.ecsv")) == 3  # the bare "#3" row is lost
    fast = ecsv_table_text(qt)
    (tmp_path / "t.ecsv").write_text(fast, encoding="utf-8")
    back = QTable.read(tmp_path / "t.ecsv", format="ascii.ecsv")
    assert back["site"].tolist() == df["site"].tolist() and back["alt_deg"].value.tolist() == [10, 20, 30, 40]
    slow_lines, fast_lines = ecsv_table_text_slow(qt).splitlines(), fast.splitlines()
    assert [a for a, b in zip(slow_lines, fast_lines, strict=True) if a != b] == ["#3 20.0"]
