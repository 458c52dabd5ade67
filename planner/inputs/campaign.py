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
from planner.core.timegrid import check_nights_in_span, parse_date
from planner.core.tomlfile import Fields, read_toml
from planner.inputs.settings import BlockRules, ExposureRules, Rotation, Weights
from planner.inputs.sites import Site, allocation_from, load_site
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
_ROTATION_KEYS = {"min_period_h", "max_period_h", "double_peaked", "amplitude_mag", "phase_bins", "oversample"}
_BLOCK_KEYS = {"slot_minutes", "min_block_h", "max_block_h", "setup_minutes", "max_per_night"}
_CADENCE_KEYS = {"max_gap_h"}
_WEIGHT_KEYS = {"coverage", "robustness", "alias", "cadence", "hours", "quality", "discrimination"}
_WEATHER_KEYS = {"trials"}
_PHOTOMETRY_KEYS = {"snr_target", "min_exposure_s", "max_exposure_s", "max_airmass", "sys_err_mag_per_airmass"}
_DIAGNOSTICS_KEYS = {"trials"}
#: Keys of the [blocks] table in earlier versions and their names now.
_RENAMED_BLOCK_KEYS = {"slot_min": "slot_minutes", "setup_min": "setup_minutes"}


@dataclass(frozen=True)
class Campaign:
    name: str
    path: Path
    target_path: Path
    site_paths: tuple[Path, ...]
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

    def load_target(self) -> Target:
        """The target file named by the campaign."""
        try:
            return load_target(self.target_path, self.target_object)
        except InputError as e:
            if e.field != "object":
                raise
            message = e.message.replace("with --object NAME", 'with the campaign key object = "NAME"')
            raise InputError(str(self.path), "object", f"{self.target_path.name}: {message}") from None


