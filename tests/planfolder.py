"""A small hand-made plan folder with the scheduler's file names and columns (docs/formats.md).

The report must render from the plan folder alone, so its tests build one here: two invented sites,
three nights, a few blocks, and check JSON with every key the report reads. The values are made up
but self-consistent (blocks lie inside windows, windows where the target is up in the dark).
Altitudes come from a crude sidereal-time formula: good enough for a picture, not for astronomy.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pandas as pd

from planner.diagnostics.check import check_times

SITES = [
    # name, latitude, east longitude, UTC offset (h)
    ("Ridge North", -30.0, 20.0, 2.0),
    ("Gum Flat", -33.0, 148.0, 11.0),
]
NIGHTS = ["2034-03-16", "2034-03-17", "2034-03-18"]
TARGET_RA_DEG, TARGET_DEC_DEG = 150.0, -25.0
SUN_RA_DEG, SUN_DEC_DEG = 356.0, -2.0


def _alt_deg(times: pd.DatetimeIndex, lat_deg: float, lon_deg: float, ra_deg: float, dec_deg: float) -> np.ndarray:
    days = (times - pd.Timestamp("2000-01-01T12:00")).total_seconds().to_numpy() / 86400.0
    lst_deg = (280.46061837 + 360.98564736629 * days + lon_deg) % 360.0
    ha = np.radians(lst_deg - ra_deg)
    lat, dec = np.radians(lat_deg), np.radians(dec_deg)
    return np.degrees(np.arcsin(np.sin(lat) * np.sin(dec) + np.cos(lat) * np.cos(dec) * np.cos(ha)))


def _local(t: pd.Timestamp, offset_h: float) -> str:
    sign = "+" if offset_h >= 0 else "-"
    hh, mm = divmod(int(round(abs(offset_h) * 60)), 60)
    return (t + pd.Timedelta(hours=offset_h)).strftime("%Y-%m-%dT%H:%M:%S") + f"{sign}{hh:02d}:{mm:02d}"


def _interval(site: str, night: str, a: pd.Timestamp, b: pd.Timestamp, tz_h: float) -> dict:
    return dict(
        site=site,
        night=night,
        start_utc=_utc(a),
        end_utc=_utc(b),
        start_local=_local(a, tz_h),
        end_local=_local(b, tz_h),
    )


def _slug(name: str) -> str:
    return re.sub(r"[^a-z0-9]+", "-", name.lower()).strip("-")


def _utc(t: pd.Timestamp) -> str:
    return t.strftime("%Y-%m-%dT%H:%M:%SZ")


def _exposure_times(df: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Exposure mid-times spread evenly over each block, and the site of each."""
    times, sites = [], []
    for r in df.itertuples():
        a, b = pd.Timestamp(r.start_utc).tz_localize(None), pd.Timestamp(r.end_utc).tz_localize(None)
        k = (np.arange(r.n_exposures) + 0.5) / r.n_exposures
        times.append(np.datetime64(a, "ns") + ((b - a).value * k).astype("timedelta64[ns]"))
        sites += [r.site] * r.n_exposures
    return np.concatenate(times), np.array(sites)


def _check_json(df: pd.DataFrame, seed: int) -> dict:
    """The real ``phasewise check`` result for the block's exposure times (few trials, to stay quick)."""
    times, sites = _exposure_times(df)
    return check_times(times, min_period_h=2.0, max_period_h=30.0, sites=sites, trials=12, seed=seed).to_dict()


