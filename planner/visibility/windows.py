"""Observable windows per site and night, and why a night has none.

For each site-night the dark time (:func:`planner.visibility.nights.dark_intervals`) is sampled every
``step_s`` seconds; the target's sky position there is tested against the site's limits (horizon
mask at the target's azimuth, declination range, hour-angle limit, solar elongation, Moon
separation, allocated time blocks); runs of samples meeting every limit are the windows, and each
edge that falls between samples is refined by bisection to ``tol_s`` (:mod:`planner.visibility.intervals`).

Pointing near the Sun can destroy equipment and blind people: windows near or limited by the site's
solar-elongation limit, and windows that open or close in bright twilight (a darkness limit with the
Sun above −12°, the block cautions' threshold in planner.core.safety), carry a caution. The
observatory's rules decide.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from datetime import date

import numpy as np
import pandas as pd

from planner.core import units
from planner.core.errors import InputError
from planner.core.safety import SUN_SAFETY_TEXT, TWILIGHT_CAUTION_SUN_ALT_DEG, near_sun
from planner.inputs.sites import Site
from planner.visibility.intervals import refine_edges, true_runs
from planner.visibility.limits import all_met, first_failed, limit_masks, no_window_reason
from planner.visibility.nights import EDGE_TOL_S, dark_intervals, local_iso, night_labels, spans_grid

#: Sky provider: UTC times per site name → one geometry row per time (columns of docs/formats.md).
SkyAt = Callable[[dict[str, np.ndarray]], dict[str, pd.DataFrame]]


WINDOW_COLUMNS = (
    "site",
    "night",
    "start_utc",
    "end_utc",
    "start_local",
    "end_local",
    "hours",
    "night_budget_h",
    "best_utc",
    "min_airmass",
    "max_alt_deg",
    "moon_sep_deg",
    "moon_illum",
    "solar_elong_deg",
    "mag_pred",
    "motion_arcsec_per_min",
    "start_limit",
    "end_limit",
    "reason",
    "caution",
)


def _hours(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return (np.asarray(b, "datetime64[ns]") - np.asarray(a, "datetime64[ns]")).astype(np.int64) / 3.6e12


def find_windows(
    sky_at: SkyAt,
    sites: Sequence[Site],
    first_night: date,
    nights: int,
    *,
    step_s: float = 300.0,
    tol_s: float = EDGE_TOL_S,
) -> pd.DataFrame:
    """Observable windows from any sky provider (the core of :func:`observable_windows`).

    ``sky_at({site_name: times_utc})`` returns geometry rows per site for those times. Calls it once
    for the coarse grid, once per bisection halving (all sites and edges together) and once for the
    edge and best-time values.
    """
    names = [s.name for s in sites]
    if len(set(names)) != len(names):
        raise InputError("command line", "site", f"two sites share a name ({', '.join(names)}); names must differ")
    if step_s <= 0 or tol_s <= 0:
        raise InputError("command line", "step", "the grid step and the edge tolerance must be positive")
    labels = night_labels(first_night, nights)

    # Dark time per site-night, then a grid over it.
    dark, grid, span_of, dark_on = {}, {}, {}, {}
    for s in sites:
        d = dark_intervals(s, first_night, nights, tol_s=tol_s)
        dark[s.name] = d
        dark_on[s.name] = d[d["hours"] > 0].reset_index(drop=True)
        grid[s.name], span_of[s.name] = spans_grid(
            dark_on[s.name]["start_utc"].to_numpy(), dark_on[s.name]["end_utc"].to_numpy(), step_s
        )
    sky = sky_at(grid)
    masks = {s.name: limit_masks(s, sky[s.name]) for s in sites}

    # Runs of samples meeting every limit; edges inside a dark span are bracketed for bisection.
    runs, brackets = {}, []
    for s in sites:
        t, span = grid[s.name], span_of[s.name]
        first, last = true_runs(all_met(masks[s.name]), span)
        opens = (first == 0) | (span[np.maximum(first - 1, 0)] != span[first])
        closes = (last == t.size - 1) | (span[np.minimum(last + 1, max(t.size - 1, 0))] != span[last])
        runs[s.name] = (first, last, opens, closes)
        for idx, is_edge, step in ((first, opens, -1), (last, closes, +1)):
            sel = idx[~is_edge]
            brackets.append((s.name, t[sel], t[sel + step]))
    site_of = np.concatenate([np.full(b[1].size, b[0], dtype=object) for b in brackets]) if brackets else []
    t_in = np.concatenate([b[1] for b in brackets]) if brackets else np.array([], "datetime64[ns]")
    t_out = np.concatenate([b[2] for b in brackets]) if brackets else np.array([], "datetime64[ns]")
    by_name = {s.name: s for s in sites}

    def _holds_at(times: np.ndarray) -> np.ndarray:
        ok = np.zeros(times.size, dtype=bool)
        sel = {n: np.flatnonzero(site_of == n) for n in names}
        rows = sky_at({n: times[i] for n, i in sel.items()})
        for n, i in sel.items():
            if i.size:
                ok[i] = all_met(limit_masks(by_name[n], rows[n]))
        return ok

    t_in, t_out = refine_edges(_holds_at, t_in, t_out, tol_s)

    # One more call: the refined inner edges, the outer sides (which limit closed the window) and best times.
    edges, k = {}, 0
    for s in sites:
        first, last, opens, closes = runs[s.name]
        t = grid[s.name]
        start, end = t[first].copy(), t[last].copy()
        start_out, end_out = start.copy(), end.copy()  # replaced where an edge was refined
        n_open, n_close = int((~opens).sum()), int((~closes).sum())
        start[~opens], start_out[~opens] = t_in[k : k + n_open], t_out[k : k + n_open]
        k += n_open
        end[~closes], end_out[~closes] = t_in[k : k + n_close], t_out[k : k + n_close]
        k += n_close
        best = _best_times(t, sky[s.name]["alt_deg"].to_numpy(float), first, last, start, end)
        edges[s.name] = (start, end, start_out, end_out, best)
    at = sky_at({n: np.concatenate(edges[n]) for n in names})

    out = pd.concat(
        [
            _site_rows(
                s,
                labels,
                dark[s.name],
                dark_on[s.name],
                grid[s.name],
                span_of[s.name],
                sky[s.name],
                masks[s.name],
                runs[s.name],
                edges[s.name],
                at[s.name],
            )
            for s in sites
        ],
        ignore_index=True,
    )[list(WINDOW_COLUMNS)]
    for c in ("start_utc", "end_utc", "best_utc"):
        out[c] = out[c].astype("datetime64[ns]")
    return out


def _best_times(t, alt, first, last, start, end) -> np.ndarray:
    """Time of highest altitude in each run: the best sample, moved to the vertex of a parabola
    through it and its neighbours when it is inside the run, kept within [start, end]."""
    if first.size == 0:
        return start.copy()
    run_id = np.repeat(np.arange(first.size), last - first + 1)
    idx, _ = _run_values(np.arange(t.size), first, last)
    order = np.lexsort((-alt[idx], run_id))
    top = idx[order[np.searchsorted(run_id[order], np.arange(first.size))]]
    best = t[top].copy()
    inner = (top > first) & (top < last)
    i = top[inner]
    y0, y1, y2 = alt[i - 1], alt[i], alt[i + 1]
    h_ns = (t[i + 1] - t[i]).astype(np.int64).astype(float)
    denom = y0 - 2.0 * y1 + y2
    shift = np.where(denom < 0, 0.5 * (y0 - y2) / np.where(denom < 0, denom, -1.0), 0.0)
    best[inner] = t[i] + (np.clip(shift, -1.0, 1.0) * h_ns).astype("timedelta64[ns]")
    return np.clip(best, start, end)


def _run_values(values: np.ndarray, first: np.ndarray, last: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Concatenated samples of every run and the offsets where each run begins (for ufunc.reduceat)."""
    idx = np.concatenate([np.arange(a, b + 1) for a, b in zip(first, last, strict=True)])
    return values[idx], np.concatenate(([0], np.cumsum(last - first + 1)[:-1]))


