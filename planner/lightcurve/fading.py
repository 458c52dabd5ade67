"""Does the object fade faster than its brightness law? K1 and the extra fading per day.

Both come from the linear fit at the adopted rotation frequency (planner.lightcurve.model):

* K1 is a free column (log10 r); its σ is the square root of its covariance element times the χ²
  scale. ``excess_sigma`` = (K1 − expected)/σ, the expected K1 given (default 10, brightness ∝ r⁻⁴,
  common practice).
* The extra fading holds K1 at the expected value and adds a term linear in time: its slope (mag/day,
  positive = fainter with time) with σ.

With free nightly offsets every night has its own zero point and the offsets absorb any change of
brightness between nights: neither number is measurable and none is given (σ = ∞, a message).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.lightcurve.change import warped_days
from planner.lightcurve.model import build_design, fit_at
from planner.lightcurve.reduce import ReducedPoints

#: K1 of a brightness ∝ r⁻⁴ (K1 = 2.5 n), the usual comet rule of thumb (common practice).
EXPECTED_K1 = 10.0


@dataclass(frozen=True)
class Fading:
    k1: float
    k1_sigma: float
    expected_k1: float
    excess_sigma: float
    extra_mag_per_day: float
    extra_mag_per_day_sigma: float
    measurable: bool
    message: str

    def to_dict(self) -> dict:
        return {
            "k1": self.k1,
            "k1_sigma": self.k1_sigma,
            "expected_k1": self.expected_k1,
            "excess_sigma": self.excess_sigma,
            "extra_mag_per_day": self.extra_mag_per_day,
            "extra_mag_per_day_sigma": self.extra_mag_per_day_sigma,
            "measurable": self.measurable,
            "message": self.message,
        }


def _unmeasurable(expected_k1: float, message: str) -> Fading:
    return Fading(
        k1=math.nan,
        k1_sigma=math.inf,
        expected_k1=expected_k1,
        excess_sigma=math.nan,
        extra_mag_per_day=math.nan,
        extra_mag_per_day_sigma=math.inf,
        measurable=False,
        message=message,
    )


def measure_fading(
    reduced: ReducedPoints,
    freq_per_day: float,
    nterms: int,
    *,
    night_offset_sigma_mag: float | None,
    expected_k1: float = EXPECTED_K1,
    chi2_scale: float = 1.0,
    freq_rate_per_day2: float = 0.0,
) -> Fading:
    """K1 and extra fading at rotation frequency ``freq_per_day`` (changing at ``freq_rate_per_day2``,
    planner.lightcurve.change) with ``nterms`` harmonics."""
    if night_offset_sigma_mag is None or not math.isfinite(night_offset_sigma_mag):
        return _unmeasurable(
            expected_k1,
            "nightly offsets are free, so each night's zero point absorbs any "
            "change of brightness between nights: fading is not measurable (give the offsets "
            "a prior σ)",
        )
    if np.ptp(reduced.log10_r) == 0:
        return _unmeasurable(expected_k1, "r does not change over the points: K1 is not measurable")
    free = build_design(reduced, night_offset_sigma_mag=night_offset_sigma_mag)
    u = warped_days(free.t_days, freq_per_day, freq_rate_per_day2)
    fit = fit_at(free, freq_per_day, nterms, t_days=u)
    held = build_design(reduced, night_offset_sigma_mag=night_offset_sigma_mag, k1_held=expected_k1, time_term=True)
    fit_t = fit_at(held, freq_per_day, nterms, t_days=u)
    full = (fit.rank == fit.coef.size) and (fit_t.rank == fit_t.coef.size)
    if not full:
        return _unmeasurable(
            expected_k1,
            "the model is degenerate for these points (too few nights or sites "
            "for the zero points): fading is not measurable",
        )
    k = free.column("k1")
    j = held.column("time")
    k1 = float(fit.coef[k])
    k1_sigma = math.sqrt(fit.cov[k, k] * chi2_scale)
    rate_sigma = math.sqrt(fit_t.cov[j, j] * chi2_scale)
    return Fading(
        k1=k1,
        k1_sigma=k1_sigma,
        expected_k1=expected_k1,
        excess_sigma=(k1 - expected_k1) / k1_sigma,
        extra_mag_per_day=float(fit_t.coef[j]),
        extra_mag_per_day_sigma=rate_sigma,
        measurable=True,
        message="",
    )
