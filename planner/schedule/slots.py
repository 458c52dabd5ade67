"""Candidate slots: the observable windows cut into a regular grid, grouped into site-nights.

All slot indices live on one global grid: slot ``k`` spans ``[t_ref + k·slot, t_ref + (k+1)·slot)``.
A *site-night* (``SiteNight``) holds the slot intervals where its site may observe (window ∩ allocation,
after anything already done or lost), its hour budget in slots, and the fixed visit length and
count the greedy uses there. The greedy's *elements* are every placement of that visit on the grid.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd

from planner.inputs.settings import BlockRules
from planner.inputs.sites import Site


@dataclass(frozen=True)
class SiteNight:
    """One site-night: where visits may go and how much time they may take."""

    site: str
    site_index: int
    night: date
    #: Usable slot intervals ``[start, stop)`` on the global grid, sorted, disjoint.
    intervals: tuple[tuple[int, int], ...]
    budget_slots: int
    clear_fraction: float
    #: Greedy visit length (slots) and most greedy visits in this site-night.
    unit_slots: int
    capacity: int

    def contains(self, start: int, stop: int) -> bool:
        return any(a <= start and stop <= b for a, b in self.intervals)


@dataclass(frozen=True)
class SlotGrid:
    t_ref: np.datetime64
    slot_s: float
    setup_slots: int
    min_slots: int
    max_slots: int
    max_per_night: int
    site_names: tuple[str, ...]
    site_nights: tuple[SiteNight, ...]
    #: Whole-campaign budget per site index, in slots (absent: none).
    site_budget_slots: dict[int, int]
    elem_site_night: np.ndarray
    elem_start: np.ndarray
    elem_len: np.ndarray
    #: First and last usable slot over the network (cadence span), in slots.
    span_slots: tuple[int, int]

    @property
    def slot_h(self) -> float:
        return self.slot_s / 3600.0

    @property
    def min_gap_slots(self) -> int:
        """Least pause between two visits of one site-night: the shortest visit. A shorter pause serves
        nothing else and costs a second set-up, so such visits are one visit or further apart."""
        return self.min_slots

    @property
    def n_elements(self) -> int:
        return int(self.elem_site_night.size)

    def slot_time(self, slot: np.ndarray | int) -> np.ndarray:
        """Global slot index → UTC datetime64[ns] of its start."""
        ns = np.asarray(slot, dtype=np.int64) * np.int64(round(self.slot_s * 1e9))
        return self.t_ref + ns.astype("timedelta64[ns]")

    def part_spans(self) -> tuple[np.ndarray, np.ndarray, int]:
        """Flat layout of every site-night's slot span (first to last usable slot), parts end to end:
        first slot per part, offset of that slot in the flat array, and the flat length."""
        lo = np.array([p.intervals[0][0] for p in self.site_nights], dtype=np.int64)
        size = np.array([p.intervals[-1][1] - p.intervals[0][0] for p in self.site_nights], dtype=np.int64)
        off = np.concatenate([[0], np.cumsum(size)[:-1]]).astype(np.int64) if size.size else size
        return lo, off, int(size.sum())

    def science_hours(self, start: np.ndarray, length: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Science interval (hours from t_ref) of visits: the set-up takes the first slots."""
        s = np.asarray(start, dtype=float)
        n = np.asarray(length, dtype=float)
        return (s + self.setup_slots) * self.slot_h, (s + n) * self.slot_h


