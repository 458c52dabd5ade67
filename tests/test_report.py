"""The HTML campaign report: renders in a real browser, escapes user text, shows the files' numbers.

The plan folder comes from tests/planfolder.py (hand-made, with the scheduler's file names and
columns). The browser test drives headless Chromium (Debian packages chromium, chromium-driver)
over the DevTools pipe; without Chromium it skips with a message saying what to install.
"""

from __future__ import annotations

import base64
import csv
import io
import json
import math
import re
import shutil
import xml.etree.ElementTree as ET
from datetime import datetime
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from browser import Browser, find_chromium
from matplotlib.image import imread
from planfolder import make_plan_folder

from planner.cli import main
from planner.core.errors import InputError
from planner.diagnostics.check import check_times
from planner.outputs import figstyle
from planner.outputs.reader import load_plan_folder, utc_offset_h
from planner.outputs.report import render_check_report, render_report, write_report

FIGURE_IDS = [
    "fig-geometry",
    "fig-network",
    "fig-site-0",
    "fig-site-1",
    "fig-timeline",
    "fig-coverage",
    "fig-window",
    "fig-recovery",
    "fig-sensitivity",
]
MARKUP_TARGET = '<script>document.title="owned"</script><b onclick="x()">Comet & "friends"</b>'
MARKUP_SITE = '<img src="http://example.invalid/x.png" onerror="alert(1)">Ridge'


@pytest.fixture(scope="module")
def plan_dir(tmp_path_factory) -> Path:
    d = make_plan_folder(tmp_path_factory.mktemp("plan"))
    write_report(d)
    return d


@pytest.fixture(scope="module")
def markup_dir(tmp_path_factory) -> Path:
    d = make_plan_folder(
        tmp_path_factory.mktemp("markup"),
        target_name=MARKUP_TARGET,
        site_names=[MARKUP_SITE, "Gum </td></tr></table> Flat"],
    )
    write_report(d)
    return d


class _Collector(HTMLParser):
    """Every element's attributes, plus the text inside each data-src span and each figure's image."""

    def __init__(self) -> None:
        super().__init__()
        self.spans: list[dict] = []
        self.images: list[dict] = []
        self.figures: list[str] = []
        self.tags: list[str] = []
        self._open: list[dict] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        if tag == "figure":
            self.figures.append(a.get("id", ""))
        if tag == "img":
            self.images.append(a)
        if tag == "span" and ("data-src" in a or "data-total" in a):
            a["text"] = ""
            self.spans.append(a)
            self._open.append(a)
        elif tag == "span":
            self._open.append({})

    def handle_endtag(self, tag):
        if tag == "span" and self._open:
            self._open.pop()

    def handle_data(self, data):
        for a in self._open:
            if "text" in a:
                a["text"] += data


def _parse(html_text: str) -> _Collector:
    c = _Collector()
    c.feed(html_text)
    return c


# ---------------------------------------------------------------------------------------- browser


def _chromium() -> str:
    exe = find_chromium()
    if exe is None:
        pytest.skip(
            "headless Chromium not found: install the Debian packages chromium and chromium-driver "
            "(`apt-get install -y chromium chromium-driver`) to run the browser test"
        )
    return exe


def test_report_renders_in_headless_chromium(plan_dir):
    exe = _chromium()
    with Browser(exe, width=1200, height=900) as b:
        b.open(plan_dir / "report.html")
        figures = b.evaluate(
            "Array.from(document.querySelectorAll('figure')).map(f => { const i = f.querySelector('img');"
            " const r = i.getBoundingClientRect(); return {id: f.id, complete: i.complete,"
            " w: i.naturalWidth, h: i.naturalHeight, shown_w: r.width, shown_h: r.height}; })"
        )
        png = b.screenshot_png()
        problems = b.problems()
        urls = b.requested_urls()
    assert problems == [], problems
    # Self-contained: nothing but the file itself and its embedded data is requested.
    assert all(u.startswith(("file://", "data:")) for u in urls), [u[:80] for u in urls]
    assert [f["id"] for f in figures] == FIGURE_IDS
    for f in figures:
        assert f["complete"] and f["w"] > 100 and f["h"] > 100, f
        assert f["shown_w"] > 100 and f["shown_h"] > 50, f
    # The screenshot is a real page, not a blank one: its pixels vary (text, rules, figures).
    image = imread(io.BytesIO(png))
    assert image.shape[0] >= 800 and image.shape[1] >= 1000
    grey = image[..., :3].mean(axis=2)
    assert grey.std() > 0.05, grey.std()
    assert (grey < 0.5).mean() > 0.005  # some dark ink: headings and text


