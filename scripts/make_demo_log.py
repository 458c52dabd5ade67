"""Write the demo's invented light curve: planner/data/demo/demo-first-nights.csv.

    python scripts/make_demo_log.py [--out planner/data/demo/demo-first-nights.csv] [--seed 3]

Everything in it is invented. The demo comet C/2034 B3 (an invented object) is given a nucleus
shaped like a triaxial ellipsoid (semi-axes 1.6 : 1.0 : 0.85, spin axis 70° from the line of sight,
a brighter hemisphere so the two halves of a turn differ) rotating in 13.9 h; its rotational signal
is the ellipsoid's projected area (tests/lightcurve_synth.py, Connelly & Ostro 1984 geometry),
diluted by the coma to about 0.1 mag peak to peak. On that it puts the demo target's own law
(M1 = 11.5, K1 = 10, at the geometry of the project's ephemeris, phase counted at the emission time
t − Δ/c), a scatter per night (0.015 mag) and Gaussian noise of the logged σ (0.02–0.035 mag).

The story: the first three nights of the demo week (2034-03-16 to 03-18) were clear only at
Quebrada Alta; the other three sites were clouded out (``lost`` rows). Each night's run sits in the
site's window, centred on the target's highest altitude, as long as the site's nightly hours allow
(5 h); one 120 s exposure every 5 min. Five hours a night from one longitude cannot cover a 13.9 h
rotation, and the daily aliases of the period survive (the fit lists them as candidates), which the
re-plan of the demo (``phasewise demo``) is built to tell apart. The seed was chosen among the first
few for a log whose best period is the true one with aliases close behind.

The file is generated once and committed; this script documents how.
"""

from __future__ import annotations

import argparse
import sys
from datetime import date, timedelta
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from planner.inputs.campaign import load_campaign  # noqa: E402
from planner.lightcurve.geometry import point_geometry  # noqa: E402
from planner.visibility.windows import observable_windows  # noqa: E402
from tests.lightcurve_synth import ellipsoid_rotation_mag  # noqa: E402

CAMPAIGN = ROOT / "planner" / "data" / "demo" / "demo-campaign.toml"
OUT = ROOT / "planner" / "data" / "demo" / "demo-first-nights.csv"

#: The invented truth.
PERIOD_H = 13.9
AXES = (1.6, 1.0, 0.85)
ASPECT_DEG = 70.0
ALBEDO_CONTRAST = 0.10
#: Fraction of the light from the nucleus in the photometric aperture (the rest is coma).
NUCLEUS_FRACTION = 0.25
NIGHT_SCATTER_MAG = 0.015
SIGMA_RANGE_MAG = (0.02, 0.035)
#: The site that observed each of the first nights; every other site lost them.
OBSERVED_SITE = "Quebrada Alta"
FIRST_NIGHT = date(2034, 3, 16)
NIGHTS = 3
EXPOSURE_S = 120.0
CADENCE_S = 300.0


def runs(campaign) -> list[tuple[str, str, np.ndarray]]:
    """Mid-exposure times of each observed site-night: a run centred on the highest altitude."""
    windows = observable_windows(campaign.load_target(), list(campaign.sites), FIRST_NIGHT, NIGHTS)
    by_name = {s.name: s for s in campaign.sites}
    out = []
    for w in windows[windows["hours"] > 0].itertuples(index=False):
        night = str(w.night)
        if w.site != OBSERVED_SITE:
            continue
        hours = min(float(w.hours), float(by_name[w.site].allocation.hours_per_night))
        start, end = np.datetime64(w.start_utc, "ns"), np.datetime64(w.end_utc, "ns")
        half = np.timedelta64(int(hours * 1800e9), "ns")
        mid = min(max(np.datetime64(w.best_utc, "ns"), start + half), end - half)
        n = int(hours * 3600 / CADENCE_S)
        t = mid - half + (np.arange(n) * CADENCE_S * 1e9 + EXPOSURE_S * 0.5e9).astype("timedelta64[ns]")
        out.append((w.site, night, t))
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=OUT)
    ap.add_argument("--seed", type=int, default=3)
    args = ap.parse_args()
    rng = np.random.default_rng(args.seed)
    campaign = load_campaign(CAMPAIGN)
    target = campaign.load_target()
    b = target.brightness
    rows = []
    t_ref = np.datetime64("2034-03-17T12:00", "ns")
    for site, night, t in runs(campaign):
        geo = point_geometry(target, t, np.full(t.size, site, dtype=object), campaign.sites)
        emit_d = (t - t_ref).astype(np.int64) / 8.64e13 - geo["light_time_minutes"] / 1440.0
        rotation = ellipsoid_rotation_mag(
            emit_d,
            PERIOD_H,
            axes=AXES,
            aspect_deg=ASPECT_DEG,
            albedo_contrast=ALBEDO_CONTRAST,
            nucleus_fraction=NUCLEUS_FRACTION,
        )
        sigma = np.round(rng.uniform(*SIGMA_RANGE_MAG, t.size), 3)
        mag = (
            b.M1
            + 5.0 * np.log10(geo["obs_dist_au"])
            + b.K1 * np.log10(geo["helio_dist_au"])
            + rotation
            + rng.normal(0.0, NIGHT_SCATTER_MAG)
            + rng.normal(0.0, sigma)
        )
        for ti, m, s in zip(t, mag, sigma, strict=True):
            rows.append(f"{str(ti)[:19]}Z,{site},{EXPOSURE_S:g},{m:.3f},{s:.3f},R,observed,{night}")
    for site in campaign.sites:
        if site.name != OBSERVED_SITE:
            for k in range(NIGHTS):
                rows.append(f",{site.name},,,,,lost,{(FIRST_NIGHT + timedelta(days=k)).isoformat()}")
    head = [
        "# Invented demo data: the first three nights of the demo week on the invented comet C/2034 B3.",
        "# Written by scripts/make_demo_log.py (see its docstring for the invented truth); not a real observation.",
        "time_utc,site,exposure_s,mag,mag_err,band,status,night",
    ]
    args.out.write_text("\n".join(head + rows) + "\n", encoding="utf-8")
    print(f"{args.out}: {sum(1 for r in rows if r[0] != ',')} points, {sum(1 for r in rows if r[0] == ',')} lost rows")


if __name__ == "__main__":
    main()
