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
