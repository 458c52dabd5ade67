"""Two-body (Keplerian) propagation of heliocentric orbits: elliptic, parabolic and hyperbolic.

The fast kernel solves the universal Kepler equation in the universal anomaly ``s`` with
Stumpff functions c0..c3 (Goodyear 1965, AJ 70, 189; Danby 1988, *Fundamentals of Celestial
Mechanics*, 2nd ed., §6.9) for whole arrays of epochs at once: Laguerre–Conway steps (Conway 1986,
Celest. Mech. 39, 199) safeguarded by a bracket, because the universal Kepler function is monotonic
in ``s``. One formula covers every conic, so near-parabolic orbits (|e − 1| < 1e-6) and strongly
hyperbolic ones (e ≥ 10, interstellar objects) need no special cases.

:func:`propagate_reference` is the slow, obvious twin: one epoch at a time, the classical Kepler
equation of each conic solved with scipy's ``brentq``. Tests compare the two.

Frames: the elements are referred to the ecliptic and equinox of J2000 (as in the IAU Minor Planet
Center's orbits); positions come out in the equatorial frame of J2000, rotated by the IAU 1976
obliquity ε₀ = 84381.448″. The 23 mas frame bias between that frame and the ICRF is neglected (the
same convention the Minor Planet Center's elements and skyfield's ``ECLIPJ2000`` frame use).

Gravitational parameter: GM☉ = k² with the Gaussian constant k = 0.01720209895 au^(3/2) day^-1
(IAU 1976). DE421 uses the same value, GMS = 2.959122082855911e-4 au³ day⁻² (Folkner, Williams &
Boggs 2008, JPL IOM 343R-08-003: the au of DE421 is fitted so that GMS = k²; citation from memory,
and k² = 2.9591220828559115e-4 reproduces that value to all 16 digits), so our heliocentric orbits
are consistent with the bundled planetary ephemeris. Time argument: TDB Julian dates (the elements' TT/TDB difference,
< 2 ms, is neglected).
"""

from __future__ import annotations

import math

import numpy as np

from planner.core.constants import GM_SUN_AU3_D2, OBLIQUITY_J2000_DEG
from planner.inputs.targets import Orbit

_SERIES_X = 0.5  # |x| below which the Stumpff functions are summed as series


