"""Perturbed propagation: the target as a massless test particle under the Sun, planets and Moon.

The drop-in twin of :func:`planner.sky.kepler.propagate`: :func:`propagate_perturbed` returns heliocentric
equatorial-J2000 (≈ ICRF) positions (au) and velocities (au/day) at TDB Julian dates, from the same
:class:`~planner.inputs.targets.Orbit`, read as osculating elements at ``orbit.epoch_tdb_jd``.

Force model. Newtonian point masses: the Sun, Mercury, Venus, the Earth and the Moon separately, and
the barycentres of the Mars, Jupiter, Saturn, Uranus and Neptune systems, with the GM values of JPL's
DE421 (Folkner, Williams & Boggs 2008, JPL IOM 343R-08-003, header constants; quoted from memory).
They are checked two ways (tests/test_nbody_constants.py): GM☉ = k² (Gaussian constant, IAU 1976), and
the Sun's barycentric wobble in the bundled DE421 file itself, M☉ r☉ + Σ mᵢ rᵢ = 0, which fitted by
least squares over 1900–2053 returns the planet masses to 3e-8 (Jupiter) … 5e-4 (Mercury) relative;
the Earth/Moon mass ratio is read off the file's Earth and Moon segments exactly (81.30056907). No
relativity, asteroids or planetary figures: over months they move a near-Earth asteroid by far less
than the ~0.1″ this module aims at (the Sun's relativistic perihelion advance is a few arcseconds per
century for near-Earth orbits). Optional comet non-gravitational acceleration: :mod:`planner.sky.nongrav`.

Integrator: IAS15 in rebound (Rein & Spiegel 2015, MNRAS 446, 1424; step control of Pham, Rein &
Spiegel 2024, OJAp 7, 1), G = 1 with masses given as GM in au³/day², time in days from the osculation
epoch. The massive bodies are **integrated with the target**, started from their DE421 barycentric
states at the osculation epoch and put back on DE421 (relative to the integrated Sun) every
``ANCHOR_D`` days, rather than forced along DE421 at every force evaluation:

- cost: a step then runs entirely in C (30 days of a main-belt asteroid: 0.016 s, 32 steps); reading
  the ten bodies from DE421 costs 1.5 ms per evaluation here, and IAS15 typically evaluates forces
  15–30 times per step, so a forced model would cost of the order of a second for the same path;
- accuracy: left alone, the point-mass planets drift from DE421 (which has relativity, asteroids and
  the lunar figure) quadratically in time — 6.7 km (Earth), 10 km (Moon), 140 km (Mercury) after 90
  days; after the 5 days between resets it is 0.02 km, 0.1 km and 0.5 km. An Earth 0.02 km off moves an
  asteroid passing 30 000 km away by ~1e-6 of its deflection. The independent check (tests/test_nbody.py,
  planets forced along DE421 in scipy's DOP853) agrees to 0.005 km over 60 days of a main-belt orbit,
  0.0013 km (0.0004″) on the way in to the 2011 MD passage and 0.0014 km over 45 days around a
  0.05-au Jupiter encounter.

Heliocentric output is the target minus the integrated Sun (the Sun whose pull it felt); the integrated
Sun stays within 15 m of DE421's over 90 days.

Dense output. One integration over a span records the state at every IAS15 step; the target's
heliocentric acceleration at those knots follows from the recorded positions (the same force model),
and any epoch is then a quintic Hermite interpolation in position, velocity and acceleration (error
O(h⁶ x⁽⁶⁾); IAS15's steps shrink automatically near encounters). Steps are capped at
``MAX_STEP_D`` days (the Moon keeps them near one day anyway). Against the slow twin: 2e-12 au over 60
days of a main-belt orbit; 0.14 km = 0.007″ seen from the geocentre through the 2011 MD passage at
18 650 km (benchmarks/bench_propagation.py). :func:`propagate_perturbed_exact` is the slow twin: one ``integrate(t,
exact_finish_time=1)`` per epoch.
"""

from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

