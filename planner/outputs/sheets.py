"""Per-site observing sheets: plain text an observer prints and takes to the telescope."""

from __future__ import annotations

import math

import pandas as pd

from planner.core.safety import CAUTION_TEXT, SUN_SAFETY_TEXT
from planner.core.textfmt import clock_hm, dec_dms, fixed, ra_hms
from planner.inputs.sites import Site
from planner.outputs.tablefiles import table_for_files
from planner.pipeline import PlanResult


def block_band_mag(r) -> tuple[float, str]:
    """A block's predicted magnitude and its band: the site instrument's when it has one, else the
    brightness law's (band ``""``)."""
    band, m = str(getattr(r, "band", "") or ""), getattr(r, "mag_band_pred", float("nan"))
    if band and isinstance(m, float) and math.isfinite(m):
        return m, band
    return r.mag_pred, ""


def _mag_words(r) -> str:
    """The predicted magnitude as the observer needs it: in the instrument's band when the site has one."""
    m, band = block_band_mag(r)
    return f"{m:.1f} in {band} ({r.mag_pred:.1f} in the brightness law's band)" if band else f"{m:.1f}"


def _block_cautions(r, max_airmass: float) -> list[str]:
    """The block's cautions (its ``cautions`` column) in words, with the numbers that raised them."""
    detail = {
        "sun": f"target only {r.solar_elong_deg:.0f} deg from the Sun",
        "twilight": f"Sun up to {r.max_sun_alt_deg:.0f} deg during the block",
        "airmass": f"airmass reaches {r.max_airmass:.1f} (campaign limit {max_airmass:g})",
        "moon": f"Moon {r.moon_sep_deg:.0f} deg away, {100 * r.moon_illum:.0f}% lit",
    }
    return [f"{detail[k]}: {CAUTION_TEXT[k]}" for k in str(r.cautions or "").split(";") if k]


def _sheet_notes(rows: pd.DataFrame) -> list[str]:
    """Cautions that hold for the whole sheet, said once: trailing caps and missing exposure predictions."""
    out = []
    if len(rows) and (rows["exposure_limited_by"] == "trailing").any():
        out.append(
            "CAUTION: exposures marked (trailing) are capped so the target trails by at most half the "
            "seeing on a sidereally tracked frame; track at the given rates to expose longer"
        )
    exp = pd.to_numeric(rows["exposure_s"], errors="coerce") if len(rows) else pd.Series(dtype=float)
    if len(rows) and exp.isna().any():
        out.append(
            "NOTE: blocks without an exposure time have no prediction (no instrument in the site file or "
            "the target too faint): set the exposure by hand"
        )
    return out


def _positions(r) -> list[str]:
    """Where to point at science start, mid-science and the block's end: astrometric (J2000) and of date."""
    start = pd.Timestamp(r.science_start_utc)
    mid = start + (pd.Timestamp(r.end_utc) - start) / 2
    rows = [
        ("start", r.science_start_utc, r.start_ra_deg, r.start_dec_deg, r.start_ra_app_deg, r.start_dec_app_deg),
        ("middle", mid.isoformat(), r.ra_deg, r.dec_deg, r.ra_app_deg, r.dec_app_deg),
        ("end", r.end_utc, r.end_ra_deg, r.end_dec_deg, r.end_ra_app_deg, r.end_dec_app_deg),
    ]
    out = [f"    {'point':<7}{'UTC':<7}{'RA J2000':<14}{'Dec J2000':<13}{'RA of date':<14}Dec of date"]
    for label, utc, ra, dec, ra_app, dec_app in rows:
        out.append(
            f"    {label:<7}{clock_hm(utc):<7}{ra_hms(ra):<14}{dec_dms(dec):<13}{ra_hms(ra_app):<14}{dec_dms(dec_app)}"
        )
    return out


