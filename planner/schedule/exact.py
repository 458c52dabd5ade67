"""Exact optimum of the greedy's coverage problem, as a mixed-integer programme (HiGHS via scipy).

Same ground set, constraints and objective as :mod:`planner.schedule.greedy`: binary ``x_e`` per element,
continuous ``y_c ∈ [0, 1]`` per (period, phase-bin) cell not already covered,

    maximise Σ_c y_c   subject to   y_c ≤ Σ_{e touches c} x_e,
                                    Σ_{e in site-night} x_e ≤ capacity,
                                    Σ_{e at site} length_e · x_e ≤ site budget (when set).

The maximum-coverage programme is standard (e.g. Nemhauser & Wolsey 1988, Integer and
Combinatorial Optimization). The longest-visit rule is left out, so where that rule binds the
programme is a relaxation and its value an upper bound: the measured ratio is then conservative.
Solved with ``scipy.optimize.milp`` (HiGHS); with a time limit it returns the best bound found.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np
from scipy import sparse
from scipy.optimize import Bounds, LinearConstraint, milp

from planner.schedule.planmodel import PlanModel

_CHUNK = 256
#: Largest (element, cell) incidence the exact mode builds (~50 MB of sparse matrix); beyond it HiGHS
#: rarely closes the gap in minutes and memory grows to gigabytes.
MAX_INCIDENCE = 3_000_000


@dataclass
class ExactResult:
    #: Best schedule found: its covered cells (incl. already observed) and elements.
    covered_cells: int
    elements: list[int]
    #: Upper bound on the optimum's covered cells (equals covered_cells when solved to optimality).
    upper_bound_cells: float
    optimal: bool
    seconds: float
    status: str


def exact_coverage(model: PlanModel, time_limit_s: float = 60.0, greedy_cells: int | None = None) -> ExactResult:
    """Solve the element coverage problem to optimality (or to the time limit) with HiGHS.

    When ``greedy_cells`` (the greedy's covered cells) already equals every cell, the greedy is
    optimal and no programme is built. Instances with more than MAX_INCIDENCE (element, cell)
    pairs are not attempted (status says so; the upper bound is then every cell).
    """
    t_start = time.perf_counter()
    grid = model.grid
    done = model.done_cells.ravel()
    free = np.flatnonzero(~done)
    n_e = grid.n_elements
    if greedy_cells is not None and greedy_cells >= model.n_cells:
        return ExactResult(
            int(greedy_cells),
            [],
            float(model.n_cells),
            True,
            time.perf_counter() - t_start,
            "the greedy covers every cell, so it is optimal (no programme needed)",
        )
    incidence = model.element_cells().incidence()
    if incidence > MAX_INCIDENCE:
        return ExactResult(
            int(done.sum()),
            [],
            float(model.n_cells),
            False,
            time.perf_counter() - t_start,
            f"not attempted: {incidence:,} element-cell pairs exceed {MAX_INCIDENCE:,}; "
            "the benchmark measures the gap on smaller instances",
        )
    rows, cols = [], []
    for i in range(0, n_e, _CHUNK):
        idx = np.arange(i, min(i + _CHUNK, n_e))
        m = model.element_cells().masks(idx).reshape(idx.size, -1)[:, free]
        e_loc, c_loc = np.nonzero(m)
        rows.append(c_loc)
        cols.append(idx[e_loc])
    n_c = free.size
    r = np.concatenate(rows) if rows else np.zeros(0, dtype=np.int64)
    c = np.concatenate(cols) if cols else np.zeros(0, dtype=np.int64)
    touch = sparse.csr_matrix((np.ones(r.size), (r, c)), shape=(n_c, n_e))
    # Variables: [x (n_e) | y (n_c)].
    a_cover = sparse.hstack([-touch, sparse.identity(n_c, format="csr")], format="csr")
    cons = [LinearConstraint(a_cover, -np.inf, 0.0)]
    part_rows = sparse.csr_matrix(
        (np.ones(n_e), (grid.elem_site_night, np.arange(n_e))), shape=(len(grid.site_nights), n_e)
    )
    cap = np.array([p.capacity for p in grid.site_nights], dtype=float)
    cons.append(
        LinearConstraint(sparse.hstack([part_rows, sparse.csr_matrix((len(grid.site_nights), n_c))]), -np.inf, cap)
    )
    if grid.site_budget_slots:
        site_of = np.array([grid.site_nights[p].site_index for p in grid.elem_site_night], dtype=np.int64)
        for si, budget in sorted(grid.site_budget_slots.items()):
            row = np.where(site_of == si, grid.elem_len, 0).astype(float)
            cons.append(LinearConstraint(np.concatenate([row, np.zeros(n_c)])[None, :], -np.inf, float(budget)))
    objective = np.concatenate([np.zeros(n_e), -np.ones(n_c)])
    integrality = np.concatenate([np.ones(n_e), np.zeros(n_c)])
    res = milp(
        objective,
        constraints=cons,
        integrality=integrality,
        bounds=Bounds(0.0, 1.0),
        options={"time_limit": float(time_limit_s), "disp": False},
    )
    seconds = time.perf_counter() - t_start
    n_done = int(done.sum())
    if res.x is None:
        return ExactResult(n_done, [], float(n_done + n_c), False, seconds, str(res.message))
    x = res.x[:n_e] > 0.5
    elements = [int(e) for e in np.flatnonzero(x)]
    covered = n_done + int((touch[:, x].sum(axis=1) > 0).sum()) if elements else n_done
    bound = getattr(res, "mip_dual_bound", None)
    optimal = res.status == 0
    upper = float(covered) if optimal else (n_done - float(bound) if bound is not None else float(n_done + n_c))
    return ExactResult(covered, elements, max(upper, float(covered)), optimal, seconds, str(res.message))