from planner.core.constants import AU_KM, GM_SUN_AU3_D2
from planner.core.errors import InputError
from planner.inputs.targets import Orbit
from planner.sky.kepler import propagate
from planner.sky.nongrav import NonGrav, nongrav_accel_au_d2
from planner.sky.skydata import DE421_FIRST_JD, DE421_LAST_JD, planets

#: Earth/Moon mass ratio of DE421 (EMRAT; read off the file's Earth and Moon segments, see tests).
EARTH_MOON_MASS_RATIO = 81.3005690699153
#: GM of the Earth–Moon barycentre system in DE421, au³/day² (Folkner et al. 2008; memory).
GM_EMB_AU3_D2 = 8.997011346712499e-10

#: Bodies: name → (SPK chain from the solar-system barycentre, GM in au³/day²). DE421 values
#: (Folkner et al. 2008; memory), equal to GM☉ divided by the IAU 1976 mass ratios 6 023 600 (Mercury),
#: 408 523.71 (Venus), 3 098 708 (Mars), 1047.3486 (Jupiter), 3497.898 (Saturn), 22 902.98 (Uranus),
#: 19 412.24 (Neptune); Earth and Moon split the EMB's GM by EMRAT.
BODIES: dict[str, tuple[tuple[tuple[int, int], ...], float]] = {
    "sun": (((0, 10),), GM_SUN_AU3_D2),
    "mercury": (((0, 1),), 4.912547451450812e-11),
    "venus": (((0, 2),), 7.243452486162703e-10),
    "earth": (((0, 3), (3, 399)), GM_EMB_AU3_D2 * EARTH_MOON_MASS_RATIO / (1.0 + EARTH_MOON_MASS_RATIO)),
    "moon": (((0, 3), (3, 301)), GM_EMB_AU3_D2 / (1.0 + EARTH_MOON_MASS_RATIO)),
    "mars": (((0, 4),), 9.549535105779258e-11),
    "jupiter": (((0, 5),), 2.825345909524226e-07),
    "saturn": (((0, 6),), 8.459715185680659e-08),
    "uranus": (((0, 7),), 1.292024916781969e-08),
    "neptune": (((0, 8),), 1.524358900784276e-08),
}
#: The default perturbers: the eight planets and the Moon.
PERTURBERS: tuple[str, ...] = tuple(name for name in BODIES if name != "sun")
#: Largest IAS15 step recorded as a dense-output knot, days.
MAX_STEP_D = 2.0
#: Days between resets of the massive bodies to their DE421 states (counted from the osculation epoch).
ANCHOR_D = 5.0
#: IAS15 accuracy parameter (rebound's default; machine precision for smooth orbits).
IAS15_EPSILON = 1e-9


