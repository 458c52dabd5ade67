"""Period analysis as photometrists do it: light-time corrected times, P/2 apart, amplitude with phase angle.

Sources:
- Harris et al. (1989), Icarus 77, 171: light curves are reduced to the times the light left the body,
  t − Δ/c (c = 173.1446 au/day from c = 299 792 458 m/s and the IAU 2012 au).
- Common practice: an elongated body shows two maxima per rotation; a search that finds P/2 has found
  the photometric period, not the rotation, unless the odd harmonics tell the two halves apart.
- Zappalà, V. et al. (1990), A&A 231, 548: A(α) = A(0)(1 + m α), m ≈ 0.03 per degree on average
  (S 0.030, C 0.015, M 0.013; values from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

from planner.core.timegrid import to_jd_utc
from planner.diagnostics import recovery
from planner.diagnostics.check import check_times
from planner.diagnostics.result import CheckSettings
from planner.diagnostics.verdicts import band_verdict

C_AU_PER_DAY = 299_792_458.0 * 86400.0 / 149_597_870_700.0  # 173.1446 au/day
BASE = np.datetime64("2034-03-10T00:00", "ns")


def _four_sites(nights: int = 8) -> np.ndarray:
    hours = np.concatenate([n * 24 + start + np.arange(30) / 6 for n in range(nights) for start in (20, 3, 10, 15)])
    return BASE + np.round(hours * 3600).astype("int64").astype("timedelta64[s]")


# ------------------------------------------------------------------------------ light time


def test_check_counts_phase_at_the_body():
    # A target receding fast (Δ from 0.05 to 3 au in 8 days: the light time grows by 24 min) so the
    # correction moves phases visibly. With the geometry the check must give exactly what the same check
    # gives on hand-corrected times t − Δ/c without geometry; without it, something else.
    times = _four_sites()
    days = (times - times[0]).astype("timedelta64[s]").astype(float) / 86400.0
    delta_au = 0.05 + 3.0 * days / days.max()
    geo = {"obs_dist_au": delta_au}
    kw = dict(min_period_h=2, max_period_h=30, trials=0)
    corrected = check_times(times, geometry={"geocentre": geo}, **kw)
    shifted = times - np.round(delta_au / C_AU_PER_DAY * 86400e9).astype("int64").astype("timedelta64[ns]")
    by_hand = check_times(shifted, **kw)
    plain = check_times(times, **kw)
    np.testing.assert_allclose(corrected.periods_h, by_hand.periods_h, rtol=1e-9)
    np.testing.assert_array_equal(corrected.coverage, by_hand.coverage)
    np.testing.assert_allclose(corrected.window_height, by_hand.window_height, atol=1e-9)
    assert not np.array_equal(corrected.coverage, plain.coverage)
    d = corrected.to_dict()
    assert d["input"]["light_time_corrected"] and not plain.to_dict()["input"]["light_time_corrected"]
    assert d["input"]["light_time_minutes"][-1] == pytest.approx(3.05 / C_AU_PER_DAY * 1440.0, rel=1e-12)
    assert d["input"]["times_utc"][0].startswith("2034-03-10T")  # the log's own times are what is listed


def test_check_with_a_target_uses_the_geometry_light_time(root):
    # phasewise's geometry gives light_time_minutes (its own light-time solution); check uses it.
    from planner.inputs.targets import load_target

    target = load_target(root / "planner" / "data" / "demo" / "c2034-b3-quillfeather.toml")
    times = BASE + np.arange(0, 48 * 60, 30).astype("timedelta64[m]") + np.timedelta64(6 * 24, "h")
    r = check_times(times, min_period_h=2, max_period_h=10, trials=0, target=target)
    tau = r.to_dict()["input"]["light_time_minutes"]
    # Δ ≈ 0.57–0.62 au for the demo comet (docs/formats.md): 4.7–5.2 light minutes.
    assert 4.6 < min(tau) and max(tau) < 5.3
    np.testing.assert_allclose(r.times_jd, to_jd_utc(times) - np.asarray(tau) / 1440.0, rtol=0, atol=1e-9)


# ------------------------------------------------------------------------------ P and P/2


def _recover(shape, sigma=0.01, trials=60, seed=3, monkeypatch=None):
    monkeypatch.setattr(recovery, "SHAPE_DOUBLE", shape)
    t = to_jd_utc(_four_sites(6))
    return recovery.injection_recovery(
        t, min_period_h=3, max_period_h=20, trials=trials, seed=seed, sigma_mag=sigma, amplitude_range_mag=(0.3, 0.3)
    )


def test_a_symmetric_double_peaked_curve_is_not_recovered_at_its_half(monkeypatch):
    # Two identical halves (second harmonic only): nothing in the data tells P from P/2. Trials found at
    # P/2 are reported apart and are not recoveries: the recovered fraction is the share found at P.
    r = _recover(((0.0, 0.0), (1.0, 1.0), (0.0, 0.0)), monkeypatch=monkeypatch)
    half = np.mean(r.match == "half")
    assert 0.2 < half < 0.8  # a coin toss between two equally good fits
    for b in r.bins:
        assert b.fraction == pytest.approx(b.fraction_at_period)
        assert b.fraction + b.fraction_at_half_period <= 1.0 + 1e-12
    assert np.mean([b.fraction for b in r.bins]) < 0.8


def test_odd_harmonics_above_the_noise_give_the_rotation_period(monkeypatch):
    # A first harmonic 0.1 of the second (halves differ by ~0.03 mag) at σ = 0.01 mag over 720 points is
    # detected many times over: every trial at P, none at P/2 — also where the search grid alone would
    # favour P/2 (its second-harmonic peak at P is sampled twice as coarsely; prefer_longer_period refines).
    r = _recover(((0.1, 0.1), (1.0, 1.0), (0.0, 0.0)), monkeypatch=monkeypatch)
    assert np.all(r.match == "period")


def test_match_classes_by_frequency():
    # Tolerance 0.01 c/d around f (period) and 2f (half, double-peaked only).
    true, found = np.array([2.0, 2.0, 2.0]), np.array([2.005, 4.008, 3.0])
    assert list(recovery.classify_matches(true, found, 0.01)) == ["period", "half", "wrong"]
    assert list(recovery.classify_matches(true, found, 0.01, double_peaked=False)) == ["period", "wrong", "wrong"]


def test_half_period_failures_make_a_band_alias_prone():
    # A band recovered 60 %, the rest found at P/2: a confusion of periods, not missing phases.
    s = CheckSettings(min_period_h=2, max_period_h=30)
    cov = np.full(20, 0.95)
    rec = dict(n_trials=10, fraction=0.6, failures_alias=0, failures_half=4, failures_other=0)
    rec["failures_alias_expected"] = 0.0
    assert band_verdict(cov, rec, 0.1, s) == "alias-prone"
    rec.update(failures_half=0, failures_other=4)
    assert band_verdict(cov, rec, 0.1, s) == "under-covered"


def test_check_reports_half_period_trials_apart():
    r = check_times(_four_sites(6), min_period_h=3, max_period_h=20, trials=40, seed=2).to_dict()
    n_half = sum(t["match"] == "half" for t in r["recovery_trials"])
    assert n_half == sum(b["failures_half"] for b in r["bands"]) == sum(x["failures_half"] for x in r["recovery"])
    for x in r["recovery"]:
        assert x["fraction"] == pytest.approx(x["fraction_at_period"])


# ------------------------------------------------------------------------------ amplitude and phase angle


def test_amplitude_phase_factor_by_hand():
    # Zappalà et al. (1990): A(α)/A(α_ref) = (1 + m α)/(1 + m α_ref); m = 0.03, α_ref = median = 20°:
    # at 60° 2.8/1.6 = 1.75, at 0° 1/1.6 = 0.625.
    factor, ref = recovery.amplitude_phase_factor(np.array([0.0, 20.0, 60.0]))
    assert ref == 20.0
    assert factor == pytest.approx([0.625, 1.0, 1.75], rel=1e-12)
    assert recovery.AMPLITUDE_PHASE_SLOPE_BY_TYPE == {"S": 0.030, "C": 0.015, "M": 0.013}


def test_injected_amplitude_follows_each_times_phase_angle():
    # Noise-free curves sampled densely over one rotation at α = 10° and again at α = 50°: the peak-to-peak
    # range grows by (1 + 0.03 × 50)/(1 + 0.03 × 10) = 2.5/1.3.
    t = np.concatenate([np.linspace(0.0, 0.25, 2001), 10.0 + np.linspace(0.0, 0.25, 2001)])
    alpha = np.where(t < 5.0, 10.0, 50.0)
    factor, _ = recovery.amplitude_phase_factor(alpha, ref_phase_deg=10.0)
    mags = recovery.synthetic_light_curves(
        t, np.array([6.0]), np.array([0.4]), np.random.default_rng(0), amplitude_factor=factor
    )[:, 0]
    first, second = np.ptp(mags[t < 5.0]), np.ptp(mags[t >= 5.0])
    assert first == pytest.approx(0.4, rel=1e-4)
    assert second / first == pytest.approx(2.5 / 1.3, rel=1e-4)


def test_check_echoes_the_amplitude_phase_assumption():
    times = _four_sites(4)
    days = (times - times[0]).astype("timedelta64[s]").astype(float) / 86400.0
    geo = {"obs_dist_au": 0.3 + 0 * days, "phase_angle_deg": 20.0 + 10.0 * days}
    r = check_times(times, min_period_h=3, max_period_h=12, trials=20, geometry={"geocentre": geo}).to_dict()
    assert r["settings"]["amplitude_phase_slope_per_deg"] == 0.03
    assert r["settings"]["amplitude_ref_phase_deg"] == pytest.approx(float(np.median(20.0 + 10.0 * days)))
    assert (
        check_times(times, min_period_h=3, max_period_h=12, trials=0).to_dict()["settings"]["amplitude_ref_phase_deg"]
        is None
    )


def test_the_demo_plans_diagnostics_are_light_time_corrected_and_its_map_agrees(demo_folder):
    # The plan's check knows the target: its periods run on t − Δ/c, and the report's coverage map,
    # drawn from the same emission times, shows exactly the coverage the check counted.
    import json

    from planner.outputs import figstyle

    check = json.loads((demo_folder / "diagnostics.json").read_text())["plan"]
    assert check["input"]["light_time_corrected"]
    assert len(check["input"]["light_time_minutes"]) == check["input"]["n_times"]
    times = figstyle.check_times_utc(check, np.array([], dtype="datetime64[ns]"), emission=True)
    occupied = figstyle.phase_occupancy(times, np.array(check["periods_h"]), check["settings"]["phase_bins"])
    np.testing.assert_allclose(occupied.mean(axis=1), check["coverage"], atol=1e-12)


def test_trial_chunks_sized_by_memory_give_the_same_powers(monkeypatch):
    # Chunking over trials only bounds memory: one trial at a time must give the same powers and the
    # same P-versus-P/2 choices as sixteen at a time (each trial's normal equations stand alone).
    from planner.diagnostics import trialpower

    rng = np.random.default_rng(11)
    t = np.sort(2460000.5 + rng.uniform(0, 6, 300))
    y = 0.2 * np.sin(2 * np.pi * t * 24 / 7.3)[:, None] + rng.normal(0, 0.02, (t.size, 20))
    f = rng.uniform(0.8, 12.0, (20, 5))
    kw = dict(nterms=2, sigma=0.02, trend_degree=1)
    best = f[:, 0]
    wide = trialpower.trial_power(t, y, f, **kw), trialpower.prefer_longer_period(t, y, best, 0.01, 0.5, **kw)
    monkeypatch.setattr(trialpower, "_CHUNK_PHASORS", 1)
    narrow = trialpower.trial_power(t, y, f, **kw), trialpower.prefer_longer_period(t, y, best, 0.01, 0.5, **kw)
    assert np.allclose(wide[0], narrow[0], rtol=1e-12, atol=0) and np.array_equal(wide[1], narrow[1])
