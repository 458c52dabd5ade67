"""Tables as the files hold them: UTC columns as ISO 8601 text with Z, one number format per file."""

from __future__ import annotations

import csv
import io
import os
import re

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
    """A UTC column (datetime64 or ISO text, empty = missing) as an astropy ``Time`` in ISO format.

    The same Time as :func:`_time_column_slow` (astropy's ``datetime64`` format, which writes every epoch
    as text and parses it back in Python), with the calendar fields taken from the datetime64 values by
    numpy and turned into the two-part Julian date by ERFA's ``dtf2d`` (SOFA ``iauDtf2d``, IAU SOFA Board
    2021: UTC days with a leap second are 86401 s long), the routine astropy's parser ends in. A column
    with a missing time (masked in the Time) is left to astropy.
    """
    import erfa
    from astropy.time import Time

    from planner.core.units import quiet_leap_seconds

    t = _utc_datetime64(values)
    if t.size == 0 or np.isnat(t).any():
        return _time_column_slow(values)
    day = t.astype("datetime64[D]")
    month = t.astype("datetime64[M]")
    year = t.astype("datetime64[Y]")
    ns_of_day = (t - day).astype(np.int64)
    ns_of_min = ns_of_day % 60_000_000_000
    # astropy's parser adds the whole seconds and the fraction read from the text: the same two roundings
    sec = ns_of_min // 1_000_000_000 + (ns_of_min % 1_000_000_000) / 1e9
    with quiet_leap_seconds():
        jd1, jd2 = erfa.dtf2d(
            "UTC",
            year.astype(np.int64) + 1970,
            (month - year.astype("datetime64[M]")).astype(np.int64) + 1,
            (day - month.astype("datetime64[D]")).astype(np.int64) + 1,
            ns_of_day // 3_600_000_000_000,
            ns_of_day // 60_000_000_000 % 60,
            sec,
        )
        out = Time(jd1, jd2, format="jd", scale="utc")
        out.format = "isot"
    return out


def _time_column_slow(values):
    """The slow twin of :func:`_time_column`: astropy's own ``datetime64`` format."""
    from astropy.time import Time

    from planner.core.units import quiet_leap_seconds

    with quiet_leap_seconds():
        out = Time(_utc_datetime64(values), scale="utc", format="datetime64")
        out.format = "isot"
    return out


def _utc_datetime64(values) -> np.ndarray:
    """UTC times (datetime64, aware or naive, or ISO text; empty or unreadable = NaT) as naive datetime64[ns]."""
    t = pd.to_datetime(pd.Series(values), utc=True, errors="coerce").dt.tz_localize(None)
    return t.to_numpy(dtype="datetime64[ns]")


def as_qtable(table, meta: dict | None = None):
    """A table as an astropy ``QTable`` with units: numeric columns become Quantities in the unit their
    name carries (:func:`planner.core.units.unit_of`: ``alt_deg`` in deg, ``exposure_s`` in s), ``*_utc``
    columns become ``Time`` (UTC), text columns become numpy unicode columns (missing → ``""``; ECSV
    ``datatype: string``), flags and counts stay as they are.

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
        elif col.dtype == object or isinstance(col.dtype, pd.StringDtype):
            out[name] = np.array([_cell(v) for v in col.tolist()], dtype=str)
        else:
            out[name] = col.to_numpy()
    return out


def ecsv_text(table, meta: dict | None = None, float_format: str | None = None) -> str:
    """The ECSV file of a table (units, time scale and ``meta`` kept; astropy reads it back as a QTable).

    ``float_format`` (``"%.6g"``) rounds numbers as the CSV twin writes them, so both files hold the same values.
    """
    return ecsv_table_text(as_qtable(table, meta), float_format)


def ecsv_table_text_slow(qt, float_format: str | None = None) -> str:
    """The slow twin of :func:`ecsv_table_text`: astropy's ECSV writer, every cell formatted in Python, after
    each float Quantity column is rounded to ``float(float_format % v)``. ``qt`` is left as it is."""
    from astropy import units as u

    from planner.core.units import quiet_leap_seconds

    if float_format is not None:
        qt = qt.copy(copy_data=False)
        for name in qt.colnames:
            col = qt[name]
            if isinstance(col, u.Quantity) and col.dtype.kind == "f":
                qt[name] = u.Quantity([float(float_format % v) for v in col.value], col.unit)
    buf = io.StringIO()
    with quiet_leap_seconds():
        qt.write(buf, format="ascii.ecsv")
    return buf.getvalue()


def ecsv_table_text(qt, float_format: str | None = None) -> str:
    """A QTable as ECSV text, the same text as astropy's writer (:func:`ecsv_table_text_slow`), several times
    faster on long tables.

    astropy writes what it knows best: the YAML header (datatypes, units, meta, how Time columns are
    serialised) and the first row, from a table of the first row alone (zero rows would not do: astropy
    then writes Time columns as floats). The first row doubles as a check of the formatting here: on any
    difference astropy writes the whole table. The other data lines (:func:`ecsv_data_lines`) are formatted
    one column at a time from the columns astropy would write (``represent_mixins_as_columns``: Quantities as
    their values, Time as its ISO text): floats as ``str`` of the float (the shortest text that reads back
    to it; ``nan``, ``inf``), float Quantities rounded to ``float(float_format % v)`` first, flags
    ``True``/``False``, integers, and text as astropy's space-delimited writer leaves it (spaces and tabs at
    either end stripped; Python's csv writer, ``QUOTE_MINIMAL``, space delimiter: a field holding a space, a
    quote or a line break in double quotes, quotes doubled; an empty text as ``""``).

    Anything else falls back to astropy's writer for the whole table: masked columns (a Time with missing
    values, NaT, among them), multidimensional columns, object columns, and dtypes other than float64,
    integers, bools and unicode text.
    """
    lines = ecsv_data_lines(qt, float_format)
    if lines is None:
        return ecsv_table_text_slow(qt, float_format)
    first = ecsv_table_text_slow(qt[:1], float_format)
    bare = ecsv_data_lines(qt[:1], float_format, quote_hash=False)[0] + os.linesep
    if not first.endswith(bare):  # astropy wrote the first row otherwise: let it write all
        return ecsv_table_text_slow(qt, float_format)
    return first[: len(first) - len(bare)] + os.linesep.join(lines) + os.linesep


def ecsv_data_lines(qt, float_format: str | None = None, quote_hash: bool = True) -> list[str] | None:
    """The data lines of :func:`ecsv_table_text` (no line ends), or None when a column is of a kind left to
    astropy's writer (or the table is empty).

    A line starting with ``#`` reads back as a comment (ECSV 1.0; astropy's reader skips it, and its
    writer leaves such a first cell bare, so the row is lost): with ``quote_hash`` a first text cell
    starting with ``#`` is quoted, the one place this text differs from astropy's."""
    from astropy import units as u
    from astropy.table import serialize
    from astropy.utils.data_info import serialize_context_as

    from planner.core.units import quiet_leap_seconds

    if len(qt) == 0 or not qt.colnames:
        return None
    with quiet_leap_seconds(), serialize_context_as("ecsv"):
        plain = serialize.represent_mixins_as_columns(qt)
    rounded = {n for n in qt.colnames if isinstance(qt[n], u.Quantity)} if float_format is not None else set()
    cells = []
    for name in plain.colnames:
        column = _ecsv_cells(plain[name], float_format if name in rounded else None)
        if column is None:
            return None
        cells.append(column)
    if quote_hash and cells and plain[plain.colnames[0]].dtype.kind == "U":
        # A cell still starting with "#" was left bare, so it holds no quote, space or line break.
        cells[0] = [f'"{c}"' if c.startswith("#") else c for c in cells[0]]
    return list(map(" ".join, zip(*cells, strict=True)))