def _site_rows(site, labels, dark, dark_on, t, span, sky, masks, runs, edges, at) -> pd.DataFrame:
    """Window rows of one site (vectorised over its runs), plus a zero-hour row per night without one."""
    first, last, opens, closes = runs
    start, end, _, _, best = edges
    m = first.size
    empty = [k for k in range(len(labels))]
    parts = []
    if m:
        at_start, at_end, at_best = (at.iloc[i * m : (i + 1) * m] for i in (0, 1, 4))
        failed_start = first_failed(limit_masks(site, at.iloc[2 * m : 3 * m]))
        failed_end = first_failed(limit_masks(site, at.iloc[3 * m : 4 * m]))
        night_of_run = np.searchsorted(labels, dark_on["night"].to_numpy()[span[first]])
        hours = _hours(start, end)
        budget = np.zeros(len(labels))
        np.add.at(budget, night_of_run, hours)
        if site.allocation.hours_per_night is not None:
            budget = np.minimum(budget, site.allocation.hours_per_night)
        # The least solar elongation over each window (samples and both edges): the safety figure.
        c = "solar_elong_deg"
        inside, offsets = _run_values(sky[c].to_numpy(float), first, last)
        elong = np.minimum.reduce(
            [np.minimum.reduceat(inside, offsets), at_start[c].to_numpy(float), at_end[c].to_numpy(float)]
        )
        span_rows = dark_on.iloc[span[first]]
        edge_kind = {True: "twilight", False: "noon"}
        start_limit = np.where(opens, [edge_kind[b] for b in span_rows["start_is_twilight"]], failed_start)
        end_limit = np.where(closes, [edge_kind[b] for b in span_rows["end_is_twilight"]], failed_end)
        near = near_sun(elong, site.min_solar_elong_deg) | (start_limit == "sun_elong") | (end_limit == "sun_elong")
        # A window that opens at the end of nautical or astronomical twilight opens in the dark: no caution.
        bright = site.night_sun_alt_deg > TWILIGHT_CAUTION_SUN_ALT_DEG
        caution = []
        for j in range(m):  # a sentence per window: output assembly only
            words = [f"Sun {elong[j]:.0f}° away: {SUN_SAFETY_TEXT}"] if near[j] else []
            tw = [w for w, lim in (("opens", start_limit[j]), ("closes", end_limit[j])) if lim == "twilight" and bright]
            if tw:
                words.append(f"{' and '.join(tw)} in {site.twilight} twilight: keep clear of the Sun's side of the sky")
            caution.append("; ".join(words))
        parts.append(
            pd.DataFrame(
                {
                    "site": site.name,
                    "night": np.asarray(labels)[night_of_run],
                    "start_utc": start,
                    "end_utc": end,
                    "start_local": local_iso(start, site.timezone),
                    "end_local": local_iso(end, site.timezone),
                    "hours": hours,
                    "night_budget_h": budget[night_of_run],
                    "best_utc": best,
                    "min_airmass": at_best["airmass"].to_numpy(float),
                    "max_alt_deg": at_best["alt_deg"].to_numpy(float),
                    "moon_sep_deg": at_best["moon_sep_deg"].to_numpy(float),
                    "moon_illum": at_best["moon_illum"].to_numpy(float),
                    "solar_elong_deg": elong,
                    "mag_pred": at_best["mag_pred"].to_numpy(float),
                    "motion_arcsec_per_min": at_best["motion_arcsec_per_min"].to_numpy(float),
                    "start_limit": start_limit.astype(str),
                    "end_limit": end_limit.astype(str),
                    "reason": "",
                    "caution": caution,
                }
            )
        )
        empty = sorted(set(empty) - set(night_of_run.tolist()))
    if empty:
        parts.append(pd.DataFrame([_empty_row(site, labels[k], dark, dark_on, span, sky, masks) for k in empty]))
    rows = pd.concat(parts, ignore_index=True) if len(parts) > 1 else parts[0]
    return rows.sort_values(["night", "start_utc"], kind="stable", na_position="first")


