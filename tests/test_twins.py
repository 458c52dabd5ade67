"""Every fast kernel beside its slow, obvious twin, in one table (docs/architecture.md, "Fast kernels").

Each row builds one seeded, realistic input, runs both implementations and compares the results. The
module tests add wide property tests (hypothesis) for the same pairs; this table makes sure no pair is
ever left without a comparison. A new kernel with a twin gets a row here.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pytest
from schedule_helpers import model_for

from planner.diagnostics import coverage, periodogram, sensitivity, specwindow, trialpower
from planner.inputs.targets import Orbit
from planner.photometry import ccd
from planner.schedule import greedy, objective, quality
from planner.sky import kepler
from planner.visibility import intervals

T0_JD = 2462000.5  # an epoch in 2028


def _times(rng: np.random.Generator, n: int = 120, span_d: float = 7.0) -> np.ndarray:
    return T0_JD + np.sort(rng.uniform(0.0, span_d, n))


@dataclass(frozen=True)
class Twin:
    name: str
    #: (rng) -> (fast result, slow result)
    run: Callable[[np.random.Generator], tuple[object, object]]
    rtol: float = 1e-9
    atol: float = 0.0


def _kepler(rng):
    orbit = Orbit(
        epoch_tdb_jd=T0_JD,
        perihelion_dist_au=0.9,
        eccentricity=1.3,
        inclination_deg=40.0,
        ascending_node_deg=120.0,
        arg_perihelion_deg=200.0,
        perihelion_tdb_jd=T0_JD + 10.0,
    )
    t = T0_JD + np.linspace(-200.0, 200.0, 25)
    return kepler.propagate(orbit, t)[0], kepler.propagate_reference(orbit, t)[0]


def _perturbed(rng):
    from planner.sky import nbody

    orbit = Orbit(
        epoch_tdb_jd=T0_JD,
        perihelion_dist_au=2.1,
        eccentricity=0.15,
        inclination_deg=8.0,
        ascending_node_deg=80.0,
        arg_perihelion_deg=140.0,
        perihelion_tdb_jd=T0_JD - 300.0,
    )
    t = T0_JD + np.sort(rng.uniform(1.0, 20.0, 4))
    return nbody.propagate_perturbed(orbit, t)[0], nbody.propagate_perturbed_exact(orbit, t)[0]


def _true_runs(rng):
    mask = rng.random(400) < 0.6
    segment = np.cumsum(rng.random(400) < 0.05)
    return np.concatenate(intervals.true_runs(mask, segment)), np.concatenate(intervals.true_runs_slow(mask, segment))


def _refine_edges(rng):
    t_in = np.datetime64("2034-03-16T20:00", "ns") + (rng.uniform(0, 3600, 6) * 1e9).astype("timedelta64[ns]")
    cross = t_in + (rng.uniform(1, 290, 6) * 1e9).astype("timedelta64[ns]")
    t_out = t_in + np.timedelta64(300, "s")
    fast = intervals.refine_edges(lambda t: t < cross, t_in, t_out, 1.0)[0]
    slow = [
        intervals.refine_edge_slow(lambda t, c=c: t < c, a, b, 1.0) for a, b, c in zip(t_in, t_out, cross, strict=True)
    ]
    return fast.astype(np.int64) / 1e9, np.array(slow, dtype="datetime64[ns]").astype(np.int64) / 1e9


def _exposure(rng):
    args = [
        (float(s), float(f), float(k), 0.1, 8.0, float(n))
        for s, f, k, n in zip(
            rng.uniform(5, 200, 8), rng.uniform(10, 1e4, 8), rng.uniform(0.1, 50, 8), rng.uniform(5, 80, 8), strict=True
        )
    ]
    fast = [float(ccd.exposure_for_snr_s(*a)) for a in args]
    return np.array(fast), np.array([ccd.exposure_for_snr_s_slow(*a) for a in args])


def _coverage(rng):
    t, p = _times(rng), np.geomspace(2.0, 30.0, 60)
    return np.concatenate(coverage.phase_coverage(t, p, 20)), np.concatenate(coverage.phase_coverage_slow(t, p, 20))


def _window(rng):
    t, f = _times(rng), np.linspace(0.01, 5.0, 300)
    w = rng.uniform(0.5, 2.0, t.size)
    return specwindow.spectral_window(t, f, w), specwindow.spectral_window_slow(t, f, w)


def _nyquist(rng):
    t = T0_JD + np.round(np.sort(rng.uniform(0.0, 5.0, 60)) * 86400.0 / 60.0) * 60.0 / 86400.0
    return specwindow.nyquist_freq_per_day(t), specwindow.nyquist_freq_per_day_slow(t)


def _periodogram(rng):
    t = _times(rng, 80)
    y = 0.2 * np.sin(2 * np.pi * t * 24 / 7.3)[:, None] + rng.normal(0, 0.02, (t.size, 3))
    f = np.linspace(0.8, 12.0, 40)
    kw = dict(nterms=2, sigma=0.02, trend_degree=1)
    return periodogram.multiharmonic_power(t, y, f, **kw), periodogram.multiharmonic_power_slow(t, y, f, **kw)


def _trial_power(rng):
    # Each trial at its own frequencies (recovery's P-versus-P/2 step) against the lstsq periodogram.
    t = _times(rng, 80)
    y = 0.2 * np.sin(2 * np.pi * t * 24 / 7.3)[:, None] + rng.normal(0, 0.02, (t.size, 3))
    f = rng.uniform(0.8, 12.0, (3, 5))
    kw = dict(nterms=2, sigma=0.02, trend_degree=1)
    slow = np.stack([periodogram.multiharmonic_power_slow(t, y[:, j], f[j], **kw) for j in range(3)])
    return trialpower.trial_power(t, y, f, **kw), slow


def _fading(rng):
    t, p, s = _times(rng, 60), rng.uniform(2, 30, 5), rng.uniform(0.005, 0.05, 60)
    return sensitivity.fading_rate_sigma(t, p, s, 2), sensitivity.fading_rate_sigma_slow(t, p, s, 2)


def _frequency(rng):
    t, p, s = _times(rng, 60), rng.uniform(2, 30, 5), rng.uniform(0.005, 0.05, 60)
    return (sensitivity.frequency_sigma(t, p, s, 0.3, 2, 2), sensitivity.frequency_sigma_slow(t, p, s, 0.3, 2, 2))


def _slot_quality(rng):
    prec, x = rng.uniform(0, 1e4, 50), rng.uniform(1.0, 3.0, 50)
    return quality.slot_quality(prec, x, 2.0, 1e4), quality.slot_quality_slow(prec, x, 2.0, 1e4)


def _arc_mask(rng):
    t0 = rng.uniform(0, 100, 5)
    t1, p = t0 + rng.uniform(0, 5, 5), np.geomspace(2, 30, 9)
    return objective.arc_mask(t0, t1, p, 12), objective.arc_mask_slow(t0, t1, p, 12)


def _arc_gains(rng):
    from planner.schedule import cells

    t0 = rng.uniform(0, 200, 9)
    t1, p, covered = t0 + rng.uniform(0, 8, 9), np.geomspace(2, 30, 7), rng.random((7, 11)) < 0.5
    return cells.arc_gains(t0, t1, p, 11, covered), cells.arc_gains_slow(t0, t1, p, 11, covered)


def _window_sum(rng):
    t0, n, nu = rng.uniform(0, 100, 4), rng.integers(1, 40, 4), np.linspace(0.05, 6.0, 37)
    return objective.window_sum(t0, n, 5 / 60, nu), objective.window_sum_slow(t0, n, 5 / 60, nu)


def _excess_gap(rng):
    a = np.sort(rng.uniform(0, 100, 8))
    iv = np.stack([a, a + rng.uniform(0, 5, 8)], axis=1)
    return objective.excess_gap_h(iv, (0.0, 130.0), 12.0), objective.excess_gap_h_slow(iv, (0.0, 130.0), 12.0)


def _visit_phasors(rng):
    model, _, _ = model_for(n_sites=2, n_nights=2, n_periods=20, n_bins=10, seed=int(rng.integers(100)))
    fast, slow = [], []
    for p, sn in enumerate(model.grid.site_nights):
        a, b = sn.intervals[0]
        length = max(1, (b - a) // 2)
        fast.append(model.visit_phasors(p, a, length)[0])
        slow.append(model.visit_phasors_slow(p, a, length)[0])
    return np.concatenate(fast), np.concatenate(slow)


def _harmonic_chi2(rng):
    from planner.diagnostics import harmonic_lsq

    t = np.sort(rng.uniform(0.0, 6.0, 90))
    y = 0.3 * np.cos(2 * np.pi * t * 3.1)[:, None] + rng.normal(0, 0.03, (90, 2))
    fixed = np.column_stack([np.ones(90), (t > 3).astype(float), t])
    prior = np.array([0.0, 0.0, 1.0 / 0.02**2])
    f = np.linspace(0.5, 8.0, 30)
    kw = dict(nterms=2, fixed=fixed, prior_precision=prior)
    w = rng.uniform(500, 3000, 90)
    return (harmonic_lsq.harmonic_chi2(t, y, w, f, **kw).chi2, harmonic_lsq.harmonic_chi2_slow(t, y, w, f, **kw).chi2)


def _candidate_models(rng, periods, mean_step=0.0):
    from planner.lightcurve.discriminate import CandidateModel

    return [
        CandidateModel(
            period_h=p,
            delta_chi2=0.0,
            t_ref_jd=T0_JD,
            mean_mag=15.0 + mean_step * k,
            k1=10.0,
            log10_r_ref=0.1,
            harmonics=rng.normal(0, 0.1, 4),
        )
        for k, p in enumerate(periods)
    ]


def _discrimination(rng):
    from planner.lightcurve.discriminate import expected_min_delta_chi2, expected_min_delta_chi2_slow

    models = _candidate_models(rng, (6.0, 8.0, 12.0))
    t, r = _times(rng, 40), rng.uniform(1.2, 1.3, 40)
    return (expected_min_delta_chi2(t, 0.02, models, r), expected_min_delta_chi2_slow(t, 0.02, models, r))


class _gridded:
    """Force the Gaussian-gridding route of the trig sums on a test-sized problem (thresholds to zero)."""

    def __enter__(self):
        from planner.diagnostics import harmonic_lsq, trigsums

        self.saved = [
            (trigsums, "_DIRECT_BELOW", 0),
            (harmonic_lsq, "_SUMS_FROM", 0),
            (specwindow, "_GRIDDED_FROM", 0),
            (sensitivity, "_GRIDDED_FROM", 0),
        ]
        self.saved = [(m, k, getattr(m, k), v) for m, k, v in self.saved]
        for m, k, _, v in self.saved:
            setattr(m, k, v)

    def __exit__(self, *exc):
        for m, k, old, _ in self.saved:
            setattr(m, k, old)


def _trig_sums(rng):
    from planner.diagnostics import trigsums

    t = rng.uniform(-4.0, 4.0, 150)
    c = rng.normal(size=(150, 3)) + 1j * rng.normal(size=(150, 3))
    with _gridded():
        fast = trigsums.trig_sums(t, c, 0.7, 0.013, 300)
    return fast, trigsums.trig_sums_slow(t, c, 0.7, 0.013, 300)


def _harmonic_chi2_gridded(rng):
    from planner.diagnostics import harmonic_lsq

    t = np.sort(rng.uniform(0.0, 6.0, 80))
    y = 0.3 * np.cos(2 * np.pi * t * 3.1)[:, None] + rng.normal(0, 0.03, (80, 2))
    fixed = np.column_stack([np.ones(80), t])
    f = np.linspace(0.5, 8.0, 120)
    w = rng.uniform(500, 3000, 80)
    with _gridded():
        fast = harmonic_lsq.harmonic_chi2(t, y, w, f, 2, fixed=fixed).chi2
    return fast, harmonic_lsq.harmonic_chi2_slow(t, y, w, f, 2, fixed=fixed).chi2


def _window_gridded(rng):
    t, w = _times(rng), rng.uniform(0.5, 2.0, 120)
    f = np.linspace(0.0, 5.0, 200)
    with _gridded():
        fast = specwindow.spectral_window(t, f, w)
    return fast, specwindow.spectral_window_slow(t, f, w)


def _fading_gridded(rng):
    t, s = _times(rng, 60), rng.uniform(0.005, 0.05, 60)
    p = 1.0 / np.linspace(1 / 2.0, 1 / 30.0, 150)
    with _gridded():
        fast = sensitivity.fading_rate_sigma(t, p, s, 2)
    return fast, sensitivity.fading_rate_sigma_slow(t, p, s, 2)


def _discrimination_groups(rng):
    from planner.lightcurve.discriminate import expected_min_delta_chi2, expected_min_delta_chi2_slow

    models = _candidate_models(rng, (7.0, 9.5, 13.0), mean_step=0.05)
    t, r = _times(rng, 40), rng.uniform(1.2, 1.3, 40)
    sigma, groups = rng.uniform(0.01, 0.05, 40), rng.integers(0, 4, 40)
    return (
        expected_min_delta_chi2(t, sigma, models, r, groups),
        expected_min_delta_chi2_slow(t, sigma, models, r, groups),
    )


def _visit_moments(rng):
    from planner.schedule.discrimination import SlotMoments

    model, _, _ = model_for(n_sites=2, n_nights=2, n_periods=20, n_bins=10, seed=int(rng.integers(100)))
    n = model.grid.part_spans()[2]
    model.slot_moments = SlotMoments([rng.normal(0, 0.1, (3, n))], [rng.uniform(100, 3000, n)])
    fast, slow = [], []
    for p, sn in enumerate(model.grid.site_nights):
        a, b = sn.intervals[0]
        length = max(4, (b - a) // 2)
        s0, s1, s2 = model.visit_moments(np.array([p]), np.array([a]), np.array([length]))
        t0, t1, t2 = model.visit_moments_slow(p, a, length)
        fast.append(np.r_[s0, s1[0], s2[0]])
        slow.append(np.r_[t0, t1, t2])
    return np.concatenate(fast), np.concatenate(slow)


def _soft_minimum(rng):
    d = rng.uniform(0.0, 60.0, (6, 5))
    fast = [objective.discrimination(row) for row in d]
    slow = [objective.discrimination_slow(row) for row in d]
    return np.array(fast), np.array(slow)


def _greedy(rng):
    model, _, _ = model_for(n_sites=2, n_nights=2, n_periods=24, n_bins=10, seed=int(rng.integers(100)))
    cells, start = model.element_cells(), model.done_cells
    lazy, plain = greedy.greedy_lazy(model.grid, cells, start), greedy.greedy_plain(model.grid, cells, start)
    return np.array(lazy.elements), np.array(plain.elements)


def _ecsv_frame(rng):
    import pandas as pd

    n = 300
    alt = rng.uniform(-90.0, 90.0, n)
    return pd.DataFrame(
        {
            "site": rng.choice(["Karoo Ridge", "Salmon Gum", 'Quebrada "Alta"', ""], n),
            "time_utc": np.datetime64("2034-03-15T00:00", "ns") + np.sort(rng.integers(0, 30 * 86_400_000_000_000, n)),
            "alt_deg": alt,
            "airmass": np.where(alt > 0, 1.0 / np.sin(np.radians(np.maximum(alt, 1.0))), np.nan),
            "mag_pred": rng.normal(14.0, 2.0, n) * 10.0 ** rng.integers(-8, 9, n),
            "low_solar_elong": alt < -30.0,
            "n_exposures": rng.integers(0, 500, n),
        }
    )


def _ecsv(rng):
    from planner.outputs.tablefiles import as_qtable, ecsv_table_text, ecsv_table_text_slow

    qt = as_qtable(_ecsv_frame(rng), {"table": "twin"})
    text = [np.frombuffer(f(qt, "%.6g").encode(), np.uint8) for f in (ecsv_table_text, ecsv_table_text_slow)]
    return text[0], text[1]


def _time_column(rng):
    from planner.outputs.tablefiles import _time_column, _time_column_slow

    t = _ecsv_frame(rng)["time_utc"]
    fast, slow = _time_column(t), _time_column_slow(t)
    return np.r_[fast.jd1, fast.jd2], np.r_[slow.jd1, slow.jd2]


TWINS = [
    Twin("kepler.propagate", _kepler, rtol=1e-10, atol=1e-10),
    Twin("nbody.propagate_perturbed", _perturbed, rtol=0.0, atol=1e-10),
    Twin("intervals.true_runs", _true_runs),
    Twin("intervals.refine_edges", _refine_edges, atol=1.0),
    Twin("ccd.exposure_for_snr_s", _exposure, rtol=1e-9),
    Twin("coverage.phase_coverage", _coverage, atol=coverage.GAP_RESOLUTION_CYCLES),
    Twin("specwindow.spectral_window", _window, rtol=1e-9, atol=1e-12),
    Twin("specwindow.nyquist_freq_per_day", _nyquist),
    Twin("periodogram.multiharmonic_power", _periodogram, rtol=1e-8, atol=1e-10),
    Twin("trialpower.trial_power", _trial_power, rtol=1e-8, atol=1e-10),
    Twin("sensitivity.fading_rate_sigma", _fading, rtol=1e-6),
    Twin("sensitivity.frequency_sigma", _frequency, rtol=1e-6),
    Twin("quality.slot_quality", _slot_quality),
    Twin("objective.arc_mask", _arc_mask),
    Twin("cells.arc_gains", _arc_gains),
    Twin("objective.window_sum", _window_sum, rtol=1e-9, atol=1e-9),
    Twin("objective.excess_gap_h", _excess_gap, rtol=1e-12),
    Twin("planmodel.PlanModel.visit_phasors", _visit_phasors, rtol=1e-9, atol=1e-9),
    Twin("greedy.greedy_lazy", _greedy),
    Twin("trigsums.trig_sums (gridded)", _trig_sums, rtol=0.0, atol=1e-11),
    Twin("harmonic_lsq.harmonic_chi2 (gridded sums)", _harmonic_chi2_gridded, rtol=1e-8, atol=1e-8),
    Twin("specwindow.spectral_window (gridded)", _window_gridded, rtol=1e-9, atol=1e-12),
    Twin("sensitivity.fading_rate_sigma (gridded)", _fading_gridded, rtol=1e-6),
    Twin("harmonic_lsq.harmonic_chi2", _harmonic_chi2, rtol=1e-8, atol=1e-8),
    Twin("discriminate.expected_min_delta_chi2", _discrimination, rtol=1e-9),
    Twin("discriminate.expected_min_delta_chi2 (free zero point per group)", _discrimination_groups, rtol=1e-9),
    Twin("planmodel.PlanModel.visit_moments", _visit_moments, rtol=1e-9, atol=1e-9),
    Twin("objective.discrimination", _soft_minimum, rtol=1e-12),
    Twin("tablefiles.ecsv_table_text (astropy's ECSV writer, the same bytes)", _ecsv),
    Twin("tablefiles._time_column (astropy's datetime64 parser, the same jd1, jd2)", _time_column, rtol=0.0),
]


@pytest.mark.parametrize("twin", TWINS, ids=[t.name for t in TWINS])
@pytest.mark.parametrize("seed", [1, 2])
def test_fast_kernel_equals_its_slow_twin(twin: Twin, seed: int):
    fast, slow = twin.run(np.random.default_rng(seed))
    fast, slow = np.asarray(fast), np.asarray(slow)
    assert fast.shape == slow.shape, twin.name
    if fast.dtype == bool or np.issubdtype(fast.dtype, np.integer):
        assert np.array_equal(fast, slow), twin.name
    else:
        np.testing.assert_allclose(fast, slow, rtol=twin.rtol, atol=twin.atol, err_msg=twin.name)
