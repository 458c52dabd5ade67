"""Photometry and exposure planning: sky brightness with moonlight, CCD signal-to-noise, exposure
time under a trailing limit, photometric apertures of fixed angular or physical size, and Afρ.

Pure, vectorised functions over numpy arrays (broadcasting over epochs and sites). Table entry
points: :func:`photometry_columns` (one site's geometry table), :func:`add_photometry` (a whole
``geometry()`` result), :func:`window_photometry` (observing windows) and :func:`mag_err_for_times`
(per-point σ for the diagnostics). Magnitudes follow Pogson (1856): a difference Δm is a flux
ratio 10^(0.4 Δm).

Methods
-------
- Sky brightness added by moonlight: Krisciunas, K. & Schaefer, B. E. (1991), PASP 103, 1033
  ("A model of the brightness of moonlight"), their eqs. 1–3, 15, 16–21.
- Signal-to-noise: the CCD equation of Merline, W. J. & Howell, S. B. (1995), Experimental
  Astronomy 6, 163, as given in Howell, S. B. (2006), Handbook of CCD Astronomy, 2nd ed., §4.4.
- Dust production proxy Afρ: A'Hearn, M. F. et al. (1984), AJ 89, 579; the same paper's steady
  1/ρ coma sets how a comet's total magnitude divides among apertures.

Band conventions
----------------
Krisciunas & Schaefer model the sky in Johnson V. The site file gives the dark, moonless zenith sky
in the instrument's own filter; we keep that as the dark component and add moonlight converted from
V to the filter with the Sun's colour (moonlight is reflected sunlight; the Moon's slight reddening
is neglected). The extinction coefficient used in the moonlight scattering term is the site's, in
its own filter (K&S use k_V; for R-band sites this underestimates the Rayleigh part a little).
Twilight is not modelled: rows with the Sun above ``max_sun_alt_deg`` (default −12°) get no
prediction.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from planner.brightness import LAW_HG, LAW_NUCLEAR, LAW_TOTAL

if TYPE_CHECKING:  # typing only: sites.py imports FILTER_BANDS from here
    from planner.sites import Instrument, Site
    from planner.targets import Target

#: Defaults for light-curve frames, shared by `plan` (campaign file) and `ephem`/`windows` (options):
#: S/N per exposure, and exposure limits. Observers rarely take light-curve frames shorter than ~30 s
#: even on bright targets (scintillation, readout overhead, data volume; common practice); trailing
#: may still cut an exposure below the floor.
LIGHTCURVE_SNR_TARGET = 30.0
LIGHTCURVE_MIN_EXPOSURE_S = 30.0
LIGHTCURVE_MAX_EXPOSURE_S = 300.0

#: Pogson (1856): flux ratio per magnitude is 10^0.4 ≈ 2.512.
POGSON_RATIO = 10.0**0.4

#: σ_m ≈ 2.5 log10(e) / SNR = 1.0857 / SNR (Howell 2006, §5.1; first order in 1/SNR).
MAG_ERR_TIMES_SNR = 2.5 / math.log(10.0)

#: Merline & Howell (1995): rms error of the analogue-to-digital conversion, in ADU (≈ 1/√12).
DIGITISATION_SIGMA_ADU = 0.289

#: 1 au in cm (IAU 2012 Resolution B2: 149 597 870 700 m exactly).
AU_CM = 1.495978707e13

#: Apparent magnitude of the Sun at 1 au per filter. Johnson–Cousins (Vega) values from the
#: absolute magnitudes in Binney & Merrifield (1998), Galactic Astronomy, Table 2.1 (memory):
#: U 5.61, B 5.48, V 4.83, R 4.42, I 4.08, minus the distance modulus of 1 au, 31.572.
#: SDSS (AB) values from Willmer (2018), ApJS 236, 47 (memory): u 6.39, g 5.11, r 4.65, i 4.53,
#: z 4.50, minus 31.572. Unfiltered ("clear") CCD photometry is reduced to R (common practice).
SUN_ABS_MAG_BY_BAND = {
    "U": 5.61, "B": 5.48, "V": 4.83, "R": 4.42, "I": 4.08,
    "u": 6.39, "g": 5.11, "r": 4.65, "i": 4.53, "z": 4.50,
}
AU_DISTANCE_MODULUS_MAG = 5.0 * math.log10(1.0 / (648000.0 / math.pi) / 10.0)  # 1 au in pc, over 10 pc
SUN_MAG_BY_BAND = {b: round(m + AU_DISTANCE_MODULUS_MAG, 3) for b, m in SUN_ABS_MAG_BY_BAND.items()}

#: Filter names accepted in site files, mapped to the band used for solar colours and Afρ.
FILTER_BANDS = {
    "U": "U", "B": "B", "V": "V", "R": "R", "I": "I",
    "Rc": "R", "R_C": "R", "Ic": "I", "I_C": "I",
    "u": "u", "g": "g", "r": "r", "i": "i", "z": "z",
    "u'": "u", "g'": "g", "r'": "r", "i'": "i", "z'": "z",
    "sdss_u": "u", "sdss_g": "g", "sdss_r": "r", "sdss_i": "i", "sdss_z": "z",
    "clear": "R", "C": "R", "L": "R", "none": "R",
}


# --------------------------------------------------------------------------------------------
# Sky brightness: Krisciunas & Schaefer (1991)
# --------------------------------------------------------------------------------------------

def band_of_filter(filter_name: str) -> str:
    """Photometric band (key of :data:`SUN_MAG_BY_BAND`) for a site's filter name; KeyError if unknown."""
    return FILTER_BANDS[filter_name]


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
        moon_alt_deg, target_alt_deg, moon_sep_deg, moon_phase_angle_deg(moon_illum),
        extinction_mag_per_airmass,
    )
    # Convert the moonlight to a flux in the band, relative to the dark sky in the same band.
    dark_flux = 10.0 ** (-0.4 * dark)
    with np.errstate(divide="ignore"):
        moon_mag_v = mag_from_nanolambert(moon_nl)
    moon_flux = np.where(moon_nl > 0.0, 10.0 ** (-0.4 * (moon_mag_v - colour_v_minus_band)), 0.0)
    total = -2.5 * np.log10(dark_flux + moon_flux)
    return np.where(np.asarray(target_alt_deg, dtype=float) > 0.0, total, np.nan)


