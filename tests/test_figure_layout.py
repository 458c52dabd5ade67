"""The report's matplotlib figures have fixed margins: every label must still fall inside the drawing.

Margins are set in inches (planner.outputs.figstyle.fixed_margins) instead of by constrained layout,
so these checks measure each figure's text with matplotlib's own font metrics (DejaVu Sans, the first
font the SVG names) and require every axis, its tick labels, titles and legends inside the figure,
for one schedule (``phasewise check``) and for the plan beside its baseline. Axes must not overlap.
The inputs are tests/planfolder.py's hand-made plan folder.
"""

from __future__ import annotations

import itertools

import pandas as pd
import pytest
from planfolder import make_plan_folder

from planner.outputs import figures_diag, figures_sky
from planner.outputs.figstyle import baseline_series, log_series, plan_series
from planner.outputs.reader import load_plan_folder


@pytest.fixture(scope="module")
def pf(tmp_path_factory):
    return load_plan_folder(make_plan_folder(tmp_path_factory.mktemp("layout")))


def _figures(pf):
    diag = pf.diagnostics
    one = [log_series(check=diag["plan"])]
    two = [plan_series(check=diag["plan"]), baseline_series(check=diag["baseline"])]
    for series in (one, two):
        yield "coverage", figures_diag.coverage_figure(series)
        yield "window", figures_diag.spectral_window_figure(series)
        yield "recovery", figures_diag.recovery_figure(series, 2.0, 30.0)
        yield "sensitivity", figures_diag.sensitivity_figure(series)
    g = pf.geometry[pf.geometry["site"] == pf.geometry["site"].iloc[0]].copy()
    for c in ("helio_dist_au", "obs_dist_au", "phase_angle_deg", "solar_elong_deg", "mag_pred"):
        g[c] = pd.to_numeric(g[c])
    yield "geometry", figures_sky.geometry_figure(g, "Ridge North", 45.0)


def test_every_label_lies_inside_its_figure_and_axes_do_not_overlap(pf):
    for name, fig in _figures(pf):
        renderer = fig.canvas.get_renderer()
        whole = fig.bbox
        for ax in fig.axes:
            box = ax.get_tightbbox(renderer)
            assert box.x0 >= whole.x0 - 1 and box.x1 <= whole.x1 + 1, (name, box, whole)
            assert box.y0 >= whole.y0 - 1 and box.y1 <= whole.y1 + 1, (name, box, whole)
        for legend in fig.legends:
            box = legend.get_window_extent(renderer)
            assert whole.x0 <= box.x0 and box.x1 <= whole.x1 and whole.y0 <= box.y0 and box.y1 <= whole.y1, name
        for a, b in itertools.combinations(fig.axes, 2):
            assert not a.get_window_extent(renderer).overlaps(b.get_window_extent(renderer)), name
