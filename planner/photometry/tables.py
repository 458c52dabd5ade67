"""Exposure tables: photometry columns for geometry tables, observing windows and logged times.

Table entry points over the kernels of :mod:`planner.photometry.skybright` (Krisciunas & Schaefer
1991), :mod:`planner.photometry.ccd` (Merline & Howell 1995) and :mod:`planner.photometry.coma`
(A'Hearn et al. 1984): :func:`photometry_columns` (one site's geometry table),
:func:`add_photometry` (a whole ``geometry()`` result), :func:`window_photometry` (observing
windows). The σ of frames at given times (planned, or a log's own) is in
:mod:`planner.photometry.frames`.
Twilight is not modelled: rows with the Sun above ``max_sun_alt_deg`` (default −12°) get no
prediction.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from planner.core.bands import SOLAR_COLOURS, SUN_MAG_BY_BAND, band_of_filter, colour_term_mag
from planner.inputs.settings import ExposureRules
from planner.inputs.sites import Instrument, Site
from planner.inputs.targets import Target
from planner.photometry.ccd import (
    aperture_pixels,
    ccd_snr,
    exposure_for_snr_s,
    exposures_per_block,
    gaussian_enclosed_fraction,
    mag_err_from_snr,
    sky_rate_e_per_s_pix,
    snr_from_mag_err,
    source_rate_e_per_s,
    trail_limit_s,
)
from planner.photometry.coma import (
    COMA_APERTURE_KM,
    COMA_RADIUS_KM,
    afrho_cm,
    aperture_radius_arcsec,
    coma_aperture_mag,
)
from planner.photometry.skybright import sky_mag_arcsec2
from planner.sky.brightness import LAW_HG, LAW_NUCLEAR, LAW_TOTAL
from planner.sky.geometry import geometry

#: The exposure rules a call without its own uses (the settings type's defaults).
DEFAULT_RULES = ExposureRules()

# --------------------------------------------------------------------------------------------
# The table entry point
# --------------------------------------------------------------------------------------------

#: Columns added by :func:`photometry_columns`, in order.
PHOTOMETRY_COLUMNS = (
    "band",
    "mag_band_pred",
    "sky_mag_arcsec2",
    "aperture_arcsec",
    "aperture_km",
    "trail_limit_s",
    "exposure_s",
    "exposure_limited_by",
    "snr_pred",
    "mag_err_pred",
    "n_stack_for_snr",
    "n_exposures_per_hour",
)

_GEOMETRY_NEEDS = (
    "mag_pred",
    "airmass",
    "alt_deg",
    "moon_alt_deg",
    "moon_sep_deg",
    "moon_illum",
    "sun_alt_deg",
    "motion_arcsec_per_min",
    "km_per_arcsec",
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


def band_mag(geom_df: pd.DataFrame, band: str, colours: dict[str, float] | None = None) -> np.ndarray:
    """The predicted magnitude in ``band``: ``mag_pred`` (in the law's band, ``attrs["law_band"]``, V when
    absent) plus the target's colour term between the two bands (:func:`planner.core.bands.colour_term_mag`).

    Colours: ``colours`` when given, else ``attrs["colour_indices"]`` (set by ``geometry()`` from the
    target), else the Sun's.
    """
    law_band = geom_df.attrs.get("law_band", "V")
    if colours is None:
        colours = geom_df.attrs.get("colour_indices") or SOLAR_COLOURS
    return geom_df["mag_pred"].to_numpy(dtype=float) + colour_term_mag(law_band, band, colours)


def photometry_columns(
    geom_df: pd.DataFrame,
    instrument: Instrument,
    rules: ExposureRules = DEFAULT_RULES,
    *,
    colours: dict[str, float] | None = None,
    comet: bool | None = None,
    point_source: bool | None = None,
    mag_err_target: float | None = None,
    aperture_arcsec: float | None = None,
    aperture_km: float | None = None,
    trail_fraction: float = 0.5,
    exposure_s: np.ndarray | float | None = None,
    mag_err_floor: float = 0.0,
    max_sun_alt_deg: float = -12.0,
    coma_radius_km: float = COMA_RADIUS_KM,
) -> pd.DataFrame:
    """Exposure plan and expected precision for every row of one site's geometry table.

    ``geom_df`` carries the geometry columns of docs/formats.md (``mag_pred``, ``airmass``,
    ``alt_deg``, ``moon_alt_deg``, ``moon_sep_deg``, ``moon_illum``, ``sun_alt_deg``,
    ``motion_arcsec_per_min``, ``km_per_arcsec``; ``helio_dist_au`` and ``obs_dist_au`` for comets).
    Returns a new DataFrame with the same index holding :data:`PHOTOMETRY_COLUMNS` (plus
    ``afrho_cm`` when ``comet``); join it to the geometry.

    Every prediction is made in the instrument's band: ``mag_band_pred`` is ``mag_pred`` (in the law's
    band) plus the target's colour term (:func:`band_mag`; ``colours`` overrides the table's), and S/N,
    exposure and Afρ use it, with the Sun's magnitude in the same band for Afρ.

    ``comet`` and ``point_source`` default from ``geom_df.attrs["mag_law"]`` (set by
    ``planner.sky.geometry.geometry``): a comet's total magnitude (M1, K1) is coma light, counted out
    to ``coma_radius_km`` with a 1/ρ profile (:func:`coma_aperture_mag`), measured by default in a
    fixed 10 000 km aperture; a nuclear (M2, K2) or H,G magnitude is a point source, of which a
    Gaussian-seeing fraction falls in the aperture (default radius: the seeing FWHM). Afρ is given
    for coma magnitudes only (NaN for a nuclear magnitude: a bare nucleus has no Afρ); with the
    1/ρ coma it does not depend on the aperture.

    Model: sky from :func:`sky_mag_arcsec2` (Krisciunas & Schaefer 1991); S/N and exposure from
    the CCD equation (Merline & Howell 1995). The exposure reaching ``rules.snr_target`` (or
    ``mag_err_target``) is clipped to [``rules.min_exposure_s``, min(``rules.max_exposure_s``, trailing
    limit)]; the trailing limit always wins. ``exposure_s`` given (e.g. from a log; per row, NaN
    where unknown) replaces the plan where finite and only the S/N is evaluated there. Rows with
    the target at or below the horizon or the Sun above ``max_sun_alt_deg`` get NaN predictions.
    """
    comet, point_source = _source_kind(geom_df, comet, point_source)
    missing = [
        c for c in _GEOMETRY_NEEDS + (("helio_dist_au", "obs_dist_au") if comet else ()) if c not in geom_df.columns
    ]
    if missing:
        raise ValueError(f"geometry table lacks column(s) {', '.join(missing)}")
    snr_target = rules.snr_target
    min_exposure_s, max_exposure_s = rules.min_exposure_s, rules.max_exposure_s
    if mag_err_target is not None:
        snr_target = snr_from_mag_err(mag_err_target)
    if not snr_target > 0:
        raise ValueError(f"target S/N {snr_target} must be positive")
    if not 0 < min_exposure_s <= max_exposure_s:
        raise ValueError(f"exposure bounds [{min_exposure_s}, {max_exposure_s}] s: need 0 < min <= max")
    inst = instrument
    band = band_of_filter(inst.filter)
    col = {c: geom_df[c].to_numpy(dtype=float) for c in _GEOMETRY_NEEDS}

    mag_band = band_mag(geom_df, band, colours)
    usable = (col["alt_deg"] > 0.0) & (col["sun_alt_deg"] <= max_sun_alt_deg) & np.isfinite(mag_band)
    sky = sky_mag_arcsec2(
        inst.sky_mag_per_arcsec2,
        col["alt_deg"],
        col["moon_alt_deg"],
        col["moon_sep_deg"],
        col["moon_illum"],
        inst.extinction_mag_per_airmass,
        band,
    )
    if not point_source and aperture_arcsec is None and aperture_km is None:
        aperture_km = COMA_APERTURE_KM  # coma: a fixed physical radius by default
    ap_arcsec, ap_km = aperture_radius_arcsec(
        col["km_per_arcsec"],
        aperture_arcsec=aperture_arcsec,
        aperture_km=aperture_km,
        default_arcsec=inst.seeing_arcsec,
    )
    n_pix = aperture_pixels(ap_arcsec, inst.pixel_scale_arcsec)
    # Magnitude of the light inside the aperture.
    if point_source:
        mag_in_aperture = mag_band - 2.5 * np.log10(gaussian_enclosed_fraction(ap_arcsec, inst.seeing_arcsec))
    else:
        mag_in_aperture = coma_aperture_mag(mag_band, ap_km, coma_radius_km)
    rate = source_rate_e_per_s(mag_in_aperture, inst.zero_point_mag, inst.extinction_mag_per_airmass, col["airmass"])
    sky_rate = sky_rate_e_per_s_pix(sky, inst.zero_point_mag, inst.pixel_scale_arcsec)
    noise = dict(
        dark_e_per_s_pix=inst.dark_e_per_s,
        read_noise_e=inst.read_noise_e,
        n_pix=n_pix,
        gain_e_per_adu=inst.gain_e_per_adu,
    )

    trail = trail_limit_s(col["motion_arcsec_per_min"], inst.seeing_arcsec, trail_fraction, inst.nonsidereal_tracking)
    wanted = exposure_for_snr_s(snr_target, rate, sky_rate, **noise)
    upper = np.minimum(max_exposure_s, trail)
    t = np.minimum(np.maximum(wanted, min_exposure_s), upper)
    # What set the exposure: the S/N goal, the trailing cap (it wins even below the floor), the floor
    # (S/N above goal) or the ceiling.
    limited = np.select(
        [np.isclose(t, wanted, rtol=1e-12, atol=0.0), t == trail, t > wanted],
        ["snr", "trailing", "min_exposure"],
        "max_exposure",
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
    out["band"] = band
    out["mag_band_pred"] = mag_band
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
            mag_in_aperture,
            SUN_MAG_BY_BAND[band],
            geom_df["helio_dist_au"].to_numpy(dtype=float),
            geom_df["obs_dist_au"].to_numpy(dtype=float),
            ap_km,
        )
        out["afrho_cm"] = np.full(afrho.shape, np.nan) if point_source else afrho
    return out


def add_photometry(frames: dict[str, pd.DataFrame], sites: Sequence[Site], **kwargs: Any) -> dict[str, pd.DataFrame]:
    """Geometry frames (``planner.sky.geometry.geometry`` output) with :func:`photometry_columns` joined
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
    windows_df: pd.DataFrame,
    target: Target,
    sites: Sequence[Site],
    *,
    time_column: str = "best_utc",
    **kwargs: Any,
) -> pd.DataFrame:
    """Photometry columns for each observing window (``planner.visibility.windows.observable_windows`` rows),
    evaluated at ``time_column`` (the window's highest altitude by default), plus
    ``n_exposures_window``: whole exposures in min(``hours``, ``night_budget_h``) after one block
    overhead. One ``geometry()`` call per site, vectorised over its windows. Rows without a time
    (nights with no window) or at sites without an instrument are left blank.
    """
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
        n = exposures_per_block(
            block_h * 3600.0,
            phot["exposure_s"].to_numpy(dtype=float),
            site.instrument.readout_s,
            site.instrument.overhead_s,
        )
        phot["n_exposures_window"] = pd.array(np.where(phot["exposure_s"].notna(), n, np.nan), dtype="Int64")
        parts.append(phot)
    if not parts:
        return pd.DataFrame(index=windows_df.index)
    return pd.concat(parts).reindex(windows_df.index)
