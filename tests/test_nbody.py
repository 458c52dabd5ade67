"""Perturbed propagation (planner.sky.nbody): independent integration, the two-body limit, dense output.

The independent route is scipy's DOP853 (Dormand & Prince 1980; Hairer, Nørsett & Wanner 1993, §II.5)
on the same physical model written out here: the target's barycentric equations of motion with the
Sun, planets and Moon **read from DE421 at every evaluation** (forced, not integrated), masses from the
IAU 1976 Sun/planet ratios (memory; confirmed against DE421 in tests/test_nbody_constants.py) and
DE421's own Earth/Moon ratio. It shares neither the integrator, the force code, nor planner.sky.nbody's
choice to integrate the planets.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from planner.core.constants import GAUSS_K
from planner.inputs.targets import load_target
from planner.sky import nbody
from planner.sky.kepler import orbit_from_state, propagate
from planner.sky.nbody import integrate_path, perturbed_path, propagate_perturbed, propagate_perturbed_exact

DATA = "tests/data"
AU_KM = 149_597_870.700  # IAU 2012 Resolution B2
GM_SUN = GAUSS_K**2  # IAU 1976
#: Sun/planet-system mass ratios, IAU 1976 System of Astronomical Constants (memory); Earth+Moon from
#: DE405/DE421 (328 900.56, memory).
SUN_OVER_SYSTEM = {
    1: 6_023_600.0,
    2: 408_523.71,
    3: 328_900.56,
    4: 3_098_708.0,
    5: 1047.3486,
    6: 3497.898,
    7: 22_902.98,
    8: 19_412.24,
}


def _dop853_helio(orbit, t_eval, rtol=1e-12, atol=1e-15):
    """Heliocentric positions (au) at ``t_eval`` (one side of the epoch, ordered outwards), by DOP853."""
    spk = nbody.planets().spk
    seg = spk.pairs
    emrat = np.linalg.norm(seg[(3, 301)].compute(2451545.0)) / np.linalg.norm(seg[(3, 399)].compute(2451545.0))
    gm_emb = GM_SUN / SUN_OVER_SYSTEM[3]
    gms = [GM_SUN] + [GM_SUN / SUN_OVER_SYSTEM[k] for k in (1, 2, 4, 5, 6, 7, 8)]
    gms += [gm_emb * emrat / (1 + emrat), gm_emb / (1 + emrat)]
    gms = np.array(gms)

    def sources(t):
        emb = seg[(0, 3)].compute(t)
        rows = [seg[(0, 10)].compute(t)] + [seg[(0, k)].compute(t) for k in (1, 2, 4, 5, 6, 7, 8)]
        rows += [emb + seg[(3, 399)].compute(t), emb + seg[(3, 301)].compute(t)]
        return np.array(rows) / AU_KM

    def rhs(t, y):
        d = sources(t) - y[:3]
        r3 = np.einsum("ij,ij->i", d, d) ** 1.5
        return np.concatenate([y[3:], (gms / r3) @ d])

    t0 = orbit.epoch_tdb_jd
    helio, helio_v = propagate(orbit, np.array([t0]))
    sun0 = sources(t0)[0]
    sun_v = seg[(0, 10)].compute_and_differentiate(t0)[1] / AU_KM
    y0 = np.concatenate([helio[0] + sun0, helio_v[0] + sun_v])
    sol = solve_ivp(rhs, (t0, t_eval[-1]), y0, method="DOP853", t_eval=t_eval, rtol=rtol, atol=atol)
    assert sol.success
    return sol.y[:3].T - np.array([sources(t)[0] for t in t_eval])


def _geocentric_angle_arcsec(helio_a, helio_b, t):
    pos, _ = nbody.body_states_au(("sun", "earth"), t)
    a = helio_a + pos[:, 0] - pos[:, 1]
    b = helio_b + pos[:, 0] - pos[:, 1]
    # atan2(|a × b|, a · b): exact for tiny angles, where arccos of the cosine bottoms out at ~3 mas
    return np.degrees(np.arctan2(np.linalg.norm(np.cross(a, b), axis=1), np.einsum("ij,ij->i", a, b))) * 3600


def _jupiter_flyby_orbit():
    """A comet passing 0.05 au from Jupiter at 4 km/s relative speed, osculating at the passage (invented)."""
    t_enc = 2461000.5
    pos, vel = nbody.body_states_au(("sun", "jupiter"), np.array([t_enc]))
    jup, jup_v = pos[0, 1] - pos[0, 0], vel[0, 1] - vel[0, 0]
    radial = jup / np.linalg.norm(jup)
    normal = np.cross(jup, jup_v) / np.linalg.norm(np.cross(jup, jup_v))
    v_rel = 4.0 * 86400.0 / AU_KM  # 4 km/s in au/day, along the orbit normal
    return orbit_from_state(jup + 0.05 * radial, jup_v + v_rel * normal, t_enc)


@pytest.mark.parametrize("case", ["main-belt", "2011 MD flyby", "Jupiter flyby"])
def test_agrees_with_independent_dop853(case):
    # The two routes must agree far below an arcsecond as seen from the Earth (goal: < 0.01"). DOP853
    # through the passage itself takes minutes; the dense-output test below covers it.
    if case == "main-belt":
        orbit = load_target(f"{DATA}/mpc_minor_planets.txt", object_name="2033 AB12").orbit
        t = orbit.epoch_tdb_jd + np.linspace(1.0, 60.0, 12)
    elif case == "2011 MD flyby":
        orbit = load_target(f"{DATA}/2011md-gray.toml").orbit  # in to 0.001 au, 12 h before the passage
        t = orbit.epoch_tdb_jd + np.linspace(0.25, 1.2, 8)
    else:
        orbit = _jupiter_flyby_orbit()
        t = orbit.epoch_tdb_jd - np.linspace(1.0, 45.0, 10)
    ref = _dop853_helio(orbit, t)
    ours, _ = propagate_perturbed(orbit, t)
    difference = _geocentric_angle_arcsec(ours, ref, t).max()
    assert difference < 0.01
    assert np.abs(ours - ref).max() * AU_KM < 0.1  # km
    # and both differ from two-body by far more than they differ from each other
    two_body, _ = propagate(orbit, t)
    assert _geocentric_angle_arcsec(two_body, ref, t).max() > 10 * difference


@pytest.mark.parametrize("fixture", ["mpc_minor_planets.txt", "mpc_comets.txt"])
def test_two_body_limit(fixture):
    # Without perturbers the integration is the Kepler problem: equal to the universal-variable
    # propagator (Danby 1988, §6.9) to ~1e-10 au, either side of the epoch.
    name = "2033 AB12" if "minor" in fixture else "Halvard"  # an ellipse; a hyperbolic comet (e = 3.4)
    orbit = load_target(f"{DATA}/{fixture}", object_name=name).orbit
    t = orbit.epoch_tdb_jd + np.linspace(-40.0, 40.0, 81)
    ours, ours_v = propagate_perturbed(orbit, t, perturbers=())
    ref, ref_v = propagate(orbit, t)
    assert np.abs(ours - ref).max() < 1e-10
    assert np.abs(ours_v - ref_v).max() < 1e-11


@pytest.mark.parametrize("case", ["main-belt", "2011 MD flyby"])
def test_dense_output_matches_exact_landing(case):
    # Quintic Hermite between IAS15 steps vs IAS15 landing exactly on each epoch (the slow twin).
    if case == "main-belt":
        orbit = load_target(f"{DATA}/mpc_minor_planets.txt", object_name="2033 AB12").orbit
        t = orbit.epoch_tdb_jd + np.linspace(-30.0, 30.0, 97)
    else:
        orbit = load_target(f"{DATA}/2011md-gray.toml").orbit
        t = orbit.epoch_tdb_jd + np.linspace(0.0, 3.0, 97)
    dense, dense_v = propagate_perturbed(orbit, t)
    exact, exact_v = propagate_perturbed_exact(orbit, t)
    assert np.abs(dense - exact).max() < 2e-10  # au; 30 m
    assert np.abs(dense_v - exact_v).max() < 5e-9  # au/day; 9 mm/s (largest at the 2011 MD passage)
    assert _geocentric_angle_arcsec(dense, exact, t).max() < 0.01


def test_planets_stay_on_de421_between_resets():
    # Integrated for ANCHOR_D days from DE421 states, the point-mass planets must stay on DE421 (which
    # includes relativity, asteroids and the lunar figure) to far below what moves a target by 0.01":
    # measured 0.02 km (Earth), 0.1 km (Moon), 0.5 km (Mercury) over 5 days.
    orbit = load_target(f"{DATA}/mpc_minor_planets.txt", object_name="2033 AB12").orbit
    sim, names = nbody._new_simulation(orbit, nbody.PERTURBERS, None)
    sim.integrate(nbody.ANCHOR_D)
    xyz = np.array([[p.x, p.y, p.z] for p in sim.particles[: len(names)]])
    ref, _ = nbody.body_states_au(names, np.array([orbit.epoch_tdb_jd + nbody.ANCHOR_D]))
    drift_km = dict(zip(names, np.linalg.norm(xyz - ref[0], axis=1) * AU_KM, strict=True))
    assert drift_km["earth"] < 0.05
    assert drift_km["moon"] < 0.3
    assert drift_km["jupiter"] < 0.01
    assert max(drift_km.values()) < 1.0


def test_path_is_cached_across_light_time_shifts():
    # Geometry asks for t and then t - tau (tau < 0.06 d within 10 au): one integration serves both.
    orbit = load_target(f"{DATA}/mpc_comets.txt", object_name="Larkspur").orbit
    t = orbit.epoch_tdb_jd + np.linspace(10.0, 20.0, 50)
    first = perturbed_path(orbit, t.min(), t.max())
    again = perturbed_path(orbit, t.min() - 0.05, t.max() - 0.05)
    assert again is first
    other = perturbed_path(orbit, t.min() + 30.0, t.max() + 30.0)
    assert other is not first


def test_span_across_the_epoch_and_outside_de421():
    orbit = load_target(f"{DATA}/mpc_comets.txt", object_name="Larkspur").orbit
    path = integrate_path(orbit, orbit.epoch_tdb_jd - 3.0, orbit.epoch_tdb_jd + 3.0)
    assert path.knots_tdb_jd[0] <= orbit.epoch_tdb_jd - 3.0 and path.knots_tdb_jd[-1] >= orbit.epoch_tdb_jd + 3.0
    assert np.all(np.diff(path.knots_tdb_jd) > 0)
    pos, _ = path.state(np.array([orbit.epoch_tdb_jd]))
    ref, _ = propagate(orbit, np.array([orbit.epoch_tdb_jd]))
    assert np.abs(pos - ref).max() < 1e-14  # the osculating state itself
    with pytest.raises(ValueError):
        path.state(np.array([orbit.epoch_tdb_jd + 30.0]))
    from planner.core.errors import InputError

    with pytest.raises(InputError):
        integrate_path(orbit, 2471200.0, 2471210.0)