_LAYOUT = """(() => {
  const doc = document.documentElement;
  const wide = document.querySelector('#table .wide');
  const heads = Array.from(document.querySelectorAll('thead tr'));
  const blocks = document.querySelector('table.blocks');
  const last = blocks ? Array.from(blocks.querySelectorAll('tbody tr:first-child td')).slice(-3) : [];
  return {
    page: [doc.scrollWidth, doc.clientWidth],
    table: wide ? [wide.scrollWidth, wide.clientWidth] : null,
    emptyHeads: heads.filter(r => r.textContent.trim() === '').length,
    images: Array.from(document.images).map(i => [i.complete, i.naturalWidth, i.naturalHeight]),
    lastCells: last.map(td => { const r = td.getBoundingClientRect(); return [r.left, r.right]; }),
    cards: blocks ? getComputedStyle(blocks.querySelector('td')).display : null,
  };
})()"""


@pytest.mark.parametrize("width", [1400, 400])
def test_report_fits_desktop_and_phone_widths(plan_dir, width):
    # Readable on any screen: no part of the page hides behind a horizontal scroll, the night-by-night
    # table shows its last columns (Moon, mag, S/N) on a desktop and reflows as cards on a phone, every
    # figure decodes, and no table carries an empty header row.
    exe = _chromium()
    with Browser(exe, width=width, height=900) as b:
        b.open(plan_dir / "report.html")
        b.evaluate("Promise.all(Array.from(document.images).map(i => i.decode()))")
        got = b.evaluate(_LAYOUT)
    scroll, client = got["page"]
    assert scroll <= client, got["page"]
    assert got["emptyHeads"] == 0
    assert got["images"] and all(ok and w > 100 and h > 100 for ok, w, h in got["images"]), got["images"]
    if width >= 1000:
        assert got["table"][0] <= got["table"][1], got["table"]  # no horizontal scroll in the table
        assert all(0 <= left and right <= client for left, right in got["lastCells"]), got["lastCells"]
        assert got["cards"] == "table-cell"
    else:
        assert got["cards"] == "block"


def _svg(img: dict) -> ET.Element:
    assert img["src"].startswith("data:image/svg+xml;base64,")
    return ET.fromstring(base64.b64decode(img["src"].split(",", 1)[1]))


def _css_px(length: str) -> float:
    """An SVG root's width or height in CSS px: matplotlib writes points (72 per inch), the charts written
    directly pixels; the page shows 100 px per inch."""
    return float(length.removesuffix("pt")) / 72 * 100 if length.endswith("pt") else float(length)


def test_figures_are_vector_drawings_at_their_css_size(plan_dir):
    # Sharp on any screen: every figure is SVG, and the page shows it at its drawn size.
    for img in _parse((plan_dir / "report.html").read_text()).images:
        root = _svg(img)
        assert _css_px(root.get("width")) == pytest.approx(int(img["width"]), abs=1)
        assert _css_px(root.get("height")) == pytest.approx(int(img["height"]), abs=1)