def to_slot(times_utc: np.ndarray, t_ref: np.datetime64, slot_s: float, *, up: bool) -> np.ndarray:
    """UTC times → global slot boundaries, rounded up (``up``) or down, so a snapped interval stays inside."""
    ns = (np.asarray(times_utc, dtype="datetime64[ns]") - t_ref).astype(np.int64)
    step = np.int64(round(slot_s * 1e9))
    return -((-ns) // step) if up else ns // step


def _subtract(intervals: list[tuple[int, int]], cut: tuple[int, int]) -> list[tuple[int, int]]:
    out = []
    c0, c1 = cut
    for a, b in intervals:
        if c1 <= a or b <= c0:
            out.append((a, b))
            continue
        if a < c0:
            out.append((a, c0))
        if c1 < b:
            out.append((c1, b))
    return out


def _intersect(intervals: list[tuple[int, int]], allowed: list[tuple[int, int]]) -> list[tuple[int, int]]:
    out = []
    for a, b in intervals:
        for c, d in allowed:
            lo, hi = max(a, c), min(b, d)
            if hi > lo:
                out.append((lo, hi))
    return sorted(out)


def build_slots(
    windows: pd.DataFrame,
    sites: tuple[Site, ...] | list[Site],
    blocks: BlockRules,
    t_ref: np.datetime64,
    *,
    total_hours: dict[str, float] | None = None,
    not_before_utc: np.datetime64 | None = None,
    lost: set[tuple[str, date]] | frozenset = frozenset(),
    used_h: dict[tuple[str, date], float] | None = None,
    busy_utc: dict[str, list[tuple[np.datetime64, np.datetime64]]] | None = None,
) -> SlotGrid:
    """Site-nights and greedy elements from a windows table (columns site, night, start_utc, end_utc).

    Allocation: ``hours_per_night`` gives the nightly budget anywhere in the window; fixed UTC
    ``blocks`` restrict the window and their overlap is the budget; no allocation means the whole
    window. ``not_before_utc`` drops every slot before it, ``lost`` drops whole site-nights,
    ``used_h`` takes hours already spent off a site-night's budget and ``busy_utc`` removes
    intervals already observed at a site (re-planning).
    """
    t_ref = np.datetime64(t_ref, "ns")
    slot_s = blocks.slot_s
    min_slots = int(np.ceil(blocks.min_block_h * 3600.0 / slot_s - 1e-9))
    max_slots = int(np.floor(blocks.max_block_h * 3600.0 / slot_s + 1e-9))
    setup_slots = int(np.ceil(blocks.setup_minutes * 60.0 / slot_s - 1e-9))
    total_hours = total_hours or {}
    used_h = used_h or {}
    busy_utc = busy_utc or {}
    cut = None if not_before_utc is None else int(to_slot(np.datetime64(not_before_utc, "ns"), t_ref, slot_s, up=True))
    w = windows.copy()
    w = w[w["start_utc"].notna() & w["end_utc"].notna()]
    nights = pd.to_datetime(w["night"]).dt.date if len(w) else pd.Series([], dtype=object)
    w = w.assign(_night=nights.values)
    parts: list[SiteNight] = []
    e_part, e_start = [], []
    names = tuple(s.name for s in sites)
    for si, site in enumerate(sites):
        ws = w[w["site"] == site.name]
        alloc = site.allocation
        alloc_iv = None
        if alloc.granted_utc:
            starts = to_slot(np.array([a for a, _ in alloc.granted_utc]), t_ref, slot_s, up=True)
            stops = to_slot(np.array([b for _, b in alloc.granted_utc]), t_ref, slot_s, up=False)
            alloc_iv = [(int(a), int(b)) for a, b in zip(starts, stops, strict=True) if b > a]
        busy = [
            (
                int(to_slot(np.datetime64(a, "ns"), t_ref, slot_s, up=False)),
                int(to_slot(np.datetime64(b, "ns"), t_ref, slot_s, up=True)),
            )
            for a, b in busy_utc.get(site.name, [])
        ]
        for night in sorted(set(ws["_night"])):
            if (site.name, night) in lost:
                continue
            rows = ws[ws["_night"] == night]
            a = to_slot(rows["start_utc"].to_numpy("datetime64[ns]"), t_ref, slot_s, up=True)
            b = to_slot(rows["end_utc"].to_numpy("datetime64[ns]"), t_ref, slot_s, up=False)
            iv = sorted((int(x), int(y)) for x, y in zip(a, b, strict=True) if y > x)
            if alloc_iv is not None:
                iv = _intersect(iv, alloc_iv)
            if cut is not None:
                iv = _subtract(iv, (-(2**62), cut))
            for c in busy:
                iv = _subtract(iv, c)
            iv = [(x, y) for x, y in iv if y - x >= min_slots]
            if not iv:
                continue
            usable = sum(y - x for x, y in iv)
            if alloc.hours_per_night is not None:
                budget = int(np.floor(alloc.hours_per_night * 3600.0 / slot_s + 1e-9))
            else:
                budget = usable
            budget -= int(np.ceil(used_h.get((site.name, night), 0.0) * 3600.0 / slot_s - 1e-9))
            budget = min(budget, usable)
            if budget < min_slots:
                continue
            longest = max(y - x for x, y in iv)
            unit = int(np.clip(budget // blocks.max_per_night, min_slots, max_slots))
            unit = min(unit, longest, budget)
            if unit < min_slots:
                continue
            capacity = int(min(blocks.max_per_night, budget // unit))
            pi = len(parts)
            parts.append(
                SiteNight(
                    site=site.name,
                    site_index=si,
                    night=night,
                    intervals=tuple(iv),
                    budget_slots=budget,
                    clear_fraction=float(site.clear_fraction),
                    unit_slots=unit,
                    capacity=capacity,
                )
            )
            for x, y in iv:
                if y - x >= unit:
                    starts = np.arange(x, y - unit + 1, dtype=np.int64)
                    e_start.append(starts)
                    e_part.append(np.full(starts.size, pi, dtype=np.int64))
    site_budget = {}
    for name, hours in total_hours.items():
        if name in names:
            site_budget[names.index(name)] = int(np.floor(hours * 3600.0 / slot_s + 1e-9))
    elem_site_night = np.concatenate(e_part) if e_part else np.zeros(0, dtype=np.int64)
    elem_start = np.concatenate(e_start) if e_start else np.zeros(0, dtype=np.int64)
    elem_len = np.array([parts[p].unit_slots for p in elem_site_night], dtype=np.int64)
    if parts:
        span = (min(p.intervals[0][0] for p in parts), max(p.intervals[-1][1] for p in parts))
    else:
        span = (0, 0)
    return SlotGrid(
        t_ref=t_ref,
        slot_s=slot_s,
        setup_slots=setup_slots,
        min_slots=min_slots,
        max_slots=max_slots,
        max_per_night=blocks.max_per_night,
        site_names=names,
        site_nights=tuple(parts),
        site_budget_slots=site_budget,
        elem_site_night=elem_site_night,
        elem_start=elem_start,
        elem_len=elem_len,
        span_slots=span,
    )
