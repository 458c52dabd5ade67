"""Plans an observer can follow: no back-to-back blocks that each pay a set-up, positions at the start,
middle and end of each block in both the catalogue frame and the frame of date, cautions only where
they apply, and check output that says only what the times can tell.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from clirun import run_cli
from schedule_helpers import T_REF, model_for

from planner.inputs.settings import BlockRules
from planner.inputs.sites import Site, load_site
from planner.inputs.targets import load_target
from planner.schedule.localsearch import fits, separate_close_visits
from planner.schedule.optimise import optimise
from planner.schedule.planmodel import Visit
from planner.schedule.slots import build_slots
from planner.sky.geometry import geometry

ROOT = Path(__file__).resolve().parent.parent
TARGET = ROOT / "planner" / "data" / "demo" / "c2034-b3-quillfeather.toml"
KAROO = ROOT / "planner" / "data" / "demo" / "sites" / "karoo-ridge.toml"


# --- blocks of one site in one night are one block, or a real gap apart ------------------------------


def _pauses_h(blocks: pd.DataFrame) -> list[float]:
    out = []
    for _, rows in blocks.groupby(["site", "night"]):
        start = pd.to_datetime(rows["start_utc"]).sort_values().to_numpy()
        end = pd.to_datetime(rows["end_utc"]).sort_values().to_numpy()
        out += list((start[1:] - end[:-1]) / np.timedelta64(1, "h"))
    return out


def test_the_demo_plan_has_no_back_to_back_blocks(demo_plan):
    campaign, result = demo_plan
    for table in (result.blocks, result.baseline):
        assert all(p >= campaign.block_rules.min_block_h for p in _pauses_h(table))


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_synthetic_nights_long_enough_for_two_blocks_get_a_real_pause(seed):
    # Windows of 8.5 h with blocks of at most 4 h: before, two 4 h blocks 5 min apart each paid a set-up.
    model, _, _ = model_for(3, 4, window_h=8.5, hours=None, seed=seed)
    grid = model.grid
    result = optimise(model, seed)
    visits = sorted(result.visits, key=lambda v: (v.site_night, v.start))
    pairs = [(a, b) for a, b in zip(visits, visits[1:], strict=False) if a.site_night == b.site_night]
    assert pairs  # the night holds two blocks, an hour apart at least
    assert all(b.start - a.stop >= grid.min_gap_slots == grid.min_slots for a, b in pairs)
    assert all(fits(grid, [w for w in result.visits if w != v], v) for v in result.visits)


def test_close_visits_are_merged_when_they_may_be_and_set_apart_when_not():
    model, _, _ = model_for(1, 1, window_h=8.5, hours=None)
    g = model.grid
    lo = g.site_nights[0].intervals[0][0]
    # 2 h and 1.5 h, 5 min apart: one 3.58 h visit (one set-up) is within the 4 h limit.
    assert separate_close_visits(g, [Visit(0, lo, 24), Visit(0, lo + 25, 18)]) == [Visit(0, lo, 43)]
    # 3 h and 3 h, 5 min apart: 6 h is over the limit, so one visit as long as the limit allows.
    assert separate_close_visits(g, [Visit(0, lo, 36), Visit(0, lo + 37, 36)]) == [Visit(0, lo, g.max_slots)]
    # Already an hour apart: untouched.
    kept = [Visit(0, lo, 36), Visit(0, lo + 48, 36)]
    assert separate_close_visits(g, kept) == kept


def test_close_visits_across_an_unusable_pause_are_set_a_full_gap_apart():
    # The night's window is broken for 20 minutes (e.g. a tree in the horizon mask): the pause cannot
    # be observed, so the later visit starts an hour after the first ends.
    t0 = np.datetime64("2034-03-16T20:00", "ns")
    minutes = [(0, 180), (200, 420)]
    w = pd.DataFrame(
        [
            dict(
                site="S0",
                night="2034-03-16",
                start_utc=t0 + np.timedelta64(a, "m"),
                end_utc=t0 + np.timedelta64(b, "m"),
            )
            for a, b in minutes
        ]
    )
    blocks = BlockRules(slot_minutes=5, min_block_h=1.0, max_block_h=4.0, setup_minutes=10, max_per_night=2)
    g = build_slots(w, [Site(name="S0", latitude_deg=-30.0, longitude_deg=0.0)], blocks, T_REF)
    (a0, a1), (b0, b1) = g.site_nights[0].intervals
    first, second = Visit(0, a0, a1 - a0), Visit(0, b0, b1 - b0)
    assert separate_close_visits(g, [first, second]) == [first, Visit(0, a1 + 12, b1 - a1 - 12)]


# --- apparent places of date, checked through ERFA ----------------------------------------------------


def _erfa_apparent(ra_deg: float, dec_deg: float, time_utc: np.datetime64, site=None) -> tuple[float, float]:
    """Apparent RA/Dec of date (deg) from an astrometric place, by SOFA/ERFA alone: Earth velocity from
    the VSOP-based epv00, stellar aberration by ab (Explanatory Supplement 2013, eq. 7.40), the site's
    diurnal velocity by pvtob, and the IAU 2006/2000A bias-precession-nutation matrix pnm06a (SOFA
    Astrometry Tools, IAU SOFA Board 2021)."""
    from datetime import datetime

    import erfa

    d = datetime.fromisoformat(str(time_utc)[:19])
    u1, u2 = erfa.dtf2d("UTC", d.year, d.month, d.day, d.hour, d.minute, float(d.second))
    t1, t2 = erfa.taitt(*erfa.utctai(u1, u2))
    pvh, pvb = erfa.epv00(t1, t2)  # TDB − TT < 2 ms: the same instant here
    vel_au_d = pvb[1]
    if site is not None:  # UT1 − UTC < 1 s changes the diurnal velocity by < 1e-4 of itself
        pv = erfa.pvtob(
            np.radians(site.longitude_deg),
            np.radians(site.latitude_deg),
            site.height_m,
            0.0,
            0.0,
            erfa.sp00(t1, t2),
            erfa.era00(u1, u2),
        )
        vel_au_d = vel_au_d + erfa.c2i06a(t1, t2).T @ pv[1] * 86400.0 / erfa.DAU
    v = vel_au_d / (86400.0 / erfa.AULT)
    p = erfa.ab(erfa.s2c(np.radians(ra_deg), np.radians(dec_deg)), v, np.linalg.norm(pvh[0]), np.sqrt(1 - v @ v))
    ra, dec = erfa.c2s(erfa.pnm06a(t1, t2) @ p)
    return float(np.degrees(ra) % 360.0), float(np.degrees(dec))


@pytest.mark.filterwarnings("ignore::erfa.ErfaWarning")
def test_apparent_places_of_date_agree_with_erfa():
    target = load_target(TARGET)
    site = load_site(KAROO)
    times = np.array(["2034-03-16T20:00", "2034-03-19T03:30", "2034-06-01T12:00"], dtype="datetime64[ns]")
    for observer in (None, site):
        frame = next(iter(geometry(target, times, [observer] if observer else []).values()))
        for i, t in enumerate(times):
            ra, dec = _erfa_apparent(frame["ra_deg"][i], frame["dec_deg"][i], t, observer)
            cos_dec = np.cos(np.radians(dec))
            assert (ra - frame["ra_app_deg"][i]) * 3600 * cos_dec == pytest.approx(0.0, abs=0.01)  # arcsec
            assert (dec - frame["dec_app_deg"][i]) * 3600 == pytest.approx(0.0, abs=0.01)
        # 34 years of precession (about 50.3″ a year in longitude, Lieske et al. 1977) move the place by
        # some 28′; the apparent place is not the catalogue one.
        sep = np.hypot(
            (frame["ra_app_deg"] - frame["ra_deg"]) * np.cos(np.radians(frame["dec_deg"])),
            frame["dec_app_deg"] - frame["dec_deg"],
        )
        assert ((sep * 60 > 20) & (sep * 60 < 35)).all()


def test_sheets_give_start_middle_and_end_in_both_frames(demo_plan, demo_folder):
    _, result = demo_plan
    for sheet in (demo_folder / "sheets").glob("*.txt"):
        text = sheet.read_text()
        assert "astrometric RA/Dec (ICRF, equinox J2000)" in text and "apparent RA/Dec of date" in text
        n_blocks = text.count("  Block ")
        assert n_blocks and [text.count(f"    {p} ") for p in ("start", "middle", "end")] == [n_blocks] * 3
        # One trailing caution per sheet, however many blocks are capped by trailing.
        assert text.count("CAUTION: exposures marked (trailing)") == int("(trailing)" in text)
    b = result.blocks.iloc[0]
    # Start, middle and end follow the target's motion: the mid-block place lies between the others.
    for col in ("ra_deg", "dec_deg", "ra_app_deg", "dec_app_deg"):
        lo, hi = sorted((b[f"start_{col}"], b[f"end_{col}"]))
        assert lo < b[col] < hi


# --- cautions where they apply ------------------------------------------------------------------------


def _windows_table(capsys, site: Path) -> str:
    r = run_cli(capsys, "windows", "--target", TARGET, "--site", site, "--start", "2034-03-16", "--nights", "2")
    assert r.returncode == 0, r.stderr
    return r.stdout


def test_windows_flag_only_bright_twilight_and_the_sun_limit(tmp_path, capsys):
    # Nautical darkness (Sun below −12°) and the target 148° from the Sun: nothing to flag.
    plain = _windows_table(capsys, KAROO)
    assert "!" not in plain
    # Civil darkness: the window opens with the Sun at −6°, in bright twilight (Explanatory Supplement).
    civil = tmp_path / "civil.toml"
    civil.write_text(KAROO.read_text().replace('twilight = "nautical"', 'twilight = "civil"'))
    flagged = _windows_table(capsys, civil)
    rows = [ln for ln in flagged.splitlines() if ln.startswith("  2034-03-")]
    assert rows and all(ln.endswith("  !") for ln in rows) and "  ! opens or closes in twilight" in flagged
    # A Sun limit of 140°: the target at ~148° is within the 10° caution margin.
    near = tmp_path / "near.toml"
    near.write_text(KAROO.read_text().replace("min_solar_elong_deg = 40", "min_solar_elong_deg = 140"))
    assert all(ln.endswith("  !") for ln in _windows_table(capsys, near).splitlines() if ln.startswith("  2034-03-"))


# --- check says what the times can tell ------------------------------------------------------------


def _check_table(capsys, tmp_path, times) -> str:
    log = tmp_path / "log.csv"
    log.write_text("time_utc\n" + "".join(f"{t}Z\n" for t in np.datetime_as_string(times, unit="s")))
    r = run_cli(capsys, "check", log, "--trials", "0")
    assert r.returncode == 0, r.stderr
    return r.stdout


def test_check_prints_the_nyquist_frequency_only_when_the_times_share_a_step(tmp_path, capsys):
    # Eyer & Bartholdi (1999): times on a common step p mirror the periodogram about 1/(2p). Times kept
    # to the second on no grid give 1/(2 s) = 43200 c/d, which says nothing about the sampling.
    t0 = np.datetime64("2034-03-19T20:00:00")
    grid = t0 + np.arange(0, 3 * 86400, 600).astype("timedelta64[s]")  # a 10-minute grid
    on_grid = _check_table(capsys, tmp_path, grid[(grid.astype(np.int64) // 3600) % 24 < 8])
    assert "Nyquist frequency 72 c/d (the times share a 600 s step)" in on_grid
    rng = np.random.default_rng(1)
    irregular = np.sort(t0 + rng.integers(0, 3 * 86400, 300).astype("timedelta64[s]"))
    assert "Nyquist" not in _check_table(capsys, tmp_path, irregular)


def test_check_lists_worst_periods_only_when_some_period_misses_a_phase(tmp_path, capsys):
    t0 = np.datetime64("2034-03-19T20:00:00")
    dense = t0 + np.arange(0, 10 * 86400, 300).astype("timedelta64[s]")  # every 5 min for 10 days
    full = _check_table(capsys, tmp_path, dense)
    assert "Worst-covered periods" not in full and "every trial period has all 20 phase bins covered" in full
    nightly = dense[(dense.astype(np.int64) // 3600) % 24 < 3]  # 3 h a night only
    assert "Worst-covered periods: " in _check_table(capsys, tmp_path, nightly)


def test_check_formats_are_the_ones_the_readme_names(tmp_path, capsys):
    log = tmp_path / "log.csv"
    log.write_text("time_utc\n2034-03-19T20:00:00Z\n2034-03-19T21:00:00Z\n2034-03-20T20:00:00Z\n")
    r = run_cli(capsys, "check", log, "--format", "csv")
    assert r.returncode == 2 and r.stderr.startswith(
        "error: command line: --format: 'csv' is not one of 'table', 'json'"
    )
    readme = (ROOT / "README.md").read_text()
    assert "`check`: `json`" in readme
    assert (
        json.loads(run_cli(capsys, "check", log, "--format", "json", "--trials", "0").stdout)["input"]["n_times"] == 3
    )


def test_blocks_and_sheets_give_the_magnitude_in_the_instruments_band(demo_plan, demo_folder):
    # The demo comet's law is in V and every demo site observes through R; the comet has no [colour]
    # table, so its colour is the Sun's: V − R_C ≈ 0.35–0.40 in published solar colours (Holmberg,
    # Flynn & Portinari 2006 give 0.36; Willmer 2018, ApJS 236, 47, about 0.37; values from memory).
    _, result = demo_plan
    b = result.blocks
    assert set(b["band"]) == {"R"}
    v_minus_r = b["mag_pred"] - b["mag_band_pred"]
    assert v_minus_r.between(0.33, 0.42).all()
    sheet = next((demo_folder / "sheets").glob("*.txt")).read_text()
    assert " in R (" in sheet and "in the brightness law's band)" in sheet
    csv = pd.read_csv(demo_folder / "plan.csv")
    assert np.allclose(csv["mag_band_pred"], b["mag_band_pred"], atol=0.01)
