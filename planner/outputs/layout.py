"""The plan folder's layout: its file names, and file names made from user-given names.

The writer (:mod:`planner.outputs.planfolder`) and the reader (:mod:`planner.outputs.reader`) both take
every name from here, so the two cannot drift apart.
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterable

PLAN_CSV = "plan.csv"
BASELINE_CSV = "baseline.csv"
#: The manifest: target, sites with time zones and limits, settings, version (and the plan's blocks).
MANIFEST_JSON = "plan.json"
DIAGNOSTICS_JSON = "diagnostics.json"
WINDOWS_CSV = "windows.csv"
GEOMETRY_CSV = "geometry.csv"
NIGHTS_CSV = "nights.csv"
#: The light-curve fit of a re-plan's log with magnitudes (the ``phasewise fit`` JSON with its arrays);
#: only in a folder planned with such a log.
LIGHTCURVE_JSON = "lightcurve.json"
#: Verbatim copies of the inputs, for the record (the report reads the manifest, not these).
CAMPAIGN_COPY = "campaign.toml"
TARGET_COPY = "target.toml"
SHEETS_DIR = "sheets"
#: One iCalendar file (RFC 5545) per site: its planned blocks as events.
CALENDARS_DIR = "calendars"
REPORT_HTML = "report.html"
#: The report's drawn figures, kept by content so a re-render reuses them (planner.outputs.figcache).
FIGURE_CACHE_DIR = ".figures"
#: The tables that also get an ECSV twin beside the CSV (same rows; units, time scale and metadata kept).
ECSV_TWINS = (PLAN_CSV, BASELINE_CSV, WINDOWS_CSV, GEOMETRY_CSV, NIGHTS_CSV)

#: Every file of a plan folder, in the order docs/formats.md lists them.
PLAN_FILES = (
    PLAN_CSV,
    MANIFEST_JSON,
    BASELINE_CSV,
    DIAGNOSTICS_JSON,
    WINDOWS_CSV,
    GEOMETRY_CSV,
    NIGHTS_CSV,
    LIGHTCURVE_JSON,
    CAMPAIGN_COPY,
    TARGET_COPY,
    SHEETS_DIR + "/",
    CALENDARS_DIR + "/",
    REPORT_HTML,
    FIGURE_CACHE_DIR + "/",
)
#: Version of the layout of every JSON document phasewise writes (plan.json, diagnostics.json and the
#: check, ephem and windows JSON); raised when a key changes meaning. Their schemas: docs/schemas/.
SCHEMA_VERSION = 2


#: Longest slug a file name keeps whole (longer ones are cut and carry a hash of the full name).
MAX_SLUG_CHARS = 40


def slug(name: str) -> str:
    """Lower-case letters and digits with single hyphens: ``"Karoo Ridge"`` → ``"karoo-ridge"``."""
    s = "".join(c.lower() if c.isalnum() else "-" for c in name)
    while "--" in s:
        s = s.replace("--", "-")
    return s.strip("-") or "site"


def sheet_name(site_name: str, all_names: Iterable[str] = ()) -> str:
    """The observing sheet's file name inside ``sheets/``: the name's slug, and a short hash of the name
    when the slug is longer than MAX_SLUG_CHARS (it is then cut) or when another of ``all_names`` has
    the same slug (``"Karoo Ridge"`` and ``"karoo-ridge"``), so names stay short, safe and distinct."""
    s = slug(site_name)
    clash = any(other != site_name and slug(other) == s for other in all_names)
    if len(s) > MAX_SLUG_CHARS or clash:
        digest = hashlib.sha256(site_name.encode("utf-8")).hexdigest()[:8]
        s = f"{s[:MAX_SLUG_CHARS].rstrip('-')}-{digest}"
    return f"{s}.txt"


def calendar_name(site_name: str, all_names: Iterable[str] = ()) -> str:
    """The site's iCalendar file name inside ``calendars/`` (the same stem as its sheet)."""
    return sheet_name(site_name, all_names).removesuffix(".txt") + ".ics"


def ecsv_twin(csv_name: str) -> str:
    """The ECSV twin of a CSV table: ``plan.csv`` → ``plan.ecsv``."""
    return csv_name.removesuffix(".csv") + ".ecsv"
