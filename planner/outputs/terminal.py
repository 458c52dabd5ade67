"""What ``phasewise plan`` prints: the night-by-night table, the hours, the cautions and the comparison."""

from __future__ import annotations

import math

import pandas as pd

from planner.core.safety import CAUTION_TEXT, SUN_SAFETY_TEXT
from planner.core.textfmt import clock_hm, fixed
from planner.outputs.sheets import block_band_mag
from planner.outputs.tablefiles import table_for_files
from planner.pipeline import PlanResult
from planner.schedule.localsearch import EVALUATIONS_PER_VISIT, MIN_EVALUATIONS
from planner.schedule.solve import thinned_periods_text

#: Units of the printed night-by-night table (under it).
TABLE_LEGEND = (
    "columns: night = local evening date; local, UTC = block start-end (hh:mm, set-up included); "
    "h = hours;\n  exp = exposures x seconds; RA, Dec in deg (mid-block); mot = sky motion arcsec/min "
    "towards PA deg;\n  alt = altitude range deg; X = airmass range; moon = Moon separation deg; "
    "mag = predicted magnitude in the\n  site's instrument band (the brightness law's band where a site has none); "
    "S/N per exposure"
)


def _exposures(r) -> str:
    if isinstance(r.exposure_s, float) and math.isfinite(r.exposure_s):
        return f"{r.n_exposures}x{r.exposure_s:.0f}s"
    return f"{r.n_exposures}x?"


def night_table(blocks: pd.DataFrame) -> str:
    """One line per block, grouped by night: what an observer reads before the night."""
    if blocks.empty:
        return "no blocks planned\n"
    t = table_for_files(blocks)
    head = (
        f"{'night':10}  {'site':16} {'local':13} {'UTC':13} {'h':>4} {'exp':>9} {'RA':>7} {'Dec':>6} "
        f"{'mot':>6} {'PA':>4} {'alt':>7} {'X':>9} {'moon':>4} {'mag':>5} {'S/N':>5}"
    )
    lines = [head, "-" * len(head)]
    last = None
    for r in t.itertuples(index=False):
        night = r.night if r.night != last else ""
        last = r.night
        flag = " !" if str(getattr(r, "cautions", "") or "").strip() else ""
        lines.append(
            f"{night:10}  {r.site[:16]:16} {clock_hm(r.start_local)}-{clock_hm(r.end_local)}   "
            f"{clock_hm(r.start_utc)}-{clock_hm(r.end_utc)}   {r.hours:4.1f} {_exposures(r):>9} "
            f"{fixed(r.ra_deg, '.2f', 7)} {fixed(r.dec_deg, '+.1f', 6)} {fixed(r.motion_arcsec_per_min, '.2f', 6)} "
            f"{fixed(r.motion_pa_deg, '.0f', 4)} {fixed(r.min_alt_deg, '.0f', 3)}-{fixed(r.max_alt_deg, '.0f', 3)} "
            f"{fixed(r.min_airmass, '.2f', 4)}-{fixed(r.max_airmass, '.2f', 4)} {fixed(r.moon_sep_deg, '.0f', 4)} "
            f"{fixed(block_band_mag(r)[0], '.1f', 5)} {fixed(r.snr_pred, '.0f', 5)}{flag}"
        )
    flagged = "cautions" in t and t["cautions"].fillna("").astype(str).str.strip().ne("").any()
    lines.append(TABLE_LEGEND + ("; ! = the block has a caution (listed under SAFETY)" if flagged else ""))
    return "\n".join(lines) + "\n"


def nights_text(result: PlanResult) -> str:
    """Hours planned against hours granted per site, then every site-night without a block and why."""
    n = result.nights
    if n is None or n.empty:
        return ""
    per = n.groupby("site", sort=False)[["planned_h", "budget_h", "observed_h"]].sum()
    done = per["observed_h"].sum() > 0
    out = [
        "hours planned / usable allocation"
        + (" (+ already observed)" if done else "")
        + ": "
        + ", ".join(
            f"{site} {r.planned_h:.1f}/{r.budget_h:.1f}" + (f" (+{r.observed_h:.1f})" if done else "")
            for site, r in per.iterrows()
        )
    ]
    empty = n[n["blocks"] == 0].sort_values("night", kind="stable")
    if len(empty):
        out.append("site-nights without a block:")
        out += [f"  {r.night}  {r.site}: {r.note}" for r in empty.itertuples(index=False)]
    else:
        out.append("every site has a block on every night")
    return "\n".join(out) + "\n"


