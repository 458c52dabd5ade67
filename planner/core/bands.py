"""Photometric bands: the filter names site files may give, and the Sun's magnitude in each band.

Shared by the input loaders (a site's filter is checked on load) and by photometry (sky colour,
Afρ), so it lives at the bottom of the package. Magnitudes follow Pogson (1856).
"""

from __future__ import annotations

import math

#: Apparent magnitude of the Sun at 1 au per filter. Johnson–Cousins (Vega) values from the
#: absolute magnitudes in Binney & Merrifield (1998), Galactic Astronomy, Table 2.1 (memory):
#: U 5.61, B 5.48, V 4.83, R 4.42, I 4.08, minus the distance modulus of 1 au, 31.572.
#: SDSS (AB) values from Willmer (2018), ApJS 236, 47 (memory): u 6.39, g 5.11, r 4.65, i 4.53,
#: z 4.50, minus 31.572. Unfiltered ("clear") CCD photometry is reduced to R (common practice).
SUN_ABS_MAG_BY_BAND = {
    "U": 5.61,
    "B": 5.48,
    "V": 4.83,
    "R": 4.42,
    "I": 4.08,
    "u": 6.39,
    "g": 5.11,
    "r": 4.65,
    "i": 4.53,
    "z": 4.50,
}
AU_DISTANCE_MODULUS_MAG = 5.0 * math.log10(1.0 / (648000.0 / math.pi) / 10.0)  # 1 au in pc, over 10 pc
SUN_MAG_BY_BAND = {b: round(m + AU_DISTANCE_MODULUS_MAG, 3) for b, m in SUN_ABS_MAG_BY_BAND.items()}

#: Filter names accepted in site files, mapped to the band used for solar colours and Afρ.
FILTER_BANDS = {
    "U": "U",
    "B": "B",
    "V": "V",
    "R": "R",
    "I": "I",
    "Rc": "R",
    "R_C": "R",
    "Ic": "I",
    "I_C": "I",
    "u": "u",
    "g": "g",
    "r": "r",
    "i": "i",
    "z": "z",
    "u'": "u",
    "g'": "g",
    "r'": "r",
    "i'": "i",
    "z'": "z",
    "sdss_u": "u",
    "sdss_g": "g",
    "sdss_r": "r",
    "sdss_i": "i",
    "sdss_z": "z",
    "clear": "R",
    "C": "R",
    "L": "R",
    "none": "R",
}


def band_of_filter(filter_name: str) -> str:
    """Photometric band (key of :data:`SUN_MAG_BY_BAND`) for a site's filter name; KeyError if unknown."""
    return FILTER_BANDS[filter_name]
