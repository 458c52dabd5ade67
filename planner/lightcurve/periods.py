"""Rotation period from the χ² scan: best period, 1σ, alias candidates, P versus 2P, a verdict.

* χ² scale: when χ²_min/dof > 1 the errors were underestimated; every Δχ² statement divides by
  that scale (so uncertainties grow by its square root) and the scale is reported.
* Candidates: every local minimum within Δχ² < 25 of the best, with relative likelihood
  exp(−Δχ²/2) (the likelihood ratio of two fits with the same number of parameters).
* P versus 2P: a fit of order m at frequency f is nested in the order-2m fit at f/2 (its even
  harmonics), so Δχ² between them, on 2m extra parameters, tests whether the two halves of the
  2P light curve differ; p < 0.0027 (3σ two-sided Gaussian equivalent) counts as different. The
  test takes m = 2n (twice the scan's order) and scales Δχ² by the order-2n fit's own χ²/dof, so a
  shape the scan's order cannot follow does not pass for a difference between the halves.
  Halves that do not differ leave P and 2P apart only by the common-practice rule that a
  rotating elongated body shows two maxima per turn: a single-peaked fit is then taken as half the
  rotation period and the verdict says so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.stats import chi2 as chi2_dist

from planner.lightcurve.model import FixedDesign, brightness_maxima, chi2_at, fit_at
from planner.lightcurve.scan import Scan, curvature_sigma, grid_minima, refine_minima

#: Δχ² (scaled) within which a minimum is a candidate; a competing one makes the verdict ambiguous.
CANDIDATE_DELTA_CHI2 = 25.0
COMPETITOR_DELTA_CHI2 = 9.0
#: 3σ two-sided Gaussian tail, 2·(1 − Φ(3)).
P_VALUE_3SIGMA = 0.0027
#: Grid minima refined (lowest first) before the Δχ² cut.
_REFINED = 40


@dataclass(frozen=True)
class Candidate:
    freq_per_day: float  #: frequency of the model's fundamental (photometric)
    chi2: float
    delta_chi2: float  #: scaled
    sigma_freq_per_day: float

    @property
    def relative_likelihood(self) -> float:
        return math.exp(-0.5 * self.delta_chi2)


@dataclass(frozen=True)
class HalvesTest:
    """Order n at f against order 2n at f/2: Δχ² (scaled) on ``n_params`` extra parameters."""

    freq_per_day: float
    delta_chi2: float
    n_params: int
    p_value: float

    @property
    def differ(self) -> bool:
        return self.p_value < P_VALUE_3SIGMA


@dataclass(frozen=True)
class PeriodResult:
    best_h: float
    sigma_h: float
    double_peaked: bool
    verdict: str  #: "unique" or "ambiguous"
    reason: str
    rotation_factor: int  #: rotation period / photometric period of the best minimum (1 or 2)
    candidates: list[Candidate]  #: best first
    chi2_scale: float
    dof: int
    model_freq_per_day: float  #: frequency and order of the model used downstream
    model_nterms: int
    halves: list[HalvesTest] = field(default_factory=list)

    @property
    def photometric_period_h(self) -> float:
        return 24.0 / self.candidates[0].freq_per_day


def _halves(design: FixedDesign, freq: float, nterms: int) -> HalvesTest:
    """Order 2n at ``freq`` against order 4n at ``freq``/2 (order n and 2n when the points cannot
    carry 4n harmonics); Δχ² scaled by the null model's own χ²/dof (at least 1)."""
    lo = 2 * nterms if design.dof(8 * nterms) > 0 else nterms
    chi2_lo = float(chi2_at(design, [freq], lo).chi2[0])
    chi2_hi = float(chi2_at(design, [freq / 2.0], 2 * lo).chi2[0])
    scale = max(1.0, chi2_lo / design.dof(2 * lo))
    d = max(chi2_lo - chi2_hi, 0.0) / scale
    return HalvesTest(freq_per_day=freq / 2.0, delta_chi2=d, n_params=2 * lo, p_value=float(chi2_dist.sf(d, 2 * lo)))


def _describe(h: HalvesTest, p_h: float) -> str:
    verdict = "" if h.differ else f", short of the p < {P_VALUE_3SIGMA:g} (3σ) that tells them apart"
    return (
        f"halves of the {p_h:.4g} h light curve: Δχ² = {h.delta_chi2:.1f} on {h.n_params} parameters, "
        f"p = {h.p_value:.2g}{verdict}"
    )


