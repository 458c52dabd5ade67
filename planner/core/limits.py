"""The allowed range of every numeric input, written once and checked in two places.

A loader reads a file's values (types checked by :class:`planner.core.tomlfile.Fields`) and builds the
input type with them; the type's ``__post_init__`` checks each field against its :class:`Limit`, so an
object built in Python is refused with the same words as a file. The object's own file (``source``)
or :data:`PYTHON` names where the value came from; :meth:`Fields.build` re-labels the error with the
file and dotted key it was read from. Astropy quantities are converted to the unit the field's name
carries (``latitude_deg`` in degrees, ``readout_s`` in seconds) before the check.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass
from numbers import Integral, Real

from planner.core.errors import InputError

#: The file named in errors about objects built in Python rather than read from a file.
PYTHON = "python"

#: The longest campaign, in nights (a year and a day: a whole apparition of a slow object).
MAX_CAMPAIGN_NIGHTS = 366


@dataclass(frozen=True)
class Limit:
    """A closed (or open, per end) interval for one numeric field; ``whole`` for integers."""

    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    whole: bool = False
    #: ``None`` is allowed (the field is optional and has no value).
    optional: bool = False

    def outside(self, value: float) -> str | None:
        """The message for a value outside the interval, or None when it lies inside."""
        lo_bad = self.lo is not None and (value <= self.lo if self.lo_open else value < self.lo)
        hi_bad = self.hi is not None and (value >= self.hi if self.hi_open else value > self.hi)
        if not (lo_bad or hi_bad):
            return None
        if self.whole:
            return f"{value} is outside [{self.lo}, {self.hi}]"
        left, right = "(" if self.lo_open else "[", ")" if self.hi_open else "]"
        lo_s = "-inf" if self.lo is None else f"{self.lo:g}"
        hi_s = "inf" if self.hi is None else f"{self.hi:g}"
        return f"{value:g} is outside {left}{lo_s}, {hi_s}{right}"

    def problem(self, value: object) -> str | None:
        """What is wrong with ``value`` (type, finiteness, range), or None."""
        if value is None:
            return None if self.optional else "missing"
        if self.whole:
            if isinstance(value, bool) or not isinstance(value, Integral):
                return f"{value!r} is not a whole number"
            return self.outside(int(value))
        if isinstance(value, bool) or not isinstance(value, Real):
            return f"{value!r} is not a number"
        if not math.isfinite(float(value)):
            return f"{float(value)} is not finite"
        return self.outside(float(value))


def source_of(obj: object) -> str:
    """The file an input object came from, or :data:`PYTHON` when it was built in code."""
    return str(getattr(obj, "source", "") or PYTHON)


def check_limits(obj: object, limits: Mapping[str, Limit], file: str | None = None) -> None:
    """Convert each limited field of a (frozen) dataclass to a plain number and check it.

    Quantities become numbers in the unit of the field's name; numpy scalars become ``float``/``int``.
    Raises :class:`InputError` ``(file, field, message)`` for the first field out of its range.
    """
    from planner.core.units import field_value

    file = source_of(obj) if file is None else file
    for name, limit in limits.items():
        raw = getattr(obj, name)
        value = field_value(raw, name, file)
        message = limit.problem(value)
        if message is not None:
            raise InputError(file, name, message)
        if value is not None:
            plain = int(value) if limit.whole else float(value)
            if type(raw) is not type(plain) or raw != plain:
                object.__setattr__(obj, name, plain)


def check_choice(obj: object, name: str, choices, file: str | None = None) -> None:
    """A text field must be one of ``choices`` (same words as the file loaders)."""
    value = getattr(obj, name)
    if not isinstance(value, str):
        raise InputError(source_of(obj) if file is None else file, name, f"{value!r} is not a string")
    if value not in choices:
        raise InputError(
            source_of(obj) if file is None else file, name, f"{value!r} is not one of {', '.join(list(choices))}"
        )


def check_instance(obj: object, name: str, cls: type, what: str, file: str | None = None) -> None:
    """A field must hold an object of ``cls`` (e.g. a Site's ``instrument``)."""
    value = getattr(obj, name)
    if not isinstance(value, cls):
        raise InputError(source_of(obj) if file is None else file, name, f"{value!r} is not {what}")


def field_names(cls: type) -> set[str]:
    """The field names of a dataclass: the keys a TOML table of it may hold."""
    return {f.name for f in dataclasses.fields(cls)}
