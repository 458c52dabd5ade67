"""Atmospheric refraction: apparent altitudes from true (airless) ones, with the air at the site.

- Refraction from the true altitude h (degrees): Sæmundsson, Þ. (1986), Sky & Telescope 72, 70,
  R = 1.02′ / tan(h + 10.3° / (h + 5.11°)), for 1010 hPa and 10 °C, scaled by (P / 1010)(283 / (273 + T))
  for other air (Meeus, J. 1998, Astronomical Algorithms, 2nd ed., ch. 16). It agrees with Bennett's
  (1982, Journal of Navigation 35, 255) formula from the apparent altitude to 0.1′, and Bennett's is
  accurate to 0.07′ from 0° to 90° (Meeus, ch. 16).
- The air at a site that gives no ``pressure_hpa`` / ``temperature_c``: the troposphere of the U.S.
  Standard Atmosphere (1976), T = 15 °C − 6.5 °C/km × height, P = 1013.25 hPa × (1 − 0.0065 h/288.15)^5.25588.

Near the zenith the formula dips below zero by at most 0.12″; it is clipped at 0. Below a true altitude
of −1° it is outside its range (no line of sight from a low site goes there): R fades linearly from its
value at −1° (≈ 39′ at 1010 hPa, 10 °C) to 0 at −2° (our choice), which keeps the apparent altitude
continuous and increasing with the true one.
"""

from __future__ import annotations

import numpy as np

from planner.inputs.sites import Site

#: Sea-level pressure and temperature of the U.S. Standard Atmosphere (1976).
SEA_LEVEL_PRESSURE_HPA = 1013.25
SEA_LEVEL_TEMPERATURE_C = 15.0
#: Its tropospheric lapse rate, K per metre, and the exponent g·M / (R·L) of the pressure law.
LAPSE_RATE_K_PER_M = 0.0065
PRESSURE_EXPONENT = 5.25588
#: The air the refraction formula is stated for (Meeus 1998, ch. 16).
FORMULA_PRESSURE_HPA = 1010.0
FORMULA_TEMPERATURE_C = 10.0
#: Lowest true altitude the formula is used at; R fades to 0 over the next degree below it.
LOWEST_FORMULA_ALT_DEG = -1.0
FADE_DEG = 1.0


def standard_air(height_m: float) -> tuple[float, float]:
    """(pressure hPa, temperature °C) of the U.S. Standard Atmosphere (1976) at ``height_m``."""
    temperature_k = 288.15 - LAPSE_RATE_K_PER_M * height_m
    pressure = SEA_LEVEL_PRESSURE_HPA * (temperature_k / 288.15) ** PRESSURE_EXPONENT
    return pressure, temperature_k - 273.15


def site_air(site: Site) -> tuple[float, float]:
    """The site's (pressure hPa, temperature °C): its own keys where given, else the standard atmosphere."""
    pressure, temperature = standard_air(site.height_m)
    return (
        pressure if site.pressure_hpa is None else site.pressure_hpa,
        temperature if site.temperature_c is None else site.temperature_c,
    )


def refraction_deg(
    true_alt_deg: np.ndarray | float,
    pressure_hpa: float = FORMULA_PRESSURE_HPA,
    temperature_c: float = FORMULA_TEMPERATURE_C,
) -> np.ndarray:
    """Refraction R (degrees) to add to a true altitude: Sæmundsson (1986) with Meeus's air factor."""
    alt = np.asarray(true_alt_deg, dtype=float)
    h = np.maximum(alt, LOWEST_FORMULA_ALT_DEG)
    r_arcmin = 1.02 / np.tan(np.radians(h + 10.3 / (h + 5.11)))
    fade = np.clip(1.0 + (alt - LOWEST_FORMULA_ALT_DEG) / FADE_DEG, 0.0, 1.0)
    scale = (pressure_hpa / FORMULA_PRESSURE_HPA) * (283.0 / (273.0 + temperature_c))
    return np.maximum(r_arcmin, 0.0) * fade * scale / 60.0


def apparent_alt_deg(
    true_alt_deg: np.ndarray | float,
    pressure_hpa: float = FORMULA_PRESSURE_HPA,
    temperature_c: float = FORMULA_TEMPERATURE_C,
) -> np.ndarray:
    """Apparent (refracted) altitude of a true altitude, degrees."""
    h = np.asarray(true_alt_deg, dtype=float)
    return h + refraction_deg(h, pressure_hpa, temperature_c)


def site_apparent_alt_deg(site: Site, true_alt_deg: np.ndarray | float) -> np.ndarray:
    """The altitude seen at the site: refracted with its air (:func:`site_air`), or the true altitude
    when the site file says ``refraction = false``."""
    h = np.asarray(true_alt_deg, dtype=float)
    if not site.refraction:
        return h.copy()
    return apparent_alt_deg(h, *site_air(site))
