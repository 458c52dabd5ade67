"""Campaign files: the demo loads; bad files give one clear line and exit status 2."""

from __future__ import annotations

from datetime import date

import pytest

from planner.cli import main
from planner.core.errors import InputError
from planner.inputs.campaign import load_campaign
from tests.conftest import DEMO_DIR

GOOD = """
name = "t"
target = "{target}"
sites = ["{site}"]
first_night = 2034-03-16
nights = 2
seed = 1
"""


def _write(tmp_path, root, extra="", **over):
    text = (
        GOOD.format(target=DEMO_DIR / "c2034-b3-quillfeather.toml", site=DEMO_DIR / "sites" / "karoo-ridge.toml")
        + extra
    )
    for k, v in over.items():
        text = text.replace(k, v)
    p = tmp_path / "c.toml"
    p.write_text(text)
    return p


def test_demo_campaign_loads_with_the_fixed_week_and_overrides(root):
    c = load_campaign(DEMO_DIR / "demo-campaign.toml")
    assert c.first_night == date(2034, 3, 16) and c.nights == 7
    assert len(c.sites) == 4
    assert (c.rotation.min_period_h, c.rotation.max_period_h) == (2.0, 30.0) and c.rotation.double_peaked
    salmon = next(s for s in c.sites if s.name == "Salmon Gum")
    assert salmon.allocation.hours_per_night == 4.0  # campaign override of "all dark time"


def test_paths_are_relative_to_the_campaign_file(tmp_path, root):
    import shutil

    (tmp_path / "t").mkdir()
    shutil.copy(DEMO_DIR / "c2034-b3-quillfeather.toml", tmp_path / "t" / "comet.toml")
    shutil.copy(DEMO_DIR / "sites" / "karoo-ridge.toml", tmp_path / "site.toml")
    p = tmp_path / "t" / "c.toml"
    p.write_text(
        'name = "x"\ntarget = "comet.toml"\nsites = ["../site.toml"]\nfirst_night = "2034-03-16"\nnights = 1\n'
    )
    c = load_campaign(p)
    assert c.target_path == tmp_path / "t" / "comet.toml"


@pytest.mark.parametrize(
    "extra, field, words",
    [
        ("\n[blocks]\nmin_block_h = 3\nmax_block_h = 2\n", "blocks.max_block_h", "below min_block_h"),
        ("\n[rotation]\nmin_period_h = 10\nmax_period_h = 5\n", "rotation.max_period_h", "above min_period_h"),
        ("\n[blocks]\nsetup_minutes = 70\nmin_block_h = 1\n", "blocks.setup_minutes", "no science time"),
        # Keys renamed since 0.1 name their new spelling instead of falling to "unknown field".
        ("\n[blocks]\nslot_min = 10\n", "blocks.slot_min", "now called 'slot_minutes'"),
        ("\n[blocks]\nsetup_min = 10\n", "blocks.setup_min", "now called 'setup_minutes'"),
        (
            '\n[site."Karoo Ridge"]\nblocks = [["2034-03-16T20:00", "2034-03-16T22:00"]]\n',
            "site.Karoo Ridge.blocks",
            "now called 'granted_utc'",
        ),
        ("\n[weigths]\ncoverage = 1\n", "weigths", "unknown field"),
        ('\n[site."Nowhere"]\nhours_per_night = 2\n', "site.Nowhere", "no campaign site"),
        (
            '\n[site."Karoo Ridge"]\nhours_per_night = 2\ngranted_utc = [["2034-03-16T20:00", "2034-03-16T22:00"]]\n',
            "site.Karoo Ridge.granted_utc",
            "not both",
        ),
    ],
)
def test_bad_fields_name_the_field(tmp_path, root, extra, field, words):
    with pytest.raises(InputError) as e:
        load_campaign(_write(tmp_path, root, extra))
    assert e.value.field == field and words in e.value.message


def test_missing_target_file_and_bad_date(tmp_path, root):
    with pytest.raises(InputError, match="target"):
        load_campaign(_write(tmp_path, root, **{"c2034-b3-quillfeather.toml": "nope.toml"}))
    with pytest.raises(InputError, match="first_night"):
        load_campaign(_write(tmp_path, root, **{"2034-03-16": '"16 March"'}))


def test_cli_bad_campaign_exits_2_with_one_line(tmp_path, root, capsys):
    p = _write(tmp_path, root, "\nnights = 3\n".replace("nights", "nigths"))
    with pytest.raises(SystemExit) as e:
        main(["plan", str(p)])
    assert e.value.code == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith(f"error: {p}: nigths: unknown field")


def test_a_season_of_nights_loads_and_more_than_a_year_is_refused(tmp_path, root):
    # 90-night campaigns (a comet's season) are planned; the limit is one year of nights.
    assert load_campaign(_write(tmp_path, root, **{"nights = 2": "nights = 90"})).nights == 90
    with pytest.raises(InputError, match="nights"):
        load_campaign(_write(tmp_path, root, **{"nights = 2": "nights = 367"}))