def stumpff(x: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Stumpff functions c0, c1, c2, c3 of ``x`` (Danby 1988, §6.9), vectorised.

    c0 = cos √x, c1 = sin √x / √x, c2 = (1 − cos √x)/x, c3 = (√x − sin √x)/x^{3/2} for x > 0, the
    hyperbolic analogues for x < 0, and their power series near 0 (where the closed forms cancel).
    """
    x = np.asarray(x, dtype=float)
    c0 = np.empty_like(x)
    c1 = np.empty_like(x)
    c2 = np.empty_like(x)
    c3 = np.empty_like(x)
    small = np.abs(x) < _SERIES_X
    pos = x >= _SERIES_X
    neg = x <= -_SERIES_X
    if small.any():
        xs = x[small]
        # c2 = 1/2! − x/4! + x²/6! − …,  c3 = 1/3! − x/5! + x²/7! − …  (Horner form, 15 terms)
        s2 = np.zeros_like(xs)
        s3 = np.zeros_like(xs)
        for j in range(14, -1, -1):
            s2 = 1.0 / math.factorial(2 * j + 2) - xs * s2
            s3 = 1.0 / math.factorial(2 * j + 3) - xs * s3
        c2[small] = s2
        c3[small] = s3
        c0[small] = 1.0 - xs * s2
        c1[small] = 1.0 - xs * s3
    if pos.any():
        z = np.sqrt(x[pos])
        cz, sz = np.cos(z), np.sin(z)
        c0[pos] = cz
        c1[pos] = sz / z
        c2[pos] = (1.0 - cz) / x[pos]
        c3[pos] = (z - sz) / (x[pos] * z)
    if neg.any():
        z = np.sqrt(-x[neg])
        with np.errstate(over="ignore", invalid="ignore"):
            chz, shz = np.cosh(z), np.sinh(z)
            c0[neg] = chz
            c1[neg] = shz / z
            c2[neg] = (chz - 1.0) / (-x[neg])
            c3[neg] = (shz - z) / (-x[neg] * z)
    return c0, c1, c2, c3


def universal_anomaly(
    r0_au: np.ndarray,
    sigma0: np.ndarray,
    beta: np.ndarray,
    q_au: np.ndarray,
    dt_d: np.ndarray,
    gm: float = GM_SUN_AU3_D2,
    max_iter: int = 200,
) -> np.ndarray:
    """Solve the universal Kepler equation for ``s`` (Danby 1988, eq. 6.9.x), vectorised.

    f(s) = r0 s c1(βs²) + σ0 s² c2(βs²) + GM s³ c3(βs²) − Δt = 0, with σ0 = r0·v0 and β = 2GM/r0 − v0²
    (= GM/a). f'(s) = r(s) ≥ q > 0, so f is increasing and the root lies in [0, Δt/q] (or [Δt/q, 0]).
    Laguerre–Conway steps (n = 5) inside that bracket, bisection when a step would leave it.
    """
    r0, sigma0, beta, q, dt = (
        np.array(a, dtype=float)
        for a in np.broadcast_arrays(
            *(np.atleast_1d(np.asarray(a, dtype=float)) for a in (r0_au, sigma0, beta, q_au, dt_d))
        )
    )
    lo = np.minimum(0.0, dt / q)
    hi = np.maximum(0.0, dt / q)
    # Starting guess, clipped to the bracket: Δt/a for ellipses (mean-anomaly estimate); for hyperbolas
    # H0 = asinh(M/e) (a lower bound of e sinh H − H = M), s = H0/√−β; Δt/r0 near the parabola.
    with np.errstate(invalid="ignore", divide="ignore"):
        root_neg_beta = np.sqrt(np.maximum(-beta, 0.0))
        ecc = 1.0 - beta * q / gm
        s_hyp = np.arcsinh(root_neg_beta**3 / gm * dt / np.maximum(ecc, 1.0)) / root_neg_beta
    s = np.where(beta > 0, dt * beta / gm, np.where(ecc > 1.0 + 1e-6, s_hyp, dt / r0))
    s = np.clip(np.nan_to_num(s), lo, hi)
    n_lag = 5.0
    idx = np.arange(s.size)
    for _ in range(max_iter):
        si, r0i, sgi, bi, dti = s[idx], r0[idx], sigma0[idx], beta[idx], dt[idx]
        c0, c1, c2, c3 = stumpff(bi * si * si)
        with np.errstate(over="ignore", invalid="ignore"):
            f = r0i * si * c1 + sgi * si * si * c2 + gm * si**3 * c3 - dti
            fp = r0i * c0 + sgi * si * c1 + gm * si * si * c2
            fpp = (gm - bi * r0i) * si * c1 + sgi * c0
        bad = ~(np.isfinite(f) & np.isfinite(fp) & np.isfinite(fpp))
        f = np.where(bad, np.copysign(np.inf, si), f)
        # f increases with s: its sign tightens the bracket.
        lo_i = np.where(f < 0, si, lo[idx])
        hi_i = np.where(f > 0, si, hi[idx])
        lo[idx] = lo_i
        hi[idx] = hi_i
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            disc = np.sqrt(np.abs((n_lag - 1) ** 2 * fp * fp - n_lag * (n_lag - 1) * f * fpp))
            s_new = si - n_lag * f / (fp + np.sign(fp) * disc)
        outside = bad | ~np.isfinite(s_new) | (s_new < lo_i) | (s_new > hi_i)
        s_new = np.where(outside, 0.5 * (lo_i + hi_i), s_new)
        tol = 1e-14 * np.maximum(np.abs(s_new), 1e-300)
        done = (f == 0) | (~outside & (np.abs(s_new - si) <= tol)) | (hi_i - lo_i <= tol)
        s[idx] = s_new
        idx = idx[~done]
        if idx.size == 0:
            break
    return s


def propagate_state(
    r0_au: np.ndarray, v0_au_d: np.ndarray, dt_d: np.ndarray, gm: float = GM_SUN_AU3_D2
) -> tuple[np.ndarray, np.ndarray]:
    """Two-body state after ``dt_d`` days from position ``r0_au`` (…, 3) and velocity ``v0_au_d`` (…, 3).

    Universal variables with Lagrange f and g functions (Danby 1988, §6.9). Shapes broadcast; the
    result has shape (N, 3) for N = len(dt_d).
    """
    dt = np.atleast_1d(np.asarray(dt_d, dtype=float))
    r0v = np.broadcast_to(np.asarray(r0_au, dtype=float), dt.shape + (3,))
    v0v = np.broadcast_to(np.asarray(v0_au_d, dtype=float), dt.shape + (3,))
    r0 = np.linalg.norm(r0v, axis=-1)
    v0sq = np.einsum("...i,...i->...", v0v, v0v)
    sigma0 = np.einsum("...i,...i->...", r0v, v0v)
    beta = 2.0 * gm / r0 - v0sq
    h = np.cross(r0v, v0v)
    h2 = np.einsum("...i,...i->...", h, h)
    evec = (np.cross(v0v, h) / gm) - r0v / r0[..., None]
    ecc = np.linalg.norm(evec, axis=-1)
    q = h2 / (gm * (1.0 + ecc))
    q = np.minimum(q, r0)
    # Whole revolutions of an ellipse are removed first, so the root stays within half a period.
    dt_red = dt.copy()
    ell = beta > 0
    if ell.any():
        period = 2.0 * np.pi * gm / beta[ell] ** 1.5
        dt_red[ell] = dt[ell] - period * np.round(dt[ell] / period)
    s = universal_anomaly(r0, sigma0, beta, q, dt_red, gm)
    c0, c1, c2, c3 = stumpff(beta * s * s)
    f = 1.0 - gm * s * s * c2 / r0
    g = r0 * s * c1 + sigma0 * s * s * c2
    pos = f[:, None] * r0v + g[:, None] * v0v
    r = r0 * c0 + sigma0 * s * c1 + gm * s * s * c2
    fdot = -gm * s * c1 / (r * r0)
    gdot = 1.0 - gm * s * s * c2 / r
    vel = fdot[:, None] * r0v + gdot[:, None] * v0v
    return pos, vel


def orbit_rotation(orbit: Orbit) -> np.ndarray:
    """3×3 matrix from the perifocal frame (x to perihelion) to equatorial J2000.

    R = R_x(ε₀) · R_z(Ω) · R_x(i) · R_z(ω), angles referred to the ecliptic and equinox of J2000.
    """

    def rz(a: float) -> np.ndarray:
        c, s = math.cos(a), math.sin(a)
        return np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])

    def rx(a: float) -> np.ndarray:
        c, s = math.cos(a), math.sin(a)
        return np.array([[1.0, 0.0, 0.0], [0.0, c, -s], [0.0, s, c]])

    return (
        rx(math.radians(OBLIQUITY_J2000_DEG))
        @ rz(math.radians(orbit.ascending_node_deg))
        @ rx(math.radians(orbit.inclination_deg))
        @ rz(math.radians(orbit.arg_perihelion_deg))
    )


def perihelion_state(orbit: Orbit, gm: float = GM_SUN_AU3_D2) -> tuple[np.ndarray, np.ndarray]:
    """Equatorial J2000 position (au) and velocity (au/day) at perihelion."""
    q = orbit.perihelion_dist_au
    v_peri = math.sqrt(gm * (1.0 + orbit.eccentricity) / q)
    rot = orbit_rotation(orbit)
    return rot @ np.array([q, 0.0, 0.0]), rot @ np.array([0.0, v_peri, 0.0])


def propagate(orbit: Orbit, tdb_jd: np.ndarray, gm: float = GM_SUN_AU3_D2) -> tuple[np.ndarray, np.ndarray]:
    """Heliocentric equatorial-J2000 (≈ ICRF) position (N, 3) in au and velocity (N, 3) in au/day.

    Vectorised over the TDB Julian dates ``tdb_jd``; propagates from the perihelion state, where
    σ0 = 0 and every conic starts from the same simple configuration.
    """
    r0, v0 = perihelion_state(orbit, gm)
    dt = np.atleast_1d(np.asarray(tdb_jd, dtype=float)) - orbit.perihelion_tdb_jd
    return propagate_state(r0, v0, dt, gm)


def propagate_reference(orbit: Orbit, tdb_jd: np.ndarray, gm: float = GM_SUN_AU3_D2) -> tuple[np.ndarray, np.ndarray]:
    """Slow twin of :func:`propagate`: one epoch at a time, the classical Kepler equation of each conic.

    Ellipse: E − e sin E = M; hyperbola: e sinh H − H = M (both solved with scipy.optimize.brentq);
    parabola (e = 1 exactly): Barker's equation solved in closed form (Meeus 1998, ch. 34). Then
    r and the true anomaly ν give the perifocal position r(cos ν, sin ν) and velocity
    √(GM/p)(−sin ν, e + cos ν), p = q(1 + e) (Danby 1988, §6.3–6.5).
    """
    from scipy.optimize import brentq

    e = orbit.eccentricity
    q = orbit.perihelion_dist_au
    p = q * (1.0 + e)
    rot = orbit_rotation(orbit)
    times = np.atleast_1d(np.asarray(tdb_jd, dtype=float))
    pos = np.empty((times.size, 3))
    vel = np.empty((times.size, 3))
    for k, t in enumerate(times):
        dt = t - orbit.perihelion_tdb_jd
        if e < 1.0:
            a = q / (1.0 - e)
            n = math.sqrt(gm / a**3)
            m = math.remainder(n * dt, 2.0 * math.pi)
            ecc_anom = brentq(
                lambda E, m=m: E - e * math.sin(E) - m, m - e - 1e-12, m + e + 1e-12, xtol=1e-15, rtol=1e-15
            )
            nu = 2.0 * math.atan2(
                math.sqrt(1.0 + e) * math.sin(ecc_anom / 2), math.sqrt(1.0 - e) * math.cos(ecc_anom / 2)
            )
        elif e > 1.0:
            a = q / (e - 1.0)
            n = math.sqrt(gm / a**3)
            m = n * dt
            top = math.asinh(abs(m) / (e - 1.0)) + 1e-12
            hyp_anom = brentq(lambda H, m=m: e * math.sinh(H) - H - m, -top, top, xtol=1e-15, rtol=1e-15)
            nu = 2.0 * math.atan(math.sqrt((e + 1.0) / (e - 1.0)) * math.tanh(hyp_anom / 2))
        else:
            w = 3.0 * math.sqrt(gm / (2.0 * q**3)) * dt
            root = math.sqrt(w * w / 4.0 + 1.0)
            y = math.cbrt(w / 2.0 + root) - math.cbrt(-w / 2.0 + root)  # Y³ + 3Y = W (Barker)
            nu = 2.0 * math.atan(y)
        r = p / (1.0 + e * math.cos(nu))
        pos[k] = rot @ np.array([r * math.cos(nu), r * math.sin(nu), 0.0])
        vel[k] = rot @ (math.sqrt(gm / p) * np.array([-math.sin(nu), e + math.cos(nu), 0.0]))
    return pos, vel


def orbit_from_state(pos_au: np.ndarray, vel_au_d: np.ndarray, tdb_jd: float, gm: float = GM_SUN_AU3_D2) -> Orbit:
    """Osculating elements (ecliptic J2000 angles) from one equatorial-J2000 state, any conic.

    Classical vector formulas (Danby 1988, §6.12): h = r × v, e = v × h / GM − r̂, q = h² / (GM(1 + e)),
    the time from perihelion in universal variables (:func:`time_since_perihelion`). For e = 0 the perihelion
    is taken at the ascending node; for i = 0 the node is taken at the equinox direction.
    """
    eps = math.radians(OBLIQUITY_J2000_DEG)
    c, s = math.cos(eps), math.sin(eps)
    to_ecl = np.array([[1.0, 0.0, 0.0], [0.0, c, s], [0.0, -s, c]])
    r = to_ecl @ np.asarray(pos_au, dtype=float)
    v = to_ecl @ np.asarray(vel_au_d, dtype=float)
    rn = float(np.linalg.norm(r))
    h = np.cross(r, v)
    hn = float(np.linalg.norm(h))
    evec = np.cross(v, h) / gm - r / rn
    e = float(np.linalg.norm(evec))
    q = hn * hn / (gm * (1.0 + e))
    incl = math.degrees(math.acos(max(-1.0, min(1.0, h[2] / hn))))
    node_vec = np.array([-h[1], h[0], 0.0])
    nn = float(np.linalg.norm(node_vec))
    node = math.degrees(math.atan2(node_vec[1], node_vec[0])) % 360.0 if nn > 1e-15 * hn else 0.0
    n_hat = node_vec / nn if nn > 1e-15 * hn else np.array([1.0, 0.0, 0.0])
    m_hat = np.cross(h / hn, n_hat)  # in the orbit plane, 90° ahead of the node
    peri = math.degrees(math.atan2(evec @ m_hat, evec @ n_hat)) % 360.0 if e > 1e-12 else 0.0
    return Orbit(tdb_jd, q, e, incl, node, peri, tdb_jd - time_since_perihelion(rn, float(r @ v), q, e, gm))


def time_since_perihelion(r_au: float, sigma: float, q_au: float, e: float, gm: float = GM_SUN_AU3_D2) -> float:
    """Time (days) from perihelion to a state with distance ``r_au`` and σ = r·v, for any conic.

    In universal variables counted from perihelion, r − q = GM e s² c2(βs²) and σ = GM e s c1(βs²),
    so tan(√β s / 2) = √β (r − q)/σ (tanh for β < 0); then Δt = q s c1 + GM s³ c3 (Danby 1988, §6.9).
    Near the parabola the arctangent is summed as a series, so no precision is lost there.
    """
    beta = gm * (1.0 - e) / q_au
    dr = max(r_au - q_au, 0.0)
    if dr == 0.0:
        return 0.0
    w = beta * dr * dr / (sigma * sigma) if sigma != 0.0 else math.copysign(math.inf, beta)
    if abs(w) < 1e-4:
        g = 1.0 - w / 3.0 + w * w / 5.0 - w**3 / 7.0 + w**4 / 9.0  # atan(√w)/√w
        s = 2.0 * dr / sigma * g
    elif beta > 0.0:
        half = math.atan2(math.sqrt(beta) * dr, sigma)
        if sigma < 0.0:
            half -= math.pi
        s = 2.0 * half / math.sqrt(beta)
    else:
        s = 2.0 * math.atanh(math.sqrt(-beta) * dr / sigma) / math.sqrt(-beta)
    _, c1, _, c3 = stumpff(np.array([beta * s * s]))
    return float(q_au * s * c1[0] + gm * s**3 * c3[0])
