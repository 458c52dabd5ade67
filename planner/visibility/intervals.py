"""Intervals from sampled conditions: runs of True on a grid, and their edges refined by bisection.

A condition (the target is observable, the Sun is low enough) is sampled on a coarse grid; each
change between neighbouring samples brackets a crossing, which is then narrowed by bisection,
re-evaluating the condition at the midpoints of all brackets at once (one vectorised call per
halving). Bisection on a sign change is the classic bracketing method (e.g. Press et al. 2007,
Numerical Recipes, 3rd ed., section 9.1). A condition that turns on and off again between two
samples is missed: the grid step bounds the shortest gap or window that is seen.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np


def true_runs(mask: np.ndarray, segment: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """First and last index of every run of True in ``mask``; runs never cross a change of ``segment``.

    ``segment`` (same length, e.g. the night number of each sample) cuts runs where it changes.
    """
    m = np.asarray(mask, dtype=bool)
    n = m.size
    cut = np.zeros(n + 1, dtype=bool)  # cut[i]: samples i-1 and i belong to different runs
    cut[0] = cut[n] = True
    if n > 1:
        inner = m[1:] != m[:-1]
        if segment is not None:
            seg = np.asarray(segment)
            inner |= seg[1:] != seg[:-1]
        cut[1:n] = inner
    first = np.flatnonzero(cut[:n] & m)
    last = np.flatnonzero(cut[1:] & m)
    return first, last


def true_runs_slow(mask, segment=None) -> tuple[np.ndarray, np.ndarray]:
    """Plain-loop twin of :func:`true_runs`, for tests."""
    first, last = [], []
    open_at = None
    for i, v in enumerate(mask):
        new_segment = segment is not None and i > 0 and segment[i] != segment[i - 1]
        if open_at is not None and (not v or new_segment):
            first.append(open_at)
            last.append(i - 1)
            open_at = None
        if v and open_at is None:
            open_at = i
    if open_at is not None:
        first.append(open_at)
        last.append(len(mask) - 1)
    return np.array(first, dtype=int), np.array(last, dtype=int)


def refine_edges(
    holds_at: Callable[[np.ndarray], np.ndarray],
    t_in: np.ndarray,
    t_out: np.ndarray,
    tol_s: float,
) -> tuple[np.ndarray, np.ndarray]:
    """Narrow brackets [t_in, t_out] (condition true at t_in, false at t_out) to at most ``tol_s``.

    ``holds_at(times)`` evaluates the condition at an array of UTC times (datetime64[ns]), element i
    belonging to bracket i. Every bracket is halved at once, so the number of calls is
    log2(widest bracket / tol_s). Returns the narrowed (t_in, t_out); t_in stays on the true side.
    """
    t_in = np.array(t_in, dtype="datetime64[ns]", copy=True)
    t_out = np.array(t_out, dtype="datetime64[ns]", copy=True)
    tol = np.timedelta64(max(1, int(tol_s * 1e9)), "ns")
    if t_in.size == 0:
        return t_in, t_out
    while np.any(np.abs(t_out - t_in) > tol):
        mid = t_in + (t_out - t_in) // 2
        ok = np.asarray(holds_at(mid), dtype=bool)
        t_in = np.where(ok, mid, t_in)
        t_out = np.where(ok, t_out, mid)
    return t_in, t_out


def refine_edge_slow(
    holds_at_one: Callable[[np.datetime64], bool], t_in: np.datetime64, t_out: np.datetime64, tol_s: float
) -> np.datetime64:
    """Scalar twin of :func:`refine_edges` for one bracket: step from t_in toward t_out by tol_s/4."""
    sign = 1 if t_out > t_in else -1
    step = np.timedelta64(max(1, int(tol_s * 1e9 / 4)), "ns") * sign
    t = np.datetime64(t_in, "ns")
    while (t_out - (t + step)) * sign > np.timedelta64(0, "ns") and holds_at_one(t + step):
        t = t + step
    return t
