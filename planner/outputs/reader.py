"""Reading a plan folder back: its tables as written (CSV cells kept as their exact text), the
diagnostics and the manifest.

The report draws from these alone, so ``phasewise report DIR`` re-renders the same page at any time.
"""

from __future__ import annotations

import json
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import numpy as np
import pandas as pd

from planner.core.errors import InputError
from planner.core.safety import DEFAULT_MIN_SOLAR_ELONG_DEG
from planner.outputs import layout


@dataclass
class PlanFolder:
    """The files of one plan folder, as read (CSV cells kept as their exact text)."""

    path: Path
    plan: pd.DataFrame
    diagnostics: dict
    manifest: dict
    baseline: pd.DataFrame | None = None
    windows: pd.DataFrame | None = None
    geometry: pd.DataFrame | None = None
    sheets: list[str] = field(default_factory=list)
    #: lightcurve.json (the fit of a re-plan's log with magnitudes), when the folder has one.
    lightcurve: dict | None = None

    @property
    def target_name(self) -> str:
        return str((self.manifest.get("target") or {}).get("name") or "")

    @property
    def campaign_name(self) -> str:
        return str((self.manifest.get("campaign") or {}).get("name") or "")

    @property
    def site_info(self) -> dict[str, dict]:
        """The manifest's site entries by name (time zone, limits, sheet)."""
        return {str(s.get("name")): s for s in self.manifest.get("sites") or [] if isinstance(s, dict)}

    @property
    def settings(self) -> dict:
        return self.manifest.get("settings") or {}

    @property
    def rotation(self) -> dict:
        return self.settings.get("rotation") or {}

    @property
    def sites(self) -> list[str]:
        """Site names: the manifest's order, then any other site a table names."""
        names: dict[str, None] = dict.fromkeys(self.site_info)
        for df in (self.windows, self.plan, self.baseline, self.geometry):
            if df is not None and "site" in df:
                names.update(dict.fromkeys(df["site"].astype(str).unique()))
        return list(names)

    @property
    def nights(self) -> list[str]:
        nights: set[str] = set()
        for df in (self.windows, self.plan, self.baseline):
            if df is not None and "night" in df:
                nights |= {n for n in df["night"].astype(str).unique() if n}
        return sorted(nights)

    def min_solar_elong_deg(self, site: str | None = None) -> float:
        """A site's Sun limit from the manifest (the largest of all sites when ``site`` is None)."""
        info = self.site_info
        if site is not None:
            return float((info.get(site) or {}).get("min_solar_elong_deg") or DEFAULT_MIN_SOLAR_ELONG_DEG)
        limits = [float(s.get("min_solar_elong_deg") or DEFAULT_MIN_SOLAR_ELONG_DEG) for s in info.values()]
        return max(limits, default=DEFAULT_MIN_SOLAR_ELONG_DEG)

    def utc_offset_h(self, site: str, night: str | None) -> float | None:
        """The site's clock offset from UTC (h) at local noon of ``night``, from its time zone in the manifest."""
        zone_name = (self.site_info.get(site) or {}).get("timezone")
        if night is None or not zone_name:
            return None
        try:
            noon = datetime.fromisoformat(f"{night}T12:00").replace(tzinfo=ZoneInfo(str(zone_name)))
        except (ZoneInfoNotFoundError, ValueError):
            return None
        return noon.utcoffset().total_seconds() / 3600.0


