"""Rendering and writing a plan: the printed night-by-night table and comparison, per-site observing
sheets, and the plan folder (written to a temporary folder, then renamed into place, so a failure
never leaves half a plan and never destroys an earlier one)."""

from __future__ import annotations

import json
import math
import os
import shutil
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import InputError
from planner.jsonsafe import json_safe
from planner.schedule import PlanResult

#: Files of a plan folder (the report helper reads exactly these names).
PLAN_FILES = ("plan.csv", "plan.json", "baseline.csv", "diagnostics.json", "windows.csv", "geometry.csv",
              "nights.csv", "campaign.toml", "target.toml", "sheets/", "report.html")
SUN_CAUTION = ("Pointing near the Sun can destroy equipment and blind people: follow the observatory's own "
               "rules and licensed practice, which always prevail over this plan.")
#: Units of the printed night-by-night table (under it).
TABLE_LEGEND = ("columns: night = local evening date; local, UTC = block start-end (hh:mm, set-up included); "
                "h = hours;\n  exp = exposures x seconds; RA, Dec in deg (mid-block); mot = sky motion arcsec/min "
                "towards PA deg;\n  alt = altitude range deg; X = airmass range; moon = Moon separation deg; "
                "mag = predicted magnitude; S/N per exposure")
#: Margin above a site's solar-elongation limit inside which a block gets a Sun caution (common practice).
SUN_MARGIN_DEG = 10.0


def slug(name: str) -> str:
    s = "".join(c.lower() if c.isalnum() else "-" for c in name)
    while "--" in s:
        s = s.replace("--", "-")
    return s.strip("-") or "site"


def _iso(values) -> list[str]:
    t = pd.to_datetime(pd.Series(values))
    return ["" if pd.isna(x) else x.strftime("%Y-%m-%dT%H:%M:%SZ") for x in t]


def table_for_files(df: pd.DataFrame) -> pd.DataFrame:
    """UTC columns as ISO 8601 strings with Z; everything else as is."""
    out = df.copy()
    for c in out.columns:
        if c.endswith("_utc") and (np.issubdtype(out[c].dtype, np.datetime64) or out[c].dtype == object):
            out[c] = _iso(out[c])
    return out


def records(df: pd.DataFrame) -> list[dict]:
    return json_safe(table_for_files(df).to_dict("records"))


def _hm(text: str) -> str:
    return text[11:16] if len(text) >= 16 else text


def _fmt(v, spec: str, width: int) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-".rjust(width)
    return format(v, spec).rjust(width)


def night_table(blocks: pd.DataFrame) -> str:
    """One line per block, grouped by night: what an observer reads before the night."""
    if blocks.empty:
        return "no blocks planned\n"
    t = table_for_files(blocks)
    head = (f"{'night':10}  {'site':16} {'local':13} {'UTC':13} {'h':>4} {'exp':>9} {'RA':>7} {'Dec':>6} "
            f"{'mot':>6} {'PA':>4} {'alt':>7} {'X':>9} {'moon':>4} {'mag':>5} {'S/N':>5}")
    lines = [head, "-" * len(head)]
    last = None
    for r in t.itertuples(index=False):
        night = r.night if r.night != last else ""
        last = r.night
        exp = f"{r.n_exposures}x{r.exposure_s:.0f}s" if isinstance(r.exposure_s, float) and math.isfinite(
            r.exposure_s) else f"{r.n_exposures}x?"
        lines.append(
            f"{night:10}  {r.site[:16]:16} {_hm(r.start_local)}-{_hm(r.end_local)}   "
            f"{_hm(r.start_utc)}-{_hm(r.end_utc)}   {r.hours:4.1f} {exp:>9} {_fmt(r.ra_deg, '.2f', 7)} "
            f"{_fmt(r.dec_deg, '+.1f', 6)} {_fmt(r.motion_arcsec_min, '.2f', 6)} {_fmt(r.motion_pa_deg, '.0f', 4)} "
            f"{_fmt(r.alt_min_deg, '.0f', 3)}-{_fmt(r.alt_max_deg, '.0f', 3)} "
            f"{_fmt(r.airmass_min, '.2f', 4)}-{_fmt(r.airmass_max, '.2f', 4)} {_fmt(r.moon_sep_deg, '.0f', 4)} "
            f"{_fmt(r.mag_pred, '.1f', 5)} {_fmt(r.snr_pred, '.0f', 5)}")
    lines.append(TABLE_LEGEND)
    return "\n".join(lines) + "\n"


