"""Injection–recovery: can these observation times give back the rotation period?

Synthetic light curves (a Fourier series of up to three harmonics of the rotation frequency,
random shape and phases, peak-to-peak amplitude drawn from a range, Gaussian noise per point,
plus the secular trend: the geometric magnitude from r and Δ and an optional extra fading rate)
are sampled at the given times and searched with the batched multi-harmonic periodogram that fits
the trend at the same time (Schwarzenberg-Czerny 1996, ApJ 460, L107). A trial counts as
recovered when the highest peak lies within half a peak width (1/(2T), T the baseline;
VanderPlas 2018, ApJS 236, 16, §7.1) of the true rotation frequency. For the double-peaked light
curve of an elongated body the search covers rotation frequencies up to 2/P_min, and a win at twice
the true frequency (the photometric period P/2) is reported apart, as "half": the data did not tell
the rotation from its half, so it is not a recovery.

The amplitude grows with the phase angle α: A(α) = A(0)(1 + m α) (Zappalà et al. 1990, A&A 231, 548).
With the phase angle of every time, each point's injected amplitude follows it; the drawn amplitude is
the one at the times' median phase angle, so a campaign sweeping α sees its light curve's amplitude
change as a real one would, which a constant-amplitude search fits less well.

Trials are drawn in blocks, each from its own child of ``numpy.random.SeedSequence(seed)``: the same
seed gives the same trials wherever and in whatever grouping the blocks run.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from planner.core.parallel import FLOPS_PER_S, TrialBlock, run_blocks, trial_blocks, workers_for
from planner.diagnostics.coverage import period_grid_h
from planner.diagnostics.periodogram import best_frequencies
from planner.diagnostics.trialpower import prefer_longer_period

#: Relative weights of the harmonics 1, 2, 3 of the rotation frequency: (low, high) ranges.
#: Double-peaked: the second harmonic dominates (two maxima per rotation, common practice).
SHAPE_DOUBLE = ((0.0, 0.3), (1.0, 1.0), (0.0, 0.3))
SHAPE_SINGLE = ((1.0, 1.0), (0.0, 0.4), (0.0, 0.2))

#: Amplitude–phase slopes m of A(α) = A(0)(1 + m α), per degree of phase angle, by taxonomic type:
#: Zappalà et al. (1990), A&A 231, 548 (values from memory): S 0.030, C 0.015, M 0.013.
AMPLITUDE_PHASE_SLOPE_BY_TYPE = {"S": 0.030, "C": 0.015, "M": 0.013}
#: The slope used when the type is unknown: 0.03 per degree (the S-type value, ≈ the mean slope
#: Zappalà et al. 1990 quote for asteroids in general; memory).
DEFAULT_AMPLITUDE_PHASE_SLOPE_PER_DEG = 0.03


def amplitude_phase_factor(
    phase_angle_deg: np.ndarray, slope_per_deg: float = DEFAULT_AMPLITUDE_PHASE_SLOPE_PER_DEG, ref_phase_deg=None
) -> tuple[np.ndarray, float]:
    """Per time, the amplitude relative to that at ``ref_phase_deg`` (default: the median phase angle):
    (1 + m α) / (1 + m α_ref), Zappalà et al. (1990). Returns the factors and α_ref."""
    alpha = np.asarray(phase_angle_deg, dtype=float)
    ref = float(np.median(alpha)) if ref_phase_deg is None else float(ref_phase_deg)
    return (1.0 + slope_per_deg * alpha) / (1.0 + slope_per_deg * ref), ref


def search_frequencies_per_day(
    min_period_h: float, max_period_h: float, span_h: float, double_peaked: bool = True, oversample: float = 10.0
) -> np.ndarray:
    """Rotation frequencies searched (c/d, ascending): 1/P_max … 1/P_min, or … 2/P_min when the
    light curve is double-peaked (so the photometric period P/2 is inside the search)."""
    low = min_period_h / 2.0 if double_peaked else min_period_h
    return np.sort(24.0 / period_grid_h(low, max_period_h, span_h, oversample))


def band_of_trial(trials: int, n_bands: int) -> np.ndarray:
    """Band index of every trial: trials shared out evenly over the bands, in band order."""
    counts = np.full(n_bands, trials // n_bands)
    counts[: trials % n_bands] += 1
    return np.repeat(np.arange(n_bands), counts)


def stratified_periods_h(
    rng: np.random.Generator,
    min_period_h: float,
    max_period_h: float,
    trials: int,
    n_bands: int,
    which: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Trial periods log-uniform within ``n_bands`` log-spaced bins, trials shared out evenly.

    Returns ``(periods_h, bin_edges_h)``; periods are in bin order. ``which`` draws only the trials of
    those bands (a block of a longer run: a slice of :func:`band_of_trial`).
    """
    edges = np.geomspace(min_period_h, max_period_h, n_bands + 1)
    which = band_of_trial(trials, n_bands) if which is None else np.asarray(which)
    u = rng.uniform(size=which.size)
    log_p = np.log(edges[which]) + u * (np.log(edges[which + 1]) - np.log(edges[which]))
    return np.exp(log_p), edges


