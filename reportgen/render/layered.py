"""Charts in two layers: a backdrop exported once per round, marks drawn per document.

Most of a certificate chart is the same for every participant of a round: the axes, the legend,
the group's bars, points and curves. Exporting all of it again for each certificate spent most of
a certificate's chart time in Altair and vl-convert (issue 14). Here the shared part is exported
once as a PNG (:func:`backdrop`) and each certificate adds only its own marks (a few lines,
circles, bars and a label) as SVG over it, in one inline ``<svg>`` per chart (:class:`Layered`).

Where the own marks go is measured, not re-derived: the backdrop's chart carries invisible
*probe* marks (opacity 0) at known data values, each keyed by its Vega-Lite ``description``
channel, and :func:`backdrop` reads their positions from vl-convert's scenegraph of the very
spec it exports. Scales with band padding, offsets, facets and legends thus need no formula of
ours. The probes' scales must have fixed domains (``nice=False``) so that they draw nothing and
move nothing.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import altair as alt
import vl_convert
from markupsafe import Markup

from reportgen.errors import BuildError
from reportgen.render.charts import Image, _spec, ensure_font, image

PROBE = "probe"  # Vega-Lite unit name of the probe layers: their marks are "probe_marks"
FONT = '"Reportgen Sans", "Reportgen Sans Web", "DejaVu Sans", sans-serif'


@dataclass(frozen=True)
class Box:
    """A probe's item in CSS pixels of the exported image: its position (a point's centre, a
    bar's left and top), its size (bars), and the plotting area it sits in."""

    x: float
    y: float
    width: float
    height: float
    view: tuple[float, float, float, float]  # left, top, width, height of its plot

    @property
    def bottom(self) -> float:
        return self.y + self.height

    @property
    def view_top(self) -> float:
        return self.view[1]

    @property
    def view_bottom(self) -> float:
        return self.view[1] + self.view[3]


@dataclass(frozen=True)
class Backdrop:
    """The shared layer of a chart: its PNG and where its probes landed."""

    image: Image
    probes: Mapping[str, Box]

    def probe(self, key: str) -> Box:
        try:
            return self.probes[key]
        except KeyError:
            raise BuildError(f"chart backdrop has no probe {key!r}") from None


@dataclass(frozen=True)
class Layered:
    """A chart ready for an inline ``<svg>``: the backdrop's data URI and size in CSS pixels,
    and the document's own marks as SVG elements (numbers and fixed words only)."""

    uri: str
    width: float
    height: float
    marks: Markup


def probe_layer(rows: Sequence[Mapping[str, Any]], mark: str, *channels: Any,
                **encoding: Any) -> alt.Chart:
    """Invisible marks at ``rows`` (each with a ``key``), positioned by the very channel objects
    the chart's own marks use (a layer with other axis settings would change the chart's axes)."""
    chart = alt.Chart(alt.InlineData(values=[dict(r) for r in rows]))
    # Size 0: an invisible point still counts towards the chart's bounds otherwise.
    marked = getattr(chart, f"mark_{mark}")(opacity=0, **({"size": 0} if mark == "point" else {}))
    probes: alt.Chart = marked.encode(*channels, description="key:N", **encoding).properties(
        name=PROBE)
    return probes


def backdrop(chart: alt.TopLevelMixin) -> Backdrop:
    """Export ``chart`` (PNG at scale 2) and locate its probes in the same layout."""
    shown = image(chart)
    ensure_font()
    try:
        scene = vl_convert.vegalite_to_scenegraph(_spec(chart))
    except Exception as exc:  # vl-convert raises plain ValueError/RuntimeError
        raise BuildError(f"chart layout failed: {exc}") from exc
    ox, oy = (float(v) for v in scene["origin"])
    probes: dict[str, Box] = {}
    for key, box in _probes(scene["scenegraph"], ox, oy, (0.0, 0.0, 0.0, 0.0)):
        if key in probes:
            raise BuildError(f"chart probe {key!r} is placed twice")
        probes[key] = box
    if (abs(shown.width - float(scene["width"])) > 1
            or abs(shown.height - float(scene["height"])) > 1):
        raise BuildError("chart layout and export disagree on the chart's size")
    return Backdrop(shown, probes)