def nights_text(result: PlanResult) -> str:
    """Hours planned against hours granted per site, then every site-night without a block and why."""
    n = result.nights
    if n is None or n.empty:
        return ""
    per = n.groupby("site", sort=False)[["planned_h", "budget_h", "observed_h"]].sum()
    done = per["observed_h"].sum() > 0
    out = ["hours planned / usable allocation" + (" (+ already observed)" if done else "") + ": "
           + ", ".join(f"{site} {r.planned_h:.1f}/{r.budget_h:.1f}" + (f" (+{r.observed_h:.1f})" if done else "")
                       for site, r in per.iterrows())]
    empty = n[n["blocks"] == 0].sort_values("night", kind="stable")
    if len(empty):
        out.append("site-nights without a block:")
        out += [f"  {r.night}  {r.site}: {r.note}" for r in empty.itertuples(index=False)]
    else:
        out.append("every site has a block on every night")
    return "\n".join(out) + "\n"


def safety_text(result: PlanResult) -> str:
    """The Sun caution printed under every plan, plus the blocks that come near a site's limit."""
    lines = ["SAFETY: " + SUN_CAUTION]
    by_name = {s.name: s for s in result.campaign.sites}
    b = table_for_files(result.blocks)
    for r in b.itertuples(index=False):
        site = by_name.get(r.site)
        if site is not None and math.isfinite(r.solar_elong_deg) and \
                r.solar_elong_deg < site.min_solar_elong_deg + SUN_MARGIN_DEG:
            lines.append(f"  {r.site} {r.night} {r.start_utc[11:16]} UTC: target {r.solar_elong_deg:.0f} deg "
                         "from the Sun")
    return "\n".join(lines) + "\n"


def comparison_text(result: PlanResult) -> str:
    c = result.comparison
    rob = result.robustness
    obj = result.objective
    rows = [
        ("worst-period phase coverage (higher is better)", c["worst_period_coverage"], ".2f"),
        ("highest spectral-window alias beyond 2/span (lower is better)", c["highest_alias"], ".2f"),
        ("least detectable extra fading, mag/day (lower is better)", c["trend_min_detectable_mag_per_day"], ".1e"),
        ("light-curve points (frames stacked per slot)", c["n_times"], "d"),
    ]
    hours_p = float(result.blocks["hours"].sum()) if len(result.blocks) else 0.0
    hours_b = float(result.baseline["hours"].sum()) if len(result.baseline) else 0.0
    weather = "under weather: worst-period coverage, mean/10th pct"
    w = max(len(label) for label, _, _ in rows + [(weather, None, None)])
    head = "plan vs baseline (the baseline: one block per site-night at the highest altitude, same hours)"
    if hours_b < hours_p - 0.05:  # one block a night, capped at max_block_h, cannot hold the plan's hours
        head = (f"plan vs baseline (the baseline: one block per site-night at the highest altitude, at most "
                f"{result.campaign.blocks.max_block_h:g} h each, so {hours_p - hours_b:.1f} h fewer than the plan)")
    out = [head,
           f"{'':{w}} {'plan':>9} {'baseline':>9}",
           f"{'telescope hours':{w}} {hours_p:9.1f} {hours_b:9.1f}"]
    for label, pair, spec in rows:
        out.append(f"{label:{w}} {_fmt(pair['plan'], spec, 9)} {_fmt(pair['baseline'], spec, 9)}")
    out.append(f"{weather:{w}} "
               f"{rob['plan']['expected_worst_period_coverage']:5.2f}/{rob['plan']['p10_worst_period_coverage']:.2f} "
               f"{rob['baseline']['expected_worst_period_coverage']:5.2f}/"
               f"{rob['baseline']['p10_worst_period_coverage']:.2f}")
    g = obj["guarantee"]
    line = f"greedy guarantee: {g['statement']}"
    if "exact" in obj:
        ex = obj["exact"]
        if ex["greedy_ratio"] is None:
            line += f"; exact mode: {ex['status']}"
        else:
            kind = "optimum" if ex["optimal"] else "upper bound"
            line += (f"; exact {kind} {ex['upper_bound_cells']:.0f} cells vs coverage-only greedy "
                     f"{ex.get('coverage_greedy_cells', obj['greedy']['covered_cells'])} "
                     f"(ratio {ex['greedy_ratio']:.3f}; {ex['status']})")
    out.append(line)
    bands = rob["plan"]["single_site_bands_h"]
    if bands:
        out.append("periods seen mostly from one site (fragile if that site clouds out): "
                   + ", ".join(f"{a:.1f}-{b:.1f} h" for a, b in bands[:6]))
    return "\n".join(out) + "\n"


