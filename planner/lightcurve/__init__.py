"""Light-curve fit: rotation period with alias candidates, period change, fading beyond the law.

Modules, one concept each: ``points`` (the inputs), ``reduce`` (light time, unit distance),
``geometry`` (per-point geometry from the ephemeris: the only part that reads data files),
``model`` (design and fits), ``scan`` (χ² over frequency, minima), ``periods`` (candidates,
P versus 2P, verdict), ``fading`` (K1, extra fading), ``change`` (Ṗ and the synodic drift),
``discriminate`` (candidate models at new times), ``fit`` (all of it in one call).
"""

from planner.lightcurve.discriminate import (
    CandidateModel,
    candidate_mags,
    expected_min_delta_chi2,
    expected_min_delta_chi2_slow,
    pairwise_delta_chi2,
)
from planner.lightcurve.fit import LightCurveArrays, LightCurveFit, ZeroPoint, fit_light_curve
from planner.lightcurve.points import LightCurvePoints, light_curve_points, nights_from_gaps
from planner.lightcurve.reduce import emission_time_jd, light_time_minutes, reduce_points, unit_distance_mag

__all__ = [
    "CandidateModel",
    "LightCurveArrays",
    "LightCurveFit",
    "LightCurvePoints",
    "ZeroPoint",
    "candidate_mags",
    "emission_time_jd",
    "expected_min_delta_chi2",
    "expected_min_delta_chi2_slow",
    "fit_light_curve",
    "light_curve_points",
    "light_time_minutes",
    "nights_from_gaps",
    "pairwise_delta_chi2",
    "reduce_points",
    "unit_distance_mag",
]
