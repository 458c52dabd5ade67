"""Tables as the files hold them: UTC columns as ISO 8601 text with Z, one number format per file."""

from __future__ import annotations

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
