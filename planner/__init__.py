"""phasewise: plan photometric campaigns on comets and asteroids from several telescopes.

The import package is ``planner``; the command is ``phasewise``. The names below are the documented
public face; each is imported on first use, so ``import planner`` stays fast.

Inputs
    :func:`load_target`, :func:`load_site`, :func:`load_campaign`, :func:`read_observation_log`,
    :func:`read_done_log`; the settings types :class:`Rotation`, :class:`BlockRules`,
    :class:`Weights`, :class:`ExposureRules`.
Geometry and windows
    :func:`geometry`, :func:`add_photometry`, :func:`observable_windows`.
Diagnostics of any list of times
    :func:`check_times`.
Planning
    :func:`plan_campaign` (a :class:`Campaign` loaded from a file or built from :class:`Site` and
    :class:`Target` objects), :func:`write_plan_folder`, :func:`write_report`.
Tables
    :func:`as_qtable`: any table as an astropy ``QTable`` with the units its column names carry.

Times may be astropy ``Time``, numpy datetime64, ``datetime`` or ISO text; angles and durations
astropy ``Quantity`` (converted to the unit a name carries); a site may come from an ``EarthLocation``
(:meth:`Site.from_earth_location`).

Bad input raises :class:`InputError` (file, field, message). See docs/architecture.md for the stages.
"""

from __future__ import annotations

import importlib

from planner.core.errors import InputError
from planner.core.version import __version__

#: Public name → the module that defines it.
_EXPORTS = {
    "load_target": "planner.inputs.targets",
    "Target": "planner.inputs.targets",
    "Orbit": "planner.inputs.targets",
    "Brightness": "planner.inputs.targets",
    "load_site": "planner.inputs.sites",
    "Site": "planner.inputs.sites",
    "Instrument": "planner.inputs.sites",
    "load_campaign": "planner.inputs.campaign",
    "Campaign": "planner.inputs.campaign",
    "read_observation_log": "planner.inputs.obslog",
    "read_done_log": "planner.inputs.donelog",
    "Rotation": "planner.inputs.settings",
    "BlockRules": "planner.inputs.settings",
    "Weights": "planner.inputs.settings",
    "ExposureRules": "planner.inputs.settings",
    "geometry": "planner.sky.geometry",
    "add_photometry": "planner.photometry.tables",
    "observable_windows": "planner.visibility.windows",
    "check_times": "planner.diagnostics.check",
    "CheckResult": "planner.diagnostics.result",
    "plan_campaign": "planner.pipeline",
    "PlanResult": "planner.pipeline",
    "write_plan_folder": "planner.outputs.planfolder",
    "write_report": "planner.outputs.report",
    "as_qtable": "planner.outputs.tablefiles",
}

__all__ = ["InputError", "__version__", *_EXPORTS]


def __getattr__(name: str):
    """Import a public name's module on first use (PEP 562)."""
    if name not in _EXPORTS:
        raise AttributeError(f"module 'planner' has no attribute {name!r}")
    value = getattr(importlib.import_module(_EXPORTS[name]), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_EXPORTS))