def synthetic_light_curves(
    times_jd: np.ndarray,
    periods_h: np.ndarray,
    amplitude_mag: np.ndarray,
    rng: np.random.Generator,
    *,
    sigma_mag: np.ndarray | float = 0.0,
    double_peaked: bool = True,
    n_harmonics: int = 3,
    trend_mag: np.ndarray | None = None,
    fading_mag_per_day: float = 0.0,
    amplitude_factor: np.ndarray | None = None,
) -> np.ndarray:
    """Magnitudes (N times, M trials): Fourier series in rotational phase + trend + noise.

    Harmonic weights are drawn from :data:`SHAPE_DOUBLE` or :data:`SHAPE_SINGLE` (first
    ``n_harmonics`` of them), each with a random phase; the series is scaled so that its
    peak-to-peak range is ``amplitude_mag``, times ``amplitude_factor`` (N,) at each time when given
    (the amplitude–phase relation, :func:`amplitude_phase_factor`). ``trend_mag`` (N,) is added to every trial (e.g.
    5 log Δ + K1 log r), as is ``fading_mag_per_day`` × days since the first time. Noise is
    Gaussian with per-point (N,) or common ``sigma_mag``.
    """
    t = np.asarray(times_jd, dtype=float).ravel()
    days = t - t.min() if t.size else t
    p = np.asarray(periods_h, dtype=float).ravel()
    m = p.size
    shape = (SHAPE_DOUBLE if double_peaked else SHAPE_SINGLE)[:n_harmonics]
    weights = np.column_stack([rng.uniform(lo, hi, m) for lo, hi in shape])  # (M, K)
    phases = rng.uniform(0, 2 * np.pi, (m, len(shape)))
    k = np.arange(1, len(shape) + 1)
    # peak-to-peak of each shape on a fine phase grid, to scale to the requested amplitude
    grid = np.linspace(0, 2 * np.pi, 512, endpoint=False)
    profile = np.einsum("mk,mkg->mg", weights, np.cos(k[None, :, None] * grid[None, None, :] + phases[:, :, None]))
    ptp = profile.max(axis=1) - profile.min(axis=1)
    scale = np.asarray(amplitude_mag, dtype=float) / ptp
    rot_phase = 2 * np.pi * (days * 24.0)[:, None] / p[None, :]  # (N, M)
    mags = np.zeros((t.size, m))
    for j, kk in enumerate(k):
        mags += (weights[:, j] * scale)[None, :] * np.cos(kk * rot_phase + phases[None, :, j])
    if amplitude_factor is not None:
        mags *= np.asarray(amplitude_factor, dtype=float).reshape(-1, 1)
    if trend_mag is not None:
        mags += np.asarray(trend_mag, dtype=float).reshape(-1, 1)
    mags += fading_mag_per_day * days[:, None]
    sigma = np.broadcast_to(np.asarray(sigma_mag, dtype=float), (t.size,))
    mags += rng.normal(size=(t.size, m)) * sigma[:, None]
    return mags


@dataclass
class RecoveryBin:
    """Recovery in one period bin; ``confusions``: wrong winners grouped by frequency offset."""

    min_period_h: float
    max_period_h: float
    n_trials: int
    fraction: float
    fraction_at_period: float
    fraction_at_half_period: float
    confusions: list[dict] = field(default_factory=list)

    @property
    def period_h(self) -> float:
        return math.sqrt(self.min_period_h * self.max_period_h)


@dataclass
class RecoveryResult:
    """Per trial: true and found rotation periods and the match; per bin: fractions."""

    true_period_h: np.ndarray
    found_period_h: np.ndarray
    amplitude_mag: np.ndarray
    match: np.ndarray  # "period" (recovered), "half" (found P/2, reported apart) or "wrong"
    bins: list[RecoveryBin]
    tolerance_freq_per_day: float
    search_freq_per_day: np.ndarray
    bin_index: np.ndarray  # per trial: index into ``bins``
    #: Phase angle at which ``amplitude_mag`` holds (None: no phase angles, constant amplitudes).
    amplitude_ref_phase_deg: float | None = None