# --------------------------------------------------------------------------------------------
# The CCD equation: Merline & Howell (1995); Howell (2006)
# --------------------------------------------------------------------------------------------

def source_rate_e_per_s(
    mag: np.ndarray | float,
    zero_point_mag: float,
    extinction_mag_per_airmass: float,
    airmass: np.ndarray | float,
) -> np.ndarray:
    """Detected electrons per second from a source: 10^(−0.4 (m + k X − ZP)).

    ``zero_point_mag`` is the magnitude giving 1 e⁻/s above the atmosphere (Howell 2006 §4.4).
    """
    m = np.asarray(mag, dtype=float) + extinction_mag_per_airmass * np.asarray(airmass, dtype=float)
    return 10.0 ** (-0.4 * (m - zero_point_mag))


def sky_rate_e_per_s_pix(
    sky_mag_arcsec2: np.ndarray | float, zero_point_mag: float, pixel_scale_arcsec: float
) -> np.ndarray:
    """Sky electrons per second per pixel: 10^(−0.4 (μ − ZP)) × (pixel scale)².

    The sky brightness is as seen from the ground, so no extinction is applied to it.
    """
    per_arcsec2 = 10.0 ** (-0.4 * (np.asarray(sky_mag_arcsec2, dtype=float) - zero_point_mag))
    return per_arcsec2 * pixel_scale_arcsec**2


def aperture_pixels(aperture_radius_arcsec: np.ndarray | float, pixel_scale_arcsec: float) -> np.ndarray:
    """Number of pixels in a circular aperture, n_pix = π r² / s²."""
    return np.pi * (np.asarray(aperture_radius_arcsec, dtype=float) / pixel_scale_arcsec) ** 2


def gaussian_enclosed_fraction(aperture_radius_arcsec: np.ndarray | float, fwhm_arcsec: float) -> np.ndarray:
    """Fraction of a Gaussian point-spread function inside radius r: 1 − 2^(−(2r / FWHM)²).

    From 1 − exp(−r² / 2σ²) with FWHM = 2 √(2 ln 2) σ; half the light falls within r = FWHM / 2.
    """
    return 1.0 - 2.0 ** (-((2.0 * np.asarray(aperture_radius_arcsec, dtype=float) / fwhm_arcsec) ** 2))


def _noise_per_pixel_terms(read_noise_e: float, gain_e_per_adu: float, n_pix, n_background_pix):
    """(n_pix × (1 + n_pix/n_B), constant variance per pixel R² + G² σ_f²)."""
    n_pix = np.asarray(n_pix, dtype=float)
    scale = n_pix if n_background_pix is None else n_pix * (1.0 + n_pix / n_background_pix)
    const = read_noise_e**2 + (gain_e_per_adu * DIGITISATION_SIGMA_ADU) ** 2
    return scale, const


