"""Photometric σ of frames at given times: planned exposures, or a log's own exposures and errors.

The model is :func:`planner.photometry.tables.photometry_columns` (CCD equation, moonlit sky,
trailing) evaluated at each frame's time and site; a log's own ``mag_err`` wins where it has one.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from planner.inputs.sites import Instrument, Site
from planner.inputs.targets import Target
from planner.photometry.tables import photometry_columns
from planner.sky.geometry import geometry


def mag_err_from_geometry(
    geom_df: pd.DataFrame, instrument: Instrument, *, comet: bool | None = None, **kwargs: Any
) -> np.ndarray:
    """Per-row photometric error (mag) for one site's geometry table: ``mag_err_pred`` of
    :func:`photometry_columns` with the same keyword arguments (pass ``exposure_s`` for a log)."""
    table = photometry_columns(geom_df, instrument, comet=comet, **kwargs)
    return table["mag_err_pred"].to_numpy(dtype=float)


def frame_model(
    target: Target,
    times_utc: np.ndarray,
    site_names: Sequence[str] | None,
    sites: Sequence[Site],
    *,
    exposure_s: np.ndarray | None = None,
    **kwargs: Any,
) -> tuple[np.ndarray, np.ndarray]:
    """Modelled photometric error (mag) and airmass of each observation time (NaN where unknown).

    ``site_names[i]`` names the site of ``times_utc[i]`` (None: all at the one site given);
    ``exposure_s`` (optional, per point, NaN where unknown) takes logged exposures instead of the
    planned ones. The airmass is known at every site of ``sites``; the error only at sites with an
    instrument, where the target is up and the Sun down. Geometry from
    ``planner.sky.geometry.geometry``; the other keywords go to :func:`photometry_columns`.
    """
    times = np.asarray(times_utc, dtype="datetime64[ns]")
    if site_names is None:
        if len(sites) != 1:
            raise ValueError("times without site names need exactly one site")
        site_names = [sites[0].name] * times.size
    names = np.asarray(site_names, dtype=object)
    if names.shape != times.shape:
        raise ValueError(f"{names.size} site names for {times.size} times")
    exp = None if exposure_s is None else np.broadcast_to(np.asarray(exposure_s, dtype=float), times.shape)
    err = np.full(times.shape, np.nan)
    airmass = np.full(times.shape, np.nan)
    by_name = {s.name: s for s in sites}
    for name in dict.fromkeys(names.tolist()):  # loop over sites, never over epochs
        site = by_name.get(name)
        if site is None:
            continue
        idx = np.flatnonzero(names == name)
        geom = geometry(target, times[idx], [site])[site.name]
        airmass[idx] = geom["airmass"].to_numpy(dtype=float)
        if site.instrument is None:
            continue
        extra = dict(kwargs)
        if exp is not None:
            extra["exposure_s"] = exp[idx]
        err[idx] = mag_err_from_geometry(geom, site.instrument, **extra)
    return err, airmass


def mag_err_for_times(
    target: Target,
    times_utc: np.ndarray,
    site_names: Sequence[str] | None,
    sites: Sequence[Site],
    *,
    exposure_s: np.ndarray | None = None,
    fallback_mag_err: float | None = None,
    **kwargs: Any,
) -> np.ndarray:
    """Modelled photometric error (mag) of each observation time (:func:`frame_model`), for
    injection–recovery. Points at a site without an instrument or unknown to ``sites``, or with no
    prediction (target down, Sun up), get ``fallback_mag_err`` (NaN if None).
    """
    out = frame_model(target, times_utc, site_names, sites, exposure_s=exposure_s, **kwargs)[0]
    if fallback_mag_err is not None:
        out = np.where(np.isfinite(out), out, float(fallback_mag_err))
    return out


def log_frame_model(
    target: Target | None,
    times_utc: np.ndarray,
    site_names: Sequence[str] | None,
    sites: Sequence[Site],
    *,
    logged_mag_err: np.ndarray | None,
    exposure_s: np.ndarray | None,
    fallback_mag_err: float,
    **kwargs: Any,
) -> tuple[np.ndarray, np.ndarray, dict[str, int]]:
    """Photometric σ (mag) of each logged point, where each came from, and its airmass (NaN unknown).

    Priority for σ: the log's own ``mag_err``; else the model of the site's instrument (needs the
    target and an instrumented site, :func:`frame_model`); else ``fallback_mag_err``. Returns the σ
    array, the airmass array and the counts ``{"log": n, "model": n, "fallback": n}``.
    """
    times = np.asarray(times_utc, dtype="datetime64[ns]")
    err = np.full(times.shape, np.nan)
    if logged_mag_err is not None:
        err = np.asarray(logged_mag_err, dtype=float).copy()
    from_log = np.isfinite(err)
    model = np.full(times.shape, np.nan)
    airmass = np.full(times.shape, np.nan)
    if target is not None and sites:
        model, airmass = frame_model(target, times, site_names, sites, exposure_s=exposure_s, **kwargs)
    from_model = ~from_log & np.isfinite(model)
    err = np.where(from_log, err, np.where(from_model, model, float(fallback_mag_err)))
    counts = {
        "log": int(from_log.sum()),
        "model": int(from_model.sum()),
        "fallback": int((~from_log & ~from_model).sum()),
    }
    return err, airmass, counts


def log_mag_err(
    target: Target | None,
    times_utc: np.ndarray,
    site_names: Sequence[str] | None,
    sites: Sequence[Site],
    *,
    logged_mag_err: np.ndarray | None,
    exposure_s: np.ndarray | None,
    fallback_mag_err: float,
    **kwargs: Any,
) -> tuple[np.ndarray, dict[str, int]]:
    """Photometric σ (mag) of each logged point and where each came from (:func:`log_frame_model`
    without the airmass)."""
    err, _, counts = log_frame_model(
        target,
        times_utc,
        site_names,
        sites,
        logged_mag_err=logged_mag_err,
        exposure_s=exposure_s,
        fallback_mag_err=fallback_mag_err,
        **kwargs,
    )
    return err, counts
