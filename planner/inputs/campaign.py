"""Campaign files: which target, which sites, which nights, and what the schedule should optimise.

One TOML file per campaign (schema of our own, documented in docs/formats.md, section "Campaign
file and plan outputs"). Paths inside it are relative to the campaign file. Loading validates
every field and raises :class:`InputError` naming the file and the dotted field. Per-site
allocations, total budgets and clear-night fractions come from the site files and may be
overridden here in a ``[site."Site name"]`` table.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

from planner.core.errors import InputError
from planner.core.limits import MAX_CAMPAIGN_NIGHTS, PYTHON, Limit, check_instance, check_limits
from planner.core.timegrid import check_nights_in_span, parse_date
from planner.core.tomlfile import Fields, read_toml
from planner.core.units import calendar_date
from planner.inputs.settings import (
    BLOCK_LIMITS,
    EXPOSURE_LIMITS,
    ROTATION_LIMITS,
    WEIGHT_LIMITS,
    BlockRules,
    Compute,
    ExposureRules,
    Rotation,
    Weights,
)
from planner.inputs.sites import SITE_LIMITS, Site, allocation_from, load_site
from planner.inputs.targets import Target, load_target

_TOP_KEYS = {
    "name",
    "target",
    "sites",
    "first_night",
    "nights",
    "seed",
    "rotation",
    "blocks",
    "cadence",
    "weights",
    "weather",
    "photometry",
    "diagnostics",
    "site",
    "object",
}
_ROTATION_KEYS = {
    "min_period_h",
    "max_period_h",
    "double_peaked",
    "amplitude_mag",
    "phase_bins",
    "oversample",
    "max_plan_periods",
}
_BLOCK_KEYS = {"slot_minutes", "min_block_h", "max_block_h", "setup_minutes", "max_per_night"}
_CADENCE_KEYS = {"max_gap_h"}
_WEIGHT_KEYS = {"coverage", "robustness", "alias", "cadence", "hours", "quality", "discrimination"}
_WEATHER_KEYS = {"trials"}
_PHOTOMETRY_KEYS = {"snr_target", "min_exposure_s", "max_exposure_s", "max_airmass", "sys_err_mag_per_airmass"}
_DIAGNOSTICS_KEYS = {"trials"}
#: A site's whole-campaign budget (``[site."NAME"] total_hours``).
TOTAL_HOURS_LIMIT = Limit(0.0, lo_open=True)
#: Keys of the [blocks] table in earlier versions and their names now.
_RENAMED_BLOCK_KEYS = {"slot_min": "slot_minutes", "setup_min": "setup_minutes"}


#: Ranges of the campaign's own numbers (the settings types hold theirs: planner.inputs.settings).
CAMPAIGN_LIMITS = {
    "nights": Limit(1, MAX_CAMPAIGN_NIGHTS, whole=True),
    "seed": Limit(0, 2**63 - 1, whole=True),
    "max_gap_h": Limit(0.5, 24.0 * 60),
    "weather_trials": Limit(10, 100_000, whole=True),
    "check_trials": Limit(0, 100_000, whole=True),
}


@dataclass(frozen=True)
class Campaign:
    """Which target, which sites, which nights, and what the schedule should optimise.

    Read from a campaign file by :func:`load_campaign`, or built in Python from :class:`Site` and
    :class:`Target` objects (``Campaign(name, sites, first_night, nights, target=...)``): no file is
    needed, and every field is checked when built with the same words as the file loader.
    """

    name: str
    #: Sites with the campaign's overrides applied.
    sites: tuple[Site, ...]
    first_night: date
    nights: int
    seed: int = 0
    rotation: Rotation = field(default_factory=Rotation)
    block_rules: BlockRules = field(default_factory=BlockRules)
    max_gap_h: float = 12.0
    weights: Weights = field(default_factory=Weights)
    weather_trials: int = 200
    photometry: ExposureRules = field(default_factory=ExposureRules)
    #: Injection–recovery trials per diagnostics run (phasewise check); 0 skips them.
    check_trials: int = 100
    #: Whole-campaign hour budget per site name (absent: no budget beyond the nightly allocation).
    total_hours: dict[str, float] = field(default_factory=dict)
    #: Which line of a multi-line MPC target file (``--object`` of the other commands).
    target_object: str | None = None
    #: The target itself, for a campaign built in Python (a file's campaign loads it from ``target_path``).
    target: Target | None = None
    #: The campaign file, its target file and its site files (None and () for a campaign built in Python).
    path: Path | None = None
    target_path: Path | None = None
    site_paths: tuple[Path, ...] = ()
    #: Where Monte Carlo trials run (not a file key: ``plan --dask ADDRESS``).
    compute: Compute = field(default_factory=Compute)

    def __post_init__(self) -> None:
        file = self.source
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError(file, "name", f"{self.name!r} must be a non-empty string")
        sites = tuple(self.sites) if isinstance(self.sites, (list, tuple)) else ()
        if not sites or not all(isinstance(s, Site) for s in sites):
            raise InputError(file, "sites", "must be a non-empty list of Site objects")
        names = [s.name for s in sites]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            raise InputError(file, "sites", f"two sites share the name {dup[0]!r}")
        object.__setattr__(self, "sites", sites)
        object.__setattr__(self, "first_night", calendar_date(self.first_night, "first_night", file))
        check_limits(self, CAMPAIGN_LIMITS, file)
        for name, cls in (("rotation", Rotation), ("block_rules", BlockRules), ("weights", Weights)):
            check_instance(self, name, cls, f"a {cls.__name__}", file)
        check_instance(self, "photometry", ExposureRules, "an ExposureRules", file)
        check_instance(self, "compute", Compute, "a Compute", file)
        budgets = {}
        for site_name, hours in dict(self.total_hours).items():
            if site_name not in names:
                raise InputError(file, "total_hours", f"no campaign site is named {site_name!r}")
            message = TOTAL_HOURS_LIMIT.problem(hours)
            if message is not None:
                raise InputError(file, f"total_hours.{site_name}", message)
            budgets[site_name] = float(hours)
        object.__setattr__(self, "total_hours", budgets)
        if self.target is not None:
            check_instance(self, "target", Target, "a Target", file)
        elif self.target_path is None:
            raise InputError(file, "target", "missing: give target=Target(...) or load the campaign from a file")

    @property
    def source(self) -> str:
        """The campaign file, or ``python`` for a campaign built in code (the FILE of its errors)."""
        return PYTHON if self.path is None else str(self.path)

    def load_target(self) -> Target:
        """The campaign's target: the one it was built with, or the target file it names."""
        if self.target is not None:
            return self.target
        try:
            return load_target(self.target_path, self.target_object)
        except InputError as e:
            if e.field != "object":
                raise
            message = e.message.replace("with --object NAME", 'with the campaign key object = "NAME"')
            raise InputError(str(self.path), "object", f"{self.target_path.name}: {message}") from None


