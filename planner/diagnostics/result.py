"""What a check reports: its settings and its typed result, with the documented JSON (``to_dict``)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from planner.core.jsonsafe import json_safe
from planner.core.timegrid import iso_utc
from planner.diagnostics.recovery import DEFAULT_AMPLITUDE_PHASE_SLOPE_PER_DEG

VERDICTS = ("secure", "alias-prone", "under-covered")


@dataclass
class CheckSettings:
    """The assumptions behind a check, echoed in the output so a result can be reproduced."""

    min_period_h: float
    max_period_h: float
    phase_bins: int = 20
    oversample: float = 10.0
    trials: int = 200
    seed: int = 0
    amplitude_range_mag: tuple[float, float] = (0.1, 0.5)
    double_peaked: bool = True
    nterms: int = 2
    extra_fading_mag_per_day: float = 0.0
    coverage_threshold: float = 0.8
    alias_threshold: float = 0.7
    recovery_threshold: float = 0.9
    window_max_freq_per_day: float = 5.0
    n_sigma: float = 3.0
    #: Zappalà et al. (1990) slope m of A(α) = A(0)(1 + m α), per degree (planner.diagnostics.recovery).
    amplitude_phase_slope_per_deg: float = DEFAULT_AMPLITUDE_PHASE_SLOPE_PER_DEG
    #: Frames of one site inside one slot of this length are one light-curve point (None: no stacking).
    stack_s: float | None = None
    #: Extinction error per airmass added to each point's σ (planner.photometry.points).
    sys_err_mag_per_airmass: float = 0.0


@dataclass
class CheckResult:
    """Everything ``phasewise check`` reports; ``to_dict()`` gives the documented JSON."""

    settings: CheckSettings
    times_utc: np.ndarray
    times_jd: np.ndarray
    sites: np.ndarray | None
    mag_err: np.ndarray
    periods_h: np.ndarray
    coverage: np.ndarray
    largest_phase_gap: np.ndarray
    worst_periods: list[dict]
    commensurate: list[dict]
    window_freq_per_day: np.ndarray
    window_height: np.ndarray
    window_peaks: list[dict]
    highest_alias: dict | None
    nyquist_freq_per_day: float
    aliases: list[dict]
    bands: list[dict]
    recovery: list[dict]
    recovery_trials: list[dict]
    trend: dict
    period_change: list[dict]
    synodic: dict | None = None
    notes: list[str] = field(default_factory=list)
    #: Light time per (sorted) time, minutes, when the periods were computed on t − Δ/c; else None.
    light_time_minutes: np.ndarray | None = None
    #: Phase angle at which the injected amplitudes hold (None: no phase angles known).
    amplitude_ref_phase_deg: float | None = None
    #: Frames the points were stacked from (None: the times are the points themselves).
    n_frames: int | None = None

    @property
    def span_h(self) -> float:
        return float(np.ptp(self.times_jd) * 24.0) if self.times_jd.size else 0.0

    def to_dict(self) -> dict[str, Any]:
        s = self.settings
        sites: dict[str, int] = {}
        if self.sites is not None:
            names, counts = np.unique(self.sites.astype(str), return_counts=True)
            sites = {str(n): int(c) for n, c in zip(names, counts, strict=True)}
        return json_safe(
            {
                "input": {
                    "n_times": int(self.times_jd.size),
                    "n_frames": int(self.times_jd.size) if self.n_frames is None else self.n_frames,
                    "first_utc": iso_utc(self.times_utc[:1], seconds=True)[0] if self.times_jd.size else None,
                    "last_utc": iso_utc(self.times_utc[-1:], seconds=True)[0] if self.times_jd.size else None,
                    "span_h": self.span_h,
                    "sites": sites,
                    "median_mag_err": float(np.median(self.mag_err)) if self.mag_err.size else None,
                    "times_utc": iso_utc(self.times_utc, seconds=True),
                    "light_time_corrected": self.light_time_minutes is not None,
                    "light_time_minutes": self.light_time_minutes,
                },
                "settings": {
                    "min_period_h": s.min_period_h,
                    "max_period_h": s.max_period_h,
                    "phase_bins": s.phase_bins,
                    "oversample": s.oversample,
                    "trials": s.trials,
                    "seed": s.seed,
                    "amplitude_range_mag": list(s.amplitude_range_mag),
                    "double_peaked": s.double_peaked,
                    "nterms": s.nterms,
                    "extra_fading_mag_per_day": s.extra_fading_mag_per_day,
                    "coverage_threshold": s.coverage_threshold,
                    "alias_threshold": s.alias_threshold,
                    "recovery_threshold": s.recovery_threshold,
                    "n_sigma": s.n_sigma,
                    "amplitude_phase_slope_per_deg": s.amplitude_phase_slope_per_deg,
                    "amplitude_ref_phase_deg": self.amplitude_ref_phase_deg,
                    "stack_s": s.stack_s,
                    "sys_err_mag_per_airmass": s.sys_err_mag_per_airmass,
                },
                "periods_h": self.periods_h,
                "coverage": self.coverage,
                "largest_phase_gap": self.largest_phase_gap,
                "worst_periods": self.worst_periods,
                "commensurate": self.commensurate,
                "window": {"freq_per_day": self.window_freq_per_day, "height": self.window_height},
                "window_peaks": self.window_peaks,
                "highest_alias": self.highest_alias,
                "nyquist_freq_per_day": self.nyquist_freq_per_day,
                "aliases": self.aliases,
                "bands": self.bands,
                "recovery": self.recovery,
                "recovery_trials": self.recovery_trials,
                "trend": self.trend,
                "period_change": self.period_change,
                "synodic": self.synodic,
                "notes": self.notes,
            }
        )
