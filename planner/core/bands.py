"""Photometric bands: the filter names site files may give, the Sun's magnitude in each band, and colours.

Shared by the input loaders (a site's filter is checked on load) and by photometry (sky colour,
Afρ, a target's magnitude in the instrument's band), so it lives at the bottom of the package.
Magnitudes follow Pogson (1856).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

#: Absolute magnitude of the Sun (at 10 pc) per band, from one table: Willmer, C. N. A. (2018), ApJS 236,
#: 47, "The Absolute Magnitude of the Sun in Several Filters", Table 3 (values from memory). Johnson–
#: Cousins U B V R I in the Vega system, SDSS u g r i z in the AB system, each band in the system its
#: photometry is reported in. Every value is confirmed within 0.04 mag (U: 0.08 mag, the band most
#: sensitive to the filter curve) by an independent route, synthetic photometry of the ASTM E490 solar
#: spectrum and the CALSPEC Vega spectrum through the bandpasses sbpy ships (tests/test_bands.py).
SUN_ABS_MAG_BY_BAND = {
    "U": 5.61,
    "B": 5.44,
    "V": 4.81,
    "R": 4.43,
    "I": 4.10,
    "u": 6.39,
    "g": 5.11,
    "r": 4.65,
    "i": 4.53,
    "z": 4.50,
}
#: The magnitude system of each band in :data:`SUN_ABS_MAG_BY_BAND` (and so of every magnitude phasewise
#: predicts in that band, e.g. ``mag_band_pred``).
BAND_SYSTEM = {b: ("Vega" if b in "UBVRI" else "AB") for b in SUN_ABS_MAG_BY_BAND}
#: Distance modulus of 1 au: 5 log10(1 au / 10 pc), with 1 pc = 648000/π au (IAU 2015 B2).
AU_DISTANCE_MODULUS_MAG = 5.0 * math.log10(1.0 / (648000.0 / math.pi) / 10.0)
#: Apparent magnitude of the Sun at 1 au per band (V: −26.76).
SUN_MAG_BY_BAND = {b: round(m + AU_DISTANCE_MODULUS_MAG, 3) for b, m in SUN_ABS_MAG_BY_BAND.items()}

#: Pivot wavelength of each band's filter curve, nm: √(∫T λ dλ / ∫T/λ dλ) for the Johnson/Cousins curves
#: of the STScI CDBS (v4) and the SDSS 2001 curves as sbpy ships them (recomputed in tests/test_bands.py).
#: Used only to interpolate a target's colour between the bands where it is given.
BAND_PIVOT_NM = {
    "U": 359.0,
    "B": 437.2,
    "V": 547.9,
    "R": 647.3,
    "I": 787.5,
    "u": 355.7,
    "g": 470.3,
    "r": 617.6,
    "i": 749.0,
    "z": 894.7,
}

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

#: The colour indices a target may give (Johnson–Cousins, Vega system).
COLOUR_KEYS = ("B-V", "V-R", "R-I")
#: The Sun's colours from :data:`SUN_ABS_MAG_BY_BAND`: B−V 0.63, V−R 0.38, R−I 0.33.
SOLAR_COLOURS = {
    "B-V": round(SUN_ABS_MAG_BY_BAND["B"] - SUN_ABS_MAG_BY_BAND["V"], 3),
    "V-R": round(SUN_ABS_MAG_BY_BAND["V"] - SUN_ABS_MAG_BY_BAND["R"], 3),
    "R-I": round(SUN_ABS_MAG_BY_BAND["R"] - SUN_ABS_MAG_BY_BAND["I"], 3),
}

#: Mean asteroid colours, the default of an asteroid target without its own: the mean of the C- and
#: S-type means (C: B−V 0.71, V−R 0.38, R−I 0.32; S: B−V 0.85, V−R 0.48, R−I 0.36), from memory of
#: the taxonomic colour means of Dandy, Fitzsimmons & Collander-Brown (2003), Icarus 163, 363, not
#: checked against the paper. Give the target's own colours when they are known: an S type is
#: ~0.05 mag redder in V−R than this, a C type ~0.05 mag bluer.
ASTEROID_MEAN_COLOURS = {"B-V": 0.78, "V-R": 0.43, "R-I": 0.34}


def band_of_filter(filter_name: str) -> str:
    """Photometric band (key of :data:`SUN_MAG_BY_BAND`) for a site's filter name; KeyError if unknown."""
    return FILTER_BANDS[filter_name]


def band_minus_v_mag(band: str, colours: Mapping[str, float]) -> float:
    """m_band − m_V of a body with Johnson–Cousins colours ``{"B-V", "V-R", "R-I"}``.

    The body's reflectance relative to the Sun, in magnitudes, is known at B, V, R and I from its
    colours minus the solar ones; it is interpolated linearly in pivot wavelength between them and
    held flat beyond B and I (our assumption, for U, u and z). The magnitude in ``band`` is then
    V + (the Sun's band − V colour, from :data:`SUN_MAG_BY_BAND`) + that reflectance term, in the band's
    own system (:data:`BAND_SYSTEM`). For B, R and I this is exactly V + B−V, V − V−R, V − V−R − R−I;
    for a body of solar colours it is the Sun's colour in every band.
    """
    excess_r = -(colours["V-R"] - SOLAR_COLOURS["V-R"])
    excess = [
        colours["B-V"] - SOLAR_COLOURS["B-V"],
        0.0,
        excess_r,
        excess_r - (colours["R-I"] - SOLAR_COLOURS["R-I"]),
    ]
    reflectance = float(np.interp(BAND_PIVOT_NM[band], [BAND_PIVOT_NM[b] for b in "BVRI"], excess))
    return SUN_MAG_BY_BAND[band] - SUN_MAG_BY_BAND["V"] + reflectance


def colour_term_mag(from_band: str, to_band: str, colours: Mapping[str, float]) -> float:
    """m_to − m_from for a body with these colours: what turns a magnitude in one band into another."""
    return band_minus_v_mag(to_band, colours) - band_minus_v_mag(from_band, colours)
