"""Site files: the demo sites load; bad files give one line naming file and field (exit 2 from the CLI)."""

from __future__ import annotations

import numpy as np
import pytest

from planner.core.errors import InputError
from planner.inputs.sites import Site, load_site
from tests.conftest import DEMO_DIR

GOOD = """
name = "Test Ridge"
latitude_deg = -30.0
longitude_deg = -70.5
timezone = "America/Santiago"
"""


def _write(tmp_path, text, name="site.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_demo_sites_load(root):
    names = {load_site(p).name for p in sorted((DEMO_DIR / "sites").glob("*.toml"))}
    assert names == {"Kahili Summit", "Karoo Ridge", "Quebrada Alta", "Salmon Gum"}


def test_longitude_is_normalised_to_minus_180_to_180(tmp_path):
    # 289.5° E and 70.5° W are the same meridian.
    s = load_site(_write(tmp_path, GOOD.replace("-70.5", "289.5")))
    assert s.longitude_deg == pytest.approx(-70.5)
    assert load_site(_write(tmp_path, GOOD)).longitude_deg == -70.5


def test_horizon_mask_is_periodic_and_never_below_min_alt():
    s = Site(
        name="m",
        latitude_deg=0,
        longitude_deg=0,
        min_alt_deg=20,
        horizon=((0.0, 30.0), (90.0, 50.0), (180.0, 10.0), (270.0, 30.0)),
    )
    # Linear interpolation: halfway between (0°, 30°) and (90°, 50°) is 40°; 10° is lifted to min_alt 20°;
    # across north, 315° lies between (270°, 30°) and (360° ≡ 0°, 30°).
    assert np.allclose(s.horizon_alt_deg(np.array([45.0, 180.0, 315.0, 405.0])), [40.0, 20.0, 30.0, 40.0])


BAD = [
    ("latitude_deg = 95.0", "latitude_deg"),
    ('twilight = "dusk"', "twilight"),
    ("horizon = [[0, 20], [360, 25]]", "horizon"),  # 0 and 360 are the same azimuth
    ("horizon = [[400, 20]]", "horizon"),
    ('horizon = [[10, "high"]]', "horizon"),
    ("dec_range_deg = [30, -30]", "dec_range_deg"),
    ("moon_min_sep_deg = -1", "moon_min_sep_deg"),
    ("seeing = 2", "seeing"),  # unknown key: a typo must not fall back to a default
    ('timezone = "Mars/Olympus"', "timezone"),
    ('timezone = "Asia/Tokyo"', "timezone"),  # 14 h from the Sun's local time in Chile: nights would split
    (
        '[allocation]\nhours_per_night = 3\ngranted_utc = [["2034-03-16T23:00", "2034-03-17T03:00"]]',
        "allocation.granted_utc",
    ),
    ('[allocation]\ngranted_utc = [["2034-03-17T03:00", "2034-03-16T23:00"]]', "allocation.granted_utc"),
    ('[allocation]\nblocks = [["2034-03-16T23:00", "2034-03-17T03:00"]]', "allocation.blocks"),  # renamed key
]


@pytest.mark.parametrize("line, field", BAD)
def test_bad_site_files_name_file_and_field(tmp_path, line, field):
    key = line.split("=")[0].strip()
    kept = [g for g in GOOD.splitlines() if g.split("=")[0].strip() != key]  # the bad line replaces the good one
    text = "\n".join(kept) + "\n" + line + "\n"
    p = _write(tmp_path, text)
    with pytest.raises(InputError) as exc:
        load_site(p)
    assert exc.value.field == field and str(p) in str(exc.value)


def test_default_utc_zone_far_from_the_site_is_refused(tmp_path):
    # A site at 155° W left on UTC would have its nights cut at 01:40 local solar time.
    p = _write(tmp_path, 'name = "x"\nlatitude_deg = 19.8\nlongitude_deg = -155.5\n')
    with pytest.raises(InputError, match="timezone"):
        load_site(p)


def test_date_line_zone_is_accepted(tmp_path):
    # Kiritimati keeps UTC+14 at 157° W: 24.5 h ahead of solar time is 0.5 h modulo a day.
    p = _write(tmp_path, 'name = "x"\nlatitude_deg = 1.9\nlongitude_deg = -157.4\ntimezone = "Pacific/Kiritimati"\n')
    assert load_site(p).timezone == "Pacific/Kiritimati"


def test_cli_bad_site_exits_2_with_one_line(tmp_path, root, capsys):
    from clirun import run_cli

    site = _write(tmp_path, GOOD + "latitude_deg_typo = 1\n")
    r = run_cli(
        capsys,
        "windows",
        "--site",
        site,
        "--start",
        "2034-03-16",
        "--nights",
        "1",
        "--target",
        DEMO_DIR / "c2034-b3-quillfeather.toml",
    )
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {site}: latitude_deg_typo: unknown field")