def _empty_row(site, label, dark, dark_on, span, sky, masks) -> dict:
    """The zero-hour row of a night without a window, with the reason in plain words."""
    spans_k = np.flatnonzero(dark_on["night"].to_numpy() == label)
    caution = ""
    if spans_k.size == 0:
        reason = str(dark.loc[dark["night"] == label, "reason"].iloc[0])
        elong = np.nan
    else:
        sel = np.isin(span, spans_k)
        night_masks = {n: v[sel] for n, v in masks.items()}
        night_sky = sky.iloc[np.flatnonzero(sel)]
        reason = no_window_reason(site, night_sky, night_masks)
        elong = float(night_sky["solar_elong_deg"].min())
        if not night_masks["sun_elong"].all():
            caution = f"Sun {elong:.0f}° away: {SUN_SAFETY_TEXT}"
    nat = np.datetime64("NaT", "ns")
    return dict(
        site=site.name,
        night=label,
        start_utc=nat,
        end_utc=nat,
        start_local="",
        end_local="",
        hours=0.0,
        night_budget_h=0.0,
        best_utc=nat,
        min_airmass=np.nan,
        max_alt_deg=np.nan,
        moon_sep_deg=np.nan,
        moon_illum=np.nan,
        solar_elong_deg=elong,
        mag_pred=np.nan,
        motion_arcsec_per_min=np.nan,
        start_limit="",
        end_limit="",
        reason=reason,
        caution=caution,
    )