def classify_matches(
    true_freq_per_day: np.ndarray,
    found_freq_per_day: np.ndarray,
    tolerance_freq_per_day: float,
    double_peaked: bool = True,
) -> np.ndarray:
    """ "period" if found ≈ true, "half" if found ≈ 2·true (double-peaked only), else "wrong".

    Only "period" is a recovery; "half" (the photometric period P/2 of a double-peaked curve) is
    counted apart."""
    at_p = np.abs(found_freq_per_day - true_freq_per_day) <= tolerance_freq_per_day
    at_half = np.abs(found_freq_per_day - 2 * true_freq_per_day) <= tolerance_freq_per_day
    at_half &= double_peaked
    return np.where(at_p, "period", np.where(at_half, "half", "wrong"))


def _confusions(
    true_f: np.ndarray, found_f: np.ndarray, double_peaked: bool, resolution_per_day: float, n_total: int, top: int = 4
) -> list[dict]:
    """Group wrong winners by their offset from the nearer of f and 2f (the alias step; offset 0 from
    2f is the half period itself)."""
    if true_f.size == 0:
        return []
    off_p = found_f - true_f
    off_h = found_f - 2 * true_f
    use_h = double_peaked & (np.abs(off_h) < np.abs(off_p))
    offset = np.where(use_h, off_h, off_p)
    key = np.round(offset / resolution_per_day).astype(np.int64)
    out = []
    for k in np.unique(key):
        sel = key == k
        out.append(
            {
                "period_h": float(np.median(24.0 / found_f[sel])),
                "delta_freq_per_day": float(np.median(offset[sel])),
                "relative_to": "half_period" if np.mean(use_h[sel]) > 0.5 else "period",
                "count": int(sel.sum()),
                "fraction": float(sel.sum() / n_total),
            }
        )
    out.sort(key=lambda d: -d["count"])
    return out[:top]


@dataclass(frozen=True)
class _RecoveryTask:
    """What a block of injection trials needs (times, noise, trend, the search grid and the trials' bands)."""

    t: np.ndarray
    freqs: np.ndarray
    period_range_h: tuple[float, float]
    n_bands: int
    which: np.ndarray
    amplitude_range_mag: tuple[float, float]
    sigma_mag: np.ndarray | float
    double_peaked: bool
    n_harmonics: int
    nterms: int
    trend_mag: np.ndarray | None
    fading_mag_per_day: float
    #: Per time, the injected amplitude relative to the drawn one (amplitude–phase relation), or None.
    amplitude_factor: np.ndarray | None


#: Bytes of one periodogram's (frequencies × trials) power held at once within a block.
_POWER_BYTES = 64_000_000


