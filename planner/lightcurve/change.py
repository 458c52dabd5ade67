"""Does the rotation period change? Ṗ from a quadratic phase term, beside what geometry predicts.

Model. With P(t) = P0 + Ṗ (t − t0) the rotational phase in cycles is ∫ dt/P ≈ f τ + ½ ḟ τ²
(τ = t − t0, f = 1/P0, ḟ = −Ṗ f²; the τ³ term is of order (ṖT/P)² smaller). The harmonics of
that phase replace those of f τ; every linear parameter is re-solved at each step. (f, ḟ) are found
by Gauss–Newton with the linear parameters solved jointly in every step (the Jacobian columns
∂m/∂f = g τ and ∂m/∂ḟ = g τ²/2, g = Σ 2πk (b_k cos 2πkφ − a_k sin 2πkφ)), with step halving
while χ² does not drop. σ(ḟ) is the square root of its element of the covariance of that last
linearised fit (the Gauss–Newton covariance), times the χ² scale of this model. In hours per day,
Ṗ = −24 ḟ / f² for f in cycles/day.

Geometry. The synodic period differs from the sidereal one by about ω P² (Harris et al. 1984,
Icarus 57, 251), ω the rate of the phase-angle bisector's longitude; as ω changes the synodic
period drifts by P² dω/dt, with dω/dt from a quadratic fit of the bisector's unwrapped longitude.
Its sign depends on the unknown sense of rotation, so only its size is given.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.diagnostics.sensitivity import pab_motion, synodic_offset_h
from planner.lightcurve.model import FixedDesign, fit_at

_MAX_ITER = 30


@dataclass(frozen=True)
class PeriodChange:
    rate_h_per_day: float
    rate_sigma_h_per_day: float
    significance_sigma: float
    synodic_drift_h_per_day: float  #: NaN without the bisector's direction per point
    synodic_offset_h: float  #: |P_syn − P_sid| at the mean bisector rate
    freq_per_day: float  #: f at the reference epoch (model's fundamental)
    freq_rate_per_day2: float  #: ḟ
    chi2_scale: float  #: max(1, χ²/dof) of the model with the period change
    converged: bool

    def to_dict(self) -> dict:
        return {
            "rate_h_per_day": self.rate_h_per_day,
            "rate_sigma_h_per_day": self.rate_sigma_h_per_day,
            "significance_sigma": self.significance_sigma,
            "synodic_drift_h_per_day": self.synodic_drift_h_per_day,
            "synodic_offset_h": self.synodic_offset_h,
            "converged": self.converged,
        }


def warped_days(t_days: np.ndarray, freq_per_day: float, freq_rate_per_day2: float) -> np.ndarray:
    """Times u with f·u = f τ + ½ ḟ τ²: the harmonic kernel then sees a constant frequency."""
    return t_days + 0.5 * (freq_rate_per_day2 / freq_per_day) * t_days**2


def _phase_slope(harmonics: np.ndarray, phase_cycles: np.ndarray) -> np.ndarray:
    """dm/dφ of Σ a_k cos 2πkφ + b_k sin 2πkφ (φ in cycles)."""
    out = np.zeros_like(phase_cycles)
    for k in range(1, harmonics.size // 2 + 1):
        a, b = harmonics[2 * k - 2], harmonics[2 * k - 1]
        arg = 2 * np.pi * k * phase_cycles
        out += 2 * np.pi * k * (b * np.cos(arg) - a * np.sin(arg))
    return out


def fit_frequency_rate(
    design: FixedDesign, freq_per_day: float, nterms: int
) -> tuple[float, float, float, float, float, bool]:
    """Gauss–Newton for (f, ḟ) from (``freq_per_day``, 0). Returns f, ḟ, σ(f), σ(ḟ) (scaled), the
    χ² scale max(1, χ²/dof) of the fitted model (dof counting f and ḟ) and whether it converged."""
    t = design.t_days
    p = design.columns.shape[1]
    dof = max(design.dof(2 * nterms) - 2, 1)
    f, fd = float(freq_per_day), 0.0
    chi_now = fit_at(design, f, nterms).chi2
    converged = False
    var_f = var_fd = math.inf
    for _ in range(_MAX_ITER):
        u = warped_days(t, f, fd)
        lin = fit_at(design, f, nterms, t_days=u)
        g = _phase_slope(lin.coef[p:], f * u)
        step = fit_at(design, f, nterms, extra=np.column_stack([g * t, 0.5 * g * t**2]), t_days=u)
        df, dfd = step.coef[p], step.coef[p + 1]  # extra columns come after the design's, before harmonics
        var_f, var_fd = max(step.cov[p, p], 0.0), max(step.cov[p + 1, p + 1], 0.0)
        lam = 1.0
        while lam > 1e-4:
            f_new, fd_new = f + lam * df, fd + lam * dfd
            chi_new = fit_at(design, f_new, nterms, t_days=warped_days(t, f_new, fd_new)).chi2
            if chi_new <= chi_now * (1 + 1e-12):
                break
            lam *= 0.5
        else:
            converged = True  # no downhill step left: at the minimum to rounding
            break
        f, fd, chi_now = f_new, fd_new, chi_new
        if abs(lam * df) < 1e-6 * math.sqrt(var_f) and abs(lam * dfd) < 1e-6 * math.sqrt(var_fd):
            converged = True
            break
    scale = max(1.0, chi_now / dof)
    return f, fd, math.sqrt(var_f * scale), math.sqrt(var_fd * scale), scale, converged


def synodic_drift(
    times_jd: np.ndarray, pab_lon_deg: np.ndarray | None, pab_lat_deg: np.ndarray | None, period_h: float
) -> tuple[float, float]:
    """(|d P_syn/dt| in h/day, |P_syn − P_sid| in h) from the bisector's motion; NaN without it."""
    if pab_lon_deg is None or pab_lat_deg is None or np.ptp(times_jd) <= 0:
        return math.nan, math.nan
    t = np.asarray(times_jd, dtype=float) - float(np.mean(times_jd))
    order = np.argsort(t)
    lon = np.rad2deg(np.unwrap(np.deg2rad(np.asarray(pab_lon_deg, dtype=float)[order])))
    accel = 2.0 * np.polyfit(t[order], lon, 2)[0] if np.unique(t).size >= 3 else 0.0
    rate = pab_motion(times_jd, pab_lon_deg, pab_lat_deg)["pab_lon_rate_deg_per_day"]
    return float(synodic_offset_h(period_h, accel)), float(synodic_offset_h(period_h, rate))


def measure_period_change(
    design: FixedDesign,
    freq_per_day: float,
    nterms: int,
    rotation_factor: int,
    *,
    times_jd: np.ndarray,
    pab_lon_deg: np.ndarray | None = None,
    pab_lat_deg: np.ndarray | None = None,
) -> PeriodChange:
    """Ṗ of the rotation (model frequency × ``rotation_factor`` = the rotation period), its σ and
    significance, and the synodic drift the geometry alone gives over the span."""
    f, fd, _, sig_fd, scale, ok = fit_frequency_rate(design, freq_per_day, nterms)
    rate = -24.0 * fd / f**2 * rotation_factor
    sigma = 24.0 * sig_fd / f**2 * rotation_factor
    drift, offset = synodic_drift(times_jd, pab_lon_deg, pab_lat_deg, rotation_factor * 24.0 / f)
    return PeriodChange(
        rate_h_per_day=rate,
        rate_sigma_h_per_day=sigma,
        significance_sigma=abs(rate) / sigma if sigma > 0 else math.inf,
        synodic_drift_h_per_day=drift,
        synodic_offset_h=offset,
        freq_per_day=f,
        freq_rate_per_day2=fd,
        chi2_scale=scale,
        converged=ok,
    )
