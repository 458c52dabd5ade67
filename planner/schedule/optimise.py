"""The optimiser: lazy greedy on coverage plus slot credit, merge into visits (visits of one site-night
closer than the shortest visit joined or set apart), then local search on the full objective.

See :mod:`planner.schedule.greedy` for the ground set, constraints and the guarantee that holds, and
:mod:`planner.schedule.localsearch` for the moves. Pure: slot grid and model in, visits out.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from planner.schedule.greedy import GreedyResult, greedy_lazy, merge_elements
from planner.schedule.localsearch import SearchStats, local_search, separate_close_visits
from planner.schedule.objective import Terms
from planner.schedule.planmodel import PlanModel, Visit
from planner.schedule.state import PlanState


@dataclass
class Optimised:
    visits: list[Visit]
    terms: Terms
    greedy: GreedyResult
    greedy_visits: list[Visit]
    greedy_terms: Terms
    search: SearchStats
    guarantee_ratio: float | None
    guarantee: str
    seconds: dict[str, float] = field(default_factory=dict)


def optimise(model: PlanModel, seed: int, max_evaluations: int | None = None) -> Optimised:
    """Greedy (lazy gains) on coverage plus the slots' quality and hours credit, then local search on the
    full objective (``max_evaluations`` None: a budget that scales with the greedy's schedule,
    planner.schedule.localsearch.search_budget)."""
    t0 = time.perf_counter()
    cells = model.element_cells()
    t1 = time.perf_counter()
    g = greedy_lazy(model.grid, cells, model.done_cells, model.slot_credit())
    t2 = time.perf_counter()
    greedy_visits = separate_close_visits(model.grid, merge_elements(model.grid, g.elements))
    state = PlanState(model, greedy_visits)
    greedy_terms = state.current
    stats = local_search(state, cells, seed=seed, max_evaluations=max_evaluations)
    t3 = time.perf_counter()
    ratio, text = g.guarantee(model.grid)
    return Optimised(
        visits=list(state.visits),
        terms=state.current,
        greedy=g,
        greedy_visits=greedy_visits,
        greedy_terms=greedy_terms,
        search=stats,
        guarantee_ratio=ratio,
        guarantee=text,
        seconds={"elements": t1 - t0, "greedy": t2 - t1, "local_search": t3 - t2},
    )


def greedy_cells_fraction(model: PlanModel, g: GreedyResult) -> float:
    return g.covered_cells / max(model.n_cells, 1)


def total_slots(visits: list[Visit]) -> int:
    return int(np.sum([v.length for v in visits])) if visits else 0
