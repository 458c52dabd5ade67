"""Sky surface brightness towards the target, moonlight included.

Krisciunas, K. & Schaefer, B. E. (1991), PASP 103, 1033 ("A model of the brightness of
moonlight"), their eqs. 1–3, 15, 16–21. The model is in Johnson V; the site file gives the dark,
moonless zenith sky in the instrument's own filter, kept as the dark component, and moonlight is
converted from V to the filter with the Sun's colour (moonlight is reflected sunlight; the Moon's
slight reddening is neglected). The extinction coefficient in the scattering term is the site's, in
its own filter (K&S use k_V; for R-band sites this underestimates the Rayleigh part a little).
"""

from __future__ import annotations

import numpy as np

from planner.core.bands import SUN_MAG_BY_BAND


def ks_airmass(zenith_dist_deg: np.ndarray | float) -> np.ndarray:
    """Airmass X(Z) = (1 − 0.96 sin² Z)^(−1/2), Krisciunas & Schaefer (1991) eq. 3.

    Finite at the horizon (X(90°) = 5), as the scattering model needs for a rising Moon.
    """
    z = np.radians(np.asarray(zenith_dist_deg, dtype=float))
    return 1.0 / np.sqrt(1.0 - 0.96 * np.sin(z) ** 2)


def _ks_airmass_at_alt(alt_deg: np.ndarray | float) -> np.ndarray:
    """:func:`ks_airmass` at an altitude, held to the horizon for bodies below it."""
    return ks_airmass(90.0 - np.clip(np.asarray(alt_deg, dtype=float), 0.0, 90.0))


def moon_phase_angle_deg(moon_illum: np.ndarray | float) -> np.ndarray:
    """Moon phase angle α (0° full, 180° new) from the illuminated fraction k = (1 + cos α) / 2."""
    k = np.clip(np.asarray(moon_illum, dtype=float), 0.0, 1.0)
    return np.degrees(np.arccos(2.0 * k - 1.0))


def moon_v_mag(phase_angle_deg: np.ndarray | float) -> np.ndarray:
    """Moon's V magnitude m = −12.73 + 0.026|α| + 4×10⁻⁹ α⁴, Krisciunas & Schaefer (1991) eq. 9.

    Without the opposition surge within ~7° of full Moon (K&S note it; it is not in the fit).
    """
    a = np.abs(np.asarray(phase_angle_deg, dtype=float))
    return -12.73 + 0.026 * a + 4e-9 * a**4


def moon_illuminance_fc(phase_angle_deg: np.ndarray | float) -> np.ndarray:
    """Moon's illuminance outside the atmosphere, I* = 10^(−0.4 (m_moon + 16.57)) foot-candles.

    Krisciunas & Schaefer (1991) eqs. 8 and 20: I* = 10^(−0.4 (3.84 + 0.026|α| + 4×10⁻⁹ α⁴)).
    """
    return 10.0 ** (-0.4 * (moon_v_mag(phase_angle_deg) + 16.57))


def ks_scattering(sep_deg: np.ndarray | float) -> np.ndarray:
    """Scattering function f(ρ) = f_R + f_M, Krisciunas & Schaefer (1991) eqs. 16–21.

    Rayleigh f_R = 10^5.36 (1.06 + cos² ρ); Mie f_M = 10^(6.15 − ρ/40) for ρ ≥ 10°, and
    f_M = 6.2×10⁷ ρ⁻² for ρ < 10° (ρ in degrees; ρ floored at 0.25°, the Moon's radius). As
    published, the two Mie branches do not meet at 10° (f_M jumps from 6.2×10⁵ to 7.9×10⁵).
    """
    rho = np.maximum(np.asarray(sep_deg, dtype=float), 0.25)
    rayleigh = 10.0**5.36 * (1.06 + np.cos(np.radians(rho)) ** 2)
    mie = np.where(rho >= 10.0, 10.0 ** (6.15 - rho / 40.0), 6.2e7 / rho**2)
    return rayleigh + mie


def nanolambert_from_mag(mag_arcsec2: np.ndarray | float) -> np.ndarray:
    """Surface brightness in nanolamberts, B = 34.08 exp(20.7233 − 0.92104 V) (K&S 1991 eq. 1)."""
    return 34.08 * np.exp(20.7233 - 0.92104 * np.asarray(mag_arcsec2, dtype=float))


