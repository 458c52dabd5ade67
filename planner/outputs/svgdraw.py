"""A small SVG writer for charts made of rectangles, lines and text, written as markup directly.

Charts whose content is rows of rectangles, a few polylines and labels need no plotting library:
the markup is built from numpy arrays in milliseconds. Coordinates are pixels (100 px per inch, the
report's scale), rounded to 0.1 px; text stays text (``<text>``, a generic sans-serif font stack);
every string is XML-escaped; the same calls give the same bytes. SVG 1.1 (W3C Recommendation, 2011):
``<pattern>`` for hatching, ``<path>`` with ``M`` starting each unbroken run of a polyline.
"""

from __future__ import annotations

import base64
import html
from dataclasses import dataclass

import numpy as np

FONT_STACK = "DejaVu Sans, Arial, Helvetica, sans-serif"
PX_PER_IN = 100.0
PX_PER_PT = PX_PER_IN / 72.0


@dataclass(frozen=True)
class SvgChart:
    """A standalone SVG document and its size in CSS pixels."""

    text: str
    width_px: int
    height_px: int

    def data_uri(self) -> str:
        return "data:image/svg+xml;base64," + base64.b64encode(self.text.encode("utf-8")).decode("ascii")


def esc(text: str) -> str:
    """Text or an attribute value, XML-escaped (``& < > " '``)."""
    return html.escape(str(text), quote=True)


def num(v: float) -> str:
    """A coordinate rounded to 0.1 px, without a trailing ``.0`` or a negative zero."""
    s = f"{float(v):.1f}"
    if s.endswith(".0"):
        s = s[:-2]
    return "0" if s == "-0" else s


def _attrs(attrs: dict) -> str:
    return "".join(
        f' {k.rstrip("_").replace("_", "-")}="{num(v) if isinstance(v, float) else esc(v)}"'
        for k, v in attrs.items()
        if v is not None
    )


def polyline_d(x: np.ndarray, y: np.ndarray) -> str:
    """Path data of a polyline broken wherever ``y`` (or ``x``) is NaN: each unbroken run starts with
    ``M`` and lists its points (the pairs after ``M`` are implicit line-tos)."""
    x, y = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    ok = np.isfinite(x) & np.isfinite(y)
    start = (ok & ~np.concatenate([[False], ok[:-1]]))[ok].tolist()
    return " ".join(
        f"{'M' if s else ''}{num(a)},{num(b)}" for s, a, b in zip(start, x[ok].tolist(), y[ok].tolist(), strict=True)
    )


