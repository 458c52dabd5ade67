"""Aliases: which periods a sampling pattern confuses, and whether a wrong answer was one of them.

The spectral window's peaks (:mod:`planner.diagnostics.specwindow`) at frequencies f_w make a signal at
f indistinguishable from f ± f_w (VanderPlas 2018, ApJS 236, 16, §4); the height of such an alias is
the length of the mean of the times folded on f_w (Eyer & Bartholdi 1999, A&AS 135, 1).
"""

from __future__ import annotations

import numpy as np

from planner.diagnostics.specwindow import days_from_first, normalised_weights


def alias_height(
    times_jd: np.ndarray, delta_freq_per_day: np.ndarray | float, weights: np.ndarray | None = None
) -> np.ndarray:
    """Height of the alias at frequency offset Δf: length of the mean unit vector of the phases.

    Eyer & Bartholdi (1999), A&AS 135, 1, section 3: fold the times on Δf, place each as a unit
    vector at angle 2π·phase, and take the length of their (weighted) mean — the "centre of
    gravity" of the folded times. 1 means every time falls at the same phase of Δf, so signals
    at f and f ± Δf cannot be told apart; 0 means the folded times balance around the circle.
    Mathematically equal to |W(Δf)|; computed here by folding (the independent route).
    """
    t = days_from_first(times_jd)
    df = np.asarray(delta_freq_per_day, dtype=float)
    if t.size == 0:
        return np.zeros(df.shape)
    w = normalised_weights(weights, t.size)
    phase = np.mod(np.multiply.outer(df, t), 1.0)  # folded times, cycles in [0, 1)
    angle = 2.0 * np.pi * phase
    cx = (np.cos(angle) * w).sum(axis=-1)
    cy = (np.sin(angle) * w).sum(axis=-1)
    return np.hypot(cx, cy)


def alias_partners(freq_per_day: np.ndarray, peak_freq_per_day: np.ndarray, harmonic: int = 1) -> np.ndarray:
    """Frequencies confusable with each candidate: ``(h·f ± f_w) / h`` for every window peak.

    ``freq_per_day`` (n,) candidates, ``peak_freq_per_day`` (k,) window peaks. Returns an
    array (n, k, 2): partners from ``h·f − f_w`` in ``[..., 0]`` and ``h·f + f_w`` in
    ``[..., 1]``, NaN where the partner frequency is not positive. ``harmonic`` h is the
    harmonic of the rotation frequency that carries the signal (2 for the double-peaked light
    curve of an elongated body, common practice), so the partners are rotation frequencies
    whose h-th harmonic coincides with an alias of the observed signal (VanderPlas 2018, §4).
    """
    f = np.asarray(freq_per_day, dtype=float)[:, None]
    fw = np.asarray(peak_freq_per_day, dtype=float)[None, :]
    out = np.stack([(harmonic * f - fw) / harmonic, (harmonic * f + fw) / harmonic], axis=-1)
    return np.where(out > 0, out, np.nan)


def partners_in_range(
    freq_per_day: float,
    peaks_f: np.ndarray,
    peaks_h: np.ndarray,
    *,
    min_period_h: float,
    max_period_h: float,
    double_peaked: bool,
) -> list[dict]:
    """Alias partners of one candidate rotation frequency, inside the searched period range."""
    low = min_period_h / (2.0 if double_peaked else 1.0)
    out = []
    harmonics = (1, 2) if double_peaked else (1,)
    for h in harmonics:
        part = alias_partners(np.array([freq_per_day]), peaks_f, harmonic=h)[0]  # (k, 2)
        for j, (fw, hw) in enumerate(zip(peaks_f, peaks_h, strict=True)):
            for side, sign in ((0, -1), (1, 1)):
                fp = part[j, side]
                if not np.isfinite(fp):
                    continue
                p = 24.0 / fp
                if low <= p <= max_period_h:
                    out.append(
                        {
                            "period_h": float(p),
                            "freq_offset_per_day": float(sign * fw / h),
                            "height": float(hw),
                            "harmonic": h,
                        }
                    )
    out.sort(key=lambda d: -d["height"])
    return out


def alias_failures(
    true_freq_per_day: np.ndarray,
    found_freq_per_day: np.ndarray,
    peak_freq_per_day: np.ndarray,
    tolerance_freq_per_day: float,
    double_peaked: bool = True,
    half_apart: bool = False,
) -> np.ndarray:
    """True where a wrong winner lies on an alias of the injected signal.

    The light curve carries power at g = f (and 2f); a trial frequency φ fits harmonics φ and 2φ.
    A win is an alias when k·φ lands on g ± f_w for a window peak f_w (k = 1, 2; VanderPlas 2018,
    §4) or on g itself (a harmonic confusion, e.g. twice the period), within the tolerance.
    ``half_apart``: a win at φ = 2f (half the rotation period of a double-peaked curve) is not an
    alias here; the caller reports it on its own. ``found_freq_per_day`` may be (n,) or (n, m)
    (m trial frequencies per injected signal).
    """
    f = np.asarray(true_freq_per_day, dtype=float).reshape(-1, 1, 1)
    phi = np.asarray(found_freq_per_day, dtype=float)
    phi = phi.reshape(phi.shape[0], -1, 1)
    signal = np.concatenate([f, 2 * f], axis=2) if double_peaked else f  # (n, 1, g)
    pk = np.asarray(peak_freq_per_day, dtype=float)
    shifts = np.concatenate([[0.0], pk, -pk])
    targets = (signal[..., None] + shifts).reshape(f.shape[0], 1, -1)  # (n, 1, g·s)
    keep = np.ones(targets.shape[2], dtype=bool)
    if half_apart and double_peaked:
        keep[shifts.size] = False  # signal 2f, no shift: φ = 2f for k = 1
    hit = np.zeros(phi.shape[:2], dtype=bool)
    for k in (1, 2):
        near = np.abs(k * phi - targets) <= k * tolerance_freq_per_day
        hit |= np.any(near[..., keep] if k == 1 else near, axis=2)
    return hit.reshape(np.shape(found_freq_per_day))


def alias_chance(
    true_freq_per_day: np.ndarray,
    search_freq_per_day: np.ndarray,
    peak_freq_per_day: np.ndarray,
    tolerance_freq_per_day: float,
    double_peaked: bool = True,
    half_apart: bool = False,
) -> np.ndarray:
    """Per injected signal: the probability that a winner drawn uniformly from the search grid
    would pass :func:`alias_failures` by chance (the baseline that noise alone reaches)."""
    out = np.empty(np.size(true_freq_per_day))
    grid = np.asarray(search_freq_per_day, dtype=float)[None, :]
    for i, f in enumerate(np.ravel(true_freq_per_day)):
        hits = alias_failures(np.array([f]), grid, peak_freq_per_day, tolerance_freq_per_day, double_peaked, half_apart)
        out[i] = hits.mean()
    return out
