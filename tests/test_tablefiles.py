"""The fast CSV writer writes what pandas' own ``to_csv`` writes (the reference), cell for cell."""

from __future__ import annotations

import numpy as np
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.outputs.tablefiles import csv_text

_FLOATS = st.floats(allow_nan=True, allow_infinity=True, width=64)
_TEXT = st.one_of(st.none(), st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=8))


@settings(max_examples=60, deadline=None)
@given(
    floats=st.lists(_FLOATS, min_size=1, max_size=12),
    texts=st.lists(_TEXT, min_size=12, max_size=12),
    fmt=st.sampled_from([None, "%.6g", "%.7g", "%.10g"]),
)
def test_csv_text_equals_pandas_to_csv(floats, texts, fmt):
    n = len(floats)
    df = pd.DataFrame(
        {
            "x_deg": np.array(floats, dtype=float),
            "n": np.arange(n, dtype=np.int64) * 7 - 3,
            "flag": np.arange(n) % 3 == 0,
            "site": pd.Series(texts[:n], dtype=object),
            "mixed": pd.Series([floats[i] if i % 2 else i for i in range(n)], dtype=object),
            "count": pd.array([None if i % 4 == 1 else i for i in range(n)], dtype="Int64"),
        }
    )
    assert csv_text(df, fmt) == df.to_csv(index=False, float_format=fmt, lineterminator="\n")


def test_dates_fall_back_to_pandas():
    df = pd.DataFrame({"t": pd.to_datetime(["2034-03-16T01:02:03", None]), "v": [1.25, np.nan]})
    assert csv_text(df, "%.3g") == df.to_csv(index=False, float_format="%.3g", lineterminator="\n")
