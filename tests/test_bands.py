"""The Sun's magnitude per band and target colours, checked by an independent route.

Sources:
- Willmer, C. N. A. (2018), ApJS 236, 47, Table 3: the Sun's absolute magnitudes (the table in
  planner/core/bands.py, quoted from memory).
- Independent route: synthetic photometry with the data sbpy ships offline — the ASTM E490-00a (2014)
  solar spectrum, the CALSPEC Vega spectrum alpha_lyr_stis_008 (Bohlin 2014) and the Johnson/Cousins
  (STScI CDBS v4) and SDSS (2001) filter curves — as photon-counting integrals: Vega magnitudes with
  Vega = 0 in every band, AB magnitudes against 3631 Jy (Oke & Gunn 1983). Willmer used another solar
  spectrum and other curves, so agreement is expected to a few hundredths of a magnitude; U, where the
  curves differ most, to 0.08 mag.
- Pogson (1856) for magnitude differences; the distance modulus of 1 au, 5 log10(1 au / 10 pc).
"""

from __future__ import annotations

import os

import numpy as np
import pytest

from planner.core.bands import (
    AU_DISTANCE_MODULUS_MAG,
    BAND_PIVOT_NM,
    BAND_SYSTEM,
    FILTER_BANDS,
    SOLAR_COLOURS,
    SUN_ABS_MAG_BY_BAND,
    SUN_MAG_BY_BAND,
    band_minus_v_mag,
    colour_term_mag,
)

_CURVES = {
    "U": "johnson_u_004_syn.fits",
    "B": "johnson_b_004_syn.fits",
    "V": "johnson_v_004_syn.fits",
    "R": "cousins_r_004_syn.fits",
    "I": "cousins_i_004_syn.fits",
    "u": "sdss-u.fits",
    "g": "sdss-g.fits",
    "r": "sdss-r.fits",
    "i": "sdss-i.fits",
    "z": "sdss-z.fits",
}
C_ANGSTROM_PER_S = 2.99792458e18


@pytest.fixture(scope="module")
def synthetic():
    """Per band: (Sun's magnitude at 1 au in the band's system, pivot wavelength nm) by synthetic photometry."""
    sbpy = pytest.importorskip("sbpy")
    from astropy.io import fits
    from astropy.table import Table

    root = os.path.dirname(sbpy.__file__)
    sun = Table.read(os.path.join(root, "calib/data/e490-00a_2014_hires.csv"), format="ascii.ecsv")
    sun_a = np.asarray(sun["wavelength"], float) * 1e4  # µm → Å
    sun_f = np.asarray(sun["spectral irradiance"], float) * 0.1  # W m⁻² µm⁻¹ → erg s⁻¹ cm⁻² Å⁻¹
    with fits.open(os.path.join(root, "calib/data/alpha_lyr_stis_008-edit.fits")) as hdu:
        vega_a = np.asarray(hdu[1].data["WAVELENGTH"], float)
        vega_f = np.asarray(hdu[1].data["FLUX"], float)
    out = {}
    for band, name in _CURVES.items():
        with fits.open(os.path.join(root, "photometry/data", name)) as hdu:
            cols = hdu[1].columns.names
            w = np.asarray(hdu[1].data[cols[0]], float)
            t = np.asarray(hdu[1].data[cols[1]], float)

        def photons(lam, flux, w=w, t=t):
            return np.trapezoid(np.interp(w, lam, flux, left=0.0, right=0.0) * t * w, w)

        if BAND_SYSTEM[band] == "Vega":
            ref = photons(vega_a, vega_f)
        else:
            ref = np.trapezoid(3631e-23 * C_ANGSTROM_PER_S / w**2 * t * w, w)
        pivot_nm = np.sqrt(np.trapezoid(t * w, w) / np.trapezoid(t / w, w)) / 10.0
        out[band] = (-2.5 * np.log10(photons(sun_a, sun_f) / ref), pivot_nm)
    return out


