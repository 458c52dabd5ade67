"""Drawn report figures kept beside the report, keyed by everything they are drawn from.

``phasewise report DIR`` re-renders a page from the folder's files; most figures then come out
byte for byte as before. Each figure's HTML is stored in the folder's ``.figures/`` under a key
made from the figure's name, its inputs (tables hashed row by row, arrays and text as bytes) and the
source code of the modules that draw it, so a changed input or a changed drawing routine never
reuses a stale picture. Deleting the folder only costs the time to draw again.
"""

from __future__ import annotations

import hashlib
import inspect
import json
from collections.abc import Callable
from functools import lru_cache
from pathlib import Path

import numpy as np
import pandas as pd

from planner.core.fileio import write_text_atomic
from planner.core.version import __version__
from planner.outputs import layout


@lru_cache(maxsize=1)
def _code_digest() -> str:
    """The drawing code's fingerprint: the figure modules' source and the package version."""
    from planner.outputs import (
        figstyle,
        figures_diag,
        figures_fit,
        figures_nights,
        figures_sky,
        figures_timeline,
        htmlparts,
        svgdraw,
    )

    h = hashlib.sha1(__version__.encode())
    for mod in (figstyle, figures_sky, figures_nights, figures_timeline, svgdraw, figures_diag, figures_fit, htmlparts):
        h.update(inspect.getsource(mod).encode())
    return h.hexdigest()


def _column_bytes(values: np.ndarray) -> bytes:
    """A table column as bytes: numbers as their memory, anything else as its text joined by the ASCII
    unit separator (much faster than hashing each cell as an object)."""
    if values.dtype.kind in "biufcmM":
        return str(values.dtype).encode() + np.ascontiguousarray(values).tobytes()
    return "\x1f".join(map(str, values.tolist())).encode("utf-8", "surrogatepass")


def _feed(h, part, memo: dict | None = None) -> None:
    if isinstance(part, dict) and memo is not None:  # a check's JSON, fed to several figures' keys
        if id(part) not in memo:
            inner = hashlib.sha1()
            _feed(inner, part)
            memo[id(part)] = (part, inner.digest())  # the object kept alive: its id stays its own
        h.update(memo[id(part)][1])
    elif isinstance(part, pd.DataFrame):
        h.update(repr(list(part.columns)).encode() + repr(part.shape).encode())
        for column in part.columns:
            data = _column_bytes(part[column].to_numpy())
            h.update(len(data).to_bytes(8, "little") + data)
    elif isinstance(part, np.ndarray):
        h.update(str(part.dtype).encode() + repr(part.shape).encode())
        h.update(np.ascontiguousarray(part).tobytes())
    elif isinstance(part, (dict, list, tuple)) and not any(isinstance(x, (pd.DataFrame, np.ndarray)) for x in part):
        h.update(json.dumps(part, sort_keys=True, default=repr).encode())
    elif isinstance(part, (list, tuple)):
        for x in part:
            _feed(h, x, memo)
    else:
        h.update(repr(part).encode())
    h.update(b"\x00")


class FigureCache:
    """Figures' HTML by content key, in ``folder/.figures`` (``folder`` None: nothing is kept)."""

    def __init__(self, folder: str | Path | None) -> None:
        self.dir = None if folder is None else Path(folder) / layout.FIGURE_CACHE_DIR
        #: Digests of the dicts fed so far, by id (one render: its inputs are read, never changed).
        self._memo: dict[int, tuple[object, bytes]] = {}

    def key(self, name: str, *parts) -> str:
        h = hashlib.sha1(_code_digest().encode() + name.encode())
        for p in parts:
            _feed(h, p, self._memo)
        return h.hexdigest()

    def get(self, key: str) -> str | None:
        if self.dir is None:
            return None
        path = self.dir / f"{key}.html"
        try:
            return path.read_text(encoding="utf-8")
        except OSError:
            return None

    def put(self, key: str, html_text: str) -> None:
        if self.dir is None or not html_text:
            return
        try:
            self.dir.mkdir(exist_ok=True)
            write_text_atomic(self.dir / f"{key}.html", html_text)
        except OSError:  # a read-only folder still gets its report, drawn afresh next time too
            pass

    def figure(self, name: str, parts: tuple, draw: Callable[[], str]) -> str:
        """The figure's HTML from the cache, or ``draw()`` it and keep it."""
        key = self.key(name, *parts)
        hit = self.get(key)
        if hit is not None:
            return hit
        text = draw()
        self.put(key, text)
        return text


def drawn(cache: FigureCache | None, name: str, parts: tuple, draw: Callable[[], str]) -> str:
    """A figure's HTML through ``cache`` (None: drawn every time, as ``phasewise check --report`` does)."""
    return draw() if cache is None else cache.figure(name, parts, draw)