def test_every_embedded_figure_is_a_non_blank_drawing(plan_dir):
    parsed = _parse((plan_dir / "report.html").read_text())
    assert parsed.figures == FIGURE_IDS
    assert len(parsed.images) == len(FIGURE_IDS)
    for img in parsed.images:
        assert img.get("alt")
        root = _svg(img)
        tags = [el.tag.rsplit("}", 1)[-1] for el in root.iter()]
        assert "script" not in tags and "foreignObject" not in tags
        marks = sum(tags.count(t) for t in ("path", "use", "rect", "circle", "text"))
        assert marks > 20  # axes, ticks, text and data, not an empty canvas


def test_page_has_no_scripts_or_remote_resources(plan_dir):
    text = (plan_dir / "report.html").read_text()
    parsed = _parse(text)
    assert "script" not in parsed.tags
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:)?//""", text)
    assert "@import" not in text and "url(" not in text


# ---------------------------------------------------------------------------------------- escaping


def test_markup_in_names_is_shown_as_text(markup_dir):
    text = (markup_dir / "report.html").read_text()
    parsed = _parse(text)
    assert "script" not in parsed.tags
    assert "<b onclick" not in text and '<img src="http://example.invalid' not in text
    assert "&lt;script&gt;" in text and "&lt;img src=&quot;http://example.invalid" in text
    # Structure survives a site name that tries to close the table.
    assert parsed.figures == FIGURE_IDS


def test_markup_renders_as_text_in_browser(markup_dir):
    exe = _chromium()
    with Browser(exe) as b:
        b.open(markup_dir / "report.html")
        title = b.evaluate("document.title")
        h1 = b.evaluate("document.querySelector('h1').textContent")
        n_scripts = b.evaluate("document.scripts.length")
        problems = b.problems()
        urls = b.requested_urls()
    assert title != "owned" and n_scripts == 0
    assert MARKUP_TARGET in h1
    assert problems == [], problems
    assert not any("example.invalid" in u for u in urls)


# ---------------------------------------------------------------------------------------- numbers


def _lookup(obj, path: str):
    for key in path.split("."):
        obj = obj[int(key)] if isinstance(obj, list) else obj[key]
    return obj


def _rows(path: Path) -> list[dict]:
    with path.open(newline="") as fh:
        return list(csv.DictReader(fh))


def _check_display(text: str, value: float) -> None:
    """The rounded text shown must be the value rounded, not some other number."""
    shown = text.strip().rstrip("h°c/d ").replace("−", "-").replace(" ", "")
    if shown in ("—", ""):
        assert value is None or (isinstance(value, float) and math.isnan(value))
        return
    digits = len(shown.split(".")[1]) if "." in shown and "e" not in shown else 0
    tol = 0.5 * 10 ** (-digits) + 1e-12 if "e" not in shown else abs(value) * 1e-2
    assert abs(float(shown) - value) <= tol, (text, value)


