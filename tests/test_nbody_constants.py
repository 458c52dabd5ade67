"""The GM values planner.sky.nbody uses, checked against the bundled DE421 file itself.

DE421's header constants (Folkner, Williams & Boggs 2008, JPL IOM 343R-08-003) are quoted in
planner.sky.nbody from memory; the file does not carry them. Two independent confirmations:

- GM☉ = k², the Gaussian constant squared (IAU 1976), which the DE421 au is defined to satisfy.
- The solar-system barycentre: M☉ r☉ + Σ mᵢ rᵢ = 0 for the barycentric positions in the file, so a
  least-squares fit of the Sun's wobble over 1900–2053 returns each planet system's GM/GM☉. The outer
  planets dominate the wobble and come out to ~1e-7; the inner ones less well.
- The Earth and Moon segments are both referred to the Earth–Moon barycentre, so their length ratio
  is the Earth/Moon mass ratio.
"""

from __future__ import annotations

import numpy as np
import pytest

from planner.core.constants import GAUSS_K
from planner.sky import nbody


def test_gm_sun_is_gauss_constant_squared():
    # IAU 1976: k = 0.01720209895; DE421 GMS = 2.959122082855911e-4 au³/d² (Folkner et al. 2008, memory)
    assert nbody.BODIES["sun"][1] == pytest.approx(GAUSS_K**2, rel=1e-15)
    assert nbody.BODIES["sun"][1] == pytest.approx(2.959122082855911e-4, rel=1e-15)


def test_earth_moon_ratio_from_the_file():
    spk = nbody.planets().spk
    t = np.linspace(2416000.5, 2470000.5, 40)
    moon = spk.pairs[(3, 301)].compute(t)
    earth = spk.pairs[(3, 399)].compute(t)
    ratio = np.linalg.norm(moon, axis=0) / np.linalg.norm(earth, axis=0)
    assert ratio == pytest.approx(nbody.EARTH_MOON_MASS_RATIO, rel=1e-12)
    gm_earth, gm_moon = nbody.BODIES["earth"][1], nbody.BODIES["moon"][1]
    assert gm_earth / gm_moon == pytest.approx(nbody.EARTH_MOON_MASS_RATIO, rel=1e-14)
    assert gm_earth + gm_moon == pytest.approx(nbody.GM_EMB_AU3_D2, rel=1e-15)


@pytest.mark.parametrize(
    "name, segment, rel_tol",
    [
        ("jupiter", 5, 1e-6),
        ("saturn", 6, 1e-5),
        ("uranus", 7, 1e-5),
        ("neptune", 8, 1e-5),
        ("venus", 2, 1e-4),
        ("earth+moon", 3, 1e-4),
        ("mars", 4, 1e-3),
        ("mercury", 1, 5e-3),
    ],
)
def test_planet_masses_from_the_suns_wobble(name, segment, rel_tol):
    spk = nbody.planets().spk
    t = np.linspace(2415000.5, 2471000.5, 4000)
    sun = spk.pairs[(0, 10)].compute(t).ravel()
    design = np.stack([spk.pairs[(0, k)].compute(t).ravel() for k in range(1, 10)], axis=1)
    ratios, *_ = np.linalg.lstsq(design, -sun, rcond=None)  # GMᵢ / GM☉, Pluto included in the fit
    fitted = ratios[segment - 1] * nbody.BODIES["sun"][1]
    if name == "earth+moon":
        ours = nbody.BODIES["earth"][1] + nbody.BODIES["moon"][1]
    else:
        ours = nbody.BODIES[name][1]
    assert fitted == pytest.approx(ours, rel=rel_tol)
