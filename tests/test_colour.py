"""A target's colour: the magnitude in each instrument's band, and what it does to S/N, exposure and Afρ.

Sources:
- Colour indices: m_B = m_V + (B−V), m_R = m_V − (V−R), m_I = m_R − (R−I) (Johnson–Cousins, by definition).
- CCD equation, Merline & Howell (1995), Howell (2006): with sky, dark and read noise negligible,
  S/N = √(N*) with N* = rate × t, and rate ∝ 10^(−0.4 m) (Pogson 1856). So a target Δm brighter gives
  S/N higher by 10^(0.2 Δm) at a fixed exposure, and reaches a fixed S/N in 10^(−0.4 Δm) of the time.
- Afρ, A'Hearn et al. (1984), AJ 89, 579: Afρ ∝ 10^(0.4 (m_sun − m)) in one band; for a comet of solar
  colours m_sun − m is the same in every band, so Afρ does not depend on the band.
- Defaults: solar colours for comets (common practice: dust scatters sunlight); asteroid default
  from memory of C/S-type means (planner/inputs/targets.py).
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from test_targets import GOOD as COMET

from planner.core.bands import SOLAR_COLOURS, SUN_MAG_BY_BAND
from planner.core.errors import InputError
from planner.inputs.settings import ExposureRules
from planner.inputs.sites import Instrument
from planner.inputs.targets import DEFAULT_ASTEROID_COLOURS, load_target
from planner.photometry.coma import afrho_cm, coma_aperture_mag
from planner.photometry.tables import photometry_columns

RED = {"B-V": 0.90, "V-R": 0.50, "R-I": 0.40}  # an invented red body
#: Photon-limited camera: no read noise or dark, a black sky; tracking (no trailing cap).
QUIET = dict(aperture_m=1.0, pixel_scale_arcsec=0.4, read_noise_e=0.0, dark_e_per_s=0.0, zero_point_mag=18.0)
QUIET.update(seeing_arcsec=1.2, sky_mag_per_arcsec2=25.0, nonsidereal_tracking=True)
FREE = ExposureRules(snr_target=100.0, min_exposure_s=0.1, max_exposure_s=3600.0)  # the widest the rules allow


def _geom(law: str = "asteroid_hg", mag_v: float = 10.0) -> pd.DataFrame:
    frame = pd.DataFrame(
        dict(
            mag_pred=[mag_v],
            airmass=[1.0],
            alt_deg=[90.0],
            moon_alt_deg=[-30.0],
            moon_sep_deg=[120.0],
            moon_illum=[0.0],
            sun_alt_deg=[-40.0],
            motion_arcsec_per_min=[1.0],
            km_per_arcsec=[725.27],
            helio_dist_au=[1.5],
            obs_dist_au=[1.0],
        )
    )
    frame.attrs.update(mag_law=law, law_band="V")
    return frame


def _run(filter_name: str, colours, law: str = "asteroid_hg", **kw) -> pd.DataFrame:
    return photometry_columns(_geom(law), Instrument(**QUIET, filter=filter_name), FREE, colours=colours, **kw)


@pytest.mark.parametrize(
    "filter_name, delta_mag",
    [
        ("B", RED["B-V"] - SOLAR_COLOURS["B-V"]),  # 0.27 mag fainter in B than a solar-coloured body
        ("V", 0.0),
        ("R", -(RED["V-R"] - SOLAR_COLOURS["V-R"])),  # 0.12 mag brighter in R
        ("I", -(RED["V-R"] - SOLAR_COLOURS["V-R"]) - (RED["R-I"] - SOLAR_COLOURS["R-I"])),  # 0.19 mag in I
    ],
)
def test_red_target_gains_in_r_and_i_and_loses_in_b_by_its_colour_term(filter_name, delta_mag):
    solar, red = _run(filter_name, SOLAR_COLOURS), _run(filter_name, RED)
    assert red["mag_band_pred"].iloc[0] - solar["mag_band_pred"].iloc[0] == pytest.approx(delta_mag, abs=1e-12)
    assert red["band"].iloc[0] == filter_name
    # Photon-limited CCD equation: exposure for S/N 100 scales as 10^(0.4 Δm) ...
    ratio_t = red["exposure_s"].iloc[0] / solar["exposure_s"].iloc[0]
    assert ratio_t == pytest.approx(
        10 ** (0.4 * delta_mag), rel=1e-4
    )  # 1e-4: the sky (25 mag/arcsec²) next to a 10th-mag target
    # ... and S/N at a fixed exposure as 10^(−0.2 Δm).
    fixed = dict(exposure_s=60.0)
    ratio_snr = (
        _run(filter_name, RED, **fixed)["snr_pred"].iloc[0]
        / _run(filter_name, SOLAR_COLOURS, **fixed)["snr_pred"].iloc[0]
    )
    assert ratio_snr == pytest.approx(10 ** (-0.2 * delta_mag), rel=1e-4)


def test_johnson_cousins_magnitudes_follow_the_colour_indices():
    # m_B = V + (B−V), m_R = V − (V−R), m_I = V − (V−R) − (R−I), with V = 10.0 from the law.
    mags = {f: _run(f, RED)["mag_band_pred"].iloc[0] for f in "BVRI"}
    assert mags == pytest.approx({"B": 10.90, "V": 10.0, "R": 9.50, "I": 9.10}, abs=1e-12)


@pytest.mark.parametrize("filter_name", ["B", "V", "R", "I", "g", "r", "i", "z"])
def test_afrho_of_a_solar_coloured_comet_does_not_depend_on_the_band(filter_name):
    # M1 in V, solar colours: Afρ in any band equals the V-band formula (A'Hearn et al. 1984), by hand:
    # magnitude inside 10 000 km of a 1/ρ coma counted to 20 000 km is V + 2.5 log10 2 (coma_aperture_mag
    # is checked by hand in test_photometry.py).
    got = _run(filter_name, SOLAR_COLOURS, law="comet_total")["afrho_cm"].iloc[0]
    m_ap_v = 10.0 + 2.5 * np.log10(2.0)
    delta_cm, rho_cm = 1.495978707e13, 1e9
    by_hand = (2 * delta_cm * 1.5) ** 2 / rho_cm * 10 ** (0.4 * (SUN_MAG_BY_BAND["V"] - m_ap_v))
    assert got == pytest.approx(by_hand, rel=1e-9)


def test_afrho_bias_of_a_v_magnitude_used_in_r_is_gone():
    # The bias the colour term removes: a V magnitude taken as the R magnitude, with the Sun's R
    # magnitude, underestimates Afρ by 10^(−0.4 (V−R)_sun) = 10^(−0.152) ≈ 0.70, i.e. by ~30 %.
    got = _run("R", SOLAR_COLOURS, law="comet_total")["afrho_cm"].iloc[0]
    naive = float(afrho_cm(coma_aperture_mag(10.0, 1e4), SUN_MAG_BY_BAND["R"], 1.5, 1.0, 1e4))
    assert naive / got == pytest.approx(10 ** (-0.4 * SOLAR_COLOURS["V-R"]), rel=1e-9)
    assert naive / got == pytest.approx(0.70, abs=0.01)


def test_colours_come_from_the_geometry_attrs_of_the_target(tmp_path):
    # geometry() puts the target's colours and law band in the frame's attrs; photometry reads them.
    from planner.sky.geometry import geometry

    path = _write(tmp_path, ASTEROID + '[colour]\n"V-R" = 0.50\n')
    target = load_target(path)
    frame = geometry(target, np.array(["2034-03-19T00:00"], dtype="datetime64[ns]"))["geocentre"]
    assert frame.attrs["law_band"] == "V"
    assert frame.attrs["colour_indices"]["V-R"] == 0.50
    assert frame.attrs["colour_indices"]["B-V"] == DEFAULT_ASTEROID_COLOURS["B-V"]
    assert frame.attrs["colour_source"].startswith("target file, the rest")
    for c in _geom().columns:
        if c not in frame:
            frame[c] = _geom()[c].iloc[0]
    out = photometry_columns(frame, Instrument(**QUIET, filter="R"), FREE)
    assert out["mag_band_pred"].iloc[0] == pytest.approx(frame["mag_pred"].iloc[0] - 0.50, abs=1e-12)


# ------------------------------------------------------------------------------ the target file

ASTEROID = """
name = "Test asteroid"
kind = "asteroid"
[orbit]
epoch = "2034-03-01"
semimajor_axis_au = 2.5
mean_anomaly_deg = 10
eccentricity = 0.1
inclination_deg = 5
ascending_node_deg = 10
arg_perihelion_deg = 30
[brightness]
H = 14.2
"""


def _write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "t.toml"
    p.write_text(text, encoding="utf-8")
    return p


def test_defaults_by_kind(tmp_path):
    comet = load_target(_write(tmp_path, COMET))
    assert comet.colours() == (SOLAR_COLOURS, "solar (comet default)")
    assert comet.brightness.law_band == "V"
    asteroid = load_target(_write(tmp_path, ASTEROID))
    assert asteroid.colours() == (DEFAULT_ASTEROID_COLOURS, "C/S-type mean (asteroid default)")


def test_colour_table_and_law_band_read(tmp_path):
    text = COMET + 'law_band = "R"\n[colour]\n"B-V" = 0.8\n"V-R" = 0.45\n"R-I" = 0.4\n'
    t = load_target(_write(tmp_path, text))
    assert t.brightness.law_band == "R"
    assert t.colours() == ({"B-V": 0.8, "V-R": 0.45, "R-I": 0.4}, "target file")


@pytest.mark.parametrize(
    "extra, field",
    [
        ('[colour]\n"B-R" = 1.0\n', "colour.B-R"),
        ('[colour]\n"V-R" = 3.0\n', "colour.V-R"),
        ('[colour]\n"V-R" = "red"\n', "colour.V-R"),
    ],
)
def test_bad_colour_is_one_line(tmp_path, extra, field):
    with pytest.raises(InputError) as exc:
        load_target(_write(tmp_path, COMET + extra))
    assert exc.value.field == field


def test_bad_law_band_and_asteroid_law_band_refused(tmp_path):
    with pytest.raises(InputError) as exc:
        load_target(_write(tmp_path, COMET + 'law_band = "H"\n'))
    assert exc.value.field == "brightness.law_band"
    with pytest.raises(InputError) as exc:  # H,G magnitudes are V by definition (Bowell et al. 1989)
        load_target(_write(tmp_path, ASTEROID + 'law_band = "R"\n'))
    assert exc.value.field == "brightness.law_band"


def test_mpc_lines_take_the_defaults():
    # MPC one-line orbits carry no colours: comets get the Sun's, asteroids the C/S mean; both laws in V.
    data = Path(__file__).parent / "data"
    comet_line = (data / "mpc_comets.txt").read_text().splitlines()[0]
    minor_line = (data / "mpc_minor_planets.txt").read_text().splitlines()[0]
    for line, colours in ((comet_line, SOLAR_COLOURS), (minor_line, DEFAULT_ASTEROID_COLOURS)):
        path = Path(tempfile.mkdtemp()) / "one.txt"
        path.write_text(line + "\n")
        t = load_target(path)
        assert t.colours()[0] == colours and t.brightness.law_band == "V"
