"""The CCD equation: signal-to-noise, exposure time for a goal S/N, trailing and block capacity.

Signal-to-noise after Merline, W. J. & Howell, S. B. (1995), Experimental Astronomy 6, 163, as given
in Howell, S. B. (2006), Handbook of CCD Astronomy, 2nd ed., §4.4. Magnitudes follow Pogson (1856):
a difference Δm is a flux ratio 10^(0.4 Δm).
"""

from __future__ import annotations

import math

import numpy as np

#: Pogson (1856): flux ratio per magnitude is 10^0.4 ≈ 2.512.
POGSON_RATIO = 10.0**0.4

#: σ_m ≈ 2.5 log10(e) / SNR = 1.0857 / SNR (Howell 2006, §5.1; first order in 1/SNR).
MAG_ERR_TIMES_SNR = 2.5 / math.log(10.0)

#: Merline & Howell (1995): rms error of the analogue-to-digital conversion, in ADU (≈ 1/√12).
DIGITISATION_SIGMA_ADU = 0.289


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
    snr: float,
    source_e_per_s: float,
    sky_e_per_s_pix: float,
    dark_e_per_s_pix: float,
    read_noise_e: float,
    n_pix: float,
    *,
    gain_e_per_adu: float = 0.0,
    n_background_pix: float | None = None,
) -> float:
    """Slow twin of :func:`exposure_for_snr_s`: bisection on the monotone S/N(t), one point at a time."""

    def snr_at(t: float) -> float:
        return float(
            ccd_snr(
                source_e_per_s,
                sky_e_per_s_pix,
                dark_e_per_s_pix,
                read_noise_e,
                n_pix,
                t,
                gain_e_per_adu=gain_e_per_adu,
                n_background_pix=n_background_pix,
            )
        )

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
    motion_arcsec_per_min: np.ndarray | float,
    seeing_arcsec: float,
    fraction: float = 0.5,
    nonsidereal_tracking: bool = False,
) -> np.ndarray:
    """Longest exposure before the target trails by ``fraction`` of the seeing on a sidereally
    tracked frame: t = fraction × seeing / motion (common practice; half the seeing by default).
    Infinite when the mount tracks the target or the target does not move.
    """
    motion = np.abs(np.asarray(motion_arcsec_per_min, dtype=float)) / 60.0  # arcsec per second
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
