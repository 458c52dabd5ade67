"""check_times on hand-constructed schedules: one site at fixed hours vs several longitudes."""

from __future__ import annotations

import json

import numpy as np
import pytest

from planner.diagnostics.check import check_times
from planner.diagnostics.result import VERDICTS
from tests.conftest import DEMO_DIR

BASE = np.datetime64("2034-03-10T00:00", "ns")


def _times(hours):
    return BASE + np.round(np.asarray(hours) * 3600).astype("int64").astype("timedelta64[s]")


def single_site(nights=10):
    """One site observing 20:00–01:00 UTC every night, one point every 10 minutes."""
    return _times(np.concatenate([n * 24 + 20 + np.arange(30) / 6 for n in range(nights)]))


def multi_site(nights=10):
    """Four longitudes, each observing 5 h at a different time of the UTC day."""
    return _times(
        np.concatenate([n * 24 + start + np.arange(30) / 6 for n in range(nights) for start in (20, 3, 10, 15)])
    )


@pytest.fixture(scope="module")
def single():
    return check_times(single_site(), min_period_h=2, max_period_h=30, trials=100, seed=1)


@pytest.fixture(scope="module")
def multi():
    return check_times(multi_site(), min_period_h=2, max_period_h=30, trials=100, seed=1)


def test_single_site_flags_the_24_over_n_hour_family(single):
    # Common practice: times at the same hours every night fold onto the same phases of any
    # period dividing a day evenly; with 5-hour nights 24, 12, 8 and 6 h keep 5/P of the phase.
    cov = {round(c["period_h"], 3): c["coverage"] for c in single.commensurate}
    for period_h in (24.0, 12.0, 8.0, 6.0):
        assert cov[period_h] <= 5 / period_h + 0.1
    worst = [w["period_h"] for w in single.worst_periods[:3]]
    assert any(abs(w - 24) < 0.5 for w in worst) and any(abs(w - 12) < 0.3 for w in worst)
    band_24 = next(b for b in single.bands if b["min_period_h"] <= 24 <= b["max_period_h"])
    assert band_24["verdict"] == "under-covered"


def test_single_site_flags_the_daily_aliases_of_a_12h_period(single):
    # Deeming (1975) / VanderPlas (2018) §4: one longitude gives a window peak at 1 c/d, so a
    # 12 h (2 c/d) signal has aliases at 1 c/d (24 h) and 3 c/d (8 h) of almost equal height.
    assert single.window_peaks[0]["freq_per_day"] == pytest.approx(1.0, abs=0.01)
    assert single.window_peaks[0]["height"] > 0.85
    entry = next(a for a in single.aliases if abs(a["period_h"] - 12) < 1e-9)
    assert entry["flagged"]
    strong = [p["period_h"] for p in entry["partners"] if p["height"] >= 0.7 and p["harmonic"] == 1]
    assert any(abs(p - 24) < 0.2 for p in strong) and any(abs(p - 8) < 0.1 for p in strong)
    band_12 = next(b for b in single.bands if b["min_period_h"] <= 12 <= b["max_period_h"])
    assert band_12["verdict"] != "secure"
    assert any(abs(p - 24) < 1 or abs(p - 8) < 0.2 for p in band_12["confusable_periods_h"])


def test_multi_longitude_schedule_is_not_flagged(multi):
    # No alias of the sampling and no missing phase costs a trial. What remains is P/2 of a double-peaked
    # curve whose odd harmonics are lost in the noise (reported apart, not a recovery): with 10 trials a
    # band, one or two of them can pull a band below 90 % (an alias-prone verdict naming P/2).
    assert all(b["failures_alias"] == 0 and b["failures_other"] == 0 for b in multi.bands)
    assert sum(b["verdict"] == "secure" for b in multi.bands) >= 8
    assert np.mean([b["recovery_fraction"] for b in multi.bands]) >= 0.9
    for b in multi.bands:
        if b["verdict"] != "secure":
            assert b["failures_half"] > 0 and b["verdict"] == "alias-prone"
    assert not any(a["flagged"] for a in multi.aliases)
    assert all(c["coverage"] >= 0.9 for c in multi.commensurate if c["period_h"] >= 4)
    assert multi.window_peaks[0]["height"] < 0.5