def block_lines(r, max_airmass: float, pointing: bool = True) -> list[str]:
    """What an observer needs for one block (a row of plan.csv as the files hold it): pointing, tracking,
    altitude and Moon, exposures, and its cautions in words. The sheets and the calendars share them."""
    capped = " (trailing)" if r.exposure_limited_by == "trailing" else ""
    exp = (
        f"{r.n_exposures} x {r.exposure_s:.0f} s{capped}"
        if isinstance(r.exposure_s, float) and math.isfinite(r.exposure_s)
        else f"{r.n_exposures} exposures (exposure time not predicted)"
    )
    point = [f"point (mid-block): RA {ra_hms(r.ra_deg)}  Dec {dec_dms(r.dec_deg)}"] if pointing else []
    return [
        *point,
        f"track: {r.motion_arcsec_per_min:.2f} arcsec/min at PA {r.motion_pa_deg:.0f} deg "
        f"(RA*cos(Dec) {r.ra_rate_arcsec_per_min:+.3f}, Dec {r.dec_rate_arcsec_per_min:+.3f} arcsec/min)",
        f"altitude {r.min_alt_deg:.0f}-{r.max_alt_deg:.0f} deg, airmass {r.min_airmass:.2f}-"
        f"{r.max_airmass:.2f}; Moon {r.moon_sep_deg:.0f} deg away, {100 * r.moon_illum:.0f}% lit",
        f"exposures: {exp}; predicted mag {_mag_words(r)}, S/N per exposure {fixed(r.snr_pred, '.0f').strip()}",
        *(f"CAUTION: {c}" for c in _block_cautions(r, max_airmass)),
    ]


def site_sheet(result: PlanResult, site: Site) -> str:
    """Plain-text observing sheet for one site: nights, blocks (local and UTC), pointing, rates, cautions."""
    camp = result.campaign
    b = result.blocks[result.blocks["site"] == site.name]
    t = table_for_files(b)
    lines = [
        f"OBSERVING SHEET - {site.name}",
        f"campaign: {camp.name}    target: {result.target_name or '-'}"
        + (f" (file {camp.target_path.name})" if camp.target_path else ""),
        f"site: lat {site.latitude_deg:+.3f}  lon {site.longitude_deg:+.3f}  time zone {site.timezone}",
        f"times: local ({site.timezone}) and UTC; each block starts with {camp.block_rules.setup_minutes:g} min "
        "of set-up (slew, focus, acquisition), exposures start after it",
        "coordinates: at science start, mid-science and block end; astrometric RA/Dec (ICRF, equinox J2000), "
        "as a star catalogue gives them, and apparent RA/Dec of date (true equator and equinox of date, "
        "aberration included), for a mount that points in the date's coordinates",
        "",
        "SAFETY: " + SUN_SAFETY_TEXT,
        *_sheet_notes(t),
        "",
    ]
    by_night: dict = {}  # one pass of itertuples: per night it would build a row class per group
    for r in t.itertuples(index=False):
        by_night.setdefault(r.night, []).append(r)
    notes = (
        result.nights[result.nights["site"] == site.name]
        if result.nights is not None and len(result.nights)
        else pd.DataFrame({"night": sorted(by_night), "note": ""})
    )
    if not len(notes) and not by_night:
        lines.append("No blocks for this site in this plan.")
    observed = notes["observed_h"] if "observed_h" in notes else pd.Series(0.0, index=notes.index)
    for night, note, obs_h in zip(notes["night"], notes["note"], observed.fillna(0.0), strict=True):
        rows = by_night.get(night)
        if rows is None:
            lines += [f"Night of {night} (local evening date): no block. {note[:1].upper() + note[1:]}", ""]
            continue
        lines.append(f"Night of {night} (local evening date)")
        if obs_h > 0:  # re-planned: the log already holds time on this night; the blocks come after it
            lines.append(f"  already observed this night: {obs_h:.2f} h (observation log); the blocks below follow it")
        for k, r in enumerate(rows, 1):
            lines += [
                f"  Block {k}: {clock_hm(r.start_local)}-{clock_hm(r.end_local)} local  "
                f"({clock_hm(r.start_utc)}-{clock_hm(r.end_utc)} UTC, {r.hours:.2f} h); "
                f"science from {clock_hm(r.science_start_utc)} UTC",
                *_positions(r),
                *(f"    {line}" for line in block_lines(r, camp.photometry.max_airmass, pointing=False)),
            ]
        lines.append("")
    return "\n".join(lines) + "\n"