def _assert_numbers_match(folder: Path) -> None:
    text = (folder / "report.html").read_text()
    diag = json.loads((folder / "diagnostics.json").read_text())
    tables = {name: _rows(folder / name) for name in ("plan.csv", "geometry.csv")}
    spans = _parse(text).spans
    seen = set()
    for s in spans:
        if "data-src" not in s:
            continue
        file, _, where = s["data-src"].partition(":")
        if file == "diagnostics.json":
            expected = _lookup(diag, where)
            assert json.loads(s["data-value"]) == expected, s
            if isinstance(expected, (int, float)):
                _check_display(s["text"], float(expected))
        else:
            row, column = where.split(":")
            expected = tables[file][int(row)][column]
            assert s["data-value"] == expected, s
            try:
                _check_display(s["text"], float(expected))
            except ValueError:
                pass  # times: the text is the clock part of the same string
        seen.add(s["data-src"])
    # Every headline number of both schedules is on the page.
    for kind in ("plan", "baseline"):
        for key in ("rate_sigma_mag_per_day", "min_detectable_mag_per_day", "longest_gap_h"):
            assert f"diagnostics.json:{kind}.trend.{key}" in seen
        for i, _ in enumerate(diag[kind]["window_peaks"]):
            assert f"diagnostics.json:{kind}.window_peaks.{i}.height" in seen
        for i, _ in enumerate(diag[kind]["bands"]):
            assert f"diagnostics.json:{kind}.bands.{i}.min_period_h" in seen
    # Every block of plan.csv is in the night-by-night table with its times and exposures.
    for i, _ in enumerate(tables["plan.csv"]):
        for column in ("start_utc", "end_utc", "start_local", "n_exposures", "exposure_s", "snr_pred"):
            assert f"plan.csv:{i}:{column}" in seen

    # Totals, recomputed here from plan.csv by another route (csv + datetime).
    totals = {s["data-total"]: s["text"] for s in spans if "data-total" in s}
    rows = tables["plan.csv"]

    def hours(r: dict) -> float:
        f = "%Y-%m-%dT%H:%M:%S"
        a = datetime.strptime(r["start_utc"].rstrip("Z")[:19], f)
        b = datetime.strptime(r["end_utc"].rstrip("Z")[:19], f)
        return (b - a).total_seconds() / 3600

    for site in sorted({r["site"] for r in rows}):
        mine = [r for r in rows if r["site"] == site]
        key = site.replace("&", "&amp;")
        assert int(totals[f"plan-blocks:{key}"]) == len(mine)
        assert float(totals[f"plan-hours:{key}"]) == pytest.approx(sum(hours(r) for r in mine), abs=0.005)
        assert int(totals[f"plan-exposures:{key}"]) == sum(int(r["n_exposures"]) for r in mine)
    assert int(totals["plan-blocks:all"]) == len(rows)


def test_report_numbers_equal_the_files(plan_dir):
    _assert_numbers_match(plan_dir)


def test_report_numbers_equal_the_files_with_markup_names(markup_dir):
    _assert_numbers_match(markup_dir)


# ---------------------------------------------------------------------------------------- files, command


def test_missing_plan_file_is_a_clear_input_error(tmp_path):
    with pytest.raises(InputError, match="plan.csv"):
        load_plan_folder(tmp_path)
    bad = make_plan_folder(tmp_path / "bad")
    (bad / "diagnostics.json").write_text("{not json")
    with pytest.raises(InputError, match="diagnostics.json: -: not valid JSON"):
        render_report(bad)
    (bad / "diagnostics.json").write_text("{}")
    with pytest.raises(InputError, match="diagnostics.json: plan: missing"):
        render_report(bad)


def _copy_folder(src: Path, dst: Path) -> Path:
    shutil.copytree(src, dst)
    return dst


@pytest.mark.slow
def test_report_command_rerenders_and_fails_cleanly(plan_dir, tmp_path, capsys):
    d = _copy_folder(plan_dir, tmp_path / "plan")
    (d / "report.html").unlink()
    before = {p.name: p.read_bytes() for p in d.iterdir() if p.is_file()}
    with pytest.raises(SystemExit) as done:
        main(["report", str(d)])
    assert done.value.code in (0, None)
    assert "report.html" in capsys.readouterr().out
    assert (d / "report.html").read_text() == (plan_dir / "report.html").read_text()  # same files, same page
    # Nothing else in the folder changed, and no temporary file was left behind.
    assert {p.name: p.read_bytes() for p in d.iterdir() if p.is_file() and p.name != "report.html"} == before
    assert not list(d.glob(".*part"))
    with pytest.raises(SystemExit) as done:
        main(["report", str(tmp_path / "empty")])
    assert done.value.code == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and err.count("\n") == 1 and "Traceback" not in err


def test_failed_render_keeps_the_previous_report(plan_dir, tmp_path):
    d = _copy_folder(plan_dir, tmp_path / "plan")
    good = (d / "report.html").read_bytes()
    (d / "plan.csv").write_text("site,night\n")  # start_utc and end_utc missing
    with pytest.raises(InputError, match="plan.csv: start_utc: column missing"):
        write_report(d)
    assert (d / "report.html").read_bytes() == good


