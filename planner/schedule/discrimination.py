"""Re-planning from a fitted light curve: the surviving candidate periods and how well new slots tell
them apart.

A fit of the nights already observed (planner.lightcurve.fit) leaves candidate periods, every χ²
minimum within Δχ² < 25 of the best. The re-plan then

* looks only at them: the rotation diagnostics' trial periods are, around each candidate rotation
  period P with 1σ σ_P, the frequencies within ±3σ_f (σ_f = σ_P/P², at least ± two steps) on the
  campaign's frequency step 1/(oversample · span) (planner.diagnostics.coverage.period_grid_h's
  step), and the periods between the shortest and longest of those for the check of plan and
  baseline;
* scores how well the new science slots separate them: for each pair of candidate models the
  expected Δχ² D = Σ (m_i − m_j)²/σ² over the slots (Atkinson & Fedorov 1975, Biometrika 62, 57,
  T-optimality, with the models held at their fitted values; planner.lightcurve.discriminate),
  σ the slot's stacked point precision (planner.schedule.quality), m the candidates' reduced
  magnitudes at the slot centre's emission time (light time and r from the ephemeris, sampled every
  2 h and interpolated: light time changes by seconds a day). Each new site-night has a zero point
  of its own in the fit, so its weighted mean difference is profiled out: per site-night
  D = S2 − S1²/S0 with S0 = Σ w, S1 = Σ w Δm, S2 = Σ w Δm² (w = 1/σ²), a constant difference counting
  for nothing. Those three sums add over slots, so prefix sums give any visit's share in O(pairs)
  (:class:`SlotMoments`);
* leaves out of the term the pairs whose photometric frequencies are in a whole ratio k = 2 … n (n the
  models' harmonics): one model's harmonics then hold the other's fundamental (P against P/2 when
  n = 2), so the two differ only by the odd harmonics of the longer period, the halves-differ
  question of P against 2P (planner.lightcurve.periods). More points at any phase settle it, not
  where they go; kept in the minimum it would pin the term to a pair no placement can help, and the
  coverage of the candidates' phases already serves it. Within 2 % of the ratio counts as whole.

Pure apart from reading the bundled DE421 through the ephemeris, as planner.schedule.quality does.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.inputs.targets import Target
from planner.lightcurve.discriminate import CandidateModel, candidate_mags, pairwise_delta_chi2
from planner.lightcurve.fit import LightCurveFit
from planner.lightcurve.periods import CANDIDATE_DELTA_CHI2
from planner.schedule.quality import part_slot_centres
from planner.schedule.slots import SlotGrid
from planner.sky.geometry import GEOCENTRE, geometry

#: Half width of each candidate's window of trial periods, in its σ, and the least half width in grid steps.
WINDOW_SIGMA = 3.0
WINDOW_MIN_STEPS = 2
#: Widest window, as a fraction of the candidate's frequency (for a candidate with a poorly known σ).
WINDOW_MAX_FRACTION = 0.1
#: σ (mag) of a slot whose precision is not known (no precision model): the check's default.
DEFAULT_SIGMA_MAG = 0.02
#: Relative tolerance of a whole frequency ratio between two candidates (nested models).
NESTED_TOLERANCE = 0.02
#: Geometry sample step for emission times and r (hours).
SAMPLE_STEP_H = 2.0
_JD_UNIX = 2440587.5


def night_separation(s0: np.ndarray, s1: np.ndarray, s2: np.ndarray) -> np.ndarray:
    """Expected Δχ² per pair of one site-night with its zero point free, S2 − S1²/S0 (0 where S0 = 0;
    never below 0, which only rounding could give). ``s0`` (...,), ``s1`` and ``s2`` (..., pairs)."""
    s0 = np.asarray(s0, dtype=float)[..., None]
    safe = np.where(s0 > 0, s0, 1.0)
    return np.where(s0 > 0, np.maximum(s2 - s1 * s1 / safe, 0.0), 0.0)


class SlotMoments:
    """Per flat slot (planner.schedule.planmodel's layout): the weight w = 1/σ² and each pair's model
    difference Δm, with prefix sums of w, w Δm and w Δm², so any run of slots has its sums in O(pairs)."""

    def __init__(self, differences: list[np.ndarray], weights: list[np.ndarray]) -> None:
        self.dm = np.concatenate([np.asarray(d, dtype=float) for d in differences], axis=1).T.copy()
        self.w = np.concatenate([np.asarray(w, dtype=float) for w in weights])
        self.cum0 = np.concatenate([[0.0], np.cumsum(self.w)])
        zero = np.zeros((1, self.dm.shape[1]))
        self.cum1 = np.vstack([zero, np.cumsum(self.w[:, None] * self.dm, axis=0)])
        self.cum2 = np.vstack([zero, np.cumsum(self.w[:, None] * self.dm**2, axis=0)])

    @property
    def n_pairs(self) -> int:
        return int(self.dm.shape[1])

    @property
    def n_slots(self) -> int:
        return int(self.w.size)

    def between(self, i0: np.ndarray, i1: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(S0 (N,), S1 (N, pairs), S2 (N, pairs)) over the flat slots [i0, i1) of each run."""
        return self.cum0[i1] - self.cum0[i0], self.cum1[i1] - self.cum1[i0], self.cum2[i1] - self.cum2[i0]

    def between_slow(self, i0: int, i1: int) -> tuple[float, np.ndarray, np.ndarray]:
        """Slow twin of :meth:`between` for one run: add slot by slot."""
        s0, s1, s2 = 0.0, np.zeros(self.n_pairs), np.zeros(self.n_pairs)
        for i in range(i0, i1):
            s0 += self.w[i]
            s1 = s1 + self.w[i] * self.dm[i]
            s2 = s2 + self.w[i] * self.dm[i] ** 2
        return s0, s1, s2


@dataclass(frozen=True)
class CandidatePeriods:
    """The surviving candidates of a fit, what the re-plan separates and covers."""

    models: tuple[CandidateModel, ...]  #: each candidate's fitted model (photometric period)
    rotation_period_h: np.ndarray
    sigma_h: np.ndarray
    delta_chi2: np.ndarray
    sample_utc: np.ndarray  #: geometry samples (datetime64[ns]) for emission times and r
    sample_light_time_min: np.ndarray
    sample_helio_dist_au: np.ndarray
    #: The pairs the term separates (i < j, row-major), nested pairs left out (module docstring).
    pairs: tuple[np.ndarray, np.ndarray]

    @property
    def n_pairs(self) -> int:
        return int(self.pairs[0].size)

    @property
    def candidates_h(self) -> list[float]:
        return [float(p) for p in self.rotation_period_h]

    @property
    def pairs_h(self) -> list[list[float]]:
        """The separated pairs as [rotation period i, rotation period j] (h)."""
        p = self.rotation_period_h
        return [[float(p[a]), float(p[b])] for a, b in zip(*self.pairs, strict=True)]

    def emission(self, times_utc: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Emission time (JD) and r (au) at observed UTC times, interpolated in the geometry samples."""
        t = np.asarray(times_utc, dtype="datetime64[ns]").astype(np.int64).astype(float)
        s = self.sample_utc.astype(np.int64).astype(float)
        tau_d = np.interp(t, s, self.sample_light_time_min) / 1440.0
        return t / 8.64e13 + _JD_UNIX - tau_d, np.interp(t, s, self.sample_helio_dist_au)

    def period_grid_h(self, span_h: float, oversample: float) -> np.ndarray:
        """Trial rotation periods (ascending): a window of frequencies around each candidate (module docstring)."""
        step = 1.0 / (oversample * max(float(span_h), float(np.max(self.rotation_period_h))))
        freqs = []
        for p, s in zip(self.rotation_period_h, self.sigma_h, strict=True):
            sigma_f = float(s) / float(p) ** 2 if math.isfinite(s) else 0.0
            k = max(WINDOW_MIN_STEPS, math.ceil(min(WINDOW_SIGMA * sigma_f, WINDOW_MAX_FRACTION / p) / step))
            freqs.append(1.0 / p + step * np.arange(-k, k + 1))
        f = np.unique(np.round(np.concatenate(freqs), 12))
        return 1.0 / f[f > 0][::-1]

    def pair_delta_chi2(
        self, times_utc: np.ndarray, sigma_mag: np.ndarray | float, groups: np.ndarray | None = None
    ) -> np.ndarray:
        """Expected Δχ² of every separated pair for points at ``times_utc`` with σ ``sigma_mag``; ``groups``
        (e.g. site-night labels) each with a free zero point."""
        emit, r = self.emission(times_utc)
        d = pairwise_delta_chi2(candidate_mags(self.models, emit, r), sigma_mag, groups)
        return d[self.pairs]

    def slot_moments(self, grid: SlotGrid, precision: list[np.ndarray] | None) -> SlotMoments:
        """Each span slot's weight 1/σ² (0 where the precision is not known; 1/DEFAULT_SIGMA_MAG² without a
        precision model) and model difference per separated pair, laid out as the state's flat slots."""
        times = [part_slot_centres(grid, p) for p in range(len(grid.site_nights))]
        emit, r = self.emission(np.concatenate(times))
        mags = candidate_mags(self.models, emit, r)
        i, j = self.pairs
        if precision is None:
            prec = np.full(emit.size, 1.0 / DEFAULT_SIGMA_MAG**2)
        else:
            prec = np.concatenate([np.asarray(p, dtype=float) for p in precision])
            prec = np.where(np.isfinite(prec) & (prec > 0), prec, 0.0)
        return SlotMoments([mags[i] - mags[j]], [prec])


def separable_pairs(models: tuple[CandidateModel, ...]) -> tuple[np.ndarray, np.ndarray]:
    """Pairs (i < j) of candidate models that are not nested (module docstring)."""
    i, j = np.triu_indices(len(models), 1)
    keep = []
    for a, b in zip(i, j, strict=True):
        n = max(models[a].harmonics.size, models[b].harmonics.size) // 2
        fa, fb = sorted((1.0 / models[a].period_h, 1.0 / models[b].period_h))
        ratio = fb / fa
        k = round(ratio)
        keep.append(not (2 <= k <= n and abs(ratio - k) <= NESTED_TOLERANCE * k))
    keep = np.array(keep, dtype=bool)
    return i[keep], j[keep]


def candidate_periods(
    fit: LightCurveFit,
    target: Target,
    start_utc: np.datetime64,
    stop_utc: np.datetime64,
    max_delta_chi2: float = CANDIDATE_DELTA_CHI2,
) -> CandidatePeriods:
    """The fit's candidates within ``max_delta_chi2`` of the best, with geometry samples over
    [``start_utc``, ``stop_utc``] (geocentric: light time within 21 ms of any site's)."""
    d = fit.to_dict()["periods"]["candidates"]
    keep = [k for k, c in enumerate(d) if c["delta_chi2"] < max_delta_chi2]
    step = np.timedelta64(int(SAMPLE_STEP_H * 3600), "s")
    t = np.arange(np.datetime64(start_utc, "s") - step, np.datetime64(stop_utc, "s") + 2 * step, step)
    geo = geometry(target, t.astype("datetime64[ns]"))[GEOCENTRE]
    models = tuple(fit.candidate_models[k] for k in keep)
    return CandidatePeriods(
        models=models,
        rotation_period_h=np.array([d[k]["period_h"] for k in keep], dtype=float),
        sigma_h=np.array([np.inf if d[k]["sigma_h"] is None else d[k]["sigma_h"] for k in keep], dtype=float),
        delta_chi2=np.array([d[k]["delta_chi2"] for k in keep], dtype=float),
        sample_utc=t.astype("datetime64[ns]"),
        sample_light_time_min=geo["light_time_minutes"].to_numpy(dtype=float),
        sample_helio_dist_au=geo["helio_dist_au"].to_numpy(dtype=float),
        pairs=separable_pairs(models),
    )
