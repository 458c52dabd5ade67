"""Tables as the files hold them: UTC columns as ISO 8601 text with Z, one number format per file."""

from __future__ import annotations

import csv
import io

import numpy as np
import pandas as pd

from planner.core.jsonsafe import json_safe

#: Number format of plan.csv and baseline.csv, also when ``phasewise plan --format csv`` prints it.
PLAN_CSV_FLOAT_FORMAT = "%.7g"


def iso_texts(values) -> list[str]:
    """ISO 8601 UTC texts to the second with Z; ``""`` for a missing time."""
    t = pd.to_datetime(pd.Series(values))
    return ["" if pd.isna(x) else x.strftime("%Y-%m-%dT%H:%M:%SZ") for x in t]


def table_for_files(df: pd.DataFrame) -> pd.DataFrame:
    """UTC columns as ISO 8601 strings with Z; everything else as is."""
    out = df.copy()
    for c in out.columns:
        if c.endswith("_utc") and (np.issubdtype(out[c].dtype, np.datetime64) or out[c].dtype == object):
            out[c] = iso_texts(out[c])
    return out


def records(df: pd.DataFrame) -> list[dict]:
    """A table as JSON-ready rows (times as text, non-finite numbers as null)."""
    return json_safe(table_for_files(df).to_dict("records"))


def csv_text(df: pd.DataFrame, float_format: str | None = None) -> str:
    """``df.to_csv(index=False, float_format=..., lineterminator="\\n")``, the same text, about twice as fast
    on long tables: each column is formatted once as a list (``float_format % x``, NaN empty) and the C
    csv writer joins the rows, instead of pandas' per-cell formatting. Columns of other kinds (dates,
    categories) leave the work to pandas."""
    cols = []
    for name in df.columns:
        v = df[name]
        kind = v.dtype.kind
        if kind == "f":
            fmt = float_format or "%r"
            cols.append(["" if x != x else fmt % x for x in v.to_numpy(dtype=float, na_value=np.nan).tolist()])
        elif kind == "b":
            cols.append(["True" if x else "False" for x in v.to_numpy().tolist()])
        elif kind in "iuOU" or isinstance(v.dtype, pd.StringDtype):
            cols.append([_cell(x) for x in v.tolist()])
        else:
            return df.to_csv(index=False, float_format=float_format, lineterminator="\n")
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow([str(c) for c in df.columns])
    writer.writerows(zip(*cols, strict=True))
    return buf.getvalue()


def _cell(x) -> str:
    """One cell of an integer, text or object column as pandas writes it: empty when missing."""
    if x is None or x is pd.NA or (isinstance(x, float) and x != x):
        return ""
    return str(x)


def _time_column(values):
    """A UTC column (datetime64 or ISO text, empty = missing) as an astropy ``Time`` in ISO format."""
    from astropy.time import Time

    from planner.core.units import quiet_leap_seconds

    t = pd.to_datetime(pd.Series(values), utc=True, errors="coerce").dt.tz_localize(None)
    with quiet_leap_seconds():
        out = Time(t.to_numpy(dtype="datetime64[ns]"), scale="utc", format="datetime64")
        out.format = "isot"
    return out


def as_qtable(table, meta: dict | None = None):
    """A table as an astropy ``QTable`` with units: numeric columns become Quantities in the unit their
    name carries (:func:`planner.core.units.unit_of`: ``alt_deg`` in deg, ``exposure_s`` in s), ``*_utc``
    columns become ``Time`` (UTC), text and flags stay as they are.

    ``table`` is a DataFrame, or a ``geometry()`` result (a dict of DataFrames per site, joined with a
    leading ``site`` column). The DataFrame's ``attrs`` and ``meta`` go into the table's ``meta``.
    """
    from astropy import units as u
    from astropy.table import QTable

    from planner.core.units import unit_of

    if isinstance(table, dict):
        first = next(iter(table.values()), pd.DataFrame())
        df = pd.concat([f.assign(site=name)[["site", *f.columns]] for name, f in table.items()], ignore_index=True)
        df.attrs = {k: v for k, v in first.attrs.items() if k != "observer"}
    else:
        df = table
    out = QTable(meta=json_safe({**df.attrs, **(meta or {})}))
    for name in df.columns:
        col = df[name]
        unit = unit_of(str(name))
        if str(name).endswith("_utc"):
            out[name] = _time_column(col)
        elif unit is not None and col.dtype != bool and pd.api.types.is_numeric_dtype(col):
            out[name] = u.Quantity(col.to_numpy(dtype=float), unit or u.dimensionless_unscaled)
        elif col.dtype == object:
            out[name] = ["" if v is None or (isinstance(v, float) and np.isnan(v)) else str(v) for v in col]
        else:
            out[name] = col.to_numpy()
    return out


def ecsv_text(table, meta: dict | None = None, float_format: str | None = None) -> str:
    """The ECSV file of a table (units, time scale and ``meta`` kept; astropy reads it back as a QTable).

    ``float_format`` (``"%.6g"``) rounds numbers as the CSV twin writes them, so both files hold the same values.
    """
    import io

    from astropy import units as u

    qt = as_qtable(table, meta)
    if float_format is not None:
        for name in qt.colnames:
            col = qt[name]
            if isinstance(col, u.Quantity) and col.dtype.kind == "f":
                qt[name] = u.Quantity([float(float_format % v) for v in col.value], col.unit)
    from planner.core.units import quiet_leap_seconds

    buf = io.StringIO()
    with quiet_leap_seconds():
        qt.write(buf, format="ascii.ecsv")
    return buf.getvalue()
