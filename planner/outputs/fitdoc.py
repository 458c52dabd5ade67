"""The light-curve fit as a document (the ``phasewise fit`` JSON, ``lightcurve.json`` of a plan
folder) and as the text a person reads.

The document is ``LightCurveFit.to_dict()`` (the keys of docs/formats.md, "phasewise fit") plus
``input`` (what was fitted, as ``phasewise check`` describes its input), ``settings`` and, for
figures, ``arrays`` (per point, the χ² curve and the model over one rotation). Figures and reports
read the document only, so a plan folder's report re-renders from ``lightcurve.json`` alone.
"""

from __future__ import annotations

import math

import numpy as np

from planner.core.jsonsafe import json_safe
from planner.core.textfmt import fixed
from planner.lightcurve.fit import LightCurveFit
from planner.lightcurve.logpoints import LogLightCurve
from planner.lightcurve.periods import CANDIDATE_DELTA_CHI2

MIN_PER_H = 60.0


def fit_arrays(fit: LightCurveFit, lc: LogLightCurve) -> dict:
    """What the figures draw: per point (in the log's order of the fitted rows), the χ² curve, the
    model over one rotation and the distance law. ``law.mean_mag`` is the law's value at
    ``log10_r_ref``: the weighted mean of the law-only magnitudes less K1 (log r − ref), exact because
    the fit's residuals are orthogonal (weights 1/σ²) to its constant and log r columns."""
    a = fit.arrays
    w = 1.0 / lc.points.mag_err**2
    k1 = fit.fading.k1 if fit.fading.measurable else fit.fading.expected_k1
    lr = a.log10_r - fit.log10_r_ref
    mean = float(np.sum(w * (a.distance_law_mag - k1 * lr)) / np.sum(w))
    return {
        "points": {
            "group": lc.points.site.astype(str),
            "emission_jd": a.emission_jd,
            "phase": a.phase,
            "reduced_mag": a.reduced_mag,
            "rotation_signal_mag": a.rotation_signal_mag,
            "residual_mag": a.residual_mag,
            "mag_err": lc.points.mag_err,
            "log10_r": a.log10_r,
            "distance_law_mag": a.distance_law_mag,
        },
        "scan": {"period_h": a.scan_period_h, "delta_chi2": a.scan_delta_chi2},
        "model": {"phase": a.model_phase, "mag": a.model_mag},
        "law": {
            "mean_mag": mean,
            "log10_r_ref": fit.log10_r_ref,
            "k1": k1,
            "expected_k1": fit.fading.expected_k1,
            "fitted": bool(fit.fading.measurable),
        },
    }


def fit_document(fit: LightCurveFit, lc: LogLightCurve, settings: dict, *, arrays: bool = True) -> dict:
    """The fit's JSON document: the fit's keys, ``input``, ``settings`` and (optionally) ``arrays``."""
    doc = {**fit.to_dict(), "input": lc.input_dict(), "settings": dict(settings)}
    if arrays:
        doc["arrays"] = fit_arrays(fit, lc)
    return json_safe(doc)


def _num(x, spec: str) -> str:
    return fixed(x, spec).strip()


def _minutes(h_per_day) -> str:
    return "-" if h_per_day is None else f"{h_per_day * MIN_PER_H:.3g}"


