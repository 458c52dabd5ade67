"""`phasewise init` writes starter files that load as they stand (and never overwrites);
`phasewise validate` says per file whether it is sound."""

from __future__ import annotations

import pytest

from planner.inputs.campaign import load_campaign
from planner.inputs.targets import load_target
from tests.clirun import run_cli
from tests.conftest import DEMO_DIR, ROOT

MPC = ROOT / "tests" / "data"
SITE = ["--site-name", "Hill Top", "--latitude", "-30.2", "--longitude", "-70.7", "--timezone", "America/Santiago"]


@pytest.mark.parametrize(("mpc_file", "name"), [("mpc_comets.txt", "Halvard"), ("mpc_minor_planets.txt", "Aldrevane")])
def test_init_from_an_mpc_line_keeps_the_elements(tmp_path, capsys, mpc_file, name):
    line = next(ln for ln in (MPC / mpc_file).read_text().splitlines() if name in ln)
    r = run_cli(capsys, "init", tmp_path / "c", "--mpc-line", line, *SITE, "--first-night", "2034-03-16")
    assert r.returncode == 0, r.stderr
    (tmp_path / "one.txt").write_text(line + "\n")
    want = load_target(tmp_path / "one.txt")
    got = load_campaign(tmp_path / "c" / "campaign.toml").load_target()
    assert (got.name, got.kind, got.brightness) == (want.name, want.kind, want.brightness)
    for field in ("eccentricity", "inclination_deg", "ascending_node_deg", "arg_perihelion_deg", "epoch_tdb_jd"):
        assert getattr(got.orbit, field) == getattr(want.orbit, field), field
    # An asteroid's file holds a and M: q and the perihelion time come back through Kepler's third law.
    assert got.orbit.perihelion_dist_au == pytest.approx(want.orbit.perihelion_dist_au, rel=1e-12)
    assert got.orbit.perihelion_tdb_jd == pytest.approx(want.orbit.perihelion_tdb_jd, abs=1e-8)
    text = (tmp_path / "c" / "campaign.toml").read_text()
    assert "# min_period_h = 2.0" in text and "# max_per_night = 2" in text  # the settings' defaults, commented


def test_init_never_overwrites_and_names_what_is_missing(tmp_path, capsys):
    line = (MPC / "mpc_comets.txt").read_text().splitlines()[0]
    assert run_cli(capsys, "init", tmp_path, "--mpc-line", line, *SITE).returncode == 0
    before = (tmp_path / "target.toml").read_text()
    again = run_cli(capsys, "init", tmp_path, "--mpc-line", line, *SITE)
    assert again.returncode == 2 and "exists: init never overwrites" in again.stderr
    assert (tmp_path / "target.toml").read_text() == before
    missing = run_cli(capsys, "init", tmp_path / "x", "--mpc-line", line)
    assert missing.returncode == 2 and missing.stderr.startswith("error: command line: --site-name: missing")
    bad = run_cli(capsys, "init", tmp_path / "y", "--mpc-line", line, *SITE[:4], "--longitude", "150", *SITE[6:])
    assert bad.returncode == 2 and "error: command line: --timezone:" in bad.stderr
    assert not (tmp_path / "y").exists()


def test_init_demo_copies_inputs_that_validate(tmp_path, capsys):
    assert run_cli(capsys, "init", tmp_path, "--demo").returncode == 0
    files = sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*.toml"))
    assert files == sorted(p.relative_to(DEMO_DIR) for p in DEMO_DIR.rglob("*.toml"))
    r = run_cli(capsys, "validate", *sorted(tmp_path.rglob("*.toml")))
    assert r.returncode == 0 and r.stdout.count("\n") == len(files) and r.stdout.count("ok: ") == len(files)
    assert "campaign 'Demo week: C/2034 B3 from four sites'" in r.stdout
    log = tmp_path / "demo-first-nights.csv"
    r = run_cli(capsys, "validate", log)
    assert r.returncode == 0 and r.stdout.startswith("ok: ") and "observed" in r.stdout
    assert run_cli(capsys, "init", tmp_path, "--demo").returncode == 2


def test_validate_prints_one_line_per_file_and_exits_2_if_any_is_bad(tmp_path, capsys):
    bad_site = tmp_path / "bad.toml"
    bad_site.write_text((DEMO_DIR / "sites" / "karoo-ridge.toml").read_text().replace("-32.380", "95.0"))
    log = tmp_path / "log.csv"
    log.write_text("time_utc,site\n2034-03-16T21:00:00Z,Karoo Ridge\n")
    other = tmp_path / "notes.toml"
    other.write_text('title = "x"\n')
    r = run_cli(capsys, "validate", DEMO_DIR / "sites" / "karoo-ridge.toml", bad_site, log, other)
    lines = r.stdout.splitlines()
    assert r.returncode == 2 and len(lines) == 4
    assert lines[0].startswith("ok: ") and "site 'Karoo Ridge'" in lines[0]
    assert lines[1] == f"error: {bad_site}: latitude_deg: 95 is outside [-90, 90]"
    assert lines[2].startswith("ok: ") and "1 observed times" in lines[2]
    assert lines[3].startswith(f"error: {other}: -: neither a campaign")


def test_the_readme_week_runs_from_the_copied_demo_inputs(tmp_path, capsys, monkeypatch):
    # The README's "A week in four lines": init, ephem and windows as written there (plan and check are
    # covered by the demo tests and need a log).
    text = (ROOT / "README.md").read_text()
    block = text[text.index("phasewise init week --demo") :].split("```")[0].splitlines()
    monkeypatch.chdir(tmp_path)
    init = block[0].split("&&")[0].split()[1:]
    assert run_cli(capsys, *init).returncode == 0
    monkeypatch.chdir(tmp_path / "week")
    for line in block[1:]:
        args = line.split()
        if args and args[1] in ("ephem", "windows"):
            r = run_cli(capsys, *args[1:])
            assert r.returncode == 0 and "Karoo Ridge" in r.stdout, (line, r.stderr)


def test_init_takes_as_many_nights_as_a_campaign_may_hold(tmp_path, capsys):
    # The starter campaign's --nights has the campaign file's own limit (planner.core.limits), and the
    # file it writes loads; one night more is refused before anything is written.
    from planner.core.limits import MAX_CAMPAIGN_NIGHTS

    line = (MPC / "mpc_comets.txt").read_text().splitlines()[0]
    r = run_cli(capsys, "init", tmp_path / "long", "--mpc-line", line, *SITE, "--nights", str(MAX_CAMPAIGN_NIGHTS))
    assert r.returncode == 0, r.stderr
    assert load_campaign(tmp_path / "long" / "campaign.toml").nights == MAX_CAMPAIGN_NIGHTS
    over = run_cli(
        capsys, "init", tmp_path / "over", "--mpc-line", line, *SITE, "--nights", str(MAX_CAMPAIGN_NIGHTS + 1)
    )
    assert over.returncode == 2 and not (tmp_path / "over").exists()