def _read_csv(path: Path, required: Sequence[str], columns: Sequence[str] | None = None) -> pd.DataFrame:
    """A plan-folder table as text; ``columns``: only those of them the file has (None: every column)."""
    wanted = None if columns is None else set(columns) | set(required)
    try:
        df = pd.read_csv(
            path, dtype=str, keep_default_na=False, usecols=None if wanted is None else wanted.__contains__
        )
    except FileNotFoundError:
        raise InputError(str(path), "-", "file not found; is this a folder written by `phasewise plan`?") from None
    except (pd.errors.EmptyDataError, pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(str(path), "-", f"not a readable CSV table ({exc})") from None
    missing = [c for c in required if c not in df.columns]
    if missing:
        raise InputError(str(path), missing[0], "column missing")
    return df


def _read_json(path: Path) -> dict:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(str(path), "-", "file not found; is this a folder written by `phasewise plan`?") from None
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(str(path), "-", f"not valid JSON ({exc})") from None
    if not isinstance(data, dict):
        raise InputError(str(path), "-", "expected a JSON object")
    return data


_BLOCK_COLUMNS = ("site", "night", "start_utc", "end_utc")


def load_plan_folder(plan_dir: str | Path, geometry_columns: Sequence[str] | None = None) -> PlanFolder:
    """Read a plan folder. plan.csv, plan.json and diagnostics.json are required; the rest is drawn when present.

    ``geometry_columns``: read only these of geometry.csv's columns (besides ``site`` and ``time_utc``), those
    the file has; None reads them all. The file is the folder's largest (tens of MB for a large network).
    """
    d = Path(plan_dir)
    if not d.is_dir():
        raise InputError(str(d), "-", "not a folder; give the folder written by `phasewise plan --out`")
    plan = _read_csv(d / layout.PLAN_CSV, _BLOCK_COLUMNS)
    diagnostics = _read_json(d / layout.DIAGNOSTICS_JSON)
    if "plan" not in diagnostics or not isinstance(diagnostics["plan"], dict):
        raise InputError(str(d / layout.DIAGNOSTICS_JSON), "plan", "missing: expected the check result of the plan")
    manifest = _read_json(d / layout.MANIFEST_JSON)

    def optional(name: str, required: Sequence[str], columns=None) -> pd.DataFrame | None:
        return _read_csv(d / name, required, columns) if (d / name).exists() else None

    sheets_dir = d / layout.SHEETS_DIR
    return PlanFolder(
        path=d,
        plan=plan,
        diagnostics=diagnostics,
        manifest=manifest,
        baseline=optional(layout.BASELINE_CSV, _BLOCK_COLUMNS),
        windows=optional(layout.WINDOWS_CSV, _BLOCK_COLUMNS),
        geometry=optional(layout.GEOMETRY_CSV, ("site", "time_utc"), geometry_columns),
        sheets=sorted(p.name for p in sheets_dir.glob("*.txt")) if sheets_dir.is_dir() else [],
        lightcurve=_read_json(d / layout.LIGHTCURVE_JSON) if (d / layout.LIGHTCURVE_JSON).exists() else None,
    )


def utc_times(values) -> np.ndarray:
    return (
        pd.to_datetime(pd.Series(list(values), dtype=str), utc=True)
        .dt.tz_localize(None)
        .to_numpy(dtype="datetime64[ns]")
    )


def utc_offset_h(df: pd.DataFrame | None) -> float | None:
    """The site's clock offset from UTC (h), read from paired ``start_utc``/``start_local`` cells."""
    if df is None or "start_local" not in df or df.empty:
        return None
    rows = df[(df["start_utc"] != "") & (df["start_local"] != "")]
    offsets = []
    for u, loc in zip(rows["start_utc"], rows["start_local"], strict=True):
        try:
            tu = pd.Timestamp(u)
            tl = pd.Timestamp(loc)
        except ValueError:
            continue
        if tl.tzinfo is not None:
            offsets.append(tl.utcoffset().total_seconds() / 3600.0)
        else:
            tu = tu.tz_convert(None) if tu.tzinfo is not None else tu
            offsets.append((tl - tu).total_seconds() / 3600.0)
    return float(np.median(offsets)) if offsets else None


def cell_float(text) -> float:
    """A CSV cell as a float; NaN when empty or not a number."""
    try:
        return float(text)
    except (TypeError, ValueError):
        return math.nan
