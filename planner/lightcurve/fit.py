"""The light-curve fit in one call: reduce, scan, periods, fading, period change, zero points.

:func:`fit_light_curve` is pure (arrays in, dataclasses out). ``LightCurveFit.to_dict()`` is the
JSON document; ``LightCurveFit.arrays`` holds what a report draws.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.core.errors import InputError
from planner.core.jsonsafe import json_safe
from planner.lightcurve.change import PeriodChange, measure_period_change, warped_days
from planner.lightcurve.discriminate import CandidateModel
from planner.lightcurve.fading import EXPECTED_K1, Fading, measure_fading
from planner.lightcurve.model import NIGHT_OFFSET_SIGMA_MAG, FixedDesign, build_design, fit_at, rotation_mag
from planner.lightcurve.periods import PeriodResult, analyse_periods
from planner.lightcurve.points import LightCurvePoints
from planner.lightcurve.reduce import reduce_points
from planner.lightcurve.scan import OVERSAMPLE, chi2_scan, frequency_grid_per_day

#: Phases at which the model curve is drawn.
MODEL_SAMPLES = 200
#: A period change at least this significant (σ) is kept in the final model (zero points, fading, arrays).
DETECTED_SIGMA = 3.0


@dataclass(frozen=True)
class ZeroPoint:
    site: str
    night: str
    offset_mag: float  #: site zero point + nightly offset (reference: first site, or first night when free)
    offset_sigma_mag: float


@dataclass(frozen=True)
class LightCurveArrays:
    """Arrays for figures. Per point: emission time, phase at the rotation period, reduced mag,
    the rotational signal (reduced mag minus M, K1 log r and zero points), residual, log10 r and
    the distance-law part (reduced mag minus rotation and zero points). Curves: the χ² scan
    (rotation periods, scaled Δχ²) and the rotational model over one rotation."""

    emission_jd: np.ndarray
    phase: np.ndarray
    reduced_mag: np.ndarray
    rotation_signal_mag: np.ndarray
    residual_mag: np.ndarray
    log10_r: np.ndarray
    distance_law_mag: np.ndarray
    scan_period_h: np.ndarray
    scan_delta_chi2: np.ndarray
    model_phase: np.ndarray
    model_mag: np.ndarray


@dataclass(frozen=True)
class LightCurveFit:
    periods: PeriodResult
    fading: Fading
    period_change: PeriodChange
    zero_points: list[ZeroPoint]
    candidate_models: list[CandidateModel]
    arrays: LightCurveArrays
    n_points: int
    nterms: int
    night_offset_sigma_mag: float | None
    t_ref_jd: float
    log10_r_ref: float
    chi2_min: float
    chi2_scale: float  #: scale of the final model (the period analysis keeps its own in ``periods``)

    def to_dict(self) -> dict:
        p = self.periods
        factor = p.rotation_factor
        return json_safe(
            {
                "periods": {
                    "best_h": p.best_h,
                    "sigma_h": p.sigma_h,
                    "double_peaked": p.double_peaked,
                    "verdict": p.verdict,
                    "reason": p.reason,
                    "photometric_period_h": p.photometric_period_h,
                    "rotation_factor": factor,
                    "candidates": [
                        {
                            "period_h": factor * 24.0 / c.freq_per_day,
                            "delta_chi2": c.delta_chi2,
                            "relative_likelihood": c.relative_likelihood,
                            "sigma_h": factor * 24.0 * c.sigma_freq_per_day / c.freq_per_day**2,
                        }
                        for c in p.candidates
                    ],
                    "halves_tests": [
                        {
                            "period_h": 24.0 / h.freq_per_day,
                            "delta_chi2": h.delta_chi2,
                            "n_params": h.n_params,
                            "p_value": h.p_value,
                        }
                        for h in p.halves
                    ],
                },
                "fading": self.fading.to_dict(),
                "period_change": self.period_change.to_dict(),
                "zero_points": [
                    {
                        "site": z.site,
                        "night": z.night,
                        "offset_mag": z.offset_mag,
                        "offset_sigma_mag": z.offset_sigma_mag,
                    }
                    for z in self.zero_points
                ],
                "light_time_corrected": True,
                "chi2": {"min": self.chi2_min, "dof": p.dof, "scale": p.chi2_scale, "final_scale": self.chi2_scale},
                "n_points": self.n_points,
                "nterms": self.nterms,
                "night_offset_sigma_mag": self.night_offset_sigma_mag,
                "t_ref_jd": self.t_ref_jd,
            }
        )


def _zero_points(design: FixedDesign, coef: np.ndarray, cov: np.ndarray) -> list[ZeroPoint]:
    site_cols = [i for i, name in enumerate(design.names) if name == "site"]
    night_cols = [i for i, name in enumerate(design.names) if name == "night"]
    out = []
    site_of = {s: j for j, s in enumerate(design.sites)}
    for g, (site, night) in enumerate(design.groups):
        vec = np.zeros(coef.size)
        vec[night_cols[g]] = 1.0
        j = site_of[site]
        if design.nights_free:
            vec[night_cols[0]] -= 1.0
        elif j > 0:
            vec[site_cols[j - 1]] = 1.0
        out.append(
            ZeroPoint(
                site=site,
                night=night,
                offset_mag=float(vec @ coef),
                offset_sigma_mag=math.sqrt(max(float(vec @ cov @ vec), 0.0)),
            )
        )
    return out


def _candidate_models(design: FixedDesign, periods: PeriodResult, nterms: int) -> list[CandidateModel]:
    p = design.columns.shape[1]
    mean_col, k1_col = design.column("mean"), design.column("k1")
    first_night = design.names.index("night")
    out = []
    for c in periods.candidates:
        fit = fit_at(design, c.freq_per_day, nterms)
        mean = fit.coef[mean_col] if mean_col is not None else fit.coef[first_night]
        k1 = fit.coef[k1_col] if k1_col is not None else design.k1_held
        out.append(
            CandidateModel(
                period_h=24.0 / c.freq_per_day,
                delta_chi2=c.delta_chi2,
                t_ref_jd=design.t_ref_jd,
                mean_mag=float(mean),
                k1=float(k1),
                log10_r_ref=design.log10_r_ref,
                harmonics=fit.coef[p:].copy(),
            )
        )
    return out


def fit_light_curve(
    points: LightCurvePoints,
    *,
    min_period_h: float = 2.0,
    max_period_h: float = 30.0,
    nterms: int = 2,
    night_offset_sigma_mag: float | None = NIGHT_OFFSET_SIGMA_MAG,
    expected_k1: float = EXPECTED_K1,
    oversample: float = OVERSAMPLE,
    max_candidates: int = 20,
) -> LightCurveFit:
    """Fit rotation, fading and zero points to ``points`` (see planner.lightcurve's modules).

    Order: χ² scan and period analysis (constant period), then the period change; the final model
    (zero points, fading, arrays) carries the period change when it is significant at 3σ.

    Rotation periods are searched in [``min_period_h``, ``max_period_h``]; the scan's photometric
    periods reach down to ``min_period_h``/2 for a double-peaked curve. ``night_offset_sigma_mag``
    None (or ∞) frees the nightly offsets: fading is then reported as not measurable.
    """
    if not (0 < min_period_h <= max_period_h) or not math.isfinite(max_period_h):
        raise InputError(
            "command line",
            "min_period_h",
            f"need 0 < min_period_h ({min_period_h:g}) <= max_period_h ({max_period_h:g})",
        )
    if nterms < 1:
        raise InputError("command line", "nterms", f"{nterms} must be at least 1")
    free = night_offset_sigma_mag is None or not math.isfinite(night_offset_sigma_mag)
    if not free and night_offset_sigma_mag <= 0:
        raise InputError("command line", "night_offset_sigma_mag", "must be positive (or infinite for free offsets)")
    sigma_n = None if free else float(night_offset_sigma_mag)
    reduced = reduce_points(points)
    design = build_design(reduced, night_offset_sigma_mag=sigma_n, k1_held=expected_k1 if free else None)
    span_d = float(np.ptp(reduced.emission_jd))
    grid = frequency_grid_per_day(min_period_h, max_period_h, span_d, nterms, oversample)
    scan = chi2_scan(design, grid, nterms)
    try:
        periods = analyse_periods(design, scan, max_candidates)
    except ValueError as exc:
        raise InputError(points.source, "mag", str(exc)) from None
    f_m, n_m = periods.model_freq_per_day, periods.model_nterms
    scale = periods.chi2_scale
    factor = int(round(periods.best_h * f_m / 24.0))  # rotation period / period of the model's fundamental
    change = measure_period_change(
        design,
        f_m,
        n_m,
        factor,
        times_jd=reduced.emission_jd,
        pab_lon_deg=points.pab_lon_deg,
        pab_lat_deg=points.pab_lat_deg,
    )
    fdot = 0.0
    if change.significance_sigma >= DETECTED_SIGMA:
        f_m, fdot, scale = change.freq_per_day, change.freq_rate_per_day2, change.chi2_scale
    u = warped_days(design.t_days, f_m, fdot)
    fit = fit_at(design, f_m, n_m, t_days=u)
    p = design.columns.shape[1]
    fading = measure_fading(
        reduced,
        f_m,
        n_m,
        night_offset_sigma_mag=sigma_n,
        expected_k1=expected_k1,
        chi2_scale=scale,
        freq_rate_per_day2=fdot,
    )
    coef = fit.coef
    rot = rotation_mag(coef[p:], f_m, u)
    fixed_part = design.columns @ coef[:p]
    zero = fixed_part.copy()
    for name in ("mean", "k1"):
        col = design.column(name)
        if col is not None:
            zero -= design.columns[:, col] * coef[col]
    resid = design.y - fixed_part - rot
    model_phase = np.linspace(0.0, 1.0, MODEL_SAMPLES + 1)
    arrays = LightCurveArrays(
        emission_jd=reduced.emission_jd,
        phase=np.mod(u * f_m / factor, 1.0),
        reduced_mag=reduced.reduced_mag,
        rotation_signal_mag=rot + resid,
        residual_mag=resid,
        log10_r=reduced.log10_r,
        distance_law_mag=reduced.reduced_mag - rot - zero,
        scan_period_h=periods.rotation_factor * 24.0 / scan.freq_per_day,
        scan_delta_chi2=(scan.chi2 - periods.candidates[0].chi2) / scale,
        model_phase=model_phase,
        model_mag=rotation_mag(coef[p:], 1.0, model_phase * factor),
    )
    return LightCurveFit(
        periods=periods,
        fading=fading,
        period_change=change,
        zero_points=_zero_points(design, coef, fit.cov * scale),
        chi2_scale=scale,
        candidate_models=_candidate_models(design, periods, nterms),
        arrays=arrays,
        n_points=points.size,
        nterms=nterms,
        night_offset_sigma_mag=sigma_n,
        t_ref_jd=design.t_ref_jd,
        log10_r_ref=design.log10_r_ref,
        chi2_min=periods.candidates[0].chi2,
    )
