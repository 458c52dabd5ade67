"""Comet non-gravitational acceleration: the radial, transverse and normal law of Marsden et al. (1973).

a = g(r) (A1 r̂ + A2 t̂ + A3 n̂), with r̂ the heliocentric radial unit vector, n̂ = (r × v)/|r × v| the
orbit normal and t̂ = n̂ × r̂ the transverse direction (towards the motion); A1, A2, A3 in au/day² (the
Minor Planet Center quotes them in units of 1e-8 au/day²).

g(r) = α (r/r₀)^−m (1 + (r/r₀)^n)^−k, with α = 0.1113, r₀ = 2.808 au, m = 2.15, n = 5.093,
k = 4.6142: the water-ice sublimation curve of Marsden, Sekanina & Yeomans (1973), AJ 78, 211 (values
from memory; the normalisation g(1 au) = 1 they imply is checked in tests/test_nongrav.py).
"""

from __future__ import annotations

import numpy as np

from planner.inputs.targets import NonGrav

__all__ = ["NonGrav", "nongrav_accel_au_d2", "sublimation_g"]

#: Marsden, Sekanina & Yeomans (1973) sublimation law constants (memory; g(1 au) ≈ 1 checked in tests).
G_ALPHA = 0.1113
G_R0_AU = 2.808
G_M = 2.15
G_N = 5.093
G_K = 4.6142


def sublimation_g(helio_dist_au: np.ndarray) -> np.ndarray:
    """g(r) of Marsden, Sekanina & Yeomans (1973), dimensionless, ≈ 1 at 1 au."""
    x = np.asarray(helio_dist_au, dtype=float) / G_R0_AU
    return G_ALPHA * x**-G_M * (1.0 + x**G_N) ** -G_K


def nongrav_accel_au_d2(nongrav: NonGrav, helio_au: np.ndarray, helio_v_au_d: np.ndarray) -> np.ndarray:
    """Heliocentric non-gravitational acceleration (N, 3), au/day², for positions and velocities (N, 3)."""
    r_vec = np.atleast_2d(np.asarray(helio_au, dtype=float))
    v_vec = np.atleast_2d(np.asarray(helio_v_au_d, dtype=float))
    r = np.linalg.norm(r_vec, axis=-1, keepdims=True)
    r_hat = r_vec / r
    h = np.cross(r_vec, v_vec)
    n_hat = h / np.linalg.norm(h, axis=-1, keepdims=True)
    t_hat = np.cross(n_hat, r_hat)
    g = sublimation_g(r)
    return g * (nongrav.a1_au_per_day2 * r_hat + nongrav.a2_au_per_day2 * t_hat + nongrav.a3_au_per_day2 * n_hat)
