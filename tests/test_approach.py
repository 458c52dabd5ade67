"""The close-approach report (planner.sky.approach): thresholds, wording and the two-body error it states."""

from __future__ import annotations

import numpy as np
import pytest

from planner.inputs.targets import load_target
from planner.sky.approach import close_approach_report, format_angle
from planner.sky.kepler import propagate
from planner.sky.nbody import body_states_au, propagate_perturbed


def test_quiet_main_belt_span_near_the_epoch():
    orbit = load_target("tests/data/mpc_minor_planets.txt", object_name="2033 AB12").orbit
    report = close_approach_report(orbit, orbit.epoch_tdb_jd - 10.0, orbit.epoch_tdb_jd + 20.0)
    assert report.warnings == ()
    assert report.min_earth_dist_au > 0.5 and report.min_jupiter_dist_au > 1.0
    assert report.max_days_from_epoch == pytest.approx(20.0)
    assert report.twobody_error_arcsec < 1.0


def test_far_from_the_epoch_warns_with_the_measured_error():
    orbit = load_target("tests/data/mpc_minor_planets.txt", object_name="2033 AB12").orbit
    t0, t1 = orbit.epoch_tdb_jd + 150.0, orbit.epoch_tdb_jd + 160.0
    report = close_approach_report(orbit, t0, t1)
    assert len(report.warnings) == 1 and "160 days from the elements' epoch" in report.warnings[0]
    # the stated error is the largest geocentric angle between the two propagations, re-measured here
    t = np.linspace(t0, t1, 41)
    pos, _ = body_states_au(("sun", "earth"), t)
    a = propagate(orbit, t)[0] + pos[:, 0] - pos[:, 1]
    b = propagate_perturbed(orbit, t)[0] + pos[:, 0] - pos[:, 1]
    sep = np.degrees(np.arctan2(np.linalg.norm(np.cross(a, b), axis=1), np.einsum("ij,ij->i", a, b))) * 3600
    assert report.twobody_error_arcsec == pytest.approx(sep.max(), rel=0.02)
    assert format_angle(report.twobody_error_arcsec) in report.warnings[0]


@pytest.mark.parametrize(
    "arcsec, text", [(0.42, "0.42 arcsec"), (12.3, "12 arcsec"), (192.0, "3.2 arcmin"), (5400.0, "1.50 deg")]
)
def test_format_angle(arcsec, text):
    assert format_angle(arcsec) == text
