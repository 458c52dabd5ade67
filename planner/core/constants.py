"""Physical and astronomical constants shared by every stage, each with its source.

Kept at the bottom of the package so that input loaders (which check orbits) and the sky kernels
(which propagate them) read the same numbers without importing each other.
"""

from __future__ import annotations

import math

#: Gaussian gravitational constant k (IAU 1976), au^(3/2) / day.
GAUSS_K = 0.01720209895
#: GM of the Sun in au³/day², = k², equal to DE421's GMS (Folkner, Williams & Boggs 2008).
GM_SUN_AU3_D2 = GAUSS_K * GAUSS_K
#: Obliquity of the ecliptic at J2000 (IAU 1976), degrees.
OBLIQUITY_J2000_DEG = 84381.448 / 3600.0
#: The astronomical unit in metres (IAU 2012 Resolution B2, exact).
AU_M = 149_597_870_700.0
#: The astronomical unit in km and cm.
AU_KM = AU_M / 1000.0
AU_CM = AU_M * 100.0
#: Speed of light, au/day (IAU 2009: c = 299 792 458 m/s; au from IAU 2012 B2).
C_AU_PER_DAY = 299_792_458.0 * 86400.0 / AU_M
#: Arcseconds in a radian.
ARCSEC_PER_RAD = 648_000.0 / math.pi
#: km subtended by 1″ at 1 au: 1 au × π/648000 (≈ 725.27 km).
KM_PER_ARCSEC_AT_1AU = AU_KM / ARCSEC_PER_RAD