def test_local_clock_offset_from_paired_times():
    import pandas as pd

    df = pd.DataFrame({"start_utc": ["2034-03-16T08:30:00Z", ""], "start_local": ["2034-03-15T22:30:00-10:00", ""]})
    assert utc_offset_h(df) == -10.0
    naive = pd.DataFrame({"start_utc": ["2034-03-16T08:30:00Z"], "start_local": ["2034-03-16T19:30:00"]})
    assert utc_offset_h(naive) == 11.0


def test_check_report_for_a_log_of_times():
    rng = np.random.default_rng(3)
    offsets_s = np.sort(rng.uniform(0, 5 * 86400, 80))
    t = np.datetime64("2034-03-16T20:00", "ns") + (offsets_s * 1e9).astype("timedelta64[ns]")
    check = check_times(t, min_period_h=2.0, max_period_h=20.0, trials=4, seed=1).to_dict()
    text = render_check_report(check, title="Log <check>", source="<log>.csv")
    parsed = _parse(text)
    assert parsed.figures == ["fig-coverage", "fig-window", "fig-recovery", "fig-sensitivity"]
    assert "Log &lt;check&gt;" in text and "&lt;log&gt;.csv" in text and "script" not in parsed.tags
    values = {s["data-src"]: s["data-value"] for s in parsed.spans if "data-src" in s}
    assert json.loads(values["diagnostics.json:trend.longest_gap_h"]) == check["trend"]["longest_gap_h"]
    for i, band in enumerate(check["bands"]):
        assert json.loads(values[f"diagnostics.json:bands.{i}.min_period_h"]) == band["min_period_h"]


# ---------------------------------------------------------------------------------------- figure kernels


def test_coverage_map_bins_are_the_checks_own(plan_dir):
    # The map must show what the check counted: each period's share of occupied bins equals the
    # coverage number in diagnostics.json (same times, light-time corrected as the check's, same bins).
    diag = json.loads((plan_dir / "diagnostics.json").read_text())
    for kind in ("plan", "baseline"):
        check = diag[kind]
        times = figstyle.check_times_utc(check, np.array([], dtype="datetime64[ns]"), emission=True)
        assert times.size == check["input"]["n_times"]
        occupied = figstyle.phase_occupancy(times, np.array(check["periods_h"]), check["settings"]["phase_bins"])
        np.testing.assert_allclose(occupied.mean(axis=1), check["coverage"], atol=1e-12)
        assert 0 < occupied.mean() < 1


def test_phase_occupancy_by_hand():
    # Times at 0, 1.2, 2.2 and 3.2 h (phase zero at the first) folded on a 4 h period with 4 bins fill
    # every bin; on 8 h (bins of 2 h) only the first two.
    t = np.datetime64("2034-03-16T20:00", "ns") + np.array([0, 72, 132, 192]) * np.timedelta64(1, "m")
    occ = figstyle.phase_occupancy(t, np.array([4.0, 8.0]), 4)
    assert occ[0].tolist() == [True, True, True, True]
    assert occ[1].tolist() == [True, True, False, False]