def _default(name: str):
    """A Campaign field's default, the one place it is written."""
    return Campaign.__dataclass_fields__[name].default


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
    clear = f.float("clear_fraction", None, lo=0.0, hi=1.0)
    if clear is not None:
        changes["clear_fraction"] = clear
    total = f.float("total_hours", None, lo=0.0, lo_open=True)
    return dataclasses.replace(site, **changes), total


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

    rot_f = f.sub("rotation") or Fields(path, {}, "rotation")
    rot_f.check_known(_ROTATION_KEYS)
    d_rot = Rotation()
    min_p = rot_f.float("min_period_h", d_rot.min_period_h, lo=0.05, hi=2000.0)
    max_p = rot_f.float("max_period_h", d_rot.max_period_h, lo=0.05, hi=2000.0)
    if max_p <= min_p:
        raise rot_f.error("max_period_h", f"{max_p:g} must be above min_period_h ({min_p:g})")
    amp = rot_f.float_list("amplitude_mag", length=2) or list(d_rot.amplitude_mag)
    if not (0.0 < amp[0] <= amp[1] <= 5.0):
        raise rot_f.error("amplitude_mag", f"{amp} must be [low, high] with 0 < low <= high <= 5")
    rotation = Rotation(
        min_period_h=min_p,
        max_period_h=max_p,
        double_peaked=rot_f.bool("double_peaked", d_rot.double_peaked),
        amplitude_mag=(amp[0], amp[1]),
        phase_bins=rot_f.int("phase_bins", d_rot.phase_bins, lo=4, hi=200),
        oversample=rot_f.float("oversample", d_rot.oversample, lo=1.0, hi=100.0),
    )

    blk_f = f.sub("blocks") or Fields(path, {}, "blocks")
    blk_f.check_known(_BLOCK_KEYS, renamed=_RENAMED_BLOCK_KEYS)
    d_blk = BlockRules()
    slot_minutes = blk_f.float("slot_minutes", d_blk.slot_minutes, lo=1.0, hi=60.0)
    min_block_h = blk_f.float("min_block_h", d_blk.min_block_h, lo=0.0, lo_open=True, hi=24.0)
    max_block_h = blk_f.float("max_block_h", d_blk.max_block_h, lo=0.0, lo_open=True, hi=24.0)
    setup_minutes = blk_f.float("setup_minutes", d_blk.setup_minutes, lo=0.0, hi=120.0)
    if max_block_h < min_block_h:
        raise blk_f.error("max_block_h", f"{max_block_h:g} is below min_block_h ({min_block_h:g})")
    if min_block_h * 60.0 < slot_minutes:
        raise blk_f.error("min_block_h", f"{min_block_h:g} h is shorter than one slot ({slot_minutes:g} min)")
    if setup_minutes >= min_block_h * 60.0:
        raise blk_f.error("setup_minutes", f"{setup_minutes:g} min leaves no science time in a {min_block_h:g} h block")
    blocks = BlockRules(
        slot_minutes=slot_minutes,
        min_block_h=min_block_h,
        max_block_h=max_block_h,
        setup_minutes=setup_minutes,
        max_per_night=blk_f.int("max_per_night", d_blk.max_per_night, lo=1, hi=20),
    )

    cad_f = f.sub("cadence") or Fields(path, {}, "cadence")
    cad_f.check_known(_CADENCE_KEYS)
    w_f = f.sub("weights") or Fields(path, {}, "weights")
    w_f.check_known(_WEIGHT_KEYS)
    weights = Weights(**{k: w_f.float(k, getattr(Weights, k), lo=0.0, hi=100.0) for k in sorted(_WEIGHT_KEYS)})
    if weights.coverage <= 0.0:
        raise w_f.error("coverage", "must be above 0 (coverage is what the plan is for)")
    wx_f = f.sub("weather") or Fields(path, {}, "weather")
    wx_f.check_known(_WEATHER_KEYS)
    ph_f = f.sub("photometry") or Fields(path, {}, "photometry")
    ph_f.check_known(_PHOTOMETRY_KEYS)
    rules = ExposureRules()
    min_exp = ph_f.float("min_exposure_s", rules.min_exposure_s, lo=0.1, hi=3600.0)
    max_exp = ph_f.float("max_exposure_s", rules.max_exposure_s, lo=0.1, hi=3600.0)
    if max_exp < min_exp:
        raise ph_f.error("max_exposure_s", f"{max_exp:g} is below min_exposure_s ({min_exp:g})")
    dg_f = f.sub("diagnostics") or Fields(path, {}, "diagnostics")
    dg_f.check_known(_DIAGNOSTICS_KEYS)

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
    nights = f.int("nights", required=True, lo=1, hi=60)
    check_nights_in_span(first_night, nights, f.file, "first_night")
    return Campaign(
        name=name,
        path=path,
        target_path=target_path,
        site_paths=site_paths,
        sites=tuple(sites),
        first_night=first_night,
        nights=nights,
        seed=f.int("seed", _default("seed"), lo=0, hi=2**63 - 1),
        rotation=rotation,
        block_rules=blocks,
        max_gap_h=cad_f.float("max_gap_h", _default("max_gap_h"), lo=0.5, hi=24.0 * 60),
        weights=weights,
        weather_trials=wx_f.int("trials", _default("weather_trials"), lo=10, hi=100_000),
        photometry=ExposureRules(
            snr_target=ph_f.float("snr_target", rules.snr_target, lo=1.0, hi=10_000.0),
            min_exposure_s=min_exp,
            max_exposure_s=max_exp,
            max_airmass=ph_f.float("max_airmass", rules.max_airmass, lo=1.0, hi=40.0),
            sys_err_mag_per_airmass=ph_f.float(
                "sys_err_mag_per_airmass", rules.sys_err_mag_per_airmass, lo=0.0, lo_open=True, hi=1.0
            ),
        ),
        check_trials=dg_f.int("trials", _default("check_trials"), lo=0, hi=100_000),
        total_hours=total_hours,
        target_object=f.str("object"),
    )


def campaign_error(campaign: Campaign, field_name: str, message: str) -> InputError:
    """An InputError pointing at the campaign file."""
    return InputError(str(campaign.path), field_name, message)