def mag_from_nanolambert(b_nl: np.ndarray | float) -> np.ndarray:
    """Inverse of :func:`nanolambert_from_mag`: V = (20.7233 − ln(B / 34.08)) / 0.92104."""
    return (20.7233 - np.log(np.asarray(b_nl, dtype=float) / 34.08)) / 0.92104


def moonlight_nanolambert(
    moon_alt_deg: np.ndarray | float,
    target_alt_deg: np.ndarray | float,
    moon_sep_deg: np.ndarray | float,
    moon_phase_angle_deg: np.ndarray | float,
    extinction_mag_per_airmass: np.ndarray | float,
) -> np.ndarray:
    """Sky brightness added by moonlight in V, in nanolamberts.

    Krisciunas & Schaefer (1991) eq. 15: B_moon = f(ρ) I* 10^(−0.4 k X_moon) [1 − 10^(−0.4 k X)],
    with X from eq. 3 at the Moon's and the target's zenith distances. Zero with the Moon below
    the horizon.
    """
    moon_alt = np.asarray(moon_alt_deg, dtype=float)
    k = np.asarray(extinction_mag_per_airmass, dtype=float)
    x_moon = _ks_airmass_at_alt(moon_alt)
    x_target = _ks_airmass_at_alt(target_alt_deg)
    b = (
        ks_scattering(moon_sep_deg)
        * moon_illuminance_fc(moon_phase_angle_deg)
        * 10.0 ** (-0.4 * k * x_moon)
        * (1.0 - 10.0 ** (-0.4 * k * x_target))
    )
    return np.where(moon_alt > 0.0, b, 0.0)


def dark_sky_mag_arcsec2(
    zenith_sky_mag_arcsec2: np.ndarray | float,
    target_alt_deg: np.ndarray | float,
    extinction_mag_per_airmass: np.ndarray | float,
) -> np.ndarray:
    """Moonless sky at the target's altitude, B₀(Z) = B_zen 10^(−0.4 k (X − 1)) X.

    Krisciunas & Schaefer (1991) eq. 2 (after Garstang): more airglow path towards the horizon,
    partly extinguished. X from eq. 3.
    """
    x = _ks_airmass_at_alt(target_alt_deg)
    k = np.asarray(extinction_mag_per_airmass, dtype=float)
    return np.asarray(zenith_sky_mag_arcsec2, dtype=float) + k * (x - 1.0) - 2.5 * np.log10(x)


def sky_mag_arcsec2(
    zenith_sky_mag_arcsec2: np.ndarray | float,
    target_alt_deg: np.ndarray | float,
    moon_alt_deg: np.ndarray | float,
    moon_sep_deg: np.ndarray | float,
    moon_illum: np.ndarray | float,
    extinction_mag_per_airmass: np.ndarray | float,
    band: str = "V",
) -> np.ndarray:
    """Sky surface brightness (mag/arcsec²) in ``band`` towards the target, moonlight included.

    Dark component: the site's moonless zenith sky in its own band, carried to the target's
    altitude (K&S 1991 eq. 2). Moonlight: K&S 1991 eq. 15 in V, converted to ``band`` with the
    Sun's colour V − band from :data:`SUN_MAG_BY_BAND`. The two add in flux. NaN with the target
    at or below the horizon.
    """
    colour_v_minus_band = SUN_MAG_BY_BAND["V"] - SUN_MAG_BY_BAND[band]
    dark = dark_sky_mag_arcsec2(zenith_sky_mag_arcsec2, target_alt_deg, extinction_mag_per_airmass)
    moon_nl = moonlight_nanolambert(
        moon_alt_deg,
        target_alt_deg,
        moon_sep_deg,
        moon_phase_angle_deg(moon_illum),
        extinction_mag_per_airmass,
    )
    # Convert the moonlight to a flux in the band, relative to the dark sky in the same band.
    dark_flux = 10.0 ** (-0.4 * dark)
    with np.errstate(divide="ignore"):
        moon_mag_v = mag_from_nanolambert(moon_nl)
    moon_flux = np.where(moon_nl > 0.0, 10.0 ** (-0.4 * (moon_mag_v - colour_v_minus_band)), 0.0)
    total = -2.5 * np.log10(dark_flux + moon_flux)
    return np.where(np.asarray(target_alt_deg, dtype=float) > 0.0, total, np.nan)