def _recovery_block(block: TrialBlock, progress=None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """True periods, amplitudes and best frequencies of the block's trials, from the block's own stream."""
    task: _RecoveryTask = block.data
    rng = block.rng()
    lo, hi = task.period_range_h
    periods, _ = stratified_periods_h(rng, lo, hi, block.size, task.n_bands, task.which[block.start : block.stop])
    amps = rng.uniform(task.amplitude_range_mag[0], task.amplitude_range_mag[1], block.size)
    mags = synthetic_light_curves(
        task.t,
        periods,
        amps,
        rng,
        sigma_mag=task.sigma_mag,
        double_peaked=task.double_peaked,
        n_harmonics=task.n_harmonics,
        trend_mag=task.trend_mag,
        fading_mag_per_day=task.fading_mag_per_day,
        amplitude_factor=task.amplitude_factor,
    )
    fit = dict(nterms=task.nterms, sigma=task.sigma_mag, trend_degree=1, trend_columns=task.trend_mag)
    step = max(1, _POWER_BYTES // max(8 * task.freqs.size, 1))
    best = np.empty(block.size)
    for a in range(0, block.size, step):
        sub = None if progress is None else (lambda f, a=a: progress((a + f * min(step, block.size - a)) / block.size))
        best[a : a + step], _ = best_frequencies(task.t, mags[:, a : a + step], task.freqs, progress=sub, **fit)
    if task.double_peaked and task.freqs.size > 1:
        # The photometrist's P-versus-P/2 step, trial by trial (so block by block).
        step_f, low_f = float(task.freqs[1] - task.freqs[0]), float(task.freqs[0])
        best = prefer_longer_period(task.t, mags, best, step_f, low_f, **fit)
    return periods, amps, best


def injection_recovery(
    times_jd: np.ndarray,
    *,
    min_period_h: float,
    max_period_h: float,
    trials: int = 200,
    seed: int = 0,
    amplitude_range_mag: tuple[float, float] = (0.1, 0.5),
    sigma_mag: np.ndarray | float = 0.02,
    double_peaked: bool = True,
    n_harmonics: int = 3,
    nterms: int = 2,
    trend_mag: np.ndarray | None = None,
    fading_mag_per_day: float = 0.0,
    n_bands: int | None = None,
    oversample: float = 10.0,
    phase_angle_deg: np.ndarray | None = None,
    amplitude_phase_slope_per_deg: float = DEFAULT_AMPLITUDE_PHASE_SLOPE_PER_DEG,
    progress=None,
    workers: int | None = 1,
    dask_address: str | None = None,
) -> RecoveryResult:
    """Inject ``trials`` synthetic light curves at ``times_jd`` and search each one.

    ``times_jd`` should be light-time corrected (the times the light left the body). Periods are
    stratified over log-spaced bins (``n_bands``, default ``trials // 20`` within [4, 20]);
    amplitudes are uniform in ``amplitude_range_mag``, at the median of ``phase_angle_deg`` when
    given, each point's amplitude following its own phase angle (Zappalà et al. 1990). The search fits
    an ``nterms``-harmonic series with a linear trend, plus ``trend_mag`` as a free column when
    given, on the rotation-frequency grid of :func:`search_frequencies_per_day`.

    Trials run in blocks with independent random streams (``numpy.random.SeedSequence.spawn``,
    planner.core.parallel): the same seed gives the same trials whether they run here, over
    ``workers`` local processes (None: every core) or on the Dask cluster at ``dask_address``, and
    memory stays bounded however many trials are asked for.
    """
    t = np.asarray(times_jd, dtype=float).ravel()
    if t.size < 2 * nterms + 3:
        raise ValueError(f"injection–recovery needs at least {2 * nterms + 3} times")
    if n_bands is None:
        n_bands = int(min(20, max(4, trials // 20)))
    n_bands = max(1, min(n_bands, trials))
    baseline_d = float(t.max() - t.min())
    span_h = baseline_d * 24.0
    freqs = search_frequencies_per_day(min_period_h, max_period_h, span_h, double_peaked, oversample)
    edges = np.geomspace(min_period_h, max_period_h, n_bands + 1)
    factor, ref_phase = None, None
    if phase_angle_deg is not None:
        factor, ref_phase = amplitude_phase_factor(phase_angle_deg, amplitude_phase_slope_per_deg)
    task = _RecoveryTask(
        t=t,
        freqs=freqs,
        period_range_h=(float(min_period_h), float(max_period_h)),
        n_bands=n_bands,
        which=band_of_trial(trials, n_bands),
        amplitude_range_mag=(float(amplitude_range_mag[0]), float(amplitude_range_mag[1])),
        sigma_mag=sigma_mag,
        double_peaked=double_peaked,
        n_harmonics=n_harmonics,
        nterms=nterms,
        trend_mag=trend_mag,
        fading_mag_per_day=fading_mag_per_day,
        amplitude_factor=factor,
    )
    blocks = trial_blocks(trials, seed, task)
    cost_s = 8.0 * nterms * t.size * freqs.size * trials / FLOPS_PER_S
    if progress is not None and not dask_address and workers_for(workers, len(blocks), cost_s) == 1:
        # In this process: the progress callback follows every block of frequencies.
        results = [_recovery_block(b, lambda f, b=b: progress((b.start + f * b.size) / max(trials, 1))) for b in blocks]
    else:
        results = run_blocks(_recovery_block, blocks, workers=workers, dask_address=dask_address, cost_s=cost_s)
        if progress is not None:
            progress(1.0)
    periods = np.concatenate([r[0] for r in results]) if results else np.zeros(0)
    amps = np.concatenate([r[1] for r in results]) if results else np.zeros(0)
    best_f = np.concatenate([r[2] for r in results]) if results else np.zeros(0)
    tol = 0.5 / max(baseline_d, max_period_h / 24.0)
    true_f = 24.0 / periods
    match = classify_matches(true_f, best_f, tol, double_peaked)
    which = np.clip(np.searchsorted(edges, periods, side="right") - 1, 0, n_bands - 1)
    bins = []
    for b in range(n_bands):
        sel = which == b
        n = int(sel.sum())
        missed = sel & (match != "period")
        bins.append(
            RecoveryBin(
                min_period_h=float(edges[b]),
                max_period_h=float(edges[b + 1]),
                n_trials=n,
                fraction=float(np.mean(match[sel] == "period")) if n else math.nan,
                fraction_at_period=float(np.mean(match[sel] == "period")) if n else math.nan,
                fraction_at_half_period=float(np.mean(match[sel] == "half")) if n else math.nan,
                confusions=_confusions(true_f[missed], best_f[missed], double_peaked, 2 * tol, max(n, 1)),
            )
        )
    return RecoveryResult(
        true_period_h=periods,
        found_period_h=24.0 / best_f,
        amplitude_mag=amps,
        match=match,
        bins=bins,
        tolerance_freq_per_day=tol,
        search_freq_per_day=freqs,
        bin_index=which,
        amplitude_ref_phase_deg=ref_phase,
    )
