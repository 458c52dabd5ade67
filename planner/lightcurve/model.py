"""The light-curve model: reduced magnitude = M + K1 log10 r + rotation + zero points.

    m_red(t) = M + K1 (log10 r − ⟨log10 r⟩) + Σ_{k=1..n} [a_k cos 2πkft + b_k sin 2πkft]
               + s_site + o_(site, night)

t is the emission time from a reference epoch (mid-span). The first site is the reference
(s = 0); every other site has a free zero point s_site; every (site, night) has an offset o held by
a Gaussian prior of σ ``night_offset_sigma_mag`` (default 0.02 mag: nights calibrated against a
catalogue agree to about that, common practice). With free nightly offsets (σ = ∞) the offsets
absorb M, the site zero points and any change of brightness from night to night, so K1 is held at
a given value and only the rotation is fitted.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.diagnostics.harmonic_lsq import HarmonicFit, harmonic_chi2, harmonic_columns, harmonic_solve
from planner.lightcurve.points import groups_in_order
from planner.lightcurve.reduce import ReducedPoints

#: Default spread of nightly zero points (mag): common practice for catalogue-calibrated nights.
NIGHT_OFFSET_SIGMA_MAG = 0.02


@dataclass(frozen=True)
class FixedDesign:
    """Frequency-independent columns of the model and what each means."""

    columns: np.ndarray  #: (N, p)
    prior_precision: np.ndarray  #: (p,), 1/σ² of the Gaussian prior (0 = free)
    names: tuple[str, ...]  #: "mean", "k1", "time", "site", "night" per column
    y: np.ndarray  #: magnitudes fitted (reduced, minus K1 log r when K1 is held)
    weights: np.ndarray  #: 1/σ²
    t_days: np.ndarray  #: emission time − t_ref_jd
    t_ref_jd: float
    log10_r: np.ndarray  #: log10 r − log10_r_ref
    log10_r_ref: float
    sites: tuple[str, ...]
    groups: tuple[tuple[str, str], ...]  #: (site, night) in order of first appearance
    group_index: np.ndarray
    site_index: np.ndarray
    k1_held: float | None  #: K1 fixed at this value (not a column), or None when fitted
    nights_free: bool

    def column(self, name: str) -> int | None:
        return self.names.index(name) if name in self.names else None

    @property
    def prior_rows(self) -> int:
        return int(np.count_nonzero(self.prior_precision))

    def dof(self, n_harmonic_params: int) -> int:
        """Augmented degrees of freedom: points + prior rows − fitted parameters."""
        return self.y.size + self.prior_rows - self.columns.shape[1] - n_harmonic_params


def build_design(
    reduced: ReducedPoints,
    *,
    night_offset_sigma_mag: float | None = NIGHT_OFFSET_SIGMA_MAG,
    k1_held: float | None = None,
    time_term: bool = False,
) -> FixedDesign:
    """Columns for ``reduced``. ``night_offset_sigma_mag`` None or ∞ frees the nightly offsets
    (then ``k1_held`` is required and no mean, site or time columns are fitted); ``k1_held`` holds
    K1 at that value; ``time_term`` adds a linear term in time (mag/day)."""
    t_ref = 0.5 * (reduced.emission_jd.min() + reduced.emission_jd.max())
    t = reduced.emission_jd - t_ref
    r_ref = float(np.mean(reduced.log10_r))
    lr = reduced.log10_r - r_ref
    sites, site_index = groups_in_order(reduced.site)
    groups, group_index = groups_in_order(reduced.site, reduced.night)
    free = night_offset_sigma_mag is None or not math.isfinite(night_offset_sigma_mag)
    if not free and night_offset_sigma_mag <= 0:
        raise ValueError("night_offset_sigma_mag must be positive (or None/inf for free offsets)")
    if free and k1_held is None:
        raise ValueError("free nightly offsets need K1 held at a value")
    n = t.size
    cols, names, prec = [], [], []
    if not free:
        cols.append(np.ones(n))
        names.append("mean")
        prec.append(0.0)
        if k1_held is None:
            cols.append(lr)
            names.append("k1")
            prec.append(0.0)
        for j in range(1, len(sites)):
            cols.append((site_index == j).astype(float))
            names.append("site")
            prec.append(0.0)
        if time_term:
            cols.append(t)
            names.append("time")
            prec.append(0.0)
    night_prec = 0.0 if free else 1.0 / night_offset_sigma_mag**2
    for g in range(len(groups)):
        cols.append((group_index == g).astype(float))
        names.append("night")
        prec.append(night_prec)
    y = reduced.reduced_mag - (k1_held * lr if k1_held is not None else 0.0)
    return FixedDesign(
        columns=np.column_stack(cols),
        prior_precision=np.array(prec),
        names=tuple(names),
        y=y,
        weights=1.0 / reduced.mag_err**2,
        t_days=t,
        t_ref_jd=float(t_ref),
        log10_r=lr,
        log10_r_ref=r_ref,
        sites=tuple(s[0] for s in sites),
        groups=tuple((str(a), str(b)) for a, b in groups),
        group_index=group_index,
        site_index=site_index,
        k1_held=k1_held,
        nights_free=free,
    )


def chi2_at(design: FixedDesign, freq_per_day: np.ndarray, nterms: int, t_days: np.ndarray | None = None):
    """χ² of the model at each frequency (:func:`planner.diagnostics.harmonic_lsq.harmonic_chi2`);
    ``t_days`` replaces the design's times (e.g. warped times for a period change)."""
    t = design.t_days if t_days is None else t_days
    return harmonic_chi2(
        t,
        design.y,
        design.weights,
        np.atleast_1d(freq_per_day),
        nterms,
        fixed=design.columns,
        prior_precision=design.prior_precision,
    )


