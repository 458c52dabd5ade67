"""Light-curve points from frames: one error model for a plan's diagnostics and for ``phasewise check``.

Frames (exposures) of one site are combined per slot: the point's time is the frames' mean, its
photon-noise error the inverse-variance combination (σ/√n for equal frames), and the extinction
term ``s·X`` (``ExposureRules.sys_err_mag_per_airmass`` per airmass, at the frames' mean airmass) is
added in quadrature. Light-curve points of a slowly rotating body are commonly stacks of consecutive
frames (common practice); the optimiser scores slots with the same σ
(:func:`planner.schedule.quality.slot_precision`), so plan, diagnostics and check agree.

Slots are counted from :data:`SLOT_EPOCH` (00:00 UTC), so any slot length that divides a day gives
the same slots as a campaign's grid, which starts at 00:00 UTC too.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

#: Origin of the slots frames are stacked in when no grid is given (a campaign grid also starts at 00:00 UTC).
SLOT_EPOCH = np.datetime64("2000-01-01T00:00:00", "ns")
#: σ (mag) of a point whose frames carry none and no other point gives a median (common practice: 2 %).
DEFAULT_POINT_SIGMA_MAG = 0.02


def point_sigma_mag(
    frame_err_mag: np.ndarray, n_frames: np.ndarray, airmass: np.ndarray, sys_err_mag_per_airmass: float
) -> np.ndarray:
    """σ (mag) of one stacked point: photon noise over √n_frames and ``s·X`` added in quadrature."""
    phot = np.asarray(frame_err_mag, dtype=float) / np.sqrt(np.maximum(np.asarray(n_frames, dtype=float), 1.0))
    return np.hypot(phot, sys_err_mag_per_airmass * np.asarray(airmass, dtype=float))


def stack_frames(frames: pd.DataFrame, bin_s: float, t_ref: np.datetime64 = SLOT_EPOCH) -> pd.DataFrame:
    """Frames of one site combined per ``bin_s`` slot counted from ``t_ref``: mean time, error 1/√Σσ⁻²,
    the number of frames and (when the frames carry one) the mean airmass.

    ``frames`` has columns ``time_utc``, ``site``, ``mag_err`` (NaN where unknown: a slot whose frames
    have no σ gets NaN) and optionally ``airmass``. Rows come out in time order.
    """
    if frames.empty:
        return frames.assign(n_frames=pd.Series(dtype=int)).copy()
    t = frames["time_utc"].to_numpy("datetime64[ns]")
    ns = (t - np.datetime64(t_ref, "ns")).astype(np.int64)
    key = ns // np.int64(round(bin_s * 1e9))
    df = pd.DataFrame(
        {
            "site": frames["site"].to_numpy(),
            "key": key,
            "ns": ns,
            "w": 1.0 / np.square(frames["mag_err"].to_numpy(dtype=float)),
        }
    )
    if "airmass" in frames:
        df["airmass"] = frames["airmass"].to_numpy(dtype=float)
    g = df.groupby(["site", "key"], sort=False)
    mean_ns = g["ns"].mean().round().astype(np.int64)
    w = g["w"].sum(min_count=1).to_numpy(dtype=float)  # NaN where no frame has a σ (site without instrument)
    err = np.full(w.shape, np.nan)
    known = np.isfinite(w) & (w > 0)
    err[known] = 1.0 / np.sqrt(w[known])
    out = pd.DataFrame(
        {
            "time_utc": np.datetime64(t_ref, "ns") + mean_ns.to_numpy().astype("timedelta64[ns]"),
            "site": [s for s, _ in mean_ns.index],
            "mag_err": err,
            "n_frames": g.size().to_numpy(),
        }
    )
    if "airmass" in df:
        out["airmass"] = g["airmass"].mean().to_numpy()
    return out.sort_values("time_utc", kind="stable").reset_index(drop=True)


def light_curve_points(
    frames: pd.DataFrame,
    bin_s: float,
    sys_err_mag_per_airmass: float,
    t_ref: np.datetime64 = SLOT_EPOCH,
) -> pd.DataFrame:
    """The points a light curve is measured on, and their σ: frames stacked per slot
    (:func:`stack_frames`), the extinction term ``s·X`` added where the airmass is known, and points
    with no σ given the median of the others (DEFAULT_POINT_SIGMA_MAG when none has one).

    Returns columns ``time_utc``, ``site``, ``mag_err`` (the point's σ), ``n_frames`` and ``airmass``
    (NaN where unknown).
    """
    points = stack_frames(frames, bin_s, t_ref)
    if "airmass" not in points:
        points["airmass"] = np.nan
    x = points["airmass"].to_numpy(dtype=float)
    err = points["mag_err"].to_numpy(dtype=float)
    err = np.where(np.isfinite(x), point_sigma_mag(err, 1, x, sys_err_mag_per_airmass), err)
    known = np.isfinite(err) & (err > 0)
    fallback = float(np.median(err[known])) if known.any() else DEFAULT_POINT_SIGMA_MAG
    points["mag_err"] = np.where(known, err, fallback)
    return points


def stack_arrays(
    times_utc: np.ndarray,
    mag_err: np.ndarray | float,
    sites: np.ndarray | None,
    airmass: np.ndarray | None,
    stack_s: float,
    sys_err_mag_per_airmass: float,
    stack_ref_utc: np.datetime64,
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Frames given as arrays → light-curve points (times, σ, sites) by :func:`light_curve_points`."""
    times = np.asarray(times_utc, dtype="datetime64[ns]")
    n = times.size
    frames = pd.DataFrame(
        {
            "time_utc": times,
            "site": np.full(n, "", dtype=object) if sites is None else np.asarray(sites, dtype=object),
            "mag_err": np.broadcast_to(np.asarray(mag_err, dtype=float), (n,)),
            "airmass": np.full(n, np.nan) if airmass is None else np.asarray(airmass, dtype=float),
        }
    )
    points = light_curve_points(frames, stack_s, sys_err_mag_per_airmass, stack_ref_utc)
    site_out = None if sites is None else points["site"].to_numpy(dtype=object)
    return points["time_utc"].to_numpy("datetime64[ns]"), points["mag_err"].to_numpy(dtype=float), site_out