def _path(f: Fields, key: str, base: Path, value: object) -> Path:
    if not isinstance(value, str) or not value.strip():
        raise f.error(key, f"{value!r} is not a file path")
    p = Path(value)
    p = p if p.is_absolute() else base / p
    if not p.is_file():
        raise f.error(key, f"{value!r} not found (paths are relative to the campaign file)")
    return p


def _first_night(f: Fields) -> date:
    value = f.table.get("first_night")
    if value is None:
        raise f.error("first_night", "missing (local date of the first evening, e.g. 2034-03-16)")
    if isinstance(value, date) and not hasattr(value, "hour"):
        return value
    if isinstance(value, str):
        return parse_date(value, f.file, f.name("first_night"))
    raise f.error("first_night", f"{value!r} is not a date such as 2034-03-16")


def _override(f: Fields, site: Site) -> tuple[Site, float | None]:
    changes: dict[str, object] = {}
    allocation = allocation_from(f, extra_keys=("clear_fraction", "total_hours"))
    if allocation is not None:
        changes["allocation"] = allocation
    clear = f.limited("clear_fraction", SITE_LIMITS["clear_fraction"])
    if clear is not None:
        changes["clear_fraction"] = clear
    total = f.limited("total_hours", TOTAL_HOURS_LIMIT)
    return dataclasses.replace(site, **changes), total