def _ra_hms(ra_deg: float) -> str:
    if not math.isfinite(ra_deg):
        return "-"
    h = (ra_deg % 360.0) / 15.0
    hh, rem = divmod(h * 3600.0, 3600.0)
    mm, ss = divmod(rem, 60.0)
    return f"{int(hh):02d}h{int(mm):02d}m{ss:04.1f}s"


def _dec_dms(dec_deg: float) -> str:
    if not math.isfinite(dec_deg):
        return "-"
    sign = "-" if dec_deg < 0 else "+"
    d = abs(dec_deg)
    dd, rem = divmod(d * 3600.0, 3600.0)
    mm, ss = divmod(rem, 60.0)
    return f"{sign}{int(dd):02d}d{int(mm):02d}m{int(ss):02d}s"


def _cautions(r, site, max_airmass: float = 2.0) -> list[str]:
    out = []
    if math.isfinite(r.solar_elong_deg) and r.solar_elong_deg < site.min_solar_elong_deg + SUN_MARGIN_DEG:
        out.append(f"target only {r.solar_elong_deg:.0f} deg from the Sun: {SUN_CAUTION}")
    if math.isfinite(r.sun_alt_max_deg) and r.sun_alt_max_deg > -18.0:
        out.append(f"part of the block is in twilight (Sun up to {r.sun_alt_max_deg:.0f} deg): keep clear of the "
                   "Sun's side of the sky and watch the sky brightness")
    if math.isfinite(r.airmass_max) and r.airmass_max > max_airmass:
        out.append(f"airmass reaches {r.airmass_max:.1f} (campaign limit {max_airmass:g}): expect extinction "
                   "changes; take comparison stars")
    if math.isfinite(r.moon_sep_deg) and r.moon_sep_deg < 45.0 and r.moon_illum > 0.3:
        out.append(f"Moon {r.moon_sep_deg:.0f} deg away, {100 * r.moon_illum:.0f}% lit")
    if r.exposure_limited_by == "trailing":
        out.append("exposure capped by trailing at the sidereal rate: track at the rates above to expose longer")
    if not (isinstance(r.exposure_s, float) and math.isfinite(r.exposure_s)):
        out.append("no exposure prediction (no instrument in the site file or target too faint): set by hand")
    return out


def site_sheet(result: PlanResult, site) -> str:
    """Plain-text observing sheet for one site: nights, blocks (local and UTC), pointing, rates, cautions."""
    camp = result.campaign
    b = result.blocks[result.blocks["site"] == site.name]
    lines = [
        f"OBSERVING SHEET - {site.name}",
        f"campaign: {camp.name}    target: {result.target_name or '-'} (file {camp.target_path.name})",
        f"site: lat {site.latitude_deg:+.3f}  lon {site.longitude_deg:+.3f}  time zone {site.timezone}",
        f"times: local ({site.timezone}) and UTC; each block starts with {camp.blocks.setup_min:g} min of set-up "
        "(slew, focus, acquisition), exposures start after it",
        "",
        "SAFETY: " + SUN_CAUTION,
        "",
    ]
    t = table_for_files(b)
    by_night = dict(tuple(t.groupby("night", sort=True)))
    notes = result.nights[result.nights["site"] == site.name] if result.nights is not None and len(result.nights) \
        else pd.DataFrame({"night": sorted(by_night), "note": ""})
    if not len(notes) and not by_night:
        lines.append("No blocks for this site in this plan.")
    observed = notes["observed_h"] if "observed_h" in notes else pd.Series(0.0, index=notes.index)
    for night, note, obs_h in zip(notes["night"], notes["note"], observed.fillna(0.0), strict=True):
        rows = by_night.get(night)
        if rows is None:
            lines += [f"Night of {night} (local evening date): no block. {note[:1].upper() + note[1:]}", ""]
            continue
        lines.append(f"Night of {night} (local evening date)")
        if obs_h > 0:  # re-planned: the log already holds time on this night; the blocks come after it
            lines.append(f"  already observed this night: {obs_h:.2f} h (observation log); the blocks below follow it")
        for k, r in enumerate(rows.itertuples(index=False), 1):
            exp = (f"{r.n_exposures} x {r.exposure_s:.0f} s" if isinstance(r.exposure_s, float)
                   and math.isfinite(r.exposure_s) else f"{r.n_exposures} exposures (exposure time not predicted)")
            lines += [
                f"  Block {k}: {r.start_local[11:16]}-{r.end_local[11:16]} local  "
                f"({r.start_utc[11:16]}-{r.end_utc[11:16]} UTC, {r.hours:.2f} h); "
                f"science from {r.science_start_utc[11:16]} UTC",
                f"    point (mid-block): RA {_ra_hms(r.ra_deg)}  Dec {_dec_dms(r.dec_deg)}",
                f"    track: {r.motion_arcsec_min:.2f} arcsec/min at PA {r.motion_pa_deg:.0f} deg "
                f"(RA*cos(Dec) {r.ra_rate_arcsec_min:+.3f}, Dec {r.dec_rate_arcsec_min:+.3f} arcsec/min)",
                f"    altitude {r.alt_min_deg:.0f}-{r.alt_max_deg:.0f} deg, airmass {r.airmass_min:.2f}-"
                f"{r.airmass_max:.2f}; Moon {r.moon_sep_deg:.0f} deg away, {100 * r.moon_illum:.0f}% lit",
                f"    exposures: {exp}; predicted mag {r.mag_pred:.1f}, S/N per exposure "
                f"{_fmt(r.snr_pred, '.0f', 0).strip()}",
            ]
            for c in _cautions(r, site, camp.max_airmass):
                lines.append(f"    CAUTION: {c}")
        lines.append("")
    return "\n".join(lines) + "\n"


