"""The synthetic-campaign generator is checked before it is used to check the fit."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.spatial import ConvexHull

from tests.lightcurve_synth import ellipsoid_area, rotation_cycles


def _hull_area(axes, view, n=40_000, seed=0):
    """Area of the convex hull of surface points projected on the plane normal to ``view``."""
    rng = np.random.default_rng(seed)
    u = rng.normal(size=(n, 3))
    surf = u / np.linalg.norm(u, axis=1)[:, None] * np.asarray(axes)
    v = np.asarray(view, dtype=float) / np.linalg.norm(view)
    e1 = np.cross(v, [0.3, 0.5, 0.8])
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(v, e1)
    return ConvexHull(np.column_stack([surf @ e1, surf @ e2])).volume  # 2-D hull: 'volume' is the area


@pytest.mark.parametrize("view", [(0, 0, 1), (1, 0, 0), (0.3, -0.5, 0.81), (0.9, 0.4, -0.2)])
def test_ellipsoid_projected_area_matches_the_convex_hull_of_its_surface(view):
    # Independent route: the silhouette of a convex body is the hull of its projected surface.
    axes = (1.6, 1.0, 0.7)
    v = np.asarray(view, dtype=float) / np.linalg.norm(view)
    assert ellipsoid_area(axes, v) == pytest.approx(_hull_area(axes, v), rel=2e-3)


def test_ellipsoid_area_limits_by_hand():
    # Seen along c: the a×b ellipse, π a b; along a: π b c (hand computation).
    assert ellipsoid_area((2.0, 1.5, 1.0), np.array([0, 0, 1.0])) == pytest.approx(np.pi * 3.0)
    assert ellipsoid_area((2.0, 1.5, 1.0), np.array([1.0, 0, 0])) == pytest.approx(np.pi * 1.5)


def test_rotation_cycles_integrate_one_over_period():
    # Cycles = ∫ 24/P(t) dt with P in hours, t in days: numerical quadrature as the second route.
    for pdot in (0.0, 0.01, -0.02):
        ref = quad(lambda t, pdot=pdot: 24.0 / (6.0 + pdot * t), 0.0, 3.5)[0]
        assert rotation_cycles(np.array(3.5), 6.0, pdot) == pytest.approx(ref, rel=1e-12)
