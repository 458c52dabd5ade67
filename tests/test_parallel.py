"""Monte Carlo trials in blocks: the same seed gives the same trials here, over local processes and on Dask.

Independent streams per block follow numpy's SeedSequence.spawn (NumPy documentation, "Parallel
random number generation"): a child's stream depends only on the root seed and its spawn key.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner.core import parallel
from planner.core.parallel import STREAM_BLOCK, run_blocks, trial_blocks
from planner.diagnostics.recovery import injection_recovery
from planner.schedule import robustness
from planner.schedule.robustness import weather_monte_carlo
from tests.schedule_helpers import model_for


def _draw(block):
    return block.rng().random(block.size)


def test_blocks_cover_the_trials_with_spawned_streams():
    blocks = trial_blocks(2 * STREAM_BLOCK + 7, seed=11)
    assert [(b.start, b.stop) for b in blocks] == [
        (0, STREAM_BLOCK),
        (STREAM_BLOCK, 2 * STREAM_BLOCK),
        (2 * STREAM_BLOCK, 2 * STREAM_BLOCK + 7),
    ]
    # Block b draws from the b-th child of SeedSequence(seed), the documented way to split a stream.
    child = np.random.SeedSequence(11).spawn(3)[2]
    assert np.array_equal(_draw(blocks[2]), np.random.default_rng(child).random(7))
    # A longer run keeps the first blocks' draws: the streams do not depend on how many blocks run.
    longer = trial_blocks(5 * STREAM_BLOCK, seed=11)
    assert np.array_equal(_draw(longer[1]), _draw(blocks[1]))


def test_automatic_mode_keeps_small_runs_in_this_process():
    assert parallel.workers_for(None, 8, cost_s=0.1) == 1
    assert parallel.workers_for(None, 8, cost_s=1e3) == parallel.available_cores()
    assert parallel.workers_for(4, 2) == 2  # never more workers than blocks


@pytest.fixture(scope="module")
def times_jd():
    rng = np.random.default_rng(3)
    nights = [n + s / 3 + np.sort(rng.uniform(0, 0.25, 10)) for n in range(4) for s in range(3)]
    return 2463000.5 + np.sort(np.concatenate(nights))


def _recovery(times_jd, **kw):
    r = injection_recovery(times_jd, min_period_h=2, max_period_h=20, trials=300, seed=5, **kw)
    return np.column_stack([r.true_period_h, r.found_period_h, r.amplitude_mag])


def test_injection_trials_are_the_same_in_one_process_and_over_two(times_jd):
    here = _recovery(times_jd, workers=1)
    assert here.shape == (300, 3)
    assert np.array_equal(_recovery(times_jd, workers=2), here)


def test_weather_trials_do_not_depend_on_workers_or_chunks(monkeypatch):
    model, _, _ = model_for(n_sites=3, n_nights=3, n_periods=40, n_bins=12, seed=2)
    from planner.schedule.optimise import optimise

    visits = optimise(model, seed=1, max_evaluations=200).visits
    ref = weather_monte_carlo(model, visits, trials=600, seed=9, workers=1)
    assert weather_monte_carlo(model, visits, trials=600, seed=9, workers=2) == ref
    monkeypatch.setattr(robustness, "_CHUNK_BYTES", 4_000)  # a few periods per chunk
    assert weather_monte_carlo(model, visits, trials=600, seed=9, workers=1) == ref
    other = weather_monte_carlo(model, visits, trials=600, seed=10, workers=1)
    assert other != ref  # another seed, other draws


@pytest.mark.slow
def test_dask_cluster_gives_the_same_trials(times_jd):
    distributed = pytest.importorskip("distributed", reason="the optional dask extra is not installed")
    with distributed.LocalCluster(n_workers=2, processes=False, dashboard_address=None) as cluster:
        on_dask = _recovery(times_jd, dask_address=cluster.scheduler_address)
        blocks = trial_blocks(3 * STREAM_BLOCK, seed=4)
        draws = run_blocks(_draw, blocks, dask_address=cluster.scheduler_address)
    assert np.array_equal(on_dask, _recovery(times_jd, workers=1))
    assert all(np.array_equal(a, _draw(b)) for a, b in zip(draws, blocks, strict=True))
