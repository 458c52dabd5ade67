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

Everything is seeded through one ``numpy.random.Generator``: the same seed gives the same trials.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from planner.diagnostics.coverage import period_grid_h
from planner.diagnostics.periodogram import best_frequencies, trend_basis

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


def stratified_periods_h(
    rng: np.random.Generator, min_period_h: float, max_period_h: float, trials: int, n_bands: int
) -> tuple[np.ndarray, np.ndarray]:
    """Trial periods log-uniform within ``n_bands`` log-spaced bins, trials shared out evenly.

    Returns ``(periods_h, bin_edges_h)``; periods are in bin order.
    """
    edges = np.geomspace(min_period_h, max_period_h, n_bands + 1)
    counts = np.full(n_bands, trials // n_bands)
    counts[: trials % n_bands] += 1
    which = np.repeat(np.arange(n_bands), counts)
    u = rng.uniform(size=trials)
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


def _trend_free(times_jd, mags, *, sigma, trend_degree=1, trend_columns=None):
    """Weighted data with the trend projected out: (t − t_mid, weights, trend basis Q, y_r, χ²_trend).

    ``sigma`` per point or common; the trend is that of
    :func:`planner.diagnostics.periodogram.trend_basis` (``trend_degree``, ``trend_columns``)."""
    t = np.asarray(times_jd, dtype=float).ravel()
    y = np.asarray(mags, dtype=float).reshape(t.size, -1)
    w = 1.0 / np.broadcast_to(np.asarray(sigma, dtype=float), t.shape)
    q, _ = np.linalg.qr(trend_basis(t, trend_degree, trend_columns) * w[:, None])
    yr = y * w[:, None]
    yr -= q @ (q.T @ yr)
    return t - 0.5 * (t.min() + t.max()), w, q, yr, np.einsum("nm,nm->m", yr, yr)


def _phasor_power(z: np.ndarray, w, q, yr, chi_trend, nterms: int) -> np.ndarray:
    """θ per (trial, frequency) from the phasors z = exp(2πi f t), (m, K, N), of trials' frequencies."""
    cols, zk = [], z
    for _ in range(nterms):  # harmonics k f as powers of the phasor
        cols += [zk.real * w, zk.imag * w]
        zk = zk * z
    h = np.stack(cols, axis=-1)  # (m, K, N, 2n)
    ht = np.swapaxes(h, -1, -2)
    qh = q.T @ h  # the trend part of each harmonic column
    gram = ht @ h - np.swapaxes(qh, -1, -2) @ qh
    rhs = (ht @ yr.T[:, None, :, None])[..., 0]  # yr is already free of the trend
    red = np.einsum("mki,mki->mk", rhs, np.linalg.solve(gram, rhs[..., None])[..., 0])
    safe = np.where(chi_trend > 0, chi_trend, 1.0)[:, None]
    return np.where(chi_trend[:, None] > 0, red / safe, 0.0)


def trial_power(
    times_jd: np.ndarray,
    mags: np.ndarray,
    freq_per_day: np.ndarray,
    *,
    nterms: int,
    chunk: int = 16,
    **trend,
) -> np.ndarray:
    """The multi-harmonic power θ of :func:`planner.diagnostics.periodogram.multiharmonic_power`, but at
    frequencies of each trial's own: ``mags`` (N, M), ``freq_per_day`` (M, K) → (M, K).

    Weighted least squares with the trend projected out (QR of the weighted trend columns), then the
    harmonic columns' normal equations per (trial, frequency): θ = (χ²_trend − χ²_f) / χ²_trend.
    ``trend``: ``sigma``, ``trend_degree`` (default 1), ``trend_columns``, as for the periodogram.
    """
    tc, w, q, yr, chi_trend = _trend_free(times_jd, mags, **trend)
    freqs = np.asarray(freq_per_day, dtype=float).reshape(yr.shape[1], -1)
    out = np.zeros(freqs.shape)
    for a in range(0, yr.shape[1], chunk):
        b = min(a + chunk, yr.shape[1])
        z = np.exp(2j * np.pi * freqs[a:b, :, None] * tc)
        out[a:b] = _phasor_power(z, w, q, yr[:, a:b], chi_trend[a:b], nterms)
    return out


def prefer_longer_period(
    times_jd: np.ndarray,
    mags: np.ndarray,
    best_freq_per_day: np.ndarray,
    grid_step_per_day: float,
    min_freq_per_day: float,
    *,
    nterms: int,
    chunk: int = 16,
    **trend,
) -> np.ndarray:
    """The photometrist's P-versus-P/2 step for a double-peaked search: each trial's winner φ against φ/2.

    On the search grid the peak at φ/2, carried by its second harmonic, is sampled twice as coarsely as
    the one at φ and loses power to the grid alone; so both are refined: five frequencies half a search
    step apart around each, and a parabola through the highest and its neighbours. φ/2 wins when its
    refined power is higher: its fit carries the harmonics φ/2 and φ, so it beats φ when the odd
    harmonics of a double-peaked curve stand above the noise. Returns the frequency kept per trial.
    The phasors come from one complex exponential per trial (exp(πiφt), and its square for φ) times
    powers of the step's phasor. ``trend`` as for :func:`trial_power`.
    """
    tc, w, q, yr, chi_trend = _trend_free(times_jd, mags, **trend)
    best = np.asarray(best_freq_per_day, dtype=float)
    half_step = 0.5 * grid_step_per_day
    shifts = np.arange(-2, 3)
    step_z = np.exp(2j * np.pi * half_step * shifts[:, None] * tc)  # (5, N)
    top, half = np.empty((best.size, 5)), np.empty((best.size, 5))
    for a in range(0, best.size, chunk):
        b = min(a + chunk, best.size)
        u = np.exp(1j * np.pi * best[a:b, None] * tc)  # exp(2πi (φ/2) t), (m, N)
        z = np.concatenate([(u * u)[:, None, :] * step_z, u[:, None, :] * step_z], axis=1)  # (m, 10, N)
        p = _phasor_power(z, w, q, yr[:, a:b], chi_trend[a:b], nterms)
        top[a:b], half[a:b] = p[:, :5], p[:, 5:]
    top_h, _ = _parabola_peak(top)
    half_h, half_off = _parabola_peak(half)
    longer = (half_h > top_h) & (best / 2.0 >= min_freq_per_day)
    return np.where(longer, best / 2.0 + half_off * half_step, best)


def _parabola_peak(samples: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Height and position (in sample steps from the middle) of the peak of equally spaced samples (M, 5):
    the highest inner sample and the vertex of the parabola through it and its neighbours."""
    rows = np.arange(samples.shape[0])
    i = np.clip(samples.argmax(axis=1), 1, samples.shape[1] - 2)
    y0, y1, y2 = samples[rows, i - 1], samples[rows, i], samples[rows, i + 1]
    curve = y0 - 2.0 * y1 + y2
    shift = np.where(curve < 0, 0.5 * (y0 - y2) / np.where(curve < 0, curve, -1.0), 0.0)
    shift = np.clip(shift, -1.0, 1.0)
    height = np.where(curve < 0, y1 - 0.25 * (y0 - y2) * shift, y1)
    return np.maximum(height, samples.max(axis=1)), i - 2 + shift


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
) -> RecoveryResult:
    """Inject ``trials`` synthetic light curves at ``times_jd`` and search each one.

    ``times_jd`` should be light-time corrected (the times the light left the body). Periods are
    stratified over log-spaced bins (``n_bands``, default ``trials // 20`` within [4, 20]);
    amplitudes are uniform in ``amplitude_range_mag``, at the median of ``phase_angle_deg`` when
    given, each point's amplitude following its own phase angle (Zappalà et al. 1990). The search fits
    an ``nterms``-harmonic series with a linear trend, plus ``trend_mag`` as a free column when
    given, on the rotation-frequency grid of :func:`search_frequencies_per_day`.
    """
    t = np.asarray(times_jd, dtype=float).ravel()
    if t.size < 2 * nterms + 3:
        raise ValueError(f"injection–recovery needs at least {2 * nterms + 3} times")
    rng = np.random.default_rng(seed)
    if n_bands is None:
        n_bands = int(min(20, max(4, trials // 20)))
    n_bands = max(1, min(n_bands, trials))
    baseline_d = float(t.max() - t.min())
    span_h = baseline_d * 24.0
    freqs = search_frequencies_per_day(min_period_h, max_period_h, span_h, double_peaked, oversample)
    periods, edges = stratified_periods_h(rng, min_period_h, max_period_h, trials, n_bands)
    amps = rng.uniform(amplitude_range_mag[0], amplitude_range_mag[1], trials)
    factor, ref_phase = None, None
    if phase_angle_deg is not None:
        factor, ref_phase = amplitude_phase_factor(phase_angle_deg, amplitude_phase_slope_per_deg)
    mags = synthetic_light_curves(
        t,
        periods,
        amps,
        rng,
        sigma_mag=sigma_mag,
        double_peaked=double_peaked,
        n_harmonics=n_harmonics,
        trend_mag=trend_mag,
        fading_mag_per_day=fading_mag_per_day,
        amplitude_factor=factor,
    )
    fit = dict(nterms=nterms, sigma=sigma_mag, trend_degree=1, trend_columns=trend_mag)
    best_f, _ = best_frequencies(t, mags, freqs, progress=progress, **fit)
    if double_peaked and freqs.size > 1:
        best_f = prefer_longer_period(t, mags, best_f, float(freqs[1] - freqs[0]), float(freqs[0]), **fit)
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