@pytest.mark.filterwarnings("ignore")
@pytest.mark.parametrize("band", list(_CURVES))
def test_sun_magnitude_matches_synthetic_photometry(synthetic, band):
    # Willmer (2018) Table 3 (memory) against the independent synthetic route: 0.04 mag, U 0.08 mag.
    tol = 0.08 if band == "U" else 0.04
    assert SUN_MAG_BY_BAND[band] == pytest.approx(synthetic[band][0], abs=tol)
    assert BAND_PIVOT_NM[band] == pytest.approx(synthetic[band][1], abs=1.0)


def test_one_table_and_its_systems():
    # 1 au = 1/206264.806 pc: distance modulus −31.572; the Sun's V at 1 au ≈ −26.76 (Willmer 2018).
    assert AU_DISTANCE_MODULUS_MAG == pytest.approx(-31.572, abs=5e-4)
    assert SUN_MAG_BY_BAND["V"] == pytest.approx(-26.76, abs=0.01)
    assert all(BAND_SYSTEM[b] == "Vega" for b in "UBVRI") and all(BAND_SYSTEM[b] == "AB" for b in "ugriz")
    assert set(FILTER_BANDS.values()) == set(SUN_ABS_MAG_BY_BAND)
    # Solar colours: B−V ≈ 0.65, V−R ≈ 0.36, R−I ≈ 0.33 by the synthetic route above; the table gives
    # 0.63, 0.38, 0.33 (within 0.03).
    assert SOLAR_COLOURS == pytest.approx({"B-V": 0.63, "V-R": 0.38, "R-I": 0.33}, abs=1e-9)


def test_colours_give_the_johnson_cousins_magnitudes_exactly():
    # By the definition of colour indices: B = V + (B−V), R = V − (V−R), I = R − (R−I).
    red = {"B-V": 0.85, "V-R": 0.49, "R-I": 0.39}
    assert band_minus_v_mag("V", red) == pytest.approx(0.0, abs=1e-12)
    assert band_minus_v_mag("B", red) == pytest.approx(0.85, abs=1e-12)
    assert band_minus_v_mag("R", red) == pytest.approx(-0.49, abs=1e-12)
    assert band_minus_v_mag("I", red) == pytest.approx(-0.88, abs=1e-12)
    assert colour_term_mag("R", "V", red) == pytest.approx(0.49, abs=1e-12)


@pytest.mark.parametrize("band", list(SUN_MAG_BY_BAND))
def test_solar_coloured_body_has_the_suns_colour_in_every_band(band):
    # A body that reflects sunlight unchanged (comet dust, common practice) has m_band − m_V equal to
    # the Sun's, in every band and system.
    expect = SUN_MAG_BY_BAND[band] - SUN_MAG_BY_BAND["V"]
    assert band_minus_v_mag(band, SOLAR_COLOURS) == pytest.approx(expect, abs=1e-12)


def test_sdss_band_of_a_red_body_follows_its_reflectance():
    # Between V and R the reflectance term is linear in wavelength: r (617.6 nm) lies 0.684 of the way
    # from V (547.9) to R (647.3), so a body 0.11 mag redder than the Sun in V−R is 0.684 × 0.11 mag
    # brighter in r (relative to V) than the Sun is. Hand computation.
    red = dict(SOLAR_COLOURS, **{"V-R": SOLAR_COLOURS["V-R"] + 0.11})
    frac = (617.6 - 547.9) / (647.3 - 547.9)
    sun = SUN_MAG_BY_BAND["r"] - SUN_MAG_BY_BAND["V"]
    assert band_minus_v_mag("r", red) == pytest.approx(sun - frac * 0.11, abs=1e-9)
    # Beyond I (z) and B (U, u) the reflectance is held flat.
    assert band_minus_v_mag("z", red) - (SUN_MAG_BY_BAND["z"] - SUN_MAG_BY_BAND["V"]) == pytest.approx(-0.11)
    assert band_minus_v_mag("U", red) == pytest.approx(SUN_MAG_BY_BAND["U"] - SUN_MAG_BY_BAND["V"])