#: ``%.Ng`` with N ≤ 15: its text has the digits of the rounded float's shortest repr (DBL_DIG = 15).
_SHORT_G = re.compile(r"%\.(\d|1[0-5])g")


def _ecsv_cells(col, float_format: str | None) -> list[str] | None:
    """One plain astropy column as astropy's ECSV writer writes its cells; None for a kind left to astropy."""
    if getattr(col, "mask", None) is not None or col.ndim != 1:
        return None
    a = np.asarray(col)
    kind = a.dtype.kind
    if a.dtype == np.float64:
        return _float_cells(a.tolist(), float_format)
    if kind == "b":
        return ["True" if x else "False" for x in a.tolist()]
    if kind in "iu":
        return list(map(str, a.tolist()))
    if kind == "U":
        return _quoted_cells(a.tolist())
    return None


def _float_cells(values: list[float], float_format: str | None) -> list[str]:
    """``str(float(float_format % v))`` (``repr(v)`` without a format) for each value.

    For ``%.Ng`` with N ≤ 15 the formatted text already has the shortest repr's digits (two different
    decimals of at most 15 significant digits never read as the same double), so it only needs repr's
    layout: ``.0`` after a whole number; texts in exponent form go through ``repr(float(s))``, since repr
    writes exponents only below 1e-4 and from 1e16 on (Python Language Reference, ``float.__repr__``).
    """
    if float_format is None:
        return list(map(repr, values))
    if _SHORT_G.fullmatch(float_format) is None:
        return [repr(float(float_format % v)) for v in values]
    return [s if "." in s and "e" not in s else _repr_layout(s) for s in map(float_format.__mod__, values)]


def _repr_layout(s: str) -> str:
    """A ``%g`` text without a decimal point, or in exponent form, laid out as repr lays out its float."""
    if "e" in s:
        return repr(float(s))
    return s + ".0" if s[-1].isdigit() else s  # "4" -> "4.0", "-0" -> "-0.0"; nan, inf, -inf as they are


#: Text astropy writes as it is: not empty, and no space (the delimiter), tab, quote or line break.
_QUOTE_FREE = re.compile(r'[^ \t"\r\n]+').fullmatch


def _quoted_cells(values: list[str]) -> list[str]:
    """Text cells as astropy's data writer leaves them: spaces and tabs at either end stripped, then quoted
    by Python's csv writer (space delimiter, ``QUOTE_MINIMAL``), an empty text as ``""``; each distinct text
    done once."""
    buf = io.StringIO()
    writer = csv.writer(buf, delimiter=" ", quotechar='"', doublequote=True, quoting=csv.QUOTE_MINIMAL)
    quoted = {}
    for s in set(values):
        if _QUOTE_FREE(s):  # nothing to strip or quote (ISO times, plain names)
            quoted[s] = s
            continue
        text = s.strip(" \t")
        if not text:
            quoted[s] = '""'
            continue
        buf.seek(0)
        buf.truncate()
        writer.writerow([text])
        quoted[s] = buf.getvalue().removesuffix(writer.dialect.lineterminator)
    return [quoted[s] for s in values]
