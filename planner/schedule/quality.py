"""Photometric quality of each candidate slot: the precision 1/σ² of one light-curve point (the
frames of one slot stacked), with an error term that grows with airmass, and a soft airmass limit.

``σ_point² = σ_frame² / n_frames + (s · X)²``

- ``σ_frame``: per-exposure error from the CCD equation (planner.photometry.tables.photometry_columns,
  Merline & Howell 1995); ``n_frames = ⌊slot / (exposure + readout)⌋`` frames are stacked per slot.
- ``s · X``: what extinction leaves behind. Bouguer's law ``m = m0 + k X`` turns an error ``δk`` in
  the extinction coefficient (it drifts within a night and changes from night to night) into an
  error ``δk · X`` in the magnitude (e.g. Sterken & Manfroid 1992, *Astronomical Photometry: A
  Guide*, ch. 4, from memory), so this part grows in proportion to airmass. Differential photometry
  against field stars removes most of it; what remains is a few millimag per airmass (common
  practice: comet light curves against field stars rarely beat a few mmag), the default of ``s``.

Without the airmass term a large telescope's photon-noise precision (S/N in the hundreds) would
outweigh every other site, which no photometrist would believe: the systematic part caps it.

Slot *quality* is that precision over the best precision among the campaign's slots, in (0, 1], and
0 above ``max_airmass`` (a soft limit: photometrists keep X below ~2 where they can, common practice;
such slots still count for phase coverage, they only earn no quality credit).
"""

from __future__ import annotations

import numpy as np

from planner.inputs.settings import ExposureRules
from planner.inputs.sites import Site
from planner.inputs.targets import Target
from planner.photometry.points import point_sigma_mag
from planner.photometry.tables import photometry_columns
from planner.schedule.slots import SlotGrid
from planner.sky.geometry import geometry


def slot_quality(precision: np.ndarray, airmass: np.ndarray, max_airmass: float, best_precision: float) -> np.ndarray:
    """Quality in [0, 1]: ``precision / best_precision``, 0 above ``max_airmass`` or where unknown."""
    p = np.asarray(precision, dtype=float)
    x = np.asarray(airmass, dtype=float)
    ok = np.isfinite(p) & (p > 0) & np.isfinite(x) & (x <= max_airmass)
    return np.where(ok, np.clip(p / best_precision, 0.0, 1.0), 0.0) if best_precision > 0 else np.zeros_like(p)


def slot_quality_slow(precision, airmass, max_airmass: float, best_precision: float) -> np.ndarray:
    """Slow twin of :func:`slot_quality`: slot by slot, in plain Python."""
    out = []
    for p, x in zip(np.ravel(precision).tolist(), np.ravel(airmass).tolist(), strict=True):
        good = best_precision > 0 and p == p and x == x and p > 0 and x <= max_airmass
        out.append(min(max(p / best_precision, 0.0), 1.0) if good else 0.0)
    return np.array(out, dtype=float)


def part_slot_centres(grid: SlotGrid, p: int) -> np.ndarray:
    """UTC centres of every slot from a site-night's first usable slot to its last (datetime64[ns])."""
    lo, hi = grid.site_nights[p].intervals[0][0], grid.site_nights[p].intervals[-1][1]
    return grid.slot_time(np.arange(lo, hi)) + np.timedelta64(int(round(grid.slot_s * 0.5e9)), "ns")


def slot_precision(
    grid: SlotGrid, target: Target, sites: tuple[Site, ...] | list[Site], rules: ExposureRules
) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """Per site-night, over its slot span (first to last usable slot): precision 1/σ² (mag⁻²) of a
    stacked point and the airmass, at slot centres. One geometry call per site.

    A site without an instrument description gets the airmass term alone (σ = s·X).
    """
    by_name = {s.name: s for s in sites}
    comet = getattr(target, "kind", "comet") == "comet"
    precision: list[np.ndarray] = [np.zeros(0)] * len(grid.site_nights)
    airmass: list[np.ndarray] = [np.zeros(0)] * len(grid.site_nights)
    for name in dict.fromkeys(p.site for p in grid.site_nights):
        site = by_name[name]
        idx = [i for i, p in enumerate(grid.site_nights) if p.site == name]
        times = [part_slot_centres(grid, i) for i in idx]
        geo = geometry(target, np.concatenate(times), [site])[name]
        x = geo["airmass"].to_numpy(dtype=float)
        if site.instrument is not None:
            phot = photometry_columns(geo, site.instrument, rules, comet=comet)
            err = phot["mag_err_pred"].to_numpy(dtype=float)
            frames = np.floor(grid.slot_s / (phot["exposure_s"].to_numpy(dtype=float) + site.instrument.readout_s))
        else:
            err, frames = np.zeros(x.size), np.ones(x.size)
        sigma = point_sigma_mag(err, frames, x, rules.sys_err_mag_per_airmass)
        prec = np.where(np.isfinite(sigma) & (sigma > 0), 1.0 / np.square(sigma), np.nan)
        cuts = np.cumsum([t.size for t in times])[:-1]
        for i, pr, xm in zip(idx, np.split(prec, cuts), np.split(x, cuts), strict=True):
            precision[i], airmass[i] = pr, xm
    return precision, airmass