def ccd_snr(
    source_e_per_s: np.ndarray | float,
    sky_e_per_s_pix: np.ndarray | float,
    dark_e_per_s_pix: float,
    read_noise_e: float,
    n_pix: np.ndarray | float,
    exposure_s: np.ndarray | float,
    *,
    gain_e_per_adu: float = 0.0,
    n_background_pix: float | None = None,
) -> np.ndarray:
    """Signal-to-noise of one exposure from the CCD equation.

    Merline & Howell (1995); Howell (2006) eq. 4.4:
    S/N = N* / √(N* + n_pix (1 + n_pix/n_B) (N_S + N_D + N_R² + G² σ_f²)),
    with N* = source rate × t, N_S = sky per pixel × t, N_D = dark per pixel × t, N_R the read
    noise, G the gain (e⁻/ADU) and σ_f ≈ 0.289 ADU the digitisation error. ``n_background_pix``
    None means a background estimated from very many pixels (the factor is then 1).
    """
    t = np.asarray(exposure_s, dtype=float)
    n_star = np.asarray(source_e_per_s, dtype=float) * t
    scale, const = _noise_per_pixel_terms(read_noise_e, gain_e_per_adu, n_pix, n_background_pix)
    var = n_star + scale * ((np.asarray(sky_e_per_s_pix, dtype=float) + dark_e_per_s_pix) * t + const)
    with np.errstate(divide="ignore", invalid="ignore"):
        return n_star / np.sqrt(var)


def exposure_for_snr_s(
    snr: np.ndarray | float,
    source_e_per_s: np.ndarray | float,
    sky_e_per_s_pix: np.ndarray | float,
    dark_e_per_s_pix: float,
    read_noise_e: float,
    n_pix: np.ndarray | float,
    *,
    gain_e_per_adu: float = 0.0,
    n_background_pix: float | None = None,
) -> np.ndarray:
    """Exposure time reaching a given S/N: the exact root of the CCD equation, quadratic in t.

    Squaring :func:`ccd_snr`: F² t² − S²(F + n'(s + d)) t − S² n' C = 0, with F the source rate,
    n' = n_pix (1 + n_pix/n_B), s and d the sky and dark rates per pixel, C = R² + G² σ_f².
    The positive root t = (b + √(b² + 4 F² S² n' C)) / (2 F²), with b = S²(F + n'(s + d)).
    (Howell 2006 §4.4 gives the same solution.) Infinite for a source that gives no electrons.
    """
    s2 = np.asarray(snr, dtype=float) ** 2
    f = np.asarray(source_e_per_s, dtype=float)
    scale, const = _noise_per_pixel_terms(read_noise_e, gain_e_per_adu, n_pix, n_background_pix)
    b = s2 * (f + scale * (np.asarray(sky_e_per_s_pix, dtype=float) + dark_e_per_s_pix))
    c = s2 * scale * const
    with np.errstate(divide="ignore", invalid="ignore"):
        t = (b + np.sqrt(b * b + 4.0 * f * f * c)) / (2.0 * f * f)
    return np.where(f > 0.0, t, np.inf)


def exposure_for_snr_s_slow(
    snr: float, source_e_per_s: float, sky_e_per_s_pix: float, dark_e_per_s_pix: float,
    read_noise_e: float, n_pix: float, *, gain_e_per_adu: float = 0.0,
    n_background_pix: float | None = None,
) -> float:
    """Slow twin of :func:`exposure_for_snr_s`: bisection on the monotone S/N(t), one point at a time."""
    def snr_at(t: float) -> float:
        return float(ccd_snr(source_e_per_s, sky_e_per_s_pix, dark_e_per_s_pix, read_noise_e, n_pix, t,
                             gain_e_per_adu=gain_e_per_adu, n_background_pix=n_background_pix))

    lo, hi = 0.0, 1.0
    while snr_at(hi) < snr:
        hi *= 2.0
        if hi > 1e300:
            return math.inf
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if snr_at(mid) < snr:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-13 * hi:
            break
    return 0.5 * (lo + hi)


