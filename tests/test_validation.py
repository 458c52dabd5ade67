"""Inputs built in Python are checked when built, with the words a bad file gets; angles and durations
may be astropy Quantities; a campaign needs no file."""

from __future__ import annotations

import dataclasses

import pytest

from planner.core.errors import InputError
from planner.inputs.campaign import Campaign, load_campaign
from planner.inputs.settings import BlockRules, Compute, ExposureRules, Rotation, Weights
from planner.inputs.sites import Instrument, Site, load_site
from planner.inputs.targets import Brightness, Target, load_target
from tests.conftest import DEMO_DIR

u = pytest.importorskip("astropy.units", reason="astropy gives the Quantity and EarthLocation inputs")
coords = pytest.importorskip("astropy.coordinates", reason="astropy gives the Quantity and EarthLocation inputs")

SITE = dict(name="Test Ridge", latitude_deg=-30.0, longitude_deg=-70.5, timezone="America/Santiago")
SITE_TOML = 'name = "Test Ridge"\nlatitude_deg = -30.0\nlongitude_deg = -70.5\ntimezone = "America/Santiago"\n'


def _python_error(build) -> InputError:
    with pytest.raises(InputError) as exc:
        build()
    return exc.value


def _file_error(tmp_path, text: str, loader) -> InputError:
    path = tmp_path / "in.toml"
    path.write_text(text)
    with pytest.raises(InputError) as exc:
        loader(path)
    return exc.value


@pytest.mark.parametrize(
    ("key", "value", "toml"),
    [
        ("latitude_deg", 200.0, "200.0"),
        ("timezone", "Mars/Olympus", '"Mars/Olympus"'),
        ("timezone", "Asia/Tokyo", '"Asia/Tokyo"'),  # far from the Sun's clock in Chile: nights would split
        ("twilight", "dusk", '"dusk"'),
        ("moon_min_sep_deg", -1.0, "-1.0"),
        ("max_hour_angle_h", 0.0, "0.0"),
        ("dec_range_deg", (30.0, -30.0), "[30.0, -30.0]"),
        ("horizon", ((0.0, 20.0), (360.0, 25.0)), "[[0.0, 20.0], [360.0, 25.0]]"),
        ("name", " ", '" "'),
    ],
)
def test_a_site_built_in_python_is_refused_with_the_words_of_a_file(tmp_path, key, value, toml):
    lines = [ln for ln in SITE_TOML.splitlines() if not ln.startswith(key)] + [f"{key} = {toml}"]
    from_file = _file_error(tmp_path, "\n".join(lines) + "\n", load_site)
    from_python = _python_error(lambda: Site(**{**SITE, key: value}))
    assert from_python.file == "python" and from_file.file.endswith("in.toml")
    assert (from_python.field, from_python.message) == (from_file.field, from_file.message)


def test_the_issue_case_no_longer_computes_an_altitude():
    err = _python_error(lambda: Site(name="x", latitude_deg=200, longitude_deg=0, timezone="Mars/Olympus"))
    assert str(err) == "python: latitude_deg: 200 is outside [-90, 90]"


def test_quantities_are_taken_in_the_unit_of_the_field_name():
    s = Site(
        name="q",
        latitude_deg=-30 * u.deg,
        longitude_deg=-70.5 * u.deg,
        height_m=2.2 * u.km,
        timezone="America/Santiago",
        min_alt_deg=1800 * u.arcmin,
    )
    assert (s.latitude_deg, s.height_m, s.min_alt_deg) == (-30.0, 2200.0, 30.0)
    assert type(s.latitude_deg) is float
    inst = Instrument(aperture_m=50 * u.cm, pixel_scale_arcsec=1.2, readout_s=0.25 * u.min)
    assert (inst.aperture_m, inst.readout_s) == (0.5, 15.0)
    with pytest.raises(InputError, match="python: latitude_deg: -30.0 s is not in units convertible to deg"):
        Site(**{**SITE, "latitude_deg": -30 * u.s})


