"""Brightness laws against published definitions and a reference library (sbpy)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from planner.inputs.targets import Brightness
from planner.sky.brightness import (
    LAW_HG,
    LAW_NONE,
    LAW_NUCLEAR,
    LAW_TOTAL,
    comet_nuclear_mag,
    comet_total_mag,
    hg_mag,
    predicted_mag,
)


def test_hg_matches_sbpy():
    # Bowell et al. (1989), Asteroids II, 524: H,G system; sbpy.photometry.HG implements it (reduced
    # magnitude), we add 5 log10(r Δ) for the apparent magnitude.
    import astropy.units as u

    HG = pytest.importorskip("sbpy.photometry", reason="sbpy (optional reference library) is not installed").HG

    alpha = np.array([0.0, 0.5, 2.0, 7.5, 15.0, 30.0, 60.0, 100.0])
    r, delta = 2.3, 1.4
    for h, g in ((15.0, 0.15), (12.3, 0.4), (18.0, -0.05)):
        ref = HG(H=h * u.mag, G=g)(np.radians(alpha) * u.rad).to_value(u.mag) + 5 * math.log10(r * delta)
        assert np.allclose(hg_mag(h, g, r, delta, alpha), ref, atol=1e-9)


def test_hg_at_zero_phase_and_unit_distances_is_h():
    # Definition of H: the magnitude at r = Δ = 1 au and α = 0 (Bowell et al. 1989).
    assert hg_mag(14.2, 0.15, 1.0, 1.0, 0.0) == pytest.approx(14.2, abs=1e-12)


def test_pogson_ratio_and_k1_convention():
    # Pogson (1856): Δm = 1 is a flux ratio 10^0.4 = 2.512; Δm = 5 is 100. A brightness ∝ r^-n gives
    # K1 = 2.5 n (comet total law), so doubling r with K1 = 10 (n = 4) dims the comet 16×.
    assert 10 ** (0.4 * 1.0) == pytest.approx(2.512, abs=5e-4)
    m1 = comet_total_mag(11.0, 10.0, 1.0, 1.0)
    m2 = comet_total_mag(11.0, 10.0, 2.0, 1.0)
    assert 10 ** (0.4 * (m2 - m1)) == pytest.approx(2.0**4, rel=1e-12)
    # Δ enters as 5 log Δ: 10× farther is 100× fainter (inverse square).
    assert 10 ** (0.4 * (comet_total_mag(11.0, 10.0, 1.0, 10.0) - m1)) == pytest.approx(100.0, rel=1e-12)


def test_nuclear_law_phase_term():
    # m = M2 + 5 log Δ + K2 log r + β α: 20° at 0.035 mag/deg adds 0.7 mag (common practice value of β).
    base = comet_nuclear_mag(16.0, 5.0, 0.035, 1.5, 0.6, 0.0)
    assert comet_nuclear_mag(16.0, 5.0, 0.035, 1.5, 0.6, 20.0) - base == pytest.approx(0.7, abs=1e-12)
    assert base == pytest.approx(16.0 + 5 * math.log10(0.6) + 5 * math.log10(1.5), abs=1e-12)


def test_law_selection():
    r, d, a = np.array([1.5]), np.array([0.6]), np.array([20.0])
    assert (
        predicted_mag("comet", Brightness(M1=11, K1=10, M2=16, K2=5, phase_coeff_mag_per_deg=0.03), r, d, a)[1]
        == LAW_TOTAL
    )
    nucleus = Brightness(M2=16, K2=5, phase_coeff_mag_per_deg=0.03)
    assert predicted_mag("comet", nucleus, r, d, a)[1] == LAW_NUCLEAR
    assert predicted_mag("asteroid", Brightness(H=15, G=0.15), r, d, a)[1] == LAW_HG
    mag, law = predicted_mag("comet", Brightness(), r, d, a)
    assert law == LAW_NONE and np.isnan(mag).all()