def test_more_sites_measure_the_trend_better(single, multi):
    assert multi.trend["rate_sigma_mag_per_day"] < single.trend["rate_sigma_mag_per_day"]
    assert multi.trend["longest_gap_h"] < 3 < single.trend["longest_gap_h"]
    assert single.trend["longest_gap_h"] == pytest.approx(19 + 1 / 6, abs=1e-6)
    assert single.trend["min_detectable_mag_per_day"] == pytest.approx(3 * single.trend["rate_sigma_mag_per_day"])


def test_json_has_the_documented_keys_and_no_nan(single):
    d = single.to_dict()
    for key in (
        "periods_h",
        "coverage",
        "largest_phase_gap",
        "window_peaks",
        "bands",
        "recovery",
        "trend",
        "period_change",
    ):
        assert key in d
    assert len(d["periods_h"]) == len(d["coverage"]) == len(d["largest_phase_gap"])
    assert set(d["trend"]) >= {"rate_sigma_mag_per_day", "min_detectable_mag_per_day", "longest_gap_h"}
    assert all(b["verdict"] in VERDICTS for b in d["bands"])
    assert all({"min_period_h", "max_period_h", "verdict", "confusable_periods_h"} <= set(b) for b in d["bands"])
    assert all({"period_h", "fraction"} <= set(r) for r in d["recovery"])
    assert all({"period_h", "min_detectable_change_h"} <= set(p) for p in d["period_change"])
    assert all({"freq_per_day", "height"} <= set(p) for p in d["window_peaks"])
    json.dumps(d, allow_nan=False)


def test_geometry_arrays_give_trend_and_synodic_drift():
    # synthetic geometry (the contract of planner.sky.geometry.geometry): bisector longitude
    # moving 2°/day; Harris et al. (1984): offset = ω P², here (2/360)(P/24 d)² in days.
    times = multi_site(6)
    days = (times - times[0]).astype("timedelta64[s]").astype(float) / 86400
    geo = {
        "helio_dist_au": 1.5 + 0.01 * days,
        "obs_dist_au": 0.6 + 0.005 * days,
        "phase_angle_deg": 30 + 0 * days,
        "pab_lon_deg": 100 + 2.0 * days,
        "pab_lat_deg": 1 + 0 * days,
        "solar_elong_deg": 25 + 10 * days,
        "mag_pred": 12 + 5 * np.log10(0.6 + 0.005 * days) + 10 * np.log10(1.5 + 0.01 * days),
    }
    r = check_times(times, min_period_h=3, max_period_h=20, trials=40, geometry={"geocentre": geo})
    assert r.trend["geometric_trend_used"]
    # Rates are per day of emission time t − Δ/c: Δ growing 0.005 au/day stretches the clock by 1 − 0.005/c
    # (c = 173.1446 au/day, IAU 2009 c and IAU 2012 au).
    rate = 2.0 / (1 - 0.005 / 173.1446)
    assert r.synodic["pab_lon_rate_deg_per_day"] == pytest.approx(rate, rel=1e-7)
    for p in r.synodic["periods"]:
        assert p["synodic_offset_h"] == pytest.approx(rate / 360 * p["period_h"] ** 2 / 24, rel=1e-7)
        assert p["exceeds_precision"] == (p["synodic_offset_h"] > p["period_sigma_h"])
    # With the geometric trend fitted, nothing but P/2 (reported apart) costs a trial.
    assert all(b["failures_alias"] == 0 and b["failures_other"] == 0 for b in r.bands)
    assert np.mean([b["recovery_fraction"] for b in r.bands]) >= 0.85
    assert r.to_dict()["input"]["light_time_corrected"]
    # safety: the first half day is closer than 30° to the Sun, and the output says so
    assert any(note.startswith("caution:") and "observatory" in note for note in r.notes)


def test_no_trials_and_unsorted_input():
    times = single_site(4)[::-1]
    r = check_times(times, min_period_h=2, max_period_h=10, trials=0, mag_err=np.full(times.size, 0.03))
    assert r.recovery == [] and r.bands and all(b["recovery_fraction"] is None for b in r.bands)
    assert np.all(np.diff(r.times_jd) >= 0)


def test_long_exposures_are_noted():
    times = single_site(3)
    r = check_times(times, min_period_h=2, max_period_h=10, trials=0, exposure_s=np.full(times.size, 900.0))
    assert any("smear" in note for note in r.notes)
    r = check_times(times, min_period_h=2, max_period_h=10, trials=0, exposure_s=np.full(times.size, 60.0))
    assert not any("smear" in note for note in r.notes)