def mag_err_from_snr(snr: np.ndarray | float, floor_mag: float = 0.0) -> np.ndarray:
    """Magnitude error σ_m ≈ 1.0857 / SNR (Howell 2006 §5.1), added in quadrature to a floor."""
    with np.errstate(divide="ignore"):
        sigma = MAG_ERR_TIMES_SNR / np.asarray(snr, dtype=float)
    return np.hypot(sigma, floor_mag)


def snr_from_mag_err(mag_err: float) -> float:
    """S/N giving a magnitude error σ_m: SNR = 1.0857 / σ_m (Howell 2006 §5.1)."""
    if not mag_err > 0:
        raise ValueError(f"magnitude error {mag_err} must be positive")
    return MAG_ERR_TIMES_SNR / mag_err


def trail_limit_s(
    motion_arcsec_min: np.ndarray | float,
    seeing_arcsec: float,
    fraction: float = 0.5,
    nonsidereal_tracking: bool = False,
) -> np.ndarray:
    """Longest exposure before the target trails by ``fraction`` of the seeing on a sidereally
    tracked frame: t = fraction × seeing / motion (common practice; half the seeing by default).
    Infinite when the mount tracks the target or the target does not move.
    """
    motion = np.abs(np.asarray(motion_arcsec_min, dtype=float)) / 60.0  # arcsec per second
    if nonsidereal_tracking:
        return np.full(motion.shape, np.inf)
    with np.errstate(divide="ignore", over="ignore"):  # subnormal motion: no practical limit
        return np.where(motion > 0.0, fraction * seeing_arcsec / motion, np.inf)


def exposures_per_block(
    block_s: np.ndarray | float, exposure_s: np.ndarray | float, readout_s: float, overhead_s: float
) -> np.ndarray:
    """Whole exposures in a block: ⌊(block − overhead) / (exposure + readout)⌋, never negative.

    The overhead (slew, acquisition, focus) is paid once per block; each exposure pays a readout.
    """
    usable = np.asarray(block_s, dtype=float) - overhead_s
    cycle = np.asarray(exposure_s, dtype=float) + readout_s
    with np.errstate(divide="ignore", invalid="ignore"):
        n = np.floor(usable / cycle)
    return np.where(np.isfinite(n) & (n > 0), n, 0.0).astype(int)


# --------------------------------------------------------------------------------------------
# Apertures and Afρ
# --------------------------------------------------------------------------------------------