#: Below this many epochs in all, sites are evaluated together on the union of their times (one
#: geometry call: the per-call cost of ephemeris reads and light time dominates small batches).
POOL_MAX_EPOCHS = 2000


def geometry_sky(target, sites: Sequence[Site], pool_max_epochs: int = POOL_MAX_EPOCHS) -> SkyAt:
    """Sky provider from :func:`planner.sky.geometry.geometry` for ``sites``."""
    from planner.sky.geometry import geometry

    by_name = {s.name: s for s in sites}

    def sky_at(times_by_site: dict[str, np.ndarray]) -> dict[str, pd.DataFrame]:
        times_by_site = {n: np.asarray(t, dtype="datetime64[ns]") for n, t in times_by_site.items()}
        out = {n: pd.DataFrame(columns=["time_utc", *_SKY_COLUMNS]) for n, t in times_by_site.items() if not t.size}
        busy = [n for n, t in times_by_site.items() if t.size]
        if sum(times_by_site[n].size for n in busy) <= pool_max_epochs and len(busy) > 1:
            union = np.unique(np.concatenate([times_by_site[n] for n in busy]))
            frames = geometry(target, union, [by_name[n] for n in busy])
            for n in busy:
                rows = np.searchsorted(union, times_by_site[n])
                out[n] = frames[n].iloc[rows].reset_index(drop=True)
        else:
            for n in busy:
                out[n] = geometry(target, times_by_site[n], [by_name[n]])[n].reset_index(drop=True)
        return out

    return sky_at


_SKY_COLUMNS = (
    "ra_deg",
    "dec_deg",
    "solar_elong_deg",
    "mag_pred",
    "motion_arcsec_per_min",
    "alt_deg",
    "az_deg",
    "airmass",
    "hour_angle_h",
    "sun_alt_deg",
    "moon_alt_deg",
    "moon_sep_deg",
    "moon_illum",
)


def observable_windows(
    target,
    sites: Sequence[Site],
    first_night: date,
    nights: int,
    *,
    step_s: float = 300.0,
    tol_s: float = EDGE_TOL_S,
) -> pd.DataFrame:
    """When ``target`` can be observed from each site on each night, and why not when it cannot.

    One row per observable interval (several per night are possible), or one zero-hour row with a
    ``reason`` for a night without any. Columns: :data:`WINDOW_COLUMNS`, described in
    docs/formats.md ("Windows columns"). Edges are refined to ``tol_s`` seconds from a ``step_s`` grid.
    ``first_night`` may be a date, ISO text or an astropy ``Time``; ``step_s`` seconds, text (``"5m"``) or
    a time Quantity.
    """
    first_night = units.calendar_date(first_night, "first_night")
    step_s = units.seconds(step_s, "step_s")
    return find_windows(geometry_sky(target, sites), sites, first_night, nights, step_s=step_s, tol_s=tol_s)
