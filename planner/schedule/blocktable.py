"""Visits → the observer's block table: times, pointing, tracking rates, altitude/airmass ranges,
exposure plan and expected S/N, positions at science start, mid-block and end (astrometric ICRF and
apparent of date); plus the planned exposures (mid-exposure times, σ and airmass) that
the diagnostics stack into light-curve points (:mod:`planner.photometry.points`).

Geometry comes from ``planner.sky.geometry.geometry`` sampled at every slot boundary inside each
visit (one call per site, all its visits together); exposure and S/N from
``planner.photometry.tables.photometry_columns`` at mid-block.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.core.safety import block_caution_kinds
from planner.inputs.settings import ExposureRules
from planner.inputs.sites import Site
from planner.inputs.targets import Target
from planner.photometry.ccd import exposures_per_block
from planner.photometry.tables import photometry_columns
from planner.schedule.planmodel import Visit
from planner.schedule.slots import SlotGrid
from planner.sky.geometry import geometry
from planner.visibility.nights import local_iso

#: Columns of plan.csv / baseline.csv, in order (documented in docs/formats.md).
BLOCK_COLUMNS = (
    "site",
    "night",
    "start_utc",
    "end_utc",
    "start_local",
    "end_local",
    "hours",
    "setup_minutes",
    "science_start_utc",
    "n_exposures",
    "exposure_s",
    "exposure_limited_by",
    "ra_deg",
    "dec_deg",
    "ra_app_deg",
    "dec_app_deg",
    "start_ra_deg",
    "start_dec_deg",
    "start_ra_app_deg",
    "start_dec_app_deg",
    "end_ra_deg",
    "end_dec_deg",
    "end_ra_app_deg",
    "end_dec_app_deg",
    "motion_arcsec_per_min",
    "motion_pa_deg",
    "ra_rate_arcsec_per_min",
    "dec_rate_arcsec_per_min",
    "min_alt_deg",
    "max_alt_deg",
    "min_airmass",
    "max_airmass",
    "moon_sep_deg",
    "moon_illum",
    "mag_pred",
    "band",
    "mag_band_pred",
    "snr_pred",
    "mag_err_pred",
    "solar_elong_deg",
    "max_sun_alt_deg",
    "cautions",
)
#: Exposure used where a site has no instrument description (common practice for a first look).
DEFAULT_EXPOSURE_S = 60.0
DEFAULT_READOUT_S = 10.0


def _empty() -> tuple[pd.DataFrame, pd.DataFrame]:
    return (
        pd.DataFrame({c: [] for c in BLOCK_COLUMNS}),
        pd.DataFrame({"time_utc": np.array([], dtype="datetime64[ns]"), "site": [], "mag_err": [], "airmass": []}),
    )


def _positions(mid: pd.Series, sci: pd.Series, end: pd.Series) -> dict[str, float]:
    """Apparent place of date at mid-block, and both places at science start and at the block's end."""
    out = {"ra_app_deg": float(mid["ra_app_deg"]), "dec_app_deg": float(mid["dec_app_deg"])}
    for prefix, row in (("start_", sci), ("end_", end)):
        for col in ("ra_deg", "dec_deg", "ra_app_deg", "dec_app_deg"):
            out[prefix + col] = float(row[col])
    return out