def body_states_au(names: tuple[str, ...], tdb_jd: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Barycentric ICRF positions (au) and velocities (au/day) of DE421 bodies, shape (N, B, 3)."""
    spk = planets().spk
    t = np.atleast_1d(np.asarray(tdb_jd, dtype=float))
    if t.size and (t.min() < DE421_FIRST_JD or t.max() > DE421_LAST_JD):
        raise InputError("target", "epoch", "outside the bundled DE421 ephemeris (1900-01-01 to 2053-10-07)")
    pos = np.zeros((t.size, len(names), 3))
    vel = np.zeros((t.size, len(names), 3))
    for b, name in enumerate(names):
        for pair in BODIES[name][0]:
            p, v = spk.pairs[pair].compute_and_differentiate(t)
            pos[:, b] += np.atleast_2d(p).reshape(3, -1).T / AU_KM
            vel[:, b] += np.atleast_2d(v).reshape(3, -1).T / AU_KM
    return pos, vel


def _mutual_accel(pos_au: np.ndarray, gm: np.ndarray) -> np.ndarray:
    """Newtonian accelerations (K, N, 3) of N bodies at K instants from sources with GM ``gm`` (N,).

    Sources with gm = 0 (the target) attract nothing; a body does not attract itself.
    """
    d = pos_au[:, None, :, :] - pos_au[:, :, None, :]  # (K, to, from, 3)
    r2 = np.einsum("knmi,knmi->knm", d, d)
    np.einsum("knn->kn", r2)[...] = np.inf
    return np.einsum("knmi,knm->kni", d, gm[None, None, :] / (r2 * np.sqrt(r2)))


@dataclass(frozen=True)
class PerturbedPath:
    """A target's heliocentric motion over ``[t_start_tdb, t_stop_tdb]``, stored at the integrator's steps.

    ``knots_tdb_jd`` (K,) ascending, and at each knot the heliocentric equatorial-J2000 position (au),
    velocity (au/day) and acceleration (au/day²), each (K, 3). :meth:`state` interpolates.
    """

    orbit: Orbit
    t_start_tdb: float
    t_stop_tdb: float
    knots_tdb_jd: np.ndarray
    pos_au: np.ndarray
    vel_au_d: np.ndarray
    acc_au_d2: np.ndarray
    perturbers: tuple[str, ...]
    nongrav: NonGrav | None = None
    steps: int = 0

    def covers(self, t_lo: float, t_hi: float) -> bool:
        return self.t_start_tdb <= t_lo and t_hi <= self.t_stop_tdb

    def state(self, tdb_jd: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Heliocentric position (N, 3) au and velocity (N, 3) au/day by quintic Hermite interpolation.

        On each knot interval [t₀, t₁], h = t₁ − t₀, s = (t − t₀)/h, the polynomial matching position,
        velocity and acceleration at both ends (e.g. Hairer, Nørsett & Wanner 1993, *Solving ODEs I*,
        §II.6, dense output by Hermite interpolation).
        """
        t = np.atleast_1d(np.asarray(tdb_jd, dtype=float))
        if t.size and (t.min() < self.knots_tdb_jd[0] or t.max() > self.knots_tdb_jd[-1]):
            raise ValueError(
                f"epochs {t.min():.5f}–{t.max():.5f} outside the path's span "
                f"{self.knots_tdb_jd[0]:.5f}–{self.knots_tdb_jd[-1]:.5f}"
            )
        k = np.clip(np.searchsorted(self.knots_tdb_jd, t, side="right") - 1, 0, self.knots_tdb_jd.size - 2)
        t0 = self.knots_tdb_jd[k]
        h = (self.knots_tdb_jd[k + 1] - t0)[:, None]
        s = ((t - t0)[:, None]) / h
        p0, p1 = self.pos_au[k], self.pos_au[k + 1]
        v0, v1 = self.vel_au_d[k] * h, self.vel_au_d[k + 1] * h
        a0, a1 = self.acc_au_d2[k] * h * h, self.acc_au_d2[k + 1] * h * h
        s2, s3 = s * s, s * s * s
        s4, s5 = s3 * s, s3 * s2
        pos = (
            (1 - 10 * s3 + 15 * s4 - 6 * s5) * p0
            + (s - 6 * s3 + 8 * s4 - 3 * s5) * v0
            + (0.5 * s2 - 1.5 * s3 + 1.5 * s4 - 0.5 * s5) * a0
            + (0.5 * s3 - s4 + 0.5 * s5) * a1
            + (-4 * s3 + 7 * s4 - 3 * s5) * v1
            + (10 * s3 - 15 * s4 + 6 * s5) * p1
        )
        vel = (
            (-30 * s2 + 60 * s3 - 30 * s4) * p0
            + (1 - 18 * s2 + 32 * s3 - 15 * s4) * v0
            + (s - 4.5 * s2 + 6 * s3 - 2.5 * s4) * a0
            + (1.5 * s2 - 4 * s3 + 2.5 * s4) * a1
            + (-12 * s2 + 28 * s3 - 15 * s4) * v1
            + (30 * s2 - 60 * s3 + 30 * s4) * p1
        ) / h
        return pos, vel


def _new_simulation(orbit: Orbit, perturbers: tuple[str, ...], nongrav: NonGrav | None):
    """rebound simulation at the osculation epoch (t = 0): Sun, perturbers (massive), target (last, massless)."""
    import rebound

    names = ("sun",) + tuple(perturbers)
    unknown = [n for n in perturbers if n not in BODIES or n == "sun"]
    if unknown:
        raise ValueError(f"unknown perturbers {unknown}; choose from {PERTURBERS}")
    t0 = orbit.epoch_tdb_jd
    bpos, bvel = body_states_au(names, np.array([t0]))
    helio, helio_v = propagate(orbit, np.array([t0]))
    sim = rebound.Simulation()
    sim.G = 1.0
    sim.integrator = "ias15"
    sim.integrator.epsilon = IAS15_EPSILON
    for b, name in enumerate(names):
        sim.add(
            m=BODIES[name][1],
            x=bpos[0, b, 0],
            y=bpos[0, b, 1],
            z=bpos[0, b, 2],
            vx=bvel[0, b, 0],
            vy=bvel[0, b, 1],
            vz=bvel[0, b, 2],
        )
    target = bpos[0, 0] + helio[0]
    target_v = bvel[0, 0] + helio_v[0]
    sim.add(m=0.0, x=target[0], y=target[1], z=target[2], vx=target_v[0], vy=target_v[1], vz=target_v[2])
    sim.N_active = len(names)
    sim.testparticle_type = 0
    sim.t = 0.0
    if nongrav is not None and nongrav.is_active:
        n_target = len(names)

        def force(sim_ptr):
            ps = sim_ptr.contents.particles
            sun, tp = ps[0], ps[n_target]
            r = np.array([tp.x - sun.x, tp.y - sun.y, tp.z - sun.z])
            v = np.array([tp.vx - sun.vx, tp.vy - sun.vy, tp.vz - sun.vz])
            a = nongrav_accel_au_d2(nongrav, r[None, :], v[None, :])[0]
            tp.ax += a[0]
            tp.ay += a[1]
            tp.az += a[2]

        sim.additional_forces = force
        sim.force_is_velocity_dependent = 1
    return sim, names


def _reanchor(sim, names: tuple[str, ...], t0_tdb: float) -> None:
    """Put the perturbers back on DE421 relative to the simulation's Sun (the Sun and the target untouched).

    Heliocentric resetting keeps every relative vector exactly DE421's while the integrated Sun goes on
    its own way (13 m from DE421's after 90 days), so no body jumps relative to the target's centre.
    """
    n = sim.N
    xyz = np.empty(3 * n)
    vxyz = np.empty(3 * n)
    sim.serialize_particle_data(xyz=xyz, vxvyvz=vxyz)
    bpos, bvel = body_states_au(names, np.array([t0_tdb + sim.t]))
    x = xyz.reshape(n, 3)
    v = vxyz.reshape(n, 3)
    x[1 : len(names)] = x[0] + bpos[0, 1:] - bpos[0, 0]
    v[1 : len(names)] = v[0] + bvel[0, 1:] - bvel[0, 0]
    sim.set_serialized_particle_data(xyz=xyz, vxvyvz=vxyz)


def _record_leg(
    sim, names: tuple[str, ...], t0_tdb: float, dt_stop_d: float
) -> tuple[list[float], list[np.ndarray], list[np.ndarray]]:
    """Step IAS15 from the osculation epoch (t = 0) past ``dt_stop_d`` days (either sign), recording each step.

    Steps are capped at ``MAX_STEP_D`` and shortened to land on every ``ANCHOR_D`` multiple, where the
    massive bodies are reset to DE421.
    """
    direction = 1.0 if dt_stop_d >= sim.t else -1.0
    sim.dt = direction * 0.01
    next_anchor = direction * ANCHOR_D
    n = sim.N
    ts, xs, vs = [], [], []
    xyz = np.empty(3 * n)
    vxyz = np.empty(3 * n)
    while direction * (dt_stop_d - sim.t) > 0.0:
        wanted = direction * min(abs(sim.dt), MAX_STEP_D)
        if direction * (sim.t + wanted - next_anchor) >= 0.0:
            sim.dt = next_anchor - sim.t
            sim.steps(1)
            if abs(sim.t - next_anchor) < 1e-11:
                sim.t = next_anchor
                if len(names) > 1:
                    _reanchor(sim, names, t0_tdb)
                next_anchor += direction * ANCHOR_D
                sim.dt = wanted
        else:
            sim.dt = wanted
            sim.steps(1)
        sim.serialize_particle_data(xyz=xyz, vxvyvz=vxyz)
        ts.append(sim.t)
        xs.append(xyz.reshape(n, 3).copy())
        vs.append(vxyz.reshape(n, 3).copy())
    return ts, xs, vs


def integrate_path(
    orbit: Orbit,
    t_start_tdb: float,
    t_stop_tdb: float,
    nongrav: NonGrav | None = None,
    perturbers: tuple[str, ...] = PERTURBERS,
) -> PerturbedPath:
    """Integrate once over ``[t_start_tdb, t_stop_tdb]`` (from the osculation epoch outwards) and keep every step.

    The recorded knots reach at least one step beyond both ends, so :meth:`PerturbedPath.state` answers
    for any epoch in the span.
    """
    if not t_start_tdb <= t_stop_tdb:
        raise ValueError(f"span {t_start_tdb} .. {t_stop_tdb} is empty")
    t0 = orbit.epoch_tdb_jd
    body_states_au(("sun",), np.array([t_start_tdb, t_stop_tdb]))  # span check against DE421
    sim, names = _new_simulation(orbit, perturbers, nongrav)
    n = len(names) + 1
    xyz0 = np.empty(3 * n)
    vxyz0 = np.empty(3 * n)
    sim.serialize_particle_data(xyz=xyz0, vxvyvz=vxyz0)
    ts, xs, vs = [0.0], [xyz0.reshape(n, 3).copy()], [vxyz0.reshape(n, 3).copy()]
    steps = 0
    if t_start_tdb < t0:
        bt, bx, bv = _record_leg(sim, names, t0, t_start_tdb - t0)
        ts, xs, vs = bt[::-1] + ts, bx[::-1] + xs, bv[::-1] + vs
        steps += len(bt)
    if t_stop_tdb > t0:
        if t_start_tdb < t0:
            sim, _ = _new_simulation(orbit, perturbers, nongrav)
        ft, fx, fv = _record_leg(sim, names, t0, t_stop_tdb - t0)
        ts, xs, vs = ts + ft, xs + fx, vs + fv
        steps += len(ft)
    t_rel = np.array(ts)
    x = np.array(xs)
    v = np.array(vs)
    gm = np.array([BODIES[name][1] for name in names] + [0.0])
    acc = _mutual_accel(x, gm)
    helio = x[:, -1] - x[:, 0]
    helio_v = v[:, -1] - v[:, 0]
    helio_a = acc[:, -1] - acc[:, 0]
    if nongrav is not None and nongrav.is_active:
        helio_a = helio_a + nongrav_accel_au_d2(nongrav, helio, helio_v)
    # Keep the knots that bracket the span (one beyond each end).
    lo = max(int(np.searchsorted(t_rel, t_start_tdb - t0, side="right")) - 1, 0)
    hi = min(int(np.searchsorted(t_rel, t_stop_tdb - t0, side="left")) + 1, t_rel.size)
    keep = slice(lo, max(hi, lo + 2))
    return PerturbedPath(
        orbit,
        float(t_start_tdb),
        float(t_stop_tdb),
        t0 + t_rel[keep],
        helio[keep],
        helio_v[keep],
        helio_a[keep],
        tuple(perturbers),
        nongrav,
        steps,
    )


#: Paths built by :func:`propagate_perturbed`, most recently used last.
_PATHS: OrderedDict[tuple, PerturbedPath] = OrderedDict()
_PATHS_MAX = 16
#: Margin added each side of a requested span before it is rounded outward to whole days.
SPAN_MARGIN_D = 1.0


def clear_path_cache() -> None:
    """Forget every cached path (benchmarks; a caller that changed DE421 or the force model)."""
    _PATHS.clear()


def perturbed_path(
    orbit: Orbit,
    t_start_tdb: float,
    t_stop_tdb: float,
    nongrav: NonGrav | None = None,
    perturbers: tuple[str, ...] = PERTURBERS,
) -> PerturbedPath:
    """A cached :class:`PerturbedPath` covering the span: reused while a recent one covers it.

    A new path spans the request widened by ``SPAN_MARGIN_D`` and rounded outward to whole days, so
    later calls at light-time-shifted epochs (t − τ, τ < 0.06 d within 10 au) hit the same path.
    """
    for key, path in reversed(_PATHS.items()):
        if (
            key[0] == orbit
            and key[1] == nongrav
            and key[2] == tuple(perturbers)
            and path.covers(t_start_tdb, t_stop_tdb)
        ):
            _PATHS.move_to_end(key)
            return path
    lo = math.floor(t_start_tdb - SPAN_MARGIN_D)
    hi = math.ceil(t_stop_tdb + SPAN_MARGIN_D)
    lo, hi = max(lo, DE421_FIRST_JD), min(hi, DE421_LAST_JD)
    path = integrate_path(orbit, lo, hi, nongrav, tuple(perturbers))
    _PATHS[(orbit, nongrav, tuple(perturbers), lo, hi)] = path
    while len(_PATHS) > _PATHS_MAX:
        _PATHS.popitem(last=False)
    return path


def propagate_perturbed(
    orbit: Orbit, tdb_jd: np.ndarray, nongrav: NonGrav | None = None, perturbers: tuple[str, ...] = PERTURBERS
) -> tuple[np.ndarray, np.ndarray]:
    """Heliocentric equatorial-J2000 position (N, 3) au and velocity (N, 3) au/day: the perturbed twin of
    :func:`planner.sky.kepler.propagate`, from one cached integration and dense output."""
    t = np.atleast_1d(np.asarray(tdb_jd, dtype=float))
    if t.size == 0:
        return np.zeros((0, 3)), np.zeros((0, 3))
    return perturbed_path(orbit, float(t.min()), float(t.max()), nongrav, perturbers).state(t)


def propagate_perturbed_exact(
    orbit: Orbit, tdb_jd: np.ndarray, nongrav: NonGrav | None = None, perturbers: tuple[str, ...] = PERTURBERS
) -> tuple[np.ndarray, np.ndarray]:
    """Slow twin of :func:`propagate_perturbed`: IAS15 lands exactly on each epoch in turn
    (``integrate(t, exact_finish_time=1)``), outwards from the osculation epoch, no interpolation."""
    t = np.atleast_1d(np.asarray(tdb_jd, dtype=float))
    body_states_au(("sun",), t)
    t0 = orbit.epoch_tdb_jd
    pos = np.empty((t.size, 3))
    vel = np.empty((t.size, 3))
    for side in (t < t0, t >= t0):
        idx = np.flatnonzero(side)
        if idx.size == 0:
            continue
        order = idx[np.argsort(np.abs(t[idx] - t0), kind="stable")]
        sim, names = _new_simulation(orbit, perturbers, nongrav)
        n = len(names)
        direction = 1.0 if t[order[0]] >= t0 else -1.0
        next_anchor = direction * ANCHOR_D
        for i in order:
            while direction * (t[i] - t0 - next_anchor) > 0.0:
                sim.integrate(next_anchor, exact_finish_time=1)
                sim.t = next_anchor
                if len(names) > 1:
                    _reanchor(sim, names, t0)
                next_anchor += direction * ANCHOR_D
            sim.integrate(t[i] - t0, exact_finish_time=1)
            ps = sim.particles
            sun, tp = ps[0], ps[n]
            pos[i] = (tp.x - sun.x, tp.y - sun.y, tp.z - sun.z)
            vel[i] = (tp.vx - sun.vx, tp.vy - sun.vy, tp.vz - sun.vz)
    return pos, vel