def diagnostics_json(result: PlanResult) -> dict:
    return json_safe({"plan": result.diagnostics["plan"], "baseline": result.diagnostics["baseline"],
                   "objective": result.objective, "robustness": result.robustness,
                   "comparison": result.comparison, "replan": result.replan, "timings_s": result.timings_s})


#: Number format of plan.csv, also when `phasewise plan --format csv` prints it.
PLAN_CSV_FLOAT_FORMAT = "%.7g"


def plan_json(result: PlanResult) -> dict:
    return {"campaign": result.campaign.name, "target": result.target_name, "blocks": records(result.blocks)}


def _write_folder(result: PlanResult, folder: Path) -> None:
    (folder / "sheets").mkdir(parents=True)
    table_for_files(result.blocks).to_csv(folder / "plan.csv", index=False, float_format=PLAN_CSV_FLOAT_FORMAT)
    (folder / "plan.json").write_text(json.dumps(plan_json(result), indent=1) + "\n")
    table_for_files(result.baseline).to_csv(folder / "baseline.csv", index=False, float_format="%.7g")
    (folder / "diagnostics.json").write_text(json.dumps(diagnostics_json(result), indent=1) + "\n")
    table_for_files(result.windows).to_csv(folder / "windows.csv", index=False)
    table_for_files(result.geometry).to_csv(folder / "geometry.csv", index=False, float_format="%.6g")
    result.nights.to_csv(folder / "nights.csv", index=False, float_format="%.4g")
    shutil.copyfile(result.campaign.path, folder / "campaign.toml")
    if result.campaign.target_path.suffix.lower() == ".toml":  # the report takes the target's name from it
        shutil.copyfile(result.campaign.target_path, folder / "target.toml")
    for site in result.campaign.sites:
        (folder / "sheets" / f"{slug(site.name)}.txt").write_text(site_sheet(result, site))
    from planner.report import write_report

    write_report(folder)  # last: rendered from the files above alone, inside the not-yet-renamed folder


def write_plan_folder(result: PlanResult, out: str | Path, force: bool = False) -> Path:
    """Write the plan folder atomically: build it beside ``out`` under a temporary name, then rename.

    A non-empty ``out`` is refused unless ``force``; with ``force`` the old folder is replaced only
    once the new one is complete.
    """
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise InputError(str(out), "--out", "exists and is not a folder")
    if out.is_dir() and any(out.iterdir()) and not force:
        raise InputError(str(out), "--out", "folder is not empty (use --force to replace it)")
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.", suffix=".part", dir=out.parent))
    try:
        _write_folder(result, tmp / "plan")
        if out.is_dir():
            old = tmp / "old"
            os.replace(out, old)
            try:
                os.replace(tmp / "plan", out)
            except BaseException:
                os.replace(old, out)
                raise
        else:
            os.replace(tmp / "plan", out)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return out
