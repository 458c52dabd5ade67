"""Monte Carlo trials in blocks with independent random streams, run here, in local processes or on Dask.

Trials are cut into fixed *stream blocks* of :data:`STREAM_BLOCK` trials; block ``b`` draws from the
``b``-th child of ``numpy.random.SeedSequence(seed)`` (``SeedSequence.spawn``), so its numbers do not
depend on which other blocks run, where or in what order. Blocks are then grouped into tasks for the
workers; results come back in block order. The same seed therefore gives the same trials, bit for
bit, in this process, over any number of local processes (``concurrent.futures.ProcessPoolExecutor``)
or on a Dask cluster (``dask.distributed``, an optional extra).

A task function must live at module level (it is pickled) and take one :class:`TrialBlock`.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from typing import Any

import numpy as np

#: Trials per independent random stream (fixed: changing it changes the draws, not the statistics).
STREAM_BLOCK = 256
#: Estimated serial seconds below which automatic mode stays in this process (starting a worker
#: process, importing numpy and the package, takes about a second).
MIN_PARALLEL_S = 3.0
#: Rough sustained rate used for those estimates (numpy and BLAS on one core).
FLOPS_PER_S = 5e9
_BLAS_VARS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS")


@dataclass(frozen=True)
class TrialBlock:
    """Trials ``[start, stop)`` of a run, with the seed sequence of their stream block and the task's data."""

    start: int
    stop: int
    seed: np.random.SeedSequence
    data: Any

    @property
    def size(self) -> int:
        return self.stop - self.start

    def rng(self) -> np.random.Generator:
        return np.random.default_rng(self.seed)


def trial_blocks(n_trials: int, seed: int, data: Any = None) -> list[TrialBlock]:
    """The run's stream blocks: consecutive trial ranges of STREAM_BLOCK, each with its own spawned seed."""
    n_blocks = -(-int(n_trials) // STREAM_BLOCK)
    seeds = np.random.SeedSequence(int(seed)).spawn(n_blocks)
    return [
        TrialBlock(b * STREAM_BLOCK, min((b + 1) * STREAM_BLOCK, int(n_trials)), seeds[b], data)
        for b in range(n_blocks)
    ]


def available_cores() -> int:
    """CPU cores this process may run on (its affinity mask, where the system has one)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - platforms without affinity masks
        return max(1, os.cpu_count() or 1)


def workers_for(workers: int | None, n_blocks: int, cost_s: float | None = None) -> int:
    """Local processes a run of ``n_blocks`` gets: ``workers`` (None: every available core when the
    estimated serial time ``cost_s`` reaches MIN_PARALLEL_S, else 1), never more than the blocks."""
    if workers is None:
        n = available_cores() if cost_s is None or cost_s >= MIN_PARALLEL_S else 1
    else:
        n = max(1, int(workers))
    return max(1, min(n, n_blocks))


@contextlib.contextmanager
def _one_blas_thread() -> Iterator[None]:
    """Worker processes started fresh inside run one BLAS thread each (workers × threads stays at the
    cores); forked workers keep the BLAS threads this process set up."""
    old = {k: os.environ.get(k) for k in _BLAS_VARS}
    os.environ.update({k: "1" for k in _BLAS_VARS})
    try:
        yield
    finally:
        for k, v in old.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


def run_blocks(
    fn: Callable[[TrialBlock], Any],
    blocks: Sequence[TrialBlock],
    *,
    workers: int | None = 1,
    dask_address: str | None = None,
    cost_s: float | None = None,
) -> list[Any]:
    """``fn`` on every block, results in block order.

    ``dask_address``: the scheduler of a running Dask cluster (``tcp://host:8786``; the optional
    ``dask[distributed]`` extra). Otherwise ``workers`` local processes (None: every available core
    when the run's estimated serial time ``cost_s`` pays for starting them, else this process; 1, or a
    single block: in this process, no pool).
    """
    if not blocks:
        return []
    if dask_address:
        try:
            from distributed import Client
        except ImportError as e:  # pragma: no cover - depends on the environment
            raise RuntimeError("--dask needs the optional extra: pip install 'phasewise[dask]'") from e
        with Client(dask_address, set_as_default=False) as client:
            futures = client.map(fn, list(blocks), pure=False)
            return client.gather(futures)
    n = workers_for(workers, len(blocks), cost_s)
    if n == 1:
        return [fn(b) for b in blocks]
    with _one_blas_thread(), ProcessPoolExecutor(max_workers=n, mp_context=_context()) as pool:
        return list(pool.map(fn, blocks))


def _context():
    """Fork where the system has it: a forked worker starts at once and never re-runs the caller's script
    (spawn and forkserver import ``__main__`` again, which re-runs a script without a main guard)."""
    import multiprocessing

    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("fork" if "fork" in methods and os.name == "posix" else methods[0])
