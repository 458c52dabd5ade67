"""Synthetic multi-site campaigns from a rotating triaxial ellipsoid (not from the Fourier model).

Brightness ∝ the projected area of an ellipsoid with semi-axes a ≥ b ≥ c rotating about its short
axis c, seen along the unit vector e (body frame):

    A(e) = π a b c · sqrt(e_x²/a² + e_y²/b² + e_z²/c²)

(Connelly & Ostro 1984, Geometriae Dedicata 17, 87, "Ellipsoids and lightcurves" (memory); at
zero phase the visible and illuminated areas coincide). tests/test_lightcurve_synth.py checks the
formula against the convex hull of projected surface points. With aspect angle θ between spin axis
and line of sight and rotation angle ψ, e = (sin θ cos ψ, −sin θ sin ψ, cos θ). An optional
albedo term (1 + contrast·cos ψ) makes the two halves of a rotation differ (invented for tests).

Rotation with a changing period P(t) = P0 + Ṗ (t − t0): phase in cycles ∫ dt/P = (24/Ṗ)·ln(1 + Ṗτ/P0)
(P in hours, τ in days), exact, not the fit's quadratic approximation. The observed magnitude adds
5 log10 Δ + K1 log10 r (r, Δ linear in time), site zero points, nightly offsets and Gaussian noise;
the observed time is the emission time plus the light time Δ/c.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from planner.lightcurve import LightCurvePoints, light_curve_points

C_AU_PER_DAY = 299_792_458.0 * 86400.0 / 149_597_870_700.0  # IAU 2012 B2 au, SI c
T0_JD = 2462502.5  # an invented campaign epoch (2030 March), mid-span of the week


def ellipsoid_area(axes: tuple[float, float, float], view: np.ndarray) -> np.ndarray:
    """Projected area of the ellipsoid with semi-axes ``axes`` along unit vectors ``view`` (..., 3)."""
    a, b, c = axes
    e = np.asarray(view, dtype=float)
    return np.pi * a * b * c * np.sqrt((e[..., 0] / a) ** 2 + (e[..., 1] / b) ** 2 + (e[..., 2] / c) ** 2)


def rotation_cycles(tau_d: np.ndarray, period_h: float, pdot_h_per_day: float) -> np.ndarray:
    """Cycles turned since t0 for P(t) = P0 + Ṗ τ."""
    tau = np.asarray(tau_d, dtype=float)
    if pdot_h_per_day == 0:
        return 24.0 * tau / period_h
    return 24.0 / pdot_h_per_day * np.log1p(pdot_h_per_day * tau / period_h)


def ellipsoid_rotation_mag(
    tau_d: np.ndarray,
    period_h: float,
    *,
    axes: tuple[float, float, float] = (1.6, 1.0, 0.85),
    aspect_deg: float = 70.0,
    albedo_contrast: float = 0.10,
    nucleus_fraction: float = 1.0,
    phase0_rad: float = 0.4,
    pdot_h_per_day: float = 0.0,
) -> np.ndarray:
    """Rotational magnitude (0 at the projected area seen side-on) at emission times ``tau_d`` (days from
    the reference epoch): the ellipsoid's area times the albedo term, diluted by unvarying light
    (a coma) so the nucleus gives ``nucleus_fraction`` of the flux at that reference."""
    th = np.radians(aspect_deg)
    nucleus = rotating_flux(tau_d, period_h, pdot_h_per_day, axes, aspect_deg, albedo_contrast, phase0_rad)
    nucleus = nucleus / ellipsoid_area(axes, np.array([np.sin(th), 0.0, np.cos(th)]))
    return -2.5 * np.log10(1.0 - nucleus_fraction + nucleus_fraction * nucleus)


def rotating_flux(tau_d, period_h, pdot_h_per_day, axes, aspect_deg, albedo_contrast, phase0_rad) -> np.ndarray:
    """Projected area times the albedo term (1 + contrast · cos ψ) at rotation angle ψ = 2π·cycles + ψ0."""
    psi = 2 * np.pi * rotation_cycles(tau_d, period_h, pdot_h_per_day) + phase0_rad
    th = np.radians(aspect_deg)
    view = np.stack([np.sin(th) * np.cos(psi), -np.sin(th) * np.sin(psi), np.full_like(psi, np.cos(th))], axis=-1)
    return ellipsoid_area(axes, view) * (1.0 + albedo_contrast * np.cos(psi))


@dataclass
class Campaign:
    """The points as the fit takes them, and the truth that made them."""

    points: LightCurvePoints
    truth: dict = field(default_factory=dict)


#: Four invented sites spread in longitude (deg east) with their zero points (mag).
SITES = (("Ridge", -110.0, 0.0), ("Cape", 20.0, 0.05), ("Plateau", 75.0, -0.03), ("Bay", 150.0, 0.02))


def campaign(
    rng: np.random.Generator,
    *,
    period_h: float = 6.3,
    pdot_h_per_day: float = 0.0,
    axes: tuple[float, float, float] = (1.35, 1.0, 0.9),
    aspect_deg: float = 75.0,
    albedo_contrast: float = 0.0,
    k1: float = 10.0,
    m1: float = 12.0,
    nights: int = 7,
    sites=SITES,
    hours_per_night: float = 6.0,
    points_per_night: int = 14,
    sigma_range_mag: tuple[float, float] = (0.01, 0.02),
    night_sigma_mag: float = 0.02,
    r0_au: float = 1.6,
    rdot_au_per_day: float = -0.012,
    delta0_au: float = 0.75,
    deltadot_au_per_day: float = 0.008,
    pab_rate_deg_per_day: float = 0.6,
    pab_accel_deg_per_day2: float = 0.02,
    clear_fraction: float = 1.0,
) -> Campaign:
    """One seeded campaign: each site observes ``hours_per_night`` centred on its local midnight."""
    rows = []
    for name, lon_deg, zero in sites:
        midnight = (-lon_deg / 360.0) % 1.0
        for k in range(nights):
            if rng.uniform() > clear_fraction:
                continue
            start = k + midnight - hours_per_night / 48.0
            t = start + np.sort(rng.uniform(0, hours_per_night / 24.0, points_per_night))
            offset = zero + rng.normal(0.0, night_sigma_mag)
            rows.append((t, name, f"n{k + 1}", offset))
    t_emit = T0_JD - nights / 2.0 + np.concatenate([r[0] for r in rows])
    site = np.concatenate([[r[1]] * r[0].size for r in rows]).astype(object)
    night = np.concatenate([[r[2]] * r[0].size for r in rows]).astype(object)
    offset = np.concatenate([np.full(r[0].size, r[3]) for r in rows])
    tau = t_emit - T0_JD
    r = r0_au + rdot_au_per_day * tau
    delta = delta0_au + deltadot_au_per_day * tau
    flux = rotating_flux(tau, period_h, pdot_h_per_day, axes, aspect_deg, albedo_contrast, 0.7)
    sigma = rng.uniform(*sigma_range_mag, tau.size)
    mag = (
        m1
        - 2.5 * np.log10(flux / flux.mean())
        + 5 * np.log10(delta)
        + k1 * np.log10(r)
        + offset
        + rng.normal(0.0, sigma)
    )
    light_min = delta / C_AU_PER_DAY * 1440.0
    pab_lon = (200.0 + pab_rate_deg_per_day * tau + 0.5 * pab_accel_deg_per_day2 * tau**2) % 360.0
    points = light_curve_points(
        t_emit + light_min / 1440.0,
        mag,
        sigma,
        site,
        night,
        delta,
        r,
        light_time_minutes=light_min,
        pab_lon_deg=pab_lon,
        pab_lat_deg=np.full(tau.size, 5.0),
        source="synthetic",
    )
    return Campaign(
        points=points,
        truth={
            "period_h": period_h,
            "pdot_h_per_day": pdot_h_per_day,
            "k1": k1,
            "site_offsets": {s[0]: s[2] for s in sites},
            "amplitude_mag": float(2.5 * np.log10(flux.max() / flux.min())),
        },
    )