def make_plan_folder(
    out: Path,
    target_name: str = "Demo comet 2034 Q1",
    site_names: list[str] | None = None,
) -> Path:
    """Write a plan folder at ``out`` and return it."""
    out.mkdir(parents=True, exist_ok=True)
    sites = [(site_names[i] if site_names else s[0],) + s[1:] for i, s in enumerate(SITES)]
    start = pd.Timestamp(NIGHTS[0]) - pd.Timedelta(hours=12)
    times = pd.date_range(start, start + pd.Timedelta(days=len(NIGHTS) + 1), freq="10min")
    days = (times - times[0]).total_seconds().to_numpy() / 86400.0

    geom_rows, win_rows, plan_rows, base_rows = [], [], [], []
    for name, lat, lon, tz_h in sites:
        alt = _alt_deg(times, lat, lon, TARGET_RA_DEG, TARGET_DEC_DEG)
        sun_alt = _alt_deg(times, lat, lon, SUN_RA_DEG, SUN_DEC_DEG)
        geom_rows.append(
            pd.DataFrame(
                {
                    "site": name,
                    "time_utc": [_utc(t) for t in times],
                    "helio_dist_au": 1.20 + 0.01 * days,
                    "obs_dist_au": 0.40 + 0.004 * days,
                    "phase_angle_deg": 40.0 + 0.5 * days,
                    "solar_elong_deg": 120.0 - 1.0 * days,
                    "mag_pred": 15.0 + 0.05 * days,
                    "alt_deg": alt.round(3),
                    "sun_alt_deg": sun_alt.round(3),
                }
            )
        )
        for k, night in enumerate(NIGHTS):
            noon = pd.Timestamp(night) + pd.Timedelta(hours=12 - tz_h)
            sel = (times >= noon) & (times < noon + pd.Timedelta(days=1)) & (alt > 20) & (sun_alt < -12)
            if k == 2 and name == sites[1][0]:  # a night without a window, to show the reason
                win_rows.append(
                    dict(
                        site=name,
                        night=night,
                        start_utc="",
                        end_utc="",
                        start_local="",
                        end_local="",
                        hours=0.0,
                        best_utc="",
                        min_airmass=np.nan,
                        max_alt_deg=np.nan,
                        moon_sep_deg=np.nan,
                        moon_illum=np.nan,
                        mag_pred=np.nan,
                        motion_arcsec_per_min=np.nan,
                        reason="allocation withdrawn",
                    )
                )
                continue
            w0, w1 = times[sel][0], times[sel][-1]
            best = times[sel][np.argmax(alt[sel])]
            hours = (w1 - w0).total_seconds() / 3600
            win_rows.append(
                dict(
                    **_interval(name, night, w0, w1, tz_h),
                    hours=round(hours, 3),
                    best_utc=_utc(best),
                    min_airmass=round(1 / np.sin(np.radians(alt[sel].max())), 3),
                    max_alt_deg=round(float(alt[sel].max()), 2),
                    moon_sep_deg=80.0,
                    moon_illum=0.3,
                    mag_pred=15.1,
                    motion_arcsec_per_min=1.2,
                    reason="",
                    caution="Moon <rises> late" if k == 1 else "",
                )
            )
            for rows, b0 in (
                (plan_rows, w0 + pd.Timedelta(minutes=20 + 50 * k)),
                (base_rows, best - pd.Timedelta(hours=1)),
            ):
                b0 = max(b0, w0)
                b1 = min(b0 + pd.Timedelta(hours=2), w1)
                n_exp = int((b1 - b0).total_seconds() // 180)
                rows.append(
                    dict(
                        **_interval(name, night, b0, b1, tz_h),
                        n_exposures=n_exp,
                        exposure_s=150.0,
                        ra_deg=TARGET_RA_DEG,
                        dec_deg=TARGET_DEC_DEG,
                        motion_arcsec_per_min=1.234567,
                        motion_pa_deg=211.5,
                        min_alt_deg=35.25,
                        max_alt_deg=61.5,
                        min_airmass=1.139,
                        max_airmass=1.739,
                        moon_sep_deg=81.25,
                        mag_pred=15.123456,
                        snr_pred=48.7,
                        hours=round((b1 - b0).total_seconds() / 3600, 4),
                        solar_elong_deg=118.5,
                        max_sun_alt_deg=float(sun_alt[(times >= b0) & (times <= b1)].max()),
                        cautions="twilight" if float(sun_alt[(times >= b0) & (times <= b1)].max()) > -12 else "",
                    )
                )
    pd.concat(geom_rows).to_csv(out / "geometry.csv", index=False)
    pd.DataFrame(win_rows).to_csv(out / "windows.csv", index=False)
    plan = pd.DataFrame(plan_rows)
    plan.to_csv(out / "plan.csv", index=False)
    pd.DataFrame(base_rows).to_csv(out / "baseline.csv", index=False)

    # objective and robustness in the scheduler's shape (values invented).
    diag = {
        "plan": _check_json(plan, 1),
        "baseline": _check_json(pd.DataFrame(base_rows), 2),
        "objective": {
            "definition": "J = coverage - alias",
            "weights": {"coverage": 1.0, "alias": 0.5},
            "heuristic": {"coverage": 0.912345, "alias": 0.3, "total": 0.762345},
            "baseline": {"coverage": 0.8, "alias": 0.7, "total": 0.45},
            "guarantee": {"ratio": None, "statement": "none proven <in this fixture>"},
        },
        "robustness": {
            "plan": {"expected_coverage": 0.81, "p10_coverage": 0.64, "single_site_bands_h": [[24.0, 24.5]]},
            "baseline": {"expected_coverage": 0.7, "p10_coverage": 0.5, "single_site_bands_h": []},
        },
    }
    (out / "diagnostics.json").write_text(json.dumps(diag, indent=1, allow_nan=False))
    # The manifest: what the report knows of the inputs (docs/formats.md, "plan.json").
    zones = {2.0: "Africa/Johannesburg", 11.0: "Australia/Sydney"}
    manifest = {
        "schema_version": 2,
        "phasewise_version": "fixture",
        "campaign": {"name": target_name + " week", "first_night": NIGHTS[0], "nights": len(NIGHTS), "seed": 1},
        "target": {"name": target_name, "kind": "comet"},
        "sites": [
            {
                "name": s[0],
                "timezone": zones[s[3]],
                "latitude_deg": s[1],
                "longitude_deg": s[2],
                "min_alt_deg": 20.0,
                "min_solar_elong_deg": 30.0,
                "sheet": f"sheets/{_slug(s[0])}.txt",
            }
            for s in sites
        ],
        "settings": {"rotation": {"min_period_h": 2.0, "max_period_h": 30.0, "double_peaked": True}},
        "blocks": json.loads(plan.to_json(orient="records")),
    }
    (out / "plan.json").write_text(json.dumps(manifest, indent=1))
    # The target file's copy (name only here): the report takes the target's name from it when present.
    (out / "target.toml").write_text(f"name = {json.dumps(target_name)}\n")
    (out / "sheets").mkdir(exist_ok=True)
    for s in sites:
        (out / "sheets" / f"{_slug(s[0])}.txt").write_text(f"{s[0]}\n")
    return out