def find_candidates(design: FixedDesign, scan: Scan, max_candidates: int = 20) -> tuple[list[Candidate], float, int]:
    """Refined local minima within Δχ² < 25 (best first), the χ² scale and the degrees of freedom."""
    n = scan.nterms
    dof = design.dof(2 * n) - 1  # the frequency is fitted too
    if dof <= 0:
        raise ValueError(
            f"{design.y.size} points are too few for a model with {design.columns.shape[1] + 2 * n + 1} "
            f"parameters (zero points, {n} harmonics and the frequency; {design.prior_rows} of them "
            "held by a prior)"
        )
    idx = grid_minima(scan.chi2)
    idx = idx[np.argsort(scan.chi2[idx], kind="stable")[:_REFINED]]
    f_ref, c_ref = refine_minima(design, n, scan.freq_per_day, idx)
    step = float(scan.freq_per_day[1] - scan.freq_per_day[0]) if scan.freq_per_day.size > 1 else 1.0
    order = np.argsort(c_ref, kind="stable")
    kept: list[int] = []
    for i in order:
        if all(abs(f_ref[i] - f_ref[k]) > 0.5 * step for k in kept):
            kept.append(int(i))
    f_ref, c_ref = f_ref[kept], c_ref[kept]
    scale = max(1.0, float(c_ref[0]) / dof)
    close = (c_ref - c_ref[0]) / scale < CANDIDATE_DELTA_CHI2
    f_ref, c_ref = f_ref[close][:max_candidates], c_ref[close][:max_candidates]
    sigma, f_v, c_v = curvature_sigma(design, n, f_ref, c_ref, scale, np.full(f_ref.size, step / 10))
    order = np.argsort(c_v, kind="stable")
    best = c_v[order[0]]
    scale = max(1.0, float(best) / dof)
    cands = [Candidate(float(f_v[i]), float(c_v[i]), float((c_v[i] - best) / scale), float(sigma[i])) for i in order]
    return cands, scale, dof


def analyse_periods(design: FixedDesign, scan: Scan, max_candidates: int = 20) -> PeriodResult:
    """Candidates, the P-versus-2P decision and the verdict (module docstring)."""
    n = scan.nterms
    cands, scale, dof = find_candidates(design, scan, max_candidates)
    best = cands[0]
    f_s = best.freq_per_day
    p_s = 24.0 / f_s
    reasons: list[str] = []
    halves = [_halves(design, f_s, n)]
    model_f, model_n, factor = f_s, n, 1
    shape_n = brightness_maxima(fit_at(design, f_s, n).coef[design.columns.shape[1] :])
    if halves[0].differ:
        factor, model_f, model_n = 2, f_s / 2.0, 2 * n
        double = brightness_maxima(fit_at(design, model_f, model_n).coef[design.columns.shape[1] :]) >= 2
        reasons.append(f"the two halves differ ({_describe(halves[0], 2 * p_s)})")
    elif shape_n <= 1:
        factor, double = 2, True
        reasons.append(
            f"P and 2P not separable ({_describe(halves[0], 2 * p_s)}); the single-peaked "
            f"{p_s:.4g} h curve is taken as half the rotation (double-peaked, common practice)"
        )
    else:
        double = True
        halves.append(_halves(design, 2.0 * f_s, n))
        if halves[1].differ:
            reasons.append(f"the two halves differ ({_describe(halves[1], p_s)})")
        else:
            reasons.append(
                f"P/2 and P not separable ({_describe(halves[1], p_s)}); the double-peaked "
                f"{p_s:.4g} h curve is taken as the rotation (common practice)"
            )
    ambiguous = not any(h.differ for h in halves)
    step = abs(scan.freq_per_day[1] - scan.freq_per_day[0]) if scan.freq_per_day.size > 1 else 0.0
    related = (f_s / 2.0, 2.0 * f_s)
    for c in cands[1:]:
        if c.delta_chi2 >= COMPETITOR_DELTA_CHI2 or any(abs(c.freq_per_day - g) <= 2 * step for g in related):
            continue
        ambiguous = True
        reasons.append(f"{factor * 24.0 / c.freq_per_day:.4g} h is within Δχ² = {c.delta_chi2:.1f} of the best")
    if not ambiguous:
        reasons.insert(0, f"no other period within Δχ² < {COMPETITOR_DELTA_CHI2:g}")
    sigma_h = factor * 24.0 * best.sigma_freq_per_day / f_s**2
    return PeriodResult(
        best_h=factor * p_s,
        sigma_h=sigma_h,
        double_peaked=bool(double),
        verdict="ambiguous" if ambiguous else "unique",
        reason="; ".join(reasons),
        rotation_factor=factor,
        candidates=cands,
        chi2_scale=scale,
        dof=dof,
        model_freq_per_day=model_f,
        model_nterms=model_n,
        halves=halves,
    )