def fit_text(doc: dict, *, zero_points: bool = True) -> str:
    """The fit for people: period, candidates, fading, period change, zero points, χ² scale, notes."""
    inp, p, f, pc = doc["input"], doc["periods"], doc["fading"], doc["period_change"]
    geo = inp.get("geometry") or {}
    sites = ", ".join(f"{k} {v} ({geo.get(k, '?')})" for k, v in inp["sites"].items())
    lines = [
        f"{inp['target']}: {inp['n_times']} points from {inp['log']}, {inp['first_utc']} to {inp['last_utc']} "
        f"(span {inp['span_h']:.1f} h)",
        f"sites: {sites}",
        "times light-time corrected (rotational phase counted at the emission time t - Δ/c); magnitudes reduced "
        "to Δ = 1 au" + (f" and by the {inp['phase_law_removed']} phase law" if inp.get("phase_law_removed") else ""),
    ]
    skipped = [
        f"{inp[k]} {w}" for k, w in (("rows_without_mag", "rows without mag"), ("lost_rows", "lost rows")) if inp.get(k)
    ]
    if skipped:
        lines.append("skipped: " + ", ".join(skipped))
    lines += ["", "Rotation period"]
    shape = "double-peaked (two maxima per rotation)" if p["double_peaked"] else "single-peaked"
    lines.append(f"  best {_num(p['best_h'], '.4f')} ± {_num(p['sigma_h'], '.2g')} h (1σ), {shape}")
    lines.append(f"  verdict: {p['verdict']}: {p['reason']}")
    lines.append(f"  candidates (every minimum within Δχ² < {CANDIDATE_DELTA_CHI2:g} of the best):")
    lines.append(f"    {'period (h)':>11} {'± (h)':>9} {'Δχ²':>6} {'likelihood':>11}")
    for c in p["candidates"]:
        lines.append(
            f"    {fixed(c['period_h'], '.4f', 11)} {fixed(c.get('sigma_h'), '.2g', 9)} "
            f"{fixed(c['delta_chi2'], '.1f', 6)} {fixed(c['relative_likelihood'], '.3g', 11)}"
        )
    lines += ["", "Fading"]
    src = {"target": "the target file", "option": "--expected-k1", "default": "r^-4, common practice"}
    k1_from = src.get((doc.get("settings") or {}).get("expected_k1_source"), "")
    expected = f"expected {_num(f['expected_k1'], '.3g')}" + (f" ({k1_from})" if k1_from else "")
    if f.get("measurable"):
        lines.append(
            f"  K1 = {_num(f['k1'], '.3g')} ± {_num(f['k1_sigma'], '.2g')} against the {expected}: "
            f"{_num(f['excess_sigma'], '+.1f')}σ"
        )
        lines.append(
            f"  extra fading beyond the law: {_num(f['extra_mag_per_day'], '+.2g')} ± "
            f"{_num(f['extra_mag_per_day_sigma'], '.2g')} mag/day (positive = fainter with time)"
        )
    else:
        lines.append(f"  not measured ({expected}): {f.get('message', '')}")
    lines += ["", "Period change"]
    lines.append(
        f"  Ṗ = {_num(pc['rate_h_per_day'], '+.2g')} ± {_num(pc['rate_sigma_h_per_day'], '.2g')} h/day "
        f"({_minutes(pc['rate_h_per_day'])} ± {_minutes(pc['rate_sigma_h_per_day'])} min/day), "
        f"{_num(pc['significance_sigma'], '.1f')}σ"
    )
    drift = pc.get("synodic_drift_h_per_day")
    lines.append(
        "  synodic drift from the geometry alone: "
        + (
            "not known (no phase-angle bisector)"
            if drift is None
            else f"{_num(drift, '.2g')} h/day ({_minutes(drift)} min/day): a change well above it is the spin's own"
        )
    )
    chi = doc.get("chi2") or {}
    scale = chi.get("scale")
    if scale is not None and scale > 1.0:
        lines += [
            "",
            f"χ² scale {scale:.3g} (χ²/dof of the best fit): the errors look underestimated by a factor "
            f"{math.sqrt(scale):.3g}; every Δχ² and σ above is scaled by it",
        ]
    if zero_points and doc.get("zero_points"):
        ref = doc["zero_points"][0]["site"]
        lines += ["", f"Zero points (mag; site zero point + nightly offset, relative to {ref})"]
        for z in doc["zero_points"]:
            lines.append(
                f"  {z['site'][:24]:24} {z['night']:10} {fixed(z['offset_mag'], '+.3f', 7)} "
                f"± {fixed(z.get('offset_sigma_mag'), '.3f', 5)}"
            )
    for note in inp.get("notes") or []:
        lines.append(f"Note: {note}")
    return "\n".join(lines) + "\n"


def fit_brief(doc: dict) -> str:
    """Three lines of a fit: period and verdict, candidates, fading and period change."""
    p, f, pc = doc["periods"], doc["fading"], doc["period_change"]
    cands = ", ".join(f"{c['period_h']:.4g} h (Δχ² {c['delta_chi2']:.1f})" for c in p["candidates"])
    fading = (
        f"K1 {_num(f['k1'], '.3g')} ± {_num(f['k1_sigma'], '.2g')} (expected {_num(f['expected_k1'], '.3g')})"
        if f.get("measurable")
        else "fading not measurable"
    )
    return (
        f"best rotation period {_num(p['best_h'], '.4f')} ± {_num(p['sigma_h'], '.2g')} h, "
        f"{'double' if p['double_peaked'] else 'single'}-peaked; {p['verdict']}\n"
        f"candidates: {cands}\n"
        f"{fading}; period change {_num(pc['rate_h_per_day'], '+.2g')} ± "
        f"{_num(pc['rate_sigma_h_per_day'], '.2g')} h/day\n"
    )
