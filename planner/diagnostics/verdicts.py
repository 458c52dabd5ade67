"""Reading a check: the worst-covered periods, the geometric trend, and a verdict per period band."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from planner.core.constants import C_AU_PER_DAY
from planner.diagnostics.recovery import RecoveryResult
from planner.diagnostics.result import CheckSettings


def _local_minima(values: np.ndarray) -> np.ndarray:
    """Indices of local minima (plateaus give their first index), ends included."""
    v = np.concatenate([[np.inf], values, [np.inf]])
    left = v[1:-1] < v[:-2]
    right = v[1:-1] <= v[2:]
    return np.nonzero(left & right)[0]


def worst_covered(periods_h: np.ndarray, coverage: np.ndarray, gap: np.ndarray, count: int = 8) -> list[dict]:
    """The most poorly covered periods: local minima of coverage, worst first (then by gap)."""
    idx = _local_minima(coverage - 1e-6 * gap)
    order = np.lexsort((-gap[idx], coverage[idx]))[:count]
    return [
        {"period_h": float(periods_h[i]), "coverage": float(coverage[i]), "largest_phase_gap": float(gap[i])}
        for i in idx[order]
    ]


def geometry_arrays(geometry) -> dict[str, np.ndarray]:
    """Accept the ``planner.sky.geometry.geometry`` dict (key "geocentre"), a DataFrame or a mapping."""
    if isinstance(geometry, Mapping) and "geocentre" in geometry:
        geometry = geometry["geocentre"]
    cols = {}
    for name in (
        "helio_dist_au",
        "obs_dist_au",
        "phase_angle_deg",
        "pab_lon_deg",
        "pab_lat_deg",
        "mag_pred",
        "solar_elong_deg",
        "light_time_minutes",
    ):
        try:
            cols[name] = np.asarray(geometry[name], dtype=float)
        except (KeyError, IndexError, TypeError):
            continue
    return cols


def geometric_trend_mag(geometry: Mapping[str, np.ndarray], k1: float = 10.0) -> np.ndarray | None:
    """The geometric magnitude at each time, mean removed: ``mag_pred`` when present, else
    5 log Δ + K1 log r (total comet magnitude law; K1 = 10, i.e. fading as r⁻⁴, is common
    practice). ``None`` when neither is available."""
    if "mag_pred" in geometry and np.all(np.isfinite(geometry["mag_pred"])):
        m = np.asarray(geometry["mag_pred"], dtype=float)
    elif "helio_dist_au" in geometry and "obs_dist_au" in geometry:
        m = 5 * np.log10(geometry["obs_dist_au"]) + k1 * np.log10(geometry["helio_dist_au"])
    else:
        return None
    return m - m.mean()


def light_time_minutes(geometry: Mapping[str, np.ndarray]) -> np.ndarray | None:
    """One-way light time per time, minutes: the geometry's ``light_time_minutes``, else Δ/c from
    ``obs_dist_au`` (c and the au of IAU 2009/2012); None without either (times stay uncorrected)."""
    if "light_time_minutes" in geometry and np.all(np.isfinite(geometry["light_time_minutes"])):
        return np.asarray(geometry["light_time_minutes"], dtype=float)
    if "obs_dist_au" in geometry and np.all(np.isfinite(geometry["obs_dist_au"])):
        return np.asarray(geometry["obs_dist_au"], dtype=float) / C_AU_PER_DAY * 1440.0
    return None


def band_edges_h(settings: CheckSettings, recovery: RecoveryResult | None, n_bands: int) -> np.ndarray:
    """Log-spaced period bands; the injection–recovery bins are the same bands."""
    if recovery is not None:
        edges = [b.min_period_h for b in recovery.bins] + [recovery.bins[-1].max_period_h]
        return np.array(edges)
    return np.geomspace(settings.min_period_h, settings.max_period_h, n_bands + 1)


def band_verdict(cov_band: np.ndarray, rec: dict | None, alias_max: float, s: CheckSettings) -> str:
    """under-covered if more than a quarter of the band's periods fall below the coverage
    threshold; if recovery misses its threshold, alias-prone when aliases and the half period
    (another period winning: a window alias, or P/2 of a double-peaked curve) explain at least half
    of the failures beyond what chance gives (κ = (observed − expected)/(failures − expected)
    ≥ 0.5), under-covered when noise or missing phases do; alias-prone if an alias partner
    reaches the alias threshold; otherwise secure."""
    poor = float(np.mean(cov_band < s.coverage_threshold)) if cov_band.size else 1.0
    if poor > 0.25:
        return "under-covered"
    if rec is not None and rec["n_trials"] and rec["fraction"] < s.recovery_threshold:
        confused = rec["failures_alias"] + rec.get("failures_half", 0)
        failures = confused + rec["failures_other"]
        expected = rec["failures_alias_expected"]
        excess = (confused - expected) / (failures - expected) if failures > expected else 0.0
        return "alias-prone" if excess >= 0.5 else "under-covered"
    if alias_max >= s.alias_threshold:
        return "alias-prone"
    return "secure"


def repeated_times(times_utc: np.ndarray, sites: np.ndarray | None = None) -> int:
    """How many rows repeat an earlier row's time (to the second) at the same site: likely copies.

    The same instant at two different sites is a normal simultaneous observation and is not counted.
    """
    sec = np.asarray(times_utc, dtype="datetime64[s]").astype(np.int64)
    labels = np.full(sec.size, "") if sites is None else np.asarray(sites).astype(str)
    order = np.lexsort((sec, labels))
    same = (sec[order][1:] == sec[order][:-1]) & (labels[order][1:] == labels[order][:-1])
    return int(same.sum())