def test_too_few_times_is_reported_not_crashed():
    r = check_times(single_site(1)[:3], min_period_h=2, max_period_h=10, trials=20)
    assert r.notes and r.recovery == []
    json.dumps(r.to_dict(), allow_nan=False)


def test_real_target_geometry_path(root):
    # Once the geometry module is present: the demo target through planner.sky.geometry.geometry.
    pytest.importorskip("planner.sky.geometry")
    from planner.inputs.targets import load_target

    path = DEMO_DIR / "c2034-b3-quillfeather.toml"
    if not path.exists():
        pytest.skip("demo target not in this build")
    target = load_target(path)
    times = multi_site(4)
    r = check_times(times, min_period_h=3, max_period_h=20, trials=20, target=target)
    assert r.trend["geometric_trend_used"] and r.synodic is not None
    assert np.isfinite(r.synodic["pab_lon_rate_deg_per_day"])


def test_alias_failures_tell_sampling_from_noise():
    # f = 2 c/d with window peaks at 1 c/d: a winner at 3 c/d (f + 1) or 1.5 c/d (2f − 1, fitted
    # as the 2nd harmonic of 1.5) is an alias; 4.37 c/d is not (VanderPlas 2018, §4).
    from planner.diagnostics.aliases import alias_failures

    true = np.array([2.0, 2.0, 2.0, 2.0])
    found = np.array([3.0, 1.5, 4.37, 1.0])
    got = alias_failures(true, found, np.array([1.0]), 0.01)
    assert list(got) == [True, True, False, True]


def test_noisy_sparse_data_are_under_covered_not_alias_prone():
    # Three short nights at one site with noise far above the amplitude: failures are noise.
    times = _times(np.concatenate([n * 24 + 20 + np.arange(12) / 4 for n in range(3)]))
    r = check_times(
        times,
        min_period_h=2,
        max_period_h=10,
        trials=200,
        seed=2,
        mag_err=0.5,
        amplitude_range_mag=(0.05, 0.1),
        alias_threshold=1.01,
    )
    # 20 trials a band: a band's few alias hits can exceed half its failures by chance, so most bands,
    # not every one, must read under-covered.
    assert sum(b["verdict"] == "under-covered" for b in r.bands) >= 0.8 * len(r.bands)
    # winners land on alias frequencies no more often than a random frequency would
    observed = sum(b["failures_alias"] for b in r.bands)
    expected = sum(b["failures_alias_expected"] for b in r.bands)
    failures = observed + sum(b["failures_other"] for b in r.bands)
    assert observed - expected < 0.5 * (failures - expected)


def test_highest_alias_is_the_daily_peak_not_the_span_sidelobe(single):
    # One site at fixed hours: the strongest alias is the day, 1 c/d (Deeming 1975). Its height is the
    # length of the mean unit vector of the times folded on 1 c/d (Eyer & Bartholdi 1999), computed here.
    d = single.to_dict()
    top = d["highest_alias"]
    span_d = d["input"]["span_h"] / 24.0
    assert top["min_freq_per_day"] == pytest.approx(2.0 / span_d)
    assert top["freq_per_day"] == pytest.approx(1.0, abs=0.02)
    t_d = (single_site() - BASE).astype("int64") / 86400e9
    assert top["height"] == pytest.approx(abs(np.exp(2j * np.pi * top["freq_per_day"] * t_d).mean()), abs=1e-6)


def test_unbroken_sampling_has_only_span_sidelobes():
    # Round-the-clock sampling every 10 min for 7 days: |W| is a Dirichlet kernel whose first sidelobe,
    # near 1.43/T with height ≈ 0.217 (the sinc's), is the only peak above 0.1; it is no alias.
    t = _times(np.arange(7 * 24 * 6) / 6)
    d = check_times(t, min_period_h=2, max_period_h=30, trials=0).to_dict()
    side = [p for p in d["window_peaks"] if p["height"] > 0.15]
    assert side and all(p["freq_per_day"] < 2.0 * 24.0 / d["input"]["span_h"] for p in side)
    assert max(p["height"] for p in side) == pytest.approx(0.217, abs=0.01)
    assert d["highest_alias"] is None or d["highest_alias"]["height"] < 0.15