def test_a_site_from_an_earth_location_sits_where_wgs84_puts_it():
    loc = coords.EarthLocation.from_geodetic(lon=20.811 * u.deg, lat=-32.38 * u.deg, height=1750 * u.m)
    s = Site.from_earth_location("Karoo test", loc, timezone="Africa/Johannesburg", min_alt_deg=25)
    assert s.latitude_deg == pytest.approx(-32.38, abs=1e-9) and s.longitude_deg == pytest.approx(20.811, abs=1e-9)
    assert s.height_m == pytest.approx(1750.0, abs=1e-6) and s.min_alt_deg == 25.0
    # Independent route: the WGS84 ellipsoid (a = 6378137 m, 1/f = 298.257223563; NIMA TR8350.2, 2000,
    # §3 and eq. 4-14) turns the site's geodetic position back into the location's geocentric x, y, z.
    import math

    a, f = 6378137.0, 1 / 298.257223563
    e2 = f * (2 - f)
    lat, lon = math.radians(s.latitude_deg), math.radians(s.longitude_deg)
    n = a / math.sqrt(1 - e2 * math.sin(lat) ** 2)
    xyz = (
        (n + s.height_m) * math.cos(lat) * math.cos(lon),
        (n + s.height_m) * math.cos(lat) * math.sin(lon),
        (n * (1 - e2) + s.height_m) * math.sin(lat),
    )
    assert xyz == pytest.approx([loc.x.to_value(u.m), loc.y.to_value(u.m), loc.z.to_value(u.m)], abs=1e-3)


def test_orbit_and_brightness_built_in_python(tmp_path):
    target_toml = (DEMO_DIR / "c2034-b3-quillfeather.toml").read_text()
    bad = target_toml.replace("eccentricity = ", "eccentricity = -0.1 #")
    from_file = _file_error(tmp_path, bad, load_target)
    demo = load_target(DEMO_DIR / "c2034-b3-quillfeather.toml")
    from_python = _python_error(lambda: dataclasses.replace(demo.orbit, eccentricity=-0.1))
    assert from_file.field == "orbit.eccentricity" and from_python.field == "eccentricity"
    assert from_file.message == from_python.message == "-0.1 is outside [0, 1000]"
    assert "M1 and K1 go together" in str(_python_error(lambda: Brightness(M1=11.5)))
    # A bare nucleus magnitude gets the same defaults as in a file (K2 = 5, β = 0.035 mag/deg).
    assert Brightness(M2=16.0) == demo.brightness.__class__(M2=16.0, K2=5.0, phase_coeff_mag_per_deg=0.035)
    err = _python_error(lambda: Target("x", "asteroid", demo.orbit, Brightness(M1=10.0, K1=8.0)))
    assert str(err) == "python: brightness: a asteroid takes H, G, not M1, K1"
    Time = pytest.importorskip("astropy.time").Time
    orbit = dataclasses.replace(demo.orbit, epoch_tdb_jd=Time(demo.orbit.epoch_tdb_jd, format="jd", scale="tdb"))
    assert orbit.epoch_tdb_jd == pytest.approx(demo.orbit.epoch_tdb_jd, abs=1e-9)


@pytest.mark.parametrize(
    ("build", "field", "message"),
    [
        (lambda: Rotation(min_period_h=5, max_period_h=2), "max_period_h", "2 must be above min_period_h (5)"),
        (lambda: Rotation(phase_bins=2), "phase_bins", "2 is outside [4, 200]"),
        (lambda: Rotation(amplitude_mag=(0.5, 0.1)), "amplitude_mag", "[0.5, 0.1] must be [low, high]"),
        (lambda: BlockRules(min_block_h=2, max_block_h=1), "max_block_h", "1 is below min_block_h (2)"),
        (lambda: Weights(coverage=0), "coverage", "must be above 0"),
        (lambda: ExposureRules(snr_target=0.5), "snr_target", "0.5 is outside [1, 10000]"),
        (lambda: Compute(workers=0), "workers", "0 is outside [1, 4096]"),
        (lambda: Compute(dask_address=" "), "dask_address", "' ' is not a scheduler address"),
    ],
)
def test_settings_check_themselves(build, field, message):
    err = _python_error(build)
    assert err.file == "python" and err.field == field and err.message.startswith(message)


