"""Sun safety and the other observing cautions: one wording and one set of thresholds everywhere.

Pointing a telescope near the Sun can destroy equipment and blind people. Every output that touches
it (``ephem``, ``windows``, ``check``, the plan's printed table, observing sheets and report) shows
the same caution and flags the same rows, from the thresholds below. They are cautions, never
permissions: the observatory's own rules and licensed practice always decide.
"""

from __future__ import annotations

import numpy as np

#: The one Sun-safety sentence, shown wherever an output touches low solar elongation or twilight.
SUN_SAFETY_TEXT = (
    "Pointing a telescope near the Sun can destroy equipment and blind people: follow the observatory's "
    "own rules and licensed practice, which always prevail over phasewise."
)
#: A site's Sun-avoidance limit (least solar elongation, deg) when its file gives none.
DEFAULT_MIN_SOLAR_ELONG_DEG = 30.0
#: A row within this margin above its site's Sun limit carries the Sun caution (common practice).
SUN_CAUTION_MARGIN_DEG = 10.0
#: A block with the Sun above this altitude at either end is in bright twilight: nautical twilight
#: begins at −12° (Explanatory Supplement to the Astronomical Almanac).
TWILIGHT_CAUTION_SUN_ALT_DEG = -12.0
#: A block closer than this to a Moon at least :data:`MOON_CAUTION_MIN_ILLUM` lit gets the Moon caution
#: (common practice: a bright, graded sky background).
MOON_CAUTION_SEP_DEG = 45.0
MOON_CAUTION_MIN_ILLUM = 0.3

#: What each caution kind says, for sheets, the printed plan and the report alike.
CAUTION_TEXT = {
    "sun": "close to the Sun: keep well clear of the Sun's side of the sky and never slew across the Sun",
    "twilight": "in twilight: keep clear of the Sun's side of the sky and watch the sky brightness",
    "airmass": "low in the sky: expect extinction changes and take comparison stars",
    "moon": "near a bright Moon: expect a bright, graded sky background",
}


def sun_caution_limit_deg(min_solar_elong_deg: float | np.ndarray) -> np.ndarray:
    """Solar elongation below which a row carries the Sun caution: the site's limit plus the margin."""
    return np.asarray(min_solar_elong_deg, dtype=float) + SUN_CAUTION_MARGIN_DEG


def near_sun(solar_elong_deg: np.ndarray | float, min_solar_elong_deg: np.ndarray | float) -> np.ndarray:
    """True where the target is within the caution margin of the site's Sun limit (or closer)."""
    return np.asarray(solar_elong_deg, dtype=float) < sun_caution_limit_deg(min_solar_elong_deg)


def block_caution_kinds(
    solar_elong_deg: np.ndarray,
    min_solar_elong_deg: np.ndarray | float,
    max_sun_alt_deg: np.ndarray,
    max_airmass: np.ndarray,
    airmass_limit: float,
    moon_sep_deg: np.ndarray,
    moon_illum: np.ndarray,
) -> list[str]:
    """Per block, the caution kinds that apply (keys of :data:`CAUTION_TEXT`), joined by ``;``.

    Vectorised over blocks: Sun within the margin of the site's limit, Sun above
    :data:`TWILIGHT_CAUTION_SUN_ALT_DEG` at the block's brightest moment, airmass above the campaign's
    soft limit, a lit Moon nearer than :data:`MOON_CAUTION_SEP_DEG`. NaN never triggers a caution.
    """
    with np.errstate(invalid="ignore"):
        flags = {
            "sun": near_sun(solar_elong_deg, min_solar_elong_deg),
            "twilight": np.asarray(max_sun_alt_deg, dtype=float) > TWILIGHT_CAUTION_SUN_ALT_DEG,
            "airmass": np.asarray(max_airmass, dtype=float) > airmass_limit,
            "moon": (np.asarray(moon_sep_deg, dtype=float) < MOON_CAUTION_SEP_DEG)
            & (np.asarray(moon_illum, dtype=float) >= MOON_CAUTION_MIN_ILLUM),
        }
    n = np.size(solar_elong_deg)
    return [";".join(k for k, v in flags.items() if v[i]) for i in range(n)]


def low_elongation_note(n_low: int, n_total: int, limit_deg: float) -> str:
    """The line printed when some epochs or times fall below a Sun limit."""
    return f"CAUTION: solar elongation below {limit_deg:g} deg at {n_low} of {n_total} epochs. " + SUN_SAFETY_TEXT