def aperture_radius_arcsec(
    km_per_arcsec: np.ndarray | float,
    *,
    aperture_arcsec: float | None = None,
    aperture_km: float | None = None,
    default_arcsec: float = 2.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Photometric aperture radius as (arcsec, km at the target) for every epoch.

    A fixed physical radius (``aperture_km``) shrinks on the sky as Δ grows, so coma photometry
    samples the same part of the coma night after night (A'Hearn et al. 1984). A fixed angular
    radius (``aperture_arcsec``) is the usual choice for a point source. Give at most one;
    neither means ``default_arcsec``.
    """
    if aperture_arcsec is not None and aperture_km is not None:
        raise ValueError("give aperture_arcsec or aperture_km, not both")
    scale = np.asarray(km_per_arcsec, dtype=float)
    if aperture_km is not None:
        if not aperture_km > 0:
            raise ValueError(f"aperture_km {aperture_km} must be positive")
        return aperture_km / scale, np.full(scale.shape, float(aperture_km))
    radius = default_arcsec if aperture_arcsec is None else aperture_arcsec
    if not radius > 0:
        raise ValueError(f"aperture radius {radius} arcsec must be positive")
    return np.full(scale.shape, float(radius)), radius * scale


#: Our default assumption (no published value): a comet's total magnitude (M1, K1) counts the coma
#: out to this radius. Set it from the comet's appearance; the aperture magnitude scales with it.
COMA_RADIUS_KM = 20_000.0
#: Default photometric aperture radius for coma photometry: a fixed 10 000 km at the comet, the
#: order of the apertures in which Afρ is commonly quoted (common practice).
COMA_APERTURE_KM = 10_000.0


def coma_aperture_mag(
    total_mag: np.ndarray | float, aperture_km: np.ndarray | float, coma_radius_km: float = COMA_RADIUS_KM
) -> np.ndarray:
    """Magnitude inside an aperture of radius ρ for a coma whose total magnitude counts out to ρ_c.

    A steady, freely expanding coma has surface brightness ∝ 1/ρ, so the flux inside ρ grows as ρ
    (A'Hearn et al. 1984, the premise of Afρ): m(ρ) = m_total − 2.5 log10(min(ρ / ρ_c, 1)).
    Seeing is neglected (it matters only for apertures of a few FWHM or less).
    """
    if not coma_radius_km > 0:
        raise ValueError(f"coma radius {coma_radius_km} km must be positive")
    frac = np.minimum(np.asarray(aperture_km, dtype=float) / coma_radius_km, 1.0)
    return np.asarray(total_mag, dtype=float) - 2.5 * np.log10(frac)


def afrho_cm(
    mag: np.ndarray | float,
    sun_mag: float,
    helio_dist_au: np.ndarray | float,
    obs_dist_au: np.ndarray | float,
    aperture_km: np.ndarray | float,
) -> np.ndarray:
    """Afρ in cm, A'Hearn et al. (1984) AJ 89, 579: Afρ = (2 Δ r)² / ρ × 10^(0.4 (m_sun − m)).

    r in au (dimensionless), Δ and ρ (the aperture radius at the comet) in cm; ``mag`` is the
    comet's magnitude inside that aperture and ``sun_mag`` the Sun's at 1 au in the same band.
    No phase-angle correction.
    """
    delta_cm = np.asarray(obs_dist_au, dtype=float) * AU_CM
    rho_cm = np.asarray(aperture_km, dtype=float) * 1e5
    r = np.asarray(helio_dist_au, dtype=float)
    return (2.0 * delta_cm * r) ** 2 / rho_cm * 10.0 ** (0.4 * (sun_mag - np.asarray(mag, dtype=float)))


# --------------------------------------------------------------------------------------------
# The table entry point
# --------------------------------------------------------------------------------------------

#: Columns added by :func:`photometry_columns`, in order.
PHOTOMETRY_COLUMNS = (
    "sky_mag_arcsec2", "aperture_arcsec", "aperture_km", "trail_limit_s", "exposure_s",
    "exposure_limited_by", "snr_pred", "mag_err_pred", "n_stack_for_snr", "n_exposures_per_hour",
)

_GEOMETRY_NEEDS = (
    "mag_pred", "airmass", "alt_deg", "moon_alt_deg", "moon_sep_deg", "moon_illum", "sun_alt_deg",
    "motion_arcsec_min", "km_per_arcsec",
)


#: Brightness laws that ``geometry()`` leaves in ``frame.attrs["mag_law"]``: coma light, or a point source.
_COMA_LAWS = (LAW_TOTAL,)
_POINT_LAWS = {LAW_NUCLEAR: True, LAW_HG: False}  # law → is a comet


def _source_kind(geom_df: pd.DataFrame, comet: bool | None, point_source: bool | None) -> tuple[bool, bool]:
    """(comet, point_source) from the caller, else from the table's ``mag_law``: a comet's total
    magnitude is coma light (an aperture magnitude); nuclear and H,G magnitudes are point sources."""
    law = geom_df.attrs.get("mag_law")
    if comet is None:
        if law in _COMA_LAWS:
            comet = True
        elif law in _POINT_LAWS:
            comet = _POINT_LAWS[law]
        else:
            raise ValueError(f"cannot tell a comet from an asteroid (mag_law {law!r}); pass comet=")
    if point_source is None:
        known = law in _COMA_LAWS or law in _POINT_LAWS
        point_source = law in _POINT_LAWS if known else not comet
    return comet, point_source


def photometry_columns(
    geom_df: pd.DataFrame,
    instrument: Instrument,
    *,
    comet: bool | None = None,
    point_source: bool | None = None,
    snr_target: float = 50.0,
    mag_err_target: float | None = None,
    aperture_arcsec: float | None = None,
    aperture_km: float | None = None,
    trail_fraction: float = 0.5,
    min_exposure_s: float = 1.0,
    max_exposure_s: float = 300.0,
    exposure_s: np.ndarray | float | None = None,
    mag_err_floor: float = 0.0,
    max_sun_alt_deg: float = -12.0,
    coma_radius_km: float = COMA_RADIUS_KM,
) -> pd.DataFrame:
    """Exposure plan and expected precision for every row of one site's geometry table.

    ``geom_df`` carries the geometry columns of docs/formats.md (``mag_pred``, ``airmass``,
    ``alt_deg``, ``moon_alt_deg``, ``moon_sep_deg``, ``moon_illum``, ``sun_alt_deg``,
    ``motion_arcsec_min``, ``km_per_arcsec``; ``helio_dist_au`` and ``obs_dist_au`` for comets).
    Returns a new DataFrame with the same index holding :data:`PHOTOMETRY_COLUMNS` (plus
    ``afrho_cm`` when ``comet``); join it to the geometry.

    ``comet`` and ``point_source`` default from ``geom_df.attrs["mag_law"]`` (set by
    ``planner.ephemeris.geometry``): a comet's total magnitude (M1, K1) is coma light, counted out
    to ``coma_radius_km`` with a 1/ρ profile (:func:`coma_aperture_mag`), measured by default in a
    fixed 10 000 km aperture; a nuclear (M2, K2) or H,G magnitude is a point source, of which a
    Gaussian-seeing fraction falls in the aperture (default radius: the seeing FWHM). Afρ is given
    for coma magnitudes only (NaN for a nuclear magnitude: a bare nucleus has no Afρ); with the
    1/ρ coma it does not depend on the aperture.

    Model: sky from :func:`sky_mag_arcsec2` (Krisciunas & Schaefer 1991); S/N and exposure from
    the CCD equation (Merline & Howell 1995). The exposure reaching ``snr_target`` (or
    ``mag_err_target``) is clipped to [``min_exposure_s``, min(``max_exposure_s``, trailing
    limit)]; the trailing limit always wins. ``exposure_s`` given (e.g. from a log; per row, NaN
    where unknown) replaces the plan where finite and only the S/N is evaluated there. Rows with
    the target at or below the horizon or the Sun above ``max_sun_alt_deg`` get NaN predictions.
    """
    comet, point_source = _source_kind(geom_df, comet, point_source)
    missing = [c for c in _GEOMETRY_NEEDS + (("helio_dist_au", "obs_dist_au") if comet else ())
               if c not in geom_df.columns]
    if missing:
        raise ValueError(f"geometry table lacks column(s) {', '.join(missing)}")
    if mag_err_target is not None:
        snr_target = snr_from_mag_err(mag_err_target)
    if not snr_target > 0:
        raise ValueError(f"target S/N {snr_target} must be positive")
    if not 0 < min_exposure_s <= max_exposure_s:
        raise ValueError(f"exposure bounds [{min_exposure_s}, {max_exposure_s}] s: need 0 < min <= max")
    inst = instrument
    band = band_of_filter(inst.filter)
    col = {c: geom_df[c].to_numpy(dtype=float) for c in _GEOMETRY_NEEDS}

    usable = (col["alt_deg"] > 0.0) & (col["sun_alt_deg"] <= max_sun_alt_deg) & np.isfinite(col["mag_pred"])
    sky = sky_mag_arcsec2(
        inst.sky_mag_per_arcsec2, col["alt_deg"], col["moon_alt_deg"], col["moon_sep_deg"],
        col["moon_illum"], inst.extinction_mag_per_airmass, band,
    )
    if not point_source and aperture_arcsec is None and aperture_km is None:
        aperture_km = COMA_APERTURE_KM  # coma: a fixed physical radius by default
    ap_arcsec, ap_km = aperture_radius_arcsec(
        col["km_per_arcsec"], aperture_arcsec=aperture_arcsec, aperture_km=aperture_km,
        default_arcsec=inst.seeing_arcsec,
    )
    n_pix = aperture_pixels(ap_arcsec, inst.pixel_scale_arcsec)
    # Magnitude of the light inside the aperture.
    if point_source:
        mag_in_aperture = col["mag_pred"] - 2.5 * np.log10(gaussian_enclosed_fraction(ap_arcsec, inst.seeing_arcsec))
    else:
        mag_in_aperture = coma_aperture_mag(col["mag_pred"], ap_km, coma_radius_km)
    rate = source_rate_e_per_s(mag_in_aperture, inst.zero_point_mag, inst.extinction_mag_per_airmass,
                               col["airmass"])
    sky_rate = sky_rate_e_per_s_pix(sky, inst.zero_point_mag, inst.pixel_scale_arcsec)
    noise = dict(dark_e_per_s_pix=inst.dark_e_per_s, read_noise_e=inst.read_noise_e, n_pix=n_pix,
                 gain_e_per_adu=inst.gain_e_per_adu)

    trail = trail_limit_s(col["motion_arcsec_min"], inst.seeing_arcsec, trail_fraction,
                          inst.nonsidereal_tracking)
    wanted = exposure_for_snr_s(snr_target, rate, sky_rate, **noise)
    upper = np.minimum(max_exposure_s, trail)
    t = np.minimum(np.maximum(wanted, min_exposure_s), upper)
    # What set the exposure: the S/N goal, the trailing cap (it wins even below the floor), the floor
    # (S/N above goal) or the ceiling.
    limited = np.select(
        [np.isclose(t, wanted, rtol=1e-12, atol=0.0), t == trail, t > wanted],
        ["snr", "trailing", "min_exposure"], "max_exposure",
    ).astype(object)
    if exposure_s is not None:  # logged exposures where given (finite), the plan elsewhere
        given = np.broadcast_to(np.asarray(exposure_s, dtype=float), rate.shape)
        known = np.isfinite(given) & (given > 0)
        t = np.where(known, given, t)
        limited = np.where(known, "given", limited)
    snr = ccd_snr(rate, sky_rate, exposure_s=t, **noise)
    with np.errstate(divide="ignore", invalid="ignore"):
        # Independent frames add in quadrature: n frames give √n × the S/N of one.
        n_stack = np.maximum(np.ceil((snr_target / snr) ** 2 * (1.0 - 1e-9)), 1.0)
    per_hour = exposures_per_block(3600.0, t, inst.readout_s, inst.overhead_s)

    nan = np.nan
    out = pd.DataFrame(index=geom_df.index)
    out["sky_mag_arcsec2"] = np.where(usable, sky, nan)
    out["aperture_arcsec"] = ap_arcsec
    out["aperture_km"] = ap_km
    out["trail_limit_s"] = trail
    out["exposure_s"] = np.where(usable, t, nan)
    out["exposure_limited_by"] = np.where(usable, limited, "")
    out["snr_pred"] = np.where(usable, snr, nan)
    out["mag_err_pred"] = np.where(usable, mag_err_from_snr(snr, mag_err_floor), nan)
    out["n_stack_for_snr"] = pd.array(np.where(usable & np.isfinite(n_stack), n_stack, nan), dtype="Int64")
    out["n_exposures_per_hour"] = pd.array(np.where(usable, per_hour, nan), dtype="Int64")
    if comet:
        afrho = afrho_cm(
            mag_in_aperture, SUN_MAG_BY_BAND[band], geom_df["helio_dist_au"].to_numpy(dtype=float),
            geom_df["obs_dist_au"].to_numpy(dtype=float), ap_km,
        )
        out["afrho_cm"] = np.full(afrho.shape, np.nan) if point_source else afrho
    return out


def add_photometry(frames: dict[str, pd.DataFrame], sites: Sequence[Site], **kwargs: Any) -> dict[str, pd.DataFrame]:
    """Geometry frames (``planner.ephemeris.geometry`` output) with :func:`photometry_columns` joined
    for every site that has an instrument; other frames pass unchanged. ``kwargs`` go to
    :func:`photometry_columns`."""
    instruments = {s.name: s.instrument for s in sites if s.instrument is not None}
    out = {}
    for name, frame in frames.items():
        if name in instruments:
            joined = frame.join(photometry_columns(frame, instruments[name], **kwargs))
            joined.attrs.update(frame.attrs)
            out[name] = joined
        else:
            out[name] = frame
    return out


def window_photometry(
    windows_df: pd.DataFrame, target: Target, sites: Sequence[Site], *, time_column: str = "best_utc",
    **kwargs: Any,
) -> pd.DataFrame:
    """Photometry columns for each observing window (``planner.windows.observable_windows`` rows),
    evaluated at ``time_column`` (the window's highest altitude by default), plus
    ``n_exposures_window``: whole exposures in min(``hours``, ``night_budget_h``) after one block
    overhead. One ``geometry()`` call per site, vectorised over its windows. Rows without a time
    (nights with no window) or at sites without an instrument are left blank.
    """
    from planner.ephemeris import geometry  # lazy: ephemeris → sites → photometry at import time

    parts = []
    by_name = {s.name: s for s in sites}
    for name, rows in windows_df.groupby("site", sort=False):
        site = by_name.get(name)
        rows = rows[rows[time_column].notna()]
        if site is None or site.instrument is None or rows.empty:
            continue
        times = rows[time_column].to_numpy(dtype="datetime64[ns]")
        geom = geometry(target, times, [site])[site.name]
        geom.index = rows.index
        phot = photometry_columns(geom, site.instrument, **kwargs)
        block_h = rows["hours"].to_numpy(dtype=float)
        if "night_budget_h" in rows:
            block_h = np.fmin(block_h, rows["night_budget_h"].to_numpy(dtype=float))
        n = exposures_per_block(block_h * 3600.0, phot["exposure_s"].to_numpy(dtype=float),
                                site.instrument.readout_s, site.instrument.overhead_s)
        phot["n_exposures_window"] = pd.array(np.where(phot["exposure_s"].notna(), n, np.nan), dtype="Int64")
        parts.append(phot)
    if not parts:
        return pd.DataFrame(index=windows_df.index)
    return pd.concat(parts).reindex(windows_df.index)


def mag_err_from_geometry(
    geom_df: pd.DataFrame, instrument: Instrument, *, comet: bool | None = None, **kwargs: Any
) -> np.ndarray:
    """Per-row photometric error (mag) for one site's geometry table: ``mag_err_pred`` of
    :func:`photometry_columns` with the same keyword arguments (pass ``exposure_s`` for a log)."""
    table = photometry_columns(geom_df, instrument, comet=comet, **kwargs)
    return table["mag_err_pred"].to_numpy(dtype=float)


def mag_err_for_times(
    target: Target,
    times_utc: np.ndarray,
    site_names: Sequence[str] | None,
    sites: Sequence[Site],
    *,
    exposure_s: np.ndarray | None = None,
    fallback_mag_err: float | None = None,
    **kwargs: Any,
) -> np.ndarray:
    """Modelled photometric error (mag) of each observation time, for injection–recovery.

    ``site_names[i]`` names the site of ``times_utc[i]`` (None: all at the one site given);
    ``exposure_s`` (optional, per point, NaN where unknown) takes logged exposures instead of the
    planned ones. Points at a site without an instrument or unknown to ``sites``, or with no
    prediction (target down, Sun up), get ``fallback_mag_err`` (NaN if None). Geometry from
    ``planner.ephemeris.geometry``; the other keywords go to :func:`photometry_columns`.
    """
    from planner.ephemeris import geometry  # lazy: ephemeris → sites → photometry at import time

    times = np.asarray(times_utc, dtype="datetime64[ns]")
    if site_names is None:
        if len(sites) != 1:
            raise ValueError("times without site names need exactly one site")
        site_names = [sites[0].name] * times.size
    names = np.asarray(site_names, dtype=object)
    if names.shape != times.shape:
        raise ValueError(f"{names.size} site names for {times.size} times")
    exp = None if exposure_s is None else np.broadcast_to(np.asarray(exposure_s, dtype=float), times.shape)
    out = np.full(times.shape, np.nan)
    by_name = {s.name: s for s in sites}
    for name in dict.fromkeys(names.tolist()):  # loop over sites, never over epochs
        site = by_name.get(name)
        if site is None or site.instrument is None:
            continue
        idx = np.flatnonzero(names == name)
        geom = geometry(target, times[idx], [site])[site.name]
        extra = dict(kwargs)
        if exp is not None:
            extra["exposure_s"] = exp[idx]
        out[idx] = mag_err_from_geometry(geom, site.instrument, **extra)
    if fallback_mag_err is not None:
        out = np.where(np.isfinite(out), out, float(fallback_mag_err))
    return out


def log_mag_err(
    target: Target | None,
    times_utc: np.ndarray,
    site_names: Sequence[str] | None,
    sites: Sequence[Site],
    *,
    logged_mag_err: np.ndarray | None,
    exposure_s: np.ndarray | None,
    fallback_mag_err: float,
    **kwargs: Any,
) -> tuple[np.ndarray, dict[str, int]]:
    """Photometric σ (mag) of each logged point and where each came from.

    Priority: the log's own ``mag_err``; else the model of the site's instrument (needs the target
    and an instrumented site, :func:`mag_err_for_times`); else ``fallback_mag_err``. Returns the
    σ array and the counts ``{"log": n, "model": n, "fallback": n}``.
    """
    times = np.asarray(times_utc, dtype="datetime64[ns]")
    err = np.full(times.shape, np.nan)
    if logged_mag_err is not None:
        err = np.asarray(logged_mag_err, dtype=float).copy()
    from_log = np.isfinite(err)
    model = np.full(times.shape, np.nan)
    if target is not None and sites and not from_log.all():
        model = mag_err_for_times(target, times, site_names, sites, exposure_s=exposure_s, **kwargs)
    from_model = ~from_log & np.isfinite(model)
    err = np.where(from_log, err, np.where(from_model, model, float(fallback_mag_err)))
    counts = {"log": int(from_log.sum()), "model": int(from_model.sum()),
              "fallback": int((~from_log & ~from_model).sum())}
    return err, counts