def _probes(node: Mapping[str, Any], x: float, y: float,
            view: tuple[float, float, float, float]) -> Iterator[tuple[str, Box]]:
    """(key, box) of every probe item under ``node``; (x, y) is the node's absolute origin."""
    if node.get("marktype") == "group":
        for item in node.get("items", ()):
            gx, gy = x + float(item.get("x", 0)), y + float(item.get("y", 0))
            inner = (gx, gy, float(item.get("width", 0)), float(item.get("height", 0)))
            for child in item.get("items", ()):
                yield from _probes(child, gx, gy, inner)
        return
    if node.get("name") == f"{PROBE}_marks":
        for item in node.get("items", ()):
            key = item.get("description")
            if key is None:
                raise BuildError("a chart probe has no key")
            yield str(key), Box(x + float(item.get("x", 0)), y + float(item.get("y", 0)),
                                float(item.get("width", 0)), float(item.get("height", 0)),
                                view)


def layered(back: Backdrop, marks: Sequence[str]) -> Layered:
    return Layered(back.image.uri, back.image.width, back.image.height, Markup("".join(marks)))


class Linear:
    """A linear map from data to pixels through two probed points."""

    def __init__(self, v0: float, p0: float, v1: float, p1: float) -> None:
        if v1 == v0:
            raise BuildError("chart probes share one value")
        self.v0, self.p0, self.slope = v0, p0, (p1 - p0) / (v1 - v0)

    def __call__(self, value: float) -> float:
        return self.p0 + (value - self.v0) * self.slope


# ---------------------------------------------------------------------------------------------
# SVG elements. Every value is a number formatted here or a fixed word of ours: nothing from a
# spreadsheet reaches the markup.


_COLOUR = re.compile(r"#[0-9a-fA-F]{6}|white")


def _c(colour: str) -> str:
    """A colour for an SVG attribute: a hex triplet (round.toml's accent is checked as one when
    the round is read) or white; anything else stops the build rather than reach the markup."""
    if not _COLOUR.fullmatch(colour):
        raise BuildError(f"chart colour {colour[:20]!r} is not a colour like #5f6b73")
    return colour


def _n(v: float) -> str:
    if not math.isfinite(v):
        raise BuildError("a chart mark has no finite position")
    return f"{v:.2f}".rstrip("0").rstrip(".")


def line(x1: float, y1: float, x2: float, y2: float, colour: str, width: float) -> str:
    return (f'<line x1="{_n(x1)}" y1="{_n(y1)}" x2="{_n(x2)}" y2="{_n(y2)}" '
            f'stroke="{_c(colour)}" '
            f'stroke-width="{_n(width)}"/>')


def circle(cx: float, cy: float, area: float, fill: str, *, stroke: str | None = None,
           stroke_width: float = 0.0) -> str:
    """A filled circle of ``area`` square pixels (Vega-Lite's point ``size``)."""
    edge = f' stroke="{_c(stroke)}" stroke-width="{_n(stroke_width)}"' if stroke else ""
    return (f'<circle cx="{_n(cx)}" cy="{_n(cy)}" r="{_n(math.sqrt(area / math.pi))}" '
            f'fill="{_c(fill)}"{edge}/>')


def rect(x: float, y: float, width: float, height: float, fill: str) -> str:
    return (f'<rect x="{_n(x)}" y="{_n(y)}" width="{_n(width)}" height="{_n(max(height, 0.0))}" '
            f'fill="{_c(fill)}"/>')


# Vega places text by its baseline: "top" sits 0.79 font sizes above the alphabetic baseline,
# "middle" 0.30 (vega-scenegraph's text offsets), so the SVG text's baseline moves by as much.
_BASELINE_SHIFT = {"top": 0.79, "middle": 0.30, "alphabetic": 0.0}


def text(x: float, y: float, words: str, colour: str, *, size: float, anchor: str = "start",
         baseline: str = "alphabetic", bold: bool = False) -> str:
    if anchor not in {"start", "end", "middle"} or baseline not in _BASELINE_SHIFT:
        raise BuildError("unknown text placement in a chart")
    weight = ' font-weight="bold"' if bold else ""
    safe = str(Markup.escape(words))
    return (f'<text x="{_n(x)}" y="{_n(y + _BASELINE_SHIFT[baseline] * size)}" '
            f'font-family=\'{FONT}\' font-size="{_n(size)}"{weight} fill="{_c(colour)}" '
            f'text-anchor="{anchor}">{safe}</text>')