def _table(f: Fields, key: str, known: set[str], renamed: dict[str, str] | None = None) -> Fields:
    sub = f.sub(key) or Fields(f.file, {}, key)
    sub.check_known(known, renamed=renamed)
    return sub


def load_campaign(path: str | Path) -> Campaign:
    """Read and validate a campaign file; load its sites (with overrides). The target is loaded on demand."""
    path = Path(path)
    f = Fields(path, read_toml(path))
    f.check_known(_TOP_KEYS)
    base = path.resolve().parent
    name = f.str("name", required=True)
    if not f.has("target"):
        raise f.error("target", "missing (path of the target file)")
    target_path = _path(f, "target", base, f.table["target"])
    raw_sites = f.table.get("sites")
    if not isinstance(raw_sites, list) or not raw_sites:
        raise f.error("sites", "must be a non-empty list of site file paths")
    site_paths = tuple(_path(f, f"sites[{i}]", base, s) for i, s in enumerate(raw_sites))
    sites = [load_site(p) for p in site_paths]
    names = [s.name for s in sites]
    dup = {n for n in names if names.count(n) > 1}
    if dup:
        raise f.error("sites", f"two site files share the name {sorted(dup)[0]!r}")

    rot_f = _table(f, "rotation", _ROTATION_KEYS)
    rot = rot_f.values(ROTATION_LIMITS)
    if rot_f.has("double_peaked"):
        rot["double_peaked"] = rot_f.bool("double_peaked")
    if rot_f.has("amplitude_mag"):
        rot["amplitude_mag"] = tuple(rot_f.float_list("amplitude_mag", length=2))
    blk_f = _table(f, "blocks", _BLOCK_KEYS, renamed=_RENAMED_BLOCK_KEYS)
    w_f = _table(f, "weights", _WEIGHT_KEYS)
    ph_f = _table(f, "photometry", _PHOTOMETRY_KEYS)
    settings = {
        "rotation": rot_f.build(Rotation, **rot),
        "block_rules": blk_f.build(BlockRules, **blk_f.values(BLOCK_LIMITS)),
        "weights": w_f.build(Weights, **w_f.values(WEIGHT_LIMITS)),
        "photometry": ph_f.build(ExposureRules, **ph_f.values(EXPOSURE_LIMITS)),
    }
    # The campaign's own numbers, by (table, key in the file, field): absent keys keep the type's defaults.
    for table, key, field_name in (
        (f, "nights", "nights"),
        (f, "seed", "seed"),
        (_table(f, "cadence", _CADENCE_KEYS), "max_gap_h", "max_gap_h"),
        (_table(f, "weather", _WEATHER_KEYS), "trials", "weather_trials"),
        (_table(f, "diagnostics", _DIAGNOSTICS_KEYS), "trials", "check_trials"),
    ):
        value = table.limited(key, CAMPAIGN_LIMITS[field_name], required=field_name == "nights")
        if value is not None:
            settings[field_name] = value

    total_hours: dict[str, float] = {}
    ov_f = f.sub("site")
    if ov_f is not None:
        for key in ov_f.table:
            if key not in names:
                raise ov_f.error(key, f"no campaign site is named {key!r} (sites: {', '.join(names)})")
            sub = ov_f.sub(key)
            i = names.index(key)
            sites[i], total = _override(sub, sites[i])
            if total is not None:
                total_hours[key] = total

    first_night = _first_night(f)
    check_nights_in_span(first_night, settings["nights"], f.file, "first_night")
    return f.build(
        Campaign,
        name=name,
        path=path,
        target_path=target_path,
        site_paths=site_paths,
        sites=tuple(sites),
        first_night=first_night,
        total_hours=total_hours,
        target_object=f.str("object"),
        **settings,
    )


def campaign_error(campaign: Campaign, field_name: str, message: str) -> InputError:
    """An InputError pointing at the campaign file."""
    return InputError(campaign.source, field_name, message)