def fit_at(
    design: FixedDesign,
    freq_per_day: float,
    nterms: int,
    extra: np.ndarray | None = None,
    t_days: np.ndarray | None = None,
) -> HarmonicFit:
    """The full fit at one frequency; ``extra`` (N, q) free columns appended after the design's."""
    cols, prec = design.columns, design.prior_precision
    if extra is not None:
        extra = np.asarray(extra, dtype=float).reshape(design.y.size, -1)
        cols = np.hstack([cols, extra])
        prec = np.concatenate([prec, np.zeros(extra.shape[1])])
    t = design.t_days if t_days is None else t_days
    return harmonic_solve(t, design.y, design.weights, freq_per_day, nterms, fixed=cols, prior_precision=prec)


def rotation_mag(harmonics: np.ndarray, freq_per_day: float, t_days: np.ndarray) -> np.ndarray:
    """The rotational part Σ a_k cos 2πkft + b_k sin 2πkft of a fit (coefficients a_1, b_1, …)."""
    h = np.asarray(harmonics, dtype=float)
    return harmonic_columns(np.asarray(t_days, dtype=float), float(freq_per_day), h.size // 2) @ h


def brightness_maxima(harmonics: np.ndarray, min_prominence: float = 0.1, samples: int = 1440) -> int:
    """Number of brightness maxima (magnitude minima) per cycle of a Fourier light curve, counting
    only those that stand out by at least ``min_prominence`` of the peak-to-peak amplitude above the
    fainter of the two magnitude maxima beside them (a threshold of our choosing)."""
    phase = np.arange(samples) / samples
    m = rotation_mag(harmonics, 1.0, phase)
    amp = float(m.max() - m.min())
    if amp <= 0:
        return 0
    nxt, prv = np.roll(m, -1), np.roll(m, 1)
    minima = np.flatnonzero((m < prv) & (m <= nxt))
    maxima = np.flatnonzero((m > prv) & (m >= nxt))
    if minima.size <= 1 or maxima.size == 0:
        return int(minima.size)
    count = 0
    for i in minima:
        after = maxima[np.searchsorted(maxima, i) % maxima.size]
        before = maxima[np.searchsorted(maxima, i) - 1]
        if min(m[after], m[before]) - m[i] >= min_prominence * amp:
            count += 1
    return max(count, 1)
