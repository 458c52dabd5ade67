"""How well would new observations tell the candidate periods apart?

Each candidate period keeps its own fitted model (M, K1 and harmonics at its frequency). At new
times the models predict different magnitudes; the Δχ² a pair would give, Σ (m_i − m_j)²/σ², is
the design criterion of Atkinson & Fedorov (1975), Biometrika 62, 57 (T-optimality) with the
parameters held at their fitted values. The least of it over all pairs says how well the worst-
separated pair would be told apart. The models are at the reference site and zero nightly offset.
With ``groups`` (one label per new point, e.g. its site-night) each group has a free zero point of
its own, as a new night's offset in the fit: the weighted mean of m_i − m_j within each group is
removed before squaring (the nuisance offset profiled out), so a constant difference between two
models, which such an offset absorbs, counts for nothing.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from planner.diagnostics.harmonic_lsq import harmonic_columns


@dataclass(frozen=True)
class CandidateModel:
    """One candidate's fitted model of reduced magnitude (at Δ = 1 au, reference site)."""

    period_h: float  #: period of the model's fundamental
    delta_chi2: float
    t_ref_jd: float  #: phase origin (emission time)
    mean_mag: float  #: M at log10 r = log10_r_ref
    k1: float
    log10_r_ref: float
    harmonics: np.ndarray  #: a_1, b_1, …, a_n, b_n

    def to_dict(self) -> dict:
        return {
            "period_h": self.period_h,
            "delta_chi2": self.delta_chi2,
            "t_ref_jd": self.t_ref_jd,
            "mean_mag": self.mean_mag,
            "k1": self.k1,
            "log10_r_ref": self.log10_r_ref,
            "harmonics": list(map(float, self.harmonics)),
        }


def candidate_mags(
    models: Sequence[CandidateModel], emission_jd: np.ndarray, helio_dist_au: np.ndarray | float
) -> np.ndarray:
    """(C, T) reduced magnitude of every candidate model at emission times ``emission_jd``."""
    t = np.atleast_1d(np.asarray(emission_jd, dtype=float))
    lr = np.log10(np.broadcast_to(np.asarray(helio_dist_au, dtype=float), t.shape))
    out = np.empty((len(models), t.size))
    for i, m in enumerate(models):
        h = harmonic_columns(t - m.t_ref_jd, 24.0 / m.period_h, m.harmonics.size // 2)
        k1 = 0.0 if not math.isfinite(m.k1) else m.k1
        out[i] = m.mean_mag + k1 * (lr - m.log10_r_ref) + h @ m.harmonics
    return out


def pairwise_delta_chi2(
    model_mags: np.ndarray, sigma_mag: np.ndarray | float, groups: np.ndarray | None = None
) -> np.ndarray:
    """(C, C) Σ_t (m_i − m_j)²/σ² from one Gram matrix of the models centred on their mean; with
    ``groups``, each model is first centred on its weighted mean within every group (free offsets)."""
    m = np.atleast_2d(np.asarray(model_mags, dtype=float))
    w = 1.0 / np.broadcast_to(np.asarray(sigma_mag, dtype=float), m.shape[1:]) ** 2
    c = m - m.mean(axis=0, keepdims=True)
    if groups is not None:
        _, index = np.unique(np.asarray(groups, dtype=str), return_inverse=True)
        sw = np.bincount(index, weights=w)
        means = np.stack([np.bincount(index, weights=w * row) for row in c]) / sw
        c = c - means[:, index]
    g = (c * w) @ c.T
    d = np.diag(g)
    return np.maximum(d[:, None] + d[None, :] - 2 * g, 0.0)


def expected_min_delta_chi2(
    emission_jd: np.ndarray,
    sigma_mag: np.ndarray | float,
    models: Sequence[CandidateModel],
    helio_dist_au: np.ndarray | float,
    groups: np.ndarray | None = None,
) -> float:
    """min over candidate pairs of Σ (m_i − m_j)²/σ² at the new times (∞ with fewer than two);
    ``groups``: a free zero point per group (module docstring)."""
    if len(models) < 2:
        return math.inf
    d = pairwise_delta_chi2(candidate_mags(models, emission_jd, helio_dist_au), sigma_mag, groups)
    return float(d[np.triu_indices(len(models), 1)].min())


def expected_min_delta_chi2_slow(
    emission_jd: np.ndarray,
    sigma_mag: np.ndarray | float,
    models: Sequence[CandidateModel],
    helio_dist_au: np.ndarray | float,
    groups: np.ndarray | None = None,
) -> float:
    """Slow twin: every pair, every group, every time, each model evaluated term by term; a group's
    weighted mean difference is subtracted before squaring."""
    t = np.atleast_1d(np.asarray(emission_jd, dtype=float))
    s = np.broadcast_to(np.asarray(sigma_mag, dtype=float), t.shape)
    r = np.broadcast_to(np.asarray(helio_dist_au, dtype=float), t.shape)
    labels = [None] * t.size if groups is None else [str(x) for x in np.ravel(groups)]

    def mag(m: CandidateModel, ti: float, ri: float) -> float:
        value = m.mean_mag + (m.k1 if math.isfinite(m.k1) else 0.0) * (math.log10(ri) - m.log10_r_ref)
        f = 24.0 / m.period_h
        for k in range(1, m.harmonics.size // 2 + 1):
            value += m.harmonics[2 * k - 2] * math.cos(2 * math.pi * k * f * (ti - m.t_ref_jd))
            value += m.harmonics[2 * k - 1] * math.sin(2 * math.pi * k * f * (ti - m.t_ref_jd))
        return value

    best = math.inf
    for i in range(len(models)):
        for j in range(i + 1, len(models)):
            total = 0.0
            for label in dict.fromkeys(labels):
                rows = [k for k, x in enumerate(labels) if x == label]
                diff = [mag(models[i], t[k], r[k]) - mag(models[j], t[k], r[k]) for k in rows]
                weight = [1.0 / s[k] ** 2 for k in rows]
                mean = 0.0 if groups is None else sum(a * b for a, b in zip(diff, weight, strict=True)) / sum(weight)
                total += sum(b * (a - mean) ** 2 for a, b in zip(diff, weight, strict=True))
            best = min(best, total)
    return best