class Svg:
    """An SVG document being written: defs, then shapes in drawing order (later on top)."""

    def __init__(self, width_px: float, height_px: float, title: str) -> None:
        self.width, self.height = int(round(width_px)), int(round(height_px))
        self.title = title
        self.defs: list[str] = []
        self.body: list[str] = []

    def hatch(
        self,
        pattern_id: str,
        color: str,
        spacing_px: float,
        angle_deg: float,
        width_px: float,
        cross=False,
        ground: str = "#ffffff",
    ):
        """A hatch fill ``url(#pattern_id)``: ``ground`` colour and parallel lines turned by ``angle_deg``
        from vertical (45: ``/``), crossed by perpendicular ones if ``cross``."""
        s, h = num(spacing_px), num(spacing_px / 2)
        d = f"M{h},0 V{s}" + (f" M0,{h} H{s}" if cross else "")
        self.defs.append(
            f'<pattern id="{esc(pattern_id)}" patternUnits="userSpaceOnUse" width="{s}" height="{s}" '
            f'patternTransform="rotate({num(angle_deg)})"><rect width="{s}" height="{s}" fill="{ground}"/>'
            f'<path d="{d}" stroke="{color}" stroke-width="{num(width_px)}"/></pattern>'
        )

    def dots(self, pattern_id: str, color: str, spacing_px: float, radius_px: float, ground: str = "#ffffff"):
        """A dotted fill ``url(#pattern_id)``: one dot of ``radius_px`` per ``spacing_px`` square on ``ground``."""
        s, h = num(spacing_px), num(spacing_px / 2)
        self.defs.append(
            f'<pattern id="{esc(pattern_id)}" patternUnits="userSpaceOnUse" width="{s}" height="{s}">'
            f'<rect width="{s}" height="{s}" fill="{ground}"/>'
            f'<circle cx="{h}" cy="{h}" r="{num(radius_px)}" fill="{color}"/></pattern>'
        )

    def open(self, **attrs) -> None:
        self.body.append(f"<g{_attrs(attrs)}>")

    def close(self) -> None:
        self.body.append("</g>")

    def rects(self, x0: np.ndarray, y0: np.ndarray, x1: np.ndarray, y1: np.ndarray, fills=None, **attrs) -> None:
        """Rectangles with corners (x0, y0), (x1, y1) in one group carrying ``attrs``; ``fills`` gives
        each its own fill."""
        x0, y0, x1, y1 = (np.broadcast_to(np.asarray(v, dtype=float), np.shape(x0)) for v in (x0, y0, x1, y1))
        if not np.size(x0):
            return
        self.open(**attrs)
        lo_x, hi_x = np.minimum(x0, x1), np.maximum(x0, x1)
        lo_y, hi_y = np.minimum(y0, y1), np.maximum(y0, y1)
        fill = [""] * lo_x.size if fills is None else [f' fill="{f}"' for f in fills]
        self.body.extend(
            f'<rect x="{num(a)}" y="{num(b)}" width="{num(c - a)}" height="{num(d - b)}"{f}/>'
            for a, b, c, d, f in zip(lo_x.tolist(), lo_y.tolist(), hi_x.tolist(), hi_y.tolist(), fill, strict=True)
        )
        self.close()

    def hlines(self, x0: float, x1: float, ys: np.ndarray, **attrs) -> None:
        """Horizontal lines from x0 to x1 at each y, one path."""
        if np.size(ys):
            d = " ".join(f"M{num(x0)},{num(y)}H{num(x1)}" for y in np.asarray(ys, dtype=float))
            self.body.append(f'<path d="{d}"{_attrs({"fill": "none", **attrs})}/>')

    def path(self, d: str, **attrs) -> None:
        if d:
            self.body.append(f'<path d="{d}"{_attrs(attrs)}/>')

    def frame(self, x0: float, y0: float, x1: float, y1: float, stroke_width: float = 1.1) -> None:
        """A black outline around the plot area from (x0, y0) to (x1, y1)."""
        self.path(
            f"M{num(x0)},{num(y0)}H{num(x1)}V{num(y1)}H{num(x0)}Z",
            fill="none",
            stroke="#000000",
            stroke_width=stroke_width,
        )

    def circles(self, cx: np.ndarray, cy: np.ndarray, r: float, **attrs) -> None:
        if np.size(cx):
            self.open(**attrs)
            self.body.extend(f'<circle cx="{num(a)}" cy="{num(b)}" r="{num(r)}"/>' for a, b in zip(cx, cy, strict=True))
            self.close()

    def text(
        self,
        x: float,
        y: float,
        words: str,
        size_pt: float,
        anchor: str = "start",
        rotate: float | None = None,
        **attrs,
    ) -> None:
        """Text whose baseline's middle height is at ``y`` (``dy`` 0.35 em centres it on y)."""
        turn = None if rotate is None else f"rotate({num(rotate)} {num(x)} {num(y)})"
        a = {"text_anchor": None if anchor == "start" else anchor, "transform": turn, **attrs}
        self.body.append(
            f'<text x="{num(x)}" y="{num(y)}" dy="0.35em" font-size="{num(size_pt * PX_PER_PT)}"'
            f"{_attrs(a)}>{esc(words)}</text>"
        )

    def finish(self) -> SvgChart:
        defs = f"<defs>{''.join(self.defs)}</defs>" if self.defs else ""
        head = (
            f'<svg xmlns="http://www.w3.org/2000/svg" role="img" width="{self.width}" height="{self.height}" '
            f'viewBox="0 0 {self.width} {self.height}" font-family="{FONT_STACK}">'
            f"<title>{esc(self.title)}</title>{defs}"
            f'<rect width="{self.width}" height="{self.height}" fill="#ffffff"/>'
        )
        return SvgChart(head + "\n".join(self.body) + "</svg>\n", self.width, self.height)
