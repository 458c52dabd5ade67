"""Comet non-gravitational acceleration (planner.sky.nongrav) and its effect through planner.sky.nbody.

Checks: the normalisation g(1 au) = 1 of the Marsden, Sekanina & Yeomans (1973) law; a transverse A2
changing the semimajor axis and the mean motion as Gauss's planetary equations predict
(da/dt = 2a²T/h for a circular orbit, e.g. Danby 1988 §11.5; Murray & Dermott 1999 §2.9); and an
independent DOP853 integration of the two-body + A1/A2/A3 problem written out here.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from planner.inputs.targets import Orbit
from planner.sky.kepler import GM_SUN_AU3_D2, propagate
from planner.sky.nbody import propagate_perturbed, propagate_perturbed_exact
from planner.sky.nongrav import NonGrav, nongrav_accel_au_d2, sublimation_g


def test_g_is_one_at_one_au():
    # Marsden et al. (1973): α is chosen so that g(1 au) = 1 (their α = 0.1113 gives 1.000 to 3 digits)
    assert float(sublimation_g(1.0)) == pytest.approx(1.0, abs=1e-3)
    # water-ice sublimation switches off beyond ~3 au: g(5 au) is a few 1e-3 of g(1 au) (from the law)
    assert float(sublimation_g(5.0)) < 0.01
    # near the Sun g falls as r^-2.15 (the law's inner slope)
    assert float(sublimation_g(0.1) / sublimation_g(0.2)) == pytest.approx(2.0**2.15, rel=1e-3)


def test_directions_are_radial_transverse_normal():
    r = np.array([[1.2, -0.3, 0.4]])
    v = np.array([[0.004, 0.013, -0.002]])
    g = float(sublimation_g(np.linalg.norm(r)))
    a1 = nongrav_accel_au_d2(NonGrav(1e-8, 0, 0), r, v)[0] / g
    a2 = nongrav_accel_au_d2(NonGrav(0, 1e-8, 0), r, v)[0] / g
    a3 = nongrav_accel_au_d2(NonGrav(0, 0, 1e-8), r, v)[0] / g
    for a in (a1, a2, a3):
        assert np.linalg.norm(a) == pytest.approx(1e-8, rel=1e-12)
    assert np.cross(a1, r[0]) == pytest.approx(np.zeros(3), abs=1e-20) and a1 @ r[0] > 0
    assert a2 @ r[0] == pytest.approx(0.0, abs=1e-20) and a2 @ v[0] > 0
    assert a3 @ r[0] == pytest.approx(0.0, abs=1e-20) and a3 @ v[0] == pytest.approx(0.0, abs=1e-20)


def _semimajor_axis(pos, vel):
    return 1.0 / (2.0 / np.linalg.norm(pos, axis=-1) - np.einsum("...i,...i", vel, vel) / GM_SUN_AU3_D2)


def test_transverse_push_changes_the_period_as_gauss_predicts():
    # Circular orbit at 1 au, T = A2 g(1 au) constant. Gauss (e = 0): da/dt = 2 T sqrt(a³/GM), integrated
    # here as a scalar ODE. The comet then falls behind the unperturbed one: for a constant along-track
    # push f on a circular orbit, Hill's / Clohessy & Wiltshire's (1960, J. Aerospace Sci. 27, 653)
    # solution gives the along-track offset y = -(3/2) f t² + (4 f / n²)(1 - cos nt).
    epoch = 2460000.5
    orbit = Orbit(epoch, 1.0, 0.0, 10.0, 30.0, 0.0, epoch)
    a2 = 2e-8
    span = 200.0
    t = epoch + np.linspace(0.0, span, 201)
    pos, vel = propagate_perturbed(orbit, t, nongrav=NonGrav(a2_au_per_day2=a2), perturbers=())
    gauss = solve_ivp(
        lambda _, a: 2.0 * a2 * sublimation_g(a) * np.sqrt(a**3 / GM_SUN_AU3_D2),
        (0.0, span),
        [1.0],
        t_eval=t - epoch,
        rtol=1e-12,
        atol=1e-15,
    ).y[0]
    a_ours = _semimajor_axis(pos, vel)
    assert a_ours[-1] - 1.0 == pytest.approx(gauss[-1] - 1.0, rel=2e-3)  # Δa ≈ 4.7e-4 au
    # the period grows by (3/2) Δa/a (Kepler's third law)
    period_ratio = (a_ours[-1] / a_ours[0]) ** 1.5
    assert period_ratio - 1.0 == pytest.approx(1.5 * (gauss[-1] - 1.0), rel=3e-3)
    f = a2 * float(sublimation_g(1.0))
    n = math.sqrt(GM_SUN_AU3_D2)
    y_pred = -1.5 * f * span**2 + 4.0 * f / n**2 * (1.0 - math.cos(n * span))
    ref, ref_v = propagate(orbit, t[-1:])
    h_hat = np.cross(ref[0], ref_v[0]) / np.linalg.norm(np.cross(ref[0], ref_v[0]))
    lag_rad = math.atan2(np.cross(ref[0], pos[-1]) @ h_hat, ref[0] @ pos[-1])
    assert lag_rad == pytest.approx(y_pred, rel=1e-2)  # ≈ -6.7e-4 rad: the comet falls behind


def test_nongrav_agrees_with_independent_dop853():
    # A short-period comet near perihelion (q = 1.0 au, e = 0.6) with A1, A2, A3 of the size the MPC
    # publishes (1e-8 au/d²): heliocentric two-body + Marsden-law accelerations, written out again.
    epoch = 2460000.5
    orbit = Orbit(epoch, 1.0, 0.6, 12.0, 80.0, 150.0, epoch + 5.0)
    ng = NonGrav(2e-8, -5e-9, 1e-9)
    t = epoch + np.linspace(-60.0, 60.0, 25)

    def g(r):
        x = r / 2.808
        return 0.1113 * x**-2.15 * (1.0 + x**5.093) ** -4.6142

    def rhs(_, y):
        r, v = y[:3], y[3:]
        rn = np.linalg.norm(r)
        h = np.cross(r, v)
        n_hat = h / np.linalg.norm(h)
        r_hat = r / rn
        acc = -GM_SUN_AU3_D2 * r / rn**3 + g(rn) * (
            ng.a1_au_per_day2 * r_hat + ng.a2_au_per_day2 * np.cross(n_hat, r_hat) + ng.a3_au_per_day2 * n_hat
        )
        return np.concatenate([v, acc])

    p0, v0 = propagate(orbit, np.array([epoch]))
    y0 = np.concatenate([p0[0], v0[0]])
    ref = np.empty((t.size, 3))
    for side in (t < epoch, t >= epoch):
        ts = t[side] if t[side][0] >= epoch else t[side][::-1]
        sol = solve_ivp(rhs, (epoch, ts[-1]), y0, method="DOP853", t_eval=ts, rtol=1e-12, atol=1e-15)
        ref[np.flatnonzero(side)[:: 1 if t[side][0] >= epoch else -1]] = sol.y[:3].T
    ours, _ = propagate_perturbed(orbit, t, nongrav=ng, perturbers=())
    assert np.abs(ours - ref).max() < 1e-10
    # the effect itself is far larger than the agreement: thousands of km over two months
    two_body, _ = propagate(orbit, t)
    assert np.abs(two_body - ref).max() > 1e-5
    # and the slow twin, landing exactly on each epoch with the force callback, agrees too
    exact, _ = propagate_perturbed_exact(orbit, t[::6], nongrav=ng, perturbers=())
    assert np.abs(exact - ours[::6]).max() < 1e-10
