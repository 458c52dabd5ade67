"""Sampling diagnostics for any list of observation times: ``check_times`` → ``CheckResult``.

One library call gathers what an observer must know before (or after) spending telescope time:
rotational-phase coverage over the candidate period range (:mod:`planner.diagnostics.coverage`), the
spectral window and the aliases it creates (:mod:`planner.diagnostics.specwindow`), injection–recovery
(:mod:`planner.diagnostics.recovery`), a verdict per period band, and how well the times pin down the fading
rate, the period and a change of period (:mod:`planner.diagnostics.sensitivity`), with the synodic–sidereal
drift when the target's geometry is known.

With the target's geometry every period computation runs on light-time corrected times, t − Δ/c, so
rotational phase is counted at the body as photometrists count it (Harris et al. 1989, Icarus 77,
171); the JSON says so (``input.light_time_corrected``).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from planner.core import units
from planner.core.safety import DEFAULT_MIN_SOLAR_ELONG_DEG, SUN_SAFETY_TEXT, near_sun, sun_caution_limit_deg
from planner.core.timegrid import iso_utc, to_jd_utc
from planner.diagnostics.aliases import alias_chance, alias_failures, partners_in_range
from planner.diagnostics.coverage import period_grid_h, phase_coverage
from planner.diagnostics.recovery import DEFAULT_AMPLITUDE_PHASE_SLOPE_PER_DEG, injection_recovery
from planner.diagnostics.result import CheckResult, CheckSettings
from planner.diagnostics.sensitivity import (
    fading_rate_sigma,
    frequency_sigma,
    pab_motion,
    period_change_sensitivity_h,
    synodic_offset_h,
)
from planner.diagnostics.specwindow import (
    nyquist_freq_per_day,
    spectral_window,
    window_frequency_grid,
    window_peaks,
)
from planner.diagnostics.verdicts import (
    band_edges_h,
    band_verdict,
    geometric_trend_mag,
    geometry_arrays,
    light_time_minutes,
    repeated_times,
    worst_covered,
)
from planner.photometry.points import SLOT_EPOCH, stack_arrays


def _partners(freq_per_day: float, peaks_f: np.ndarray, peaks_h: np.ndarray, s: CheckSettings) -> list[dict]:
    return partners_in_range(
        freq_per_day,
        peaks_f,
        peaks_h,
        min_period_h=s.min_period_h,
        max_period_h=s.max_period_h,
        double_peaked=s.double_peaked,
    )


def check_times(
    times_utc: np.ndarray,
    *,
    min_period_h: float,
    max_period_h: float,
    mag_err: np.ndarray | float = 0.02,
    sites: np.ndarray | None = None,
    exposure_s: np.ndarray | None = None,
    target=None,
    geometry=None,
    trials: int = 200,
    seed: int = 0,
    amplitude_range_mag: tuple[float, float] = (0.1, 0.5),
    double_peaked: bool = True,
    phase_bins: int = 20,
    oversample: float = 10.0,
    nterms: int = 2,
    extra_fading_mag_per_day: float = 0.0,
    k1: float = 10.0,
    coverage_threshold: float = 0.8,
    alias_threshold: float = 0.7,
    recovery_threshold: float = 0.9,
    window_max_freq_per_day: float = 5.0,
    n_candidates: int = 16,
    n_bands: int = 10,
    amplitude_phase_slope_per_deg: float = DEFAULT_AMPLITUDE_PHASE_SLOPE_PER_DEG,
    progress: Callable[[float], None] | None = None,
    stack_s: float | None = None,
    sys_err_mag_per_airmass: float = 0.0,
    airmass: np.ndarray | None = None,
    stack_ref_utc: np.datetime64 = SLOT_EPOCH,
    workers: int | None = 1,
    dask_address: str | None = None,
) -> CheckResult:
    """Coverage, alias, recovery and sensitivity diagnostics for a list of observation times.

    ``times_utc``: datetime64 array (any order), mid-exposure. ``mag_err``: photometric σ per
    point (array) or common. ``sites``: optional label per time. ``exposure_s``: optional
    exposure per time (NaN = unknown), only used to warn when an exposure smears the light curve
    over more than one phase bin at the shortest period. ``geometry``: the output of
    ``planner.sky.geometry.geometry`` (or a DataFrame / mapping with its columns) at the same
    times; with ``target`` instead, it is computed here. ``trials`` = 0 skips injection–recovery.
    With geometry, times within the Sun caution margin of the default Sun limit (planner.core.safety) raise a
    caution note, every period computation uses the emission times t − Δ/c (``light_time_minutes``,
    else ``obs_dist_au``), and injected amplitudes follow each time's phase angle with the slope
    ``amplitude_phase_slope_per_deg`` (Zappalà et al. 1990; planner.diagnostics.recovery).
    The period range is cut into ``n_bands`` log-spaced bands, each with a verdict; injected
    periods are shared out evenly over the same bands. ``workers`` and ``dask_address`` say where the
    injection trials run (planner.diagnostics.recovery); the results depend on ``seed`` only.

    With ``stack_s``, the times are frames: the frames of one site inside one ``stack_s`` slot
    (counted from ``stack_ref_utc``) become one light-curve point, whose σ adds
    ``sys_err_mag_per_airmass`` × the frames' mean ``airmass`` (where given) in quadrature
    (:func:`planner.photometry.points.light_curve_points`, the plan's error model); frames with a
    NaN σ take the median of the points. Give ``target`` rather than ``geometry`` then. Times may also
    be astropy ``Time``, datetime or ISO text; periods, σ and exposures astropy Quantities.
    """
    times_utc = units.utc_times(times_utc, "times_utc")
    min_period_h = units.hours(min_period_h, "min_period_h")
    max_period_h = units.hours(max_period_h, "max_period_h")
    mag_err = units.to_unit(mag_err, "mag", "mag_err")
    exposure_s = None if exposure_s is None else units.to_unit(exposure_s, "s", "exposure_s")
    if not (0 < min_period_h <= max_period_h):
        raise ValueError("need 0 < min_period_h <= max_period_h")
    n_repeated = repeated_times(np.asarray(times_utc, dtype="datetime64[ns]"), sites)
    n_frames = int(np.size(times_utc))
    if stack_s is not None:
        if geometry is not None:
            raise ValueError("stacked frames need the target, not a geometry at the frames' times")
        times_utc, mag_err, sites = stack_arrays(
            times_utc, mag_err, sites, airmass, stack_s, sys_err_mag_per_airmass, stack_ref_utc
        )
    order = np.argsort(np.asarray(times_utc, dtype="datetime64[ns]"), kind="stable")
    times = np.asarray(times_utc, dtype="datetime64[ns]")[order]
    t = to_jd_utc(times)
    n = t.size
    err = (
        np.broadcast_to(np.asarray(mag_err, dtype=float), (n,))[order]
        if np.ndim(mag_err)
        else np.full(n, float(mag_err))
    )
    site_arr = None if sites is None else np.asarray(sites)[order]
    s = CheckSettings(
        min_period_h=float(min_period_h),
        max_period_h=float(max_period_h),
        phase_bins=phase_bins,
        oversample=oversample,
        trials=trials,
        seed=seed,
        amplitude_range_mag=tuple(amplitude_range_mag),
        double_peaked=double_peaked,
        nterms=max(nterms, 2 if double_peaked else 1),
        extra_fading_mag_per_day=extra_fading_mag_per_day,
        coverage_threshold=coverage_threshold,
        alias_threshold=alias_threshold,
        recovery_threshold=recovery_threshold,
        window_max_freq_per_day=window_max_freq_per_day,
        amplitude_phase_slope_per_deg=amplitude_phase_slope_per_deg,
        stack_s=stack_s,
        sys_err_mag_per_airmass=sys_err_mag_per_airmass if stack_s is not None else 0.0,
    )
    notes: list[str] = []
    if geometry is None and target is not None:
        from planner.sky.geometry import geometry as compute_geometry

        geometry = compute_geometry(target, times)
    geo = {}
    if geometry is not None:
        geo = {
            k: np.asarray(v)[order] if np.size(v) == n else np.asarray(v) for k, v in geometry_arrays(geometry).items()
        }
    trend_mag = geometric_trend_mag(geo, k1) if geo else None
    t_obs = t
    light_min = light_time_minutes(geo)
    if light_min is not None:
        t = t_obs - light_min / 1440.0  # emission times: phase is counted at the body

    span_h = float(np.ptp(t) * 24.0) if n else 0.0
    periods = period_grid_h(s.min_period_h, s.max_period_h, span_h, oversample)
    cov, gap = phase_coverage(t, periods, phase_bins)
    worst = worst_covered(periods, cov, gap)
    comm_p = np.array(
        [24.0 / k for k in range(1, 100) if s.min_period_h <= 24.0 / k <= s.max_period_h]
        + [48.0] * (s.min_period_h <= 48.0 <= s.max_period_h)
    )
    comm_c, comm_g = phase_coverage(t, comm_p, phase_bins)
    commensurate = [
        {"period_h": float(p), "coverage": float(c), "largest_phase_gap": float(g)}
        for p, c, g in zip(comm_p, comm_c, comm_g, strict=True)
    ]

    weights = 1.0 / err**2 if n else None
    wf = window_frequency_grid(t, window_max_freq_per_day, oversample) if n else np.zeros(0)
    wh = spectral_window(t, wf, weights) if n else np.zeros(0)
    pk_f, pk_h = window_peaks(t, window_max_freq_per_day, weights=weights) if n > 1 else (np.zeros(0), np.zeros(0))
    peaks = [
        {"freq_per_day": float(f), "period_h": 24.0 / float(f), "height": float(h)}
        for f, h in zip(pk_f, pk_h, strict=True)
    ]
    nyq = nyquist_freq_per_day(t_obs)  # a property of the sampling's steps, taken on the clock that made them
    # Below 2/T a peak is a sidelobe of the central lobe (for an unbroken span of length T the first
    # lies near 1.43/T at height 0.22, the sinc sidelobe): every campaign of that span has it and no
    # schedule removes it. The alias that sampling decides is the strongest peak beyond it.
    span_days = span_h / 24.0
    alias_floor = 2.0 / span_days if span_days > 0 else np.inf
    beyond = [p for p in peaks if p["freq_per_day"] >= alias_floor]
    highest_alias = dict(max(beyond, key=lambda p: p["height"]), min_freq_per_day=alias_floor) if beyond else None

    # candidate periods: log-spaced across the range plus the 24/n-hour family, for aliases
    # and sensitivities
    spread = np.geomspace(s.min_period_h, s.max_period_h, n_candidates)
    near_daily = (
        np.any(np.abs(np.log(spread[:, None] / comm_p[None, :])) < 0.02, axis=1)
        if comm_p.size
        else np.zeros(spread.size, bool)
    )
    cand = np.unique(np.concatenate([spread[~near_daily], comm_p]))
    aliases = []
    for p in cand:
        partners = _partners(24.0 / p, pk_f, pk_h, s)
        aliases.append(
            {
                "period_h": float(p),
                "partners": partners,
                "max_height": max((d["height"] for d in partners), default=0.0),
                "flagged": any(d["height"] >= alias_threshold for d in partners),
            }
        )

    recovery = None
    if trials > 0:
        if n >= 2 * s.nterms + 3:
            recovery = injection_recovery(
                t,
                min_period_h=s.min_period_h,
                max_period_h=s.max_period_h,
                trials=trials,
                seed=seed,
                amplitude_range_mag=s.amplitude_range_mag,
                sigma_mag=err,
                double_peaked=double_peaked,
                nterms=s.nterms,
                trend_mag=trend_mag,
                fading_mag_per_day=extra_fading_mag_per_day,
                oversample=oversample,
                n_bands=n_bands,
                phase_angle_deg=geo.get("phase_angle_deg"),
                amplitude_phase_slope_per_deg=amplitude_phase_slope_per_deg,
                progress=progress,
                workers=workers,
                dask_address=dask_address,
            )
        else:
            notes.append(f"injection–recovery skipped: {n} times are too few for the model")
    rec_list = []
    rec_trials = []
    if recovery is not None:
        wrong = recovery.match == "wrong"
        half = recovery.match == "half"
        strong_pk = pk_f[pk_h >= 0.25]
        explained = wrong & alias_failures(
            24.0 / recovery.true_period_h,
            24.0 / recovery.found_period_h,
            strong_pk,
            recovery.tolerance_freq_per_day,
            double_peaked,
            half_apart=True,
        )
        chance = np.zeros(wrong.size)
        chance[wrong] = alias_chance(
            24.0 / recovery.true_period_h[wrong],
            recovery.search_freq_per_day,
            strong_pk,
            recovery.tolerance_freq_per_day,
            double_peaked,
            half_apart=True,
        )
        for i, b in enumerate(recovery.bins):
            inside = recovery.bin_index == i
            rec_list.append(
                {
                    "period_h": b.period_h,
                    "min_period_h": b.min_period_h,
                    "max_period_h": b.max_period_h,
                    "n_trials": b.n_trials,
                    "fraction": b.fraction,
                    "fraction_at_period": b.fraction_at_period,
                    "fraction_at_half_period": b.fraction_at_half_period,
                    "failures_alias": int(np.sum(inside & explained)),
                    "failures_half": int(np.sum(inside & half)),
                    "failures_other": int(np.sum(inside & wrong & ~explained)),
                    "failures_alias_expected": float(np.sum(chance[inside])),
                    "confusions": b.confusions,
                }
            )
        rec_trials = [
            {"true_period_h": float(a), "found_period_h": float(b), "amplitude_mag": float(c), "match": str(m)}
            for a, b, c, m in zip(
                recovery.true_period_h, recovery.found_period_h, recovery.amplitude_mag, recovery.match, strict=True
            )
        ]

    # sensitivities
    harmonic = 2 if double_peaked else 1
    amp_low = float(min(amplitude_range_mag))
    rate_sig = fading_rate_sigma(t, periods, err, s.nterms)
    finite = rate_sig[np.isfinite(rate_sig)]
    gaps_h = np.diff(t) * 24.0
    gi = int(np.argmax(gaps_h)) if gaps_h.size else -1
    trend = {
        "rate_sigma_mag_per_day": float(finite.max()) if finite.size else math.inf,
        "median_rate_sigma_mag_per_day": float(np.median(finite)) if finite.size else math.inf,
        "min_detectable_mag_per_day": s.n_sigma * float(finite.max()) if finite.size else math.inf,
        "worst_period_h": float(periods[np.nanargmax(np.where(np.isfinite(rate_sig), rate_sig, -1))])
        if finite.size
        else None,
        "longest_gap_h": float(gaps_h.max()) if gaps_h.size else None,
        "longest_gap_start_utc": iso_utc(times[gi : gi + 1])[0] if gi >= 0 else None,
        "longest_gap_end_utc": iso_utc(times[gi + 1 : gi + 2])[0] if gi >= 0 else None,
        "geometric_trend_used": trend_mag is not None,
        "geometric_trend_range_mag": float(np.ptp(trend_mag)) if trend_mag is not None else None,
    }
    f_sig = frequency_sigma(t, cand, err, amp_low, harmonic, s.nterms)
    period_sigma_h = cand**2 * f_sig / 24.0
    change = period_change_sensitivity_h(t, cand, err, amp_low, harmonic, s.nterms, s.n_sigma)
    period_change = [
        {"period_h": float(p), "min_detectable_change_h": float(c), "period_sigma_h": float(ps)}
        for p, c, ps in zip(cand, change, period_sigma_h, strict=True)
    ]

    synodic = None
    if "pab_lon_deg" in geo and "pab_lat_deg" in geo and n >= 2:
        motion = pab_motion(t, geo["pab_lon_deg"], geo["pab_lat_deg"])
        offs = synodic_offset_h(cand, motion["pab_lon_rate_deg_per_day"])
        synodic = dict(motion)
        synodic["phase_drift_cycles"] = abs(motion["pab_lon_change_deg"]) / 360.0
        synodic["periods"] = [
            {
                "period_h": float(p),
                "synodic_offset_h": float(o),
                "period_sigma_h": float(ps),
                "exceeds_precision": bool(o > ps),
            }
            for p, o, ps in zip(cand, offs, period_sigma_h, strict=True)
        ]

    # verdict per band
    edges = band_edges_h(s, recovery, n_bands)
    bands = []
    for i in range(edges.size - 1):
        lo, hi = float(edges[i]), float(edges[i + 1])
        inside = (periods >= lo) & (periods <= hi)
        cb, gb = cov[inside], gap[inside]
        rec = rec_list[i] if i < len(rec_list) else None
        centre = math.sqrt(lo * hi)
        partners = _partners(24.0 / centre, pk_f, pk_h, s)
        strong = [d for d in partners if d["height"] >= alias_threshold]
        alias_max = max((d["height"] for d in partners), default=0.0)
        verdict = band_verdict(cb, rec, alias_max, s)
        confusable = sorted(
            {round(d["period_h"], 2) for d in strong}
            | {round(c["period_h"], 2) for c in (rec or {}).get("confusions", []) if c["fraction"] >= 0.05}
        )
        bands.append(
            {
                "min_period_h": lo,
                "max_period_h": hi,
                "verdict": verdict,
                "confusable_periods_h": confusable if verdict != "secure" else [],
                "min_coverage": float(cb.min()) if cb.size else None,
                "median_coverage": float(np.median(cb)) if cb.size else None,
                "fraction_below_coverage_threshold": float(np.mean(cb < coverage_threshold)) if cb.size else None,
                "max_phase_gap": float(gb.max()) if gb.size else None,
                "max_alias_height": alias_max,
                "recovery_fraction": rec["fraction"] if rec else None,
                "half_period_fraction": rec["fraction_at_half_period"] if rec else None,
                "failures_alias": rec["failures_alias"] if rec else 0,
                "failures_half": rec["failures_half"] if rec else 0,
                "failures_other": rec["failures_other"] if rec else 0,
                "failures_alias_expected": rec["failures_alias_expected"] if rec else 0.0,
                "n_trials": rec["n_trials"] if rec else 0,
            }
        )
    if "solar_elong_deg" in geo and n:
        close = near_sun(geo["solar_elong_deg"], DEFAULT_MIN_SOLAR_ELONG_DEG)
        if np.any(close):
            limit = float(sun_caution_limit_deg(DEFAULT_MIN_SOLAR_ELONG_DEG))
            notes.append(
                f"caution: {int(close.sum())} of {n} times are at solar elongation below {limit:g}° (least "
                f"{float(geo['solar_elong_deg'].min()):.1f}°). {SUN_SAFETY_TEXT}"
            )
    if exposure_s is not None and np.size(exposure_s) and np.any(np.isfinite(exposure_s)):
        longest_s = float(np.nanmax(np.asarray(exposure_s, dtype=float)))
        if longest_s / 3600.0 > min_period_h / phase_bins:
            notes.append(
                f"exposures up to {longest_s:.0f} s smear the light curve over more than one phase "
                f"bin at {min_period_h:g} h"
            )
    if n and span_h < max_period_h:
        notes.append(f"the span ({span_h:.1f} h) is shorter than the longest period searched")
    if n_repeated:
        notes.append(
            f"{n_repeated} time(s) repeat an earlier row at the same site and instant: each counts as a "
            "separate point (more weight in the window and the trend); remove them if they are copies"
        )
    return CheckResult(
        settings=s,
        times_utc=times,
        times_jd=t,
        light_time_minutes=light_min,
        amplitude_ref_phase_deg=None if recovery is None else recovery.amplitude_ref_phase_deg,
        sites=site_arr,
        mag_err=err,
        periods_h=periods,
        coverage=cov,
        largest_phase_gap=gap,
        worst_periods=worst,
        commensurate=commensurate,
        window_freq_per_day=wf,
        window_height=wh,
        window_peaks=peaks,
        highest_alias=highest_alias,
        nyquist_freq_per_day=nyq,
        aliases=aliases,
        bands=bands,
        recovery=rec_list,
        recovery_trials=rec_trials,
        trend=trend,
        period_change=period_change,
        synodic=synodic,
        notes=notes,
        n_frames=n_frames,
    )