def caution_lines(blocks: pd.DataFrame) -> list[str]:
    """``site night hh:mm UTC: what`` for every block whose ``cautions`` column names a caution."""
    out = []
    if "cautions" not in blocks:
        return out
    b = table_for_files(blocks)
    for r in b.itertuples(index=False):
        kinds = [k for k in str(r.cautions or "").split(";") if k]
        for k in kinds:
            detail = f"target {r.solar_elong_deg:.0f} deg from the Sun, " if k == "sun" else ""
            out.append(f"  {r.site} {r.night} {clock_hm(r.start_utc)} UTC: {detail}{CAUTION_TEXT[k]}")
    return out


def safety_text(result: PlanResult) -> str:
    """The Sun caution printed under every plan, then the blocks that carry a caution (the `!` rows)."""
    notes = [f"note: {n}" for n in result.notes]
    return "\n".join(["SAFETY: " + SUN_SAFETY_TEXT, *caution_lines(result.blocks), *notes]) + "\n"


def comparison_text(result: PlanResult) -> str:
    """Plan against the hand-made baseline: coverage, aliases, fading sensitivity, weather, guarantee."""
    c = result.comparison
    rob = result.robustness
    obj = result.objective
    rows = [
        ("worst-period phase coverage (higher is better)", c.worst_period_coverage, ".2f"),
        ("highest spectral-window alias beyond 2/span (lower is better)", c.highest_alias, ".2f"),
        ("least detectable extra fading, mag/day (lower is better)", c.trend_min_detectable_mag_per_day, ".1e"),
        ("light-curve points (frames stacked per slot)", c.n_times, "d"),
    ]
    hours_p = float(result.blocks["hours"].sum()) if len(result.blocks) else 0.0
    hours_b = float(result.baseline["hours"].sum()) if len(result.baseline) else 0.0
    weather = "under weather: worst-period coverage, mean/10th pct"
    w = max(len(label) for label, _, _ in rows + [(weather, None, None)])
    head = "plan vs baseline (the baseline: one block per site-night at the highest altitude, same hours)"
    if hours_b < hours_p - 0.05:  # one block a night, capped at max_block_h, cannot hold the plan's hours
        head = (
            f"plan vs baseline (the baseline: one block per site-night at the highest altitude, at most "
            f"{result.campaign.block_rules.max_block_h:g} h each, so {hours_p - hours_b:.1f} h fewer than the plan)"
        )
    out = [head, f"{'':{w}} {'plan':>9} {'baseline':>9}", f"{'telescope hours':{w}} {hours_p:9.1f} {hours_b:9.1f}"]
    for label, (plan, base), spec in rows:
        out.append(f"{label:{w}} {fixed(plan, spec, 9)} {fixed(base, spec, 9)}")
    disc = result.discrimination
    if disc is not None:
        plan, base = disc.expected_min_delta_chi2
        label = "least Δχ² between candidate periods (higher is better)"
        out.append(f"{label:{w}} {fixed(plan, '.1f', 9)} {fixed(base, '.1f', 9)}")
    rp, rb = rob["plan"], rob["baseline"]
    out.append(
        f"{weather:{w}} {rp.expected_worst_period_coverage:5.2f}/{rp.p10_worst_period_coverage:.2f} "
        f"{rb.expected_worst_period_coverage:5.2f}/{rb.p10_worst_period_coverage:.2f}"
    )
    line = f"greedy guarantee: {obj.guarantee}"
    if obj.exact is not None:
        ex, ratio = obj.exact.result, obj.exact.greedy_ratio
        if ratio is None:
            line += f"; exact mode: {ex.status}"
        else:
            kind = "optimum" if ex.optimal else "upper bound"
            line += (
                f"; exact {kind} {ex.upper_bound_cells:.0f} cells vs coverage-only greedy "
                f"{obj.exact.coverage_greedy_cells} (ratio {ratio:.3f}; {ex.status})"
            )
    out.append(line)
    ls = obj.search
    out.append(
        f"local search: {ls.evaluations} of {ls.budget} moves scored (budget: {EVALUATIONS_PER_VISIT} per visit of "
        f"the greedy's schedule, at least {MIN_EVALUATIONS}), {ls.accepted} kept in {ls.passes} passes, objective "
        f"+{ls.gain:.4f}; stopped by {ls.stopped_by}"
    )
    if obj.n_periods < obj.n_periods_grid:
        out.append(thinned_periods_text(obj.n_periods, obj.n_periods_grid))
    if disc is not None:
        out.append(
            "candidate periods from the log's light curve (h): "
            + ", ".join(f"{p:.4g}" for p in disc.candidates_h)
            + "; the plan is built to tell them apart"
        )
    bands = rp.single_site_bands_h
    if bands:
        out.append(
            "periods seen mostly from one site (fragile if that site clouds out): "
            + ", ".join(f"{a:.1f}-{b:.1f} h" for a, b in bands[:6])
        )
    return "\n".join(out) + "\n"