def test_campaign_file_keeps_its_dotted_names(tmp_path):
    text = (DEMO_DIR / "demo-campaign.toml").read_text().replace("max_period_h = 30.0", "max_period_h = 1.0")
    path = tmp_path / "c.toml"
    path.write_text(text.replace('"sites/', f'"{DEMO_DIR}/sites/').replace('"c2034', f'"{DEMO_DIR}/c2034'))
    with pytest.raises(InputError) as exc:
        load_campaign(path)
    assert (exc.value.file, exc.value.field) == (str(path), "rotation.max_period_h")
    assert exc.value.message == "1 must be above min_period_h (2)"


def _memory_campaign(**changes) -> Campaign:
    sites = [load_site(DEMO_DIR / "sites" / f"{n}.toml") for n in ("karoo-ridge", "quebrada-alta")]
    base = dict(
        name="memory",
        sites=sites,
        first_night="2034-03-17",
        nights=2,
        target=load_target(DEMO_DIR / "c2034-b3-quillfeather.toml"),
        weather_trials=10,
        check_trials=0,
        rotation=Rotation(min_period_h=3 * u.h, max_period_h=20, phase_bins=10, oversample=2),
    )
    return Campaign(**{**base, **changes})


def test_a_campaign_is_built_in_memory_and_checked():
    c = _memory_campaign()
    assert c.source == "python" and c.load_target().name == "C/2034 B3 (Quillfeather)"
    assert c.first_night.isoformat() == "2034-03-17" and c.rotation.min_period_h == 3.0
    assert str(_python_error(lambda: _memory_campaign(nights=0))) == "python: nights: 0 is outside [1, 366]"
    assert "missing: give target=" in str(_python_error(lambda: _memory_campaign(target=None)))
    site = c.sites[0]
    err = _python_error(lambda: _memory_campaign(sites=[site, site]))
    assert err.field == "sites" and "Karoo Ridge" in err.message
    err = _python_error(lambda: _memory_campaign(total_hours={"Nowhere": 3}))
    assert err.field == "total_hours"


@pytest.mark.slow
def test_a_campaign_in_memory_plans_as_its_files_do(tmp_path, monkeypatch):
    import planner.outputs.planfolder as planfolder
    from planner.pipeline import plan_campaign

    memory = _memory_campaign()
    toml = (
        'name = "memory"\n'
        f'target = "{DEMO_DIR}/c2034-b3-quillfeather.toml"\n'
        f'sites = ["{DEMO_DIR}/sites/karoo-ridge.toml", "{DEMO_DIR}/sites/quebrada-alta.toml"]\n'
        "first_night = 2034-03-17\nnights = 2\n"
        "[rotation]\nmin_period_h = 3\nmax_period_h = 20\nphase_bins = 10\noversample = 2\n"
        "[weather]\ntrials = 10\n[diagnostics]\ntrials = 0\n"
    )
    (tmp_path / "c.toml").write_text(toml)
    from_file = load_campaign(tmp_path / "c.toml")
    a, b = plan_campaign(memory), plan_campaign(from_file)
    assert len(a.blocks) > 0
    assert a.blocks.equals(b.blocks) and a.nights.equals(b.nights)
    monkeypatch.setattr(planfolder, "write_report", lambda folder: None)  # the report is tested on the demo
    out = planfolder.write_plan_folder(a, tmp_path / "plan")
    assert (out / "plan.csv").is_file() and not (out / "campaign.toml").exists()
    assert planfolder.plan_manifest(a)["campaign"]["file"] is None
