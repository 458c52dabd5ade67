"""numpy values to plain JSON values: JSON has no NaN or infinity, so those become null."""

from __future__ import annotations

import math
from typing import Any

import numpy as np


def json_safe(obj: Any) -> Any:
    """Recursively turn numpy scalars and arrays into Python ones; non-finite floats into None."""
    if isinstance(obj, dict):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_safe(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return json_safe(obj.tolist())
    if isinstance(obj, (float, np.floating)):
        v = float(obj)
        return v if math.isfinite(v) else None
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, np.integer):
        return int(obj)
    return obj