def test_check_command_writes_the_html_report(tmp_path, capsys):
    # Two sites, four nights, a few times a night: a small log of our own.
    rows = ["time_utc,site"]
    for night in range(4):
        for k in range(6):
            rows.append(f"2034-03-{16 + night}T{20 + k // 2}:{15 * (k % 2):02d}:00Z,North <A>")
            rows.append(f"2034-03-{17 + night}T{9 + k // 2:02d}:{10 + 15 * (k % 2):02d}:00Z,South")
    log = tmp_path / "log.csv"
    log.write_text("\n".join(rows) + "\n")
    out = tmp_path / "check.html"
    with pytest.raises(SystemExit) as done:
        main(
            [
                "check",
                str(log),
                "--trials",
                "2",
                "--no-progress",
                "--format",
                "json",
                "--out",
                str(tmp_path / "check.json"),
                "--report",
                str(out),
            ]
        )
    assert done.value.code in (0, None), capsys.readouterr().err
    text = out.read_text()
    parsed = _parse(text)
    assert parsed.figures == ["fig-coverage", "fig-window", "fig-recovery", "fig-sensitivity"]
    assert "North &lt;A&gt; (24)" in text and "script" not in parsed.tags
    check = json.loads((tmp_path / "check.json").read_text())
    values = {s["data-src"]: s["data-value"] for s in parsed.spans if "data-src" in s}
    assert (
        json.loads(values["diagnostics.json:trend.min_detectable_mag_per_day"])
        == check["trend"]["min_detectable_mag_per_day"]
    )
    exe = find_chromium()
    if exe is not None:
        with Browser(exe) as b:
            b.open(out)
            assert b.problems() == []
            assert b.evaluate("Array.from(document.images).every(i => i.complete && i.naturalWidth > 100)")


def test_replanned_folder_names_its_log_as_text(plan_dir, tmp_path):
    d = _copy_folder(plan_dir, tmp_path / "plan")
    diag = json.loads((d / "diagnostics.json").read_text())
    diag["replan"] = {
        "log": "logs/<night 1>.csv",
        "n_done_times": 42,
        "not_before_utc": "2034-03-17T06:00Z",
        "lost_site_nights": [["Gum Flat", "2034-03-16"]],
    }
    (d / "diagnostics.json").write_text(json.dumps(diag))
    text = render_report(d)
    assert "logs/&lt;night 1&gt;.csv" in text and "Gum Flat 2034-03-16" in text
    spans = {s["data-src"]: s for s in _parse(text).spans if "data-src" in s}
    assert spans["diagnostics.json:replan.n_done_times"]["text"] == "42"


def test_figure_cache_reuses_only_what_is_unchanged(plan_dir, tmp_path):
    from planner.outputs.figcache import FigureCache

    d = _copy_folder(plan_dir, tmp_path / "cached")
    assert (d / ".figures").is_dir() and any((d / ".figures").iterdir())
    first = render_report(d)
    shutil.rmtree(d / ".figures")
    assert render_report(d) == first  # drawn afresh: the same page
    cache = FigureCache(d)
    a = pd.DataFrame({"site": ["A", "B"], "hours": ["1.0", "2.0"]})
    b = a.assign(hours=["1.0", "2.5"])  # one cell changed
    assert cache.key("fig-site", a) == cache.key("fig-site", a.copy())
    assert cache.key("fig-site", a) != cache.key("fig-site", b)
    assert cache.key("fig-site", a) != cache.key("fig-timeline", a)


def test_report_reads_only_its_geometry_columns_and_shows_the_same_page(plan_dir, tmp_path, monkeypatch):
    from planner.outputs import report

    d = _copy_folder(plan_dir, tmp_path / "columns")
    geo = pd.read_csv(d / "geometry.csv", dtype=str, keep_default_na=False)
    geo.assign(az_deg="180.0").to_csv(d / "geometry.csv", index=False)  # a column the report never reads
    whole = load_plan_folder(d)
    part = load_plan_folder(d, geometry_columns=("alt_deg", "no_such_column"))
    assert list(part.geometry.columns) == ["site", "time_utc", "alt_deg"]  # the file's order; absent ones ignored
    assert part.geometry.equals(whole.geometry[["site", "time_utc", "alt_deg"]])
    assert "az_deg" in whole.geometry and "az_deg" not in report.REPORT_GEOMETRY_COLUMNS  # others get every column
    shutil.rmtree(d / ".figures", ignore_errors=True)
    partial_page = render_report(d)
    shutil.rmtree(d / ".figures", ignore_errors=True)
    monkeypatch.setattr(report, "REPORT_GEOMETRY_COLUMNS", None)  # read the whole file
    assert render_report(d) == partial_page