def block_table(
    visits: list[Visit], grid: SlotGrid, target: Target, sites: tuple[Site, ...] | list[Site], rules: ExposureRules
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """One row per visit (BLOCK_COLUMNS), and the planned exposures (time_utc, site, mag_err, airmass;
    the airmass interpolated between the slot-boundary samples)."""
    if not visits:
        return _empty()
    by_name = {s.name: s for s in sites}
    rows, exposures = [], []
    comet = getattr(target, "kind", "comet") == "comet"
    setup_minutes = grid.setup_slots * grid.slot_s / 60.0
    order = sorted(range(len(visits)), key=lambda i: (grid.slot_time(visits[i].start), visits[i].site_night))
    site_of = [grid.site_nights[v.site_night].site for v in visits]
    for name in dict.fromkeys(site_of):  # one geometry call per site (all its visits), not per epoch
        site = by_name[name]
        mine = [i for i in order if site_of[i] == name]
        starts = np.array([visits[i].start for i in mine])
        lengths = np.array([visits[i].length for i in mine])
        # Slot boundaries of every visit (start … stop), then the mid-block instant.
        counts = lengths + 1
        offs = np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts)
        sample_slots = np.repeat(starts, counts) + offs
        t_samples = grid.slot_time(sample_slots)
        sci0 = (starts + grid.setup_slots).astype(float)
        mid_ns = ((sci0 + starts + lengths) / 2.0 * grid.slot_s * 1e9).astype(np.int64)
        t_mid = grid.t_ref + mid_ns.astype("timedelta64[ns]")
        geo = geometry(target, np.concatenate([t_samples, t_mid]), [site])[name]
        samples = geo.iloc[: t_samples.size].reset_index(drop=True)
        mid = geo.iloc[t_samples.size :].reset_index(drop=True)
        which = np.repeat(np.arange(len(mine)), counts)
        first = np.cumsum(counts) - counts  # each visit's first sample: its start; + setup: science start
        at_sci = samples.iloc[first + grid.setup_slots].reset_index(drop=True)
        at_end = samples.iloc[first + lengths].reset_index(drop=True)
        agg = (
            samples.assign(_b=which)
            .groupby("_b")
            .agg(
                min_alt_deg=("alt_deg", "min"),
                max_alt_deg=("alt_deg", "max"),
                min_airmass=("airmass", "min"),
                max_airmass=("airmass", "max"),
                max_sun_alt_deg=("sun_alt_deg", "max"),
                solar_elong_deg=("solar_elong_deg", "min"),
            )
        )
        inst = site.instrument
        science_s = (lengths - grid.setup_slots) * grid.slot_s
        if inst is not None:
            phot = photometry_columns(mid, inst, rules, comet=comet)
            exp_s = phot["exposure_s"].to_numpy(dtype=float)
            snr = phot["snr_pred"].to_numpy(dtype=float)
            err = phot["mag_err_pred"].to_numpy(dtype=float)
            limited = phot["exposure_limited_by"].astype(str).to_numpy()
            band = phot["band"].astype(str).to_numpy()
            mag_band = phot["mag_band_pred"].to_numpy(dtype=float)
            readout = inst.readout_s
        else:
            exp_s = np.full(len(mine), np.nan)
            snr = np.full(len(mine), np.nan)
            err = np.full(len(mine), np.nan)
            limited = np.full(len(mine), "no instrument", dtype=object)
            band = np.full(len(mine), "", dtype=object)
            mag_band = np.full(len(mine), np.nan)
            readout = DEFAULT_READOUT_S
        plan_exp = np.where(np.isfinite(exp_s), exp_s, DEFAULT_EXPOSURE_S)
        n_exp = exposures_per_block(science_s, plan_exp, readout, 0.0)
        t_start = grid.slot_time(starts)
        t_stop = grid.slot_time(starts + lengths)
        t_sci = grid.slot_time(starts + grid.setup_slots)
        start_local = local_iso(t_start, site.timezone)
        end_local = local_iso(t_stop, site.timezone)
        for k, i in enumerate(mine):
            v = visits[i]
            m = mid.iloc[k]
            rows.append(
                dict(
                    _order=order.index(i),
                    site=name,
                    night=grid.site_nights[v.site_night].night.isoformat(),
                    start_utc=t_start[k],
                    end_utc=t_stop[k],
                    start_local=start_local[k],
                    end_local=end_local[k],
                    hours=v.length * grid.slot_s / 3600.0,
                    setup_minutes=setup_minutes,
                    science_start_utc=t_sci[k],
                    n_exposures=int(n_exp[k]),
                    exposure_s=float(exp_s[k]) if np.isfinite(exp_s[k]) else np.nan,
                    exposure_limited_by=str(limited[k]),
                    ra_deg=float(m["ra_deg"]),
                    dec_deg=float(m["dec_deg"]),
                    **_positions(m, at_sci.iloc[k], at_end.iloc[k]),
                    motion_arcsec_per_min=float(m["motion_arcsec_per_min"]),
                    motion_pa_deg=float(m["motion_pa_deg"]),
                    ra_rate_arcsec_per_min=float(m["ra_rate_arcsec_per_min"]),
                    dec_rate_arcsec_per_min=float(m["dec_rate_arcsec_per_min"]),
                    min_alt_deg=float(agg["min_alt_deg"].iloc[k]),
                    max_alt_deg=float(agg["max_alt_deg"].iloc[k]),
                    min_airmass=float(agg["min_airmass"].iloc[k]),
                    max_airmass=float(agg["max_airmass"].iloc[k]),
                    moon_sep_deg=float(m["moon_sep_deg"]),
                    moon_illum=float(m["moon_illum"]),
                    mag_pred=float(m["mag_pred"]),
                    band=str(band[k]),
                    mag_band_pred=float(mag_band[k]),
                    snr_pred=float(snr[k]),
                    mag_err_pred=float(err[k]),
                    solar_elong_deg=float(agg["solar_elong_deg"].iloc[k]),
                    max_sun_alt_deg=float(agg["max_sun_alt_deg"].iloc[k]),
                )
            )
            n = int(n_exp[k])
            if n > 0:
                cycle_ns = np.int64(round((plan_exp[k] + readout) * 1e9))
                half_ns = np.int64(round(plan_exp[k] * 0.5e9))
                t_exp = t_sci[k] + (np.arange(n, dtype=np.int64) * cycle_ns + half_ns).astype("timedelta64[ns]")
                sel = which == k
                t_s = (t_samples[sel] - grid.t_ref).astype(np.int64)
                x_exp = np.interp((t_exp - grid.t_ref).astype(np.int64), t_s, samples["airmass"].to_numpy(float)[sel])
                exposures.append(
                    pd.DataFrame({"time_utc": t_exp, "site": name, "mag_err": float(err[k]), "airmass": x_exp})
                )
    table = pd.DataFrame(rows).sort_values("_order").drop(columns="_order").reset_index(drop=True)
    limit = table["site"].map({s.name: s.min_solar_elong_deg for s in sites}).to_numpy(dtype=float)
    table["cautions"] = block_caution_kinds(
        table["solar_elong_deg"].to_numpy(float),
        limit,
        table["max_sun_alt_deg"].to_numpy(float),
        table["max_airmass"].to_numpy(float),
        rules.max_airmass,
        table["moon_sep_deg"].to_numpy(float),
        table["moon_illum"].to_numpy(float),
    )
    table = table[list(BLOCK_COLUMNS)]
    exp = pd.concat(exposures, ignore_index=True) if exposures else _empty()[1]
    return table, exp.sort_values("time_utc", kind="stable").reset_index(drop=True)
