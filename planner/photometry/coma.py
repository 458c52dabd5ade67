"""Photometric apertures of fixed angular or physical size, coma light inside them, and Afρ.

A'Hearn, M. F. et al. (1984), AJ 89, 579: the dust proxy Afρ, and the steady 1/ρ coma that sets how
a comet's total magnitude divides among apertures.
"""

from __future__ import annotations

import numpy as np

from planner.core.constants import AU_CM


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
