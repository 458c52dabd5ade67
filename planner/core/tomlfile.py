"""Reading and validating our TOML input files (targets, sites, campaigns).

Every accessor raises :class:`InputError` naming the file and the dotted field, so loaders
stay short and every message says what to fix.
"""

from __future__ import annotations

import tomllib
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from planner.core.errors import InputError
from planner.core.fileio import read_text
from planner.core.limits import PYTHON, Limit
from planner.core.textfmt import control_char


def read_toml(path: str | Path) -> dict[str, Any]:
    """Parse a TOML file; a missing, binary or non-UTF-8 file or a syntax error becomes an :class:`InputError`.

    A UTF-8 byte-order mark (Windows editors write one) is accepted, as the CSV reader accepts it.
    """
    p = Path(path)
    text = read_text(p, "TOML file")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(str(p), "-", f"not valid TOML ({exc})") from None


class Fields:
    """Typed, range-checked access to one table of a TOML document.

    ``prefix`` is the dotted path of the table (``""`` for the top level), used in messages.
    """

    def __init__(self, file: str | Path, table: dict[str, Any], prefix: str = "") -> None:
        self.file = str(file)
        self.table = table
        self.prefix = prefix

    def name(self, key: str) -> str:
        return f"{self.prefix}.{key}" if self.prefix else key

    def error(self, key: str, message: str) -> InputError:
        return InputError(self.file, self.name(key), message)

    def has(self, key: str) -> bool:
        return key in self.table

    def check_known(self, allowed: Iterable[str], renamed: dict[str, str] | None = None) -> None:
        """Reject keys we do not know: a typo should not silently fall back to a default.

        ``renamed`` maps keys of earlier versions to their new names, so an old file gets a line
        naming the key to write instead.
        """
        allowed = set(allowed)
        for key in self.table:
            if renamed and key in renamed:
                raise self.error(key, f"this key is now called {renamed[key]!r}: rename it")
            if key not in allowed:
                raise self.error(key, f"unknown field (known: {', '.join(sorted(allowed))})")

    def sub(self, key: str, required: bool = False) -> Fields | None:
        if key not in self.table:
            if required:
                raise self.error(key, "missing table")
            return None
        value = self.table[key]
        if not isinstance(value, dict):
            raise self.error(key, "must be a table")
        return Fields(self.file, value, self.name(key))

    def _get(self, key: str, required: bool, default: Any) -> Any:
        if key not in self.table:
            if required:
                raise self.error(key, "missing")
            return default
        return self.table[key]

    def float(
        self,
        key: str,
        default: float | None = None,
        *,
        required: bool = False,
        lo: float | None = None,
        hi: float | None = None,
        lo_open: bool = False,
        hi_open: bool = False,
    ) -> float | None:
        return self.limited(key, Limit(lo, hi, lo_open, hi_open), default, required=required)

    def int(
        self,
        key: str,
        default: int | None = None,
        *,
        required: bool = False,
        lo: int | None = None,
        hi: int | None = None,
    ) -> int | None:
        return self.limited(key, Limit(lo, hi, whole=True), default, required=required)

    def limited(self, key: str, limit: Limit, default: Any = None, *, required: bool = False) -> Any:
        """A number checked against its :class:`Limit` (type, finiteness, range): the one table of limits."""
        value = self._get(key, required, default)
        if value is None:
            return None
        message = limit.problem(value)
        if message is not None:
            raise self.error(key, message)
        return int(value) if limit.whole else float(value)

    def values(self, limits: Mapping[str, Limit], required: Iterable[str] = ()) -> dict[str, Any]:
        """The numbers this table holds for the keys of ``limits``, each checked against its limit.

        Keys absent from the table are left out, so the type's own defaults apply.
        """
        required = set(required)
        return {
            key: self.limited(key, limit, required=key in required)
            for key, limit in limits.items()
            if key in self.table or key in required
        }

    def build(self, cls: type, /, **kwargs: Any) -> Any:
        """``cls(**kwargs)``; an error its ``__post_init__`` raises about a field names this file and key."""
        try:
            return cls(**kwargs)
        except InputError as exc:
            if exc.file != PYTHON:
                raise
            raise self.error(exc.field, exc.message) from None

    def str(
        self, key: str, default: str | None = None, *, required: bool = False, choices: Iterable[str] | None = None
    ) -> str | None:
        value = self._get(key, required, default)
        if value is None:
            return None
        if not isinstance(value, str):
            raise self.error(key, f"{value!r} is not a string")
        bad = control_char(value)
        if bad is not None:
            raise self.error(key, f"{value!r} holds a control character ({bad}); write plain text on one line")
        if choices is not None:
            choices = list(choices)
            if value not in choices:
                raise self.error(key, f"{value!r} is not one of {', '.join(choices)}")
        return value

    def bool(self, key: str, default: bool | None = None, *, required: bool = False) -> bool | None:
        value = self._get(key, required, default)
        if value is None:
            return None
        if not isinstance(value, bool):
            raise self.error(key, f"{value!r} is not true or false")
        return value

    def float_list(self, key: str, *, length: int | None = None, required: bool = False) -> list[float] | None:
        value = self._get(key, required, None)
        if value is None:
            return None
        if not isinstance(value, list) or not all(
            isinstance(v, (int, float)) and not isinstance(v, bool) for v in value
        ):
            raise self.error(key, "must be a list of numbers")
        if length is not None and len(value) != length:
            raise self.error(key, f"must hold {length} numbers, not {len(value)}")
        return [float(v) for v in value]

    def pairs(self, key: str, *, required: bool = False) -> list[tuple[Any, Any]] | None:
        """A list of two-element lists, e.g. ``horizon = [[az, alt], ...]``."""
        value = self._get(key, required, None)
        if value is None:
            return None
        if not isinstance(value, list) or not all(isinstance(v, list) and len(v) == 2 for v in value):
            raise self.error(key, "must be a list of [a, b] pairs")
        return [(v[0], v[1]) for v in value]
