"""Charts of the reports: Altair specifications exported to static PNG (scale 2) by vl-convert.

Every chart is drawn with one shipped font (DejaVu Sans, ``templates/assets/fonts``), registered
with vl-convert so labels are measured and drawn with the same glyphs the PDF uses. Data are
aggregated before charting (counts per level or bin): no chart carries a row per answer, and none
carries a participant code.

Embedding was measured (benchmarks/bench_render.py): opaque RGB PNG at scale 2 cost WeasyPrint no
more than ``<img>`` SVG and less than vl-convert's RGBA PNG, keeps the HTML small, and prints at
144 dpi. The functions building a chart return an Altair chart; :func:`image` exports it.
"""

from __future__ import annotations

import base64
import io
import threading
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import altair as alt
import numpy as np
import PIL.Image
import vl_convert

from reportgen.errors import BuildError
from reportgen.metrics.proportions import Method, proportion_ci
from reportgen.resources import templates_dir
from reportgen.results import LevelRow

FONT_FAMILY = "DejaVu Sans"
SCALE = 2
YOU = "You"
GROUP = "Group"
GREY = "#9aa1a6"
DARK = "#3a3f44"
LIGHT = "#b3b9be"
RIGHT_COLOUR = "#3b6ea8"  # blue and orange: distinguishable with red-green colour blindness
WRONG_COLOUR = "#d07a2a"

_font_lock = threading.Lock()
_font_registered = False


def fonts_dir() -> str:
    return str(templates_dir() / "assets" / "fonts")


def ensure_font() -> None:
    """Register the shipped font with vl-convert, once per process."""
    global _font_registered
    with _font_lock:
        if not _font_registered:
            vl_convert.register_font_directory(fonts_dir())
            _font_registered = True


# Vega-Lite config shared by every chart; set on the exported dict rather than through
# ``chart.configure_*()``, which deep-copies the whole chart for each call.
CONFIG: dict[str, Any] = {
    "font": FONT_FAMILY,
    "background": "white",
    "view": {"continuousWidth": 300, "continuousHeight": 300, "stroke": None},
    "axis": {"labelFontSize": 10, "titleFontSize": 10, "titleFontWeight": "normal",
             "labelColor": DARK, "titleColor": DARK, "gridColor": "#e4e6e8"},
    "legend": {"labelFontSize": 10, "titleFontSize": 10, "orient": "top", "title": None},
}


def _spec(chart: alt.TopLevelMixin) -> dict[str, Any]:
    spec: dict[str, Any] = chart.to_dict(validate=False)
    spec["config"] = CONFIG
    return spec


def png(chart: alt.TopLevelMixin) -> bytes:
    """The chart as an RGB PNG at scale 2 (144 dpi when printed at its CSS size).

    vl-convert writes RGBA; the charts are opaque (white background), so the alpha channel is
    dropped: the file shrinks about threefold and WeasyPrint no longer splits off a soft mask.
    """
    ensure_font()
    try:
        rgba = bytes(vl_convert.vegalite_to_png(_spec(chart), scale=SCALE))
    except Exception as exc:  # vl-convert raises plain ValueError/RuntimeError
        raise BuildError(f"chart export failed: {exc}") from exc
    return _opaque(rgba)


def _opaque(data: bytes) -> bytes:
    with PIL.Image.open(io.BytesIO(data)) as image:
        if image.mode == "RGB":
            return data
        rgb = PIL.Image.new("RGB", image.size, "white")
        rgb.paste(image, mask=image.getchannel("A") if image.mode == "RGBA" else None)
    out = io.BytesIO()
    rgb.save(out, format="PNG", compress_level=6)
    return out.getvalue()


def svg(chart: alt.TopLevelMixin) -> str:
    """The chart as SVG text (for measurement; the reports embed PNG)."""
    ensure_font()
    try:
        return str(vl_convert.vegalite_to_svg(_spec(chart)))
    except Exception as exc:
        raise BuildError(f"chart export failed: {exc}") from exc


def data_uri(data: bytes, mime: str = "image/png") -> str:
    return f"data:{mime};base64,{base64.b64encode(data).decode('ascii')}"


@dataclass(frozen=True)
class Image:
    """A chart ready for ``<img>``: its data URI and its size in CSS pixels."""

    uri: str
    width: float
    height: float


def png_size(data: bytes) -> tuple[int, int]:
    """Pixel width and height from a PNG's IHDR chunk."""
    if data[:8] != b"\x89PNG\r\n\x1a\n" or data[12:16] != b"IHDR":
        raise BuildError("chart export did not return a PNG")
    return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")


def image(chart: alt.TopLevelMixin) -> Image:
    """Export ``chart`` as PNG at scale 2 and size it back to its CSS pixels."""
    data = png(chart)
    w, h = png_size(data)
    return Image(data_uri(data), w / SCALE, h / SCALE)


def _data(rows: Sequence[Mapping[str, Any]]) -> alt.InlineData:
    return alt.InlineData(values=[dict(r) for r in rows])


# ---------------------------------------------------------------------------------------------
# Aggregation


def level_rows(levels: Sequence[LevelRow], who: str, method: Method) -> list[dict[str, Any]]:
    """Proportion correct among conclusive answers at each confidence level, with its interval."""
    right = np.array([lv.correct for lv in levels], dtype=float)
    n = right + np.array([lv.wrong for lv in levels], dtype=float)
    ci = proportion_ci(right, n, method)
    rows = []
    for k, lv in enumerate(levels):
        if n[k] == 0:
            continue
        rows.append({"level": f"{lv.level:g}", "who": who, "n": int(n[k]),
                     "share": float(ci.estimate[k]), "low": float(ci.low[k]),
                     "high": float(ci.high[k]), "stated": lv.probability})
    return rows


def confidence_shares(levels: Sequence[LevelRow], who: str) -> list[dict[str, Any]]:
    """Share of right (and of wrong) answers given at each confidence level."""
    rows = []
    for kind, counts in (("right", [lv.correct for lv in levels]),
                         ("wrong", [lv.wrong for lv in levels])):
        total = sum(counts)
        for lv, k in zip(levels, counts, strict=True):
            rows.append({"level": f"{lv.level:g}", "who": who, "kind": kind, "n": k,
                         "share": k / total if total else 0.0})
    return rows


def histogram(values: Sequence[float], lo: float, hi: float, bins: int) -> list[dict[str, Any]]:
    """Counts of ``values`` in ``bins`` equal bins over [lo, hi] (right end closed)."""
    arr = np.asarray([v for v in values if v is not None and np.isfinite(v)], dtype=float)
    edges = np.linspace(lo, hi, bins + 1)
    counts, _ = np.histogram(np.clip(arr, lo, hi), bins=edges)
    return [{"start": float(edges[i]), "end": float(edges[i + 1]), "count": int(counts[i])}
            for i in range(bins)]


# ---------------------------------------------------------------------------------------------
# Certificate charts


def accuracy_by_confidence(own: Sequence[LevelRow], group: Sequence[LevelRow], *, accent: str,
                           method: Method, calibrated: bool) -> alt.TopLevelMixin:
    """Proportion correct at each confidence level, with 95 % intervals, beside the group's."""
    rows = level_rows(own, YOU, method) + level_rows(group, GROUP, method)
    colour = alt.Color("who:N", scale=alt.Scale(domain=[YOU, GROUP], range=[accent, LIGHT]),
                       legend=alt.Legend(title=None))
    shape = alt.Shape("who:N", scale=alt.Scale(domain=[YOU, GROUP], range=["circle", "square"]),
                      legend=alt.Legend(title=None))
    x = alt.X("level:O", title="Confidence level", axis=alt.Axis(labelAngle=0),
              scale=alt.Scale(domain=[f"{lv.level:g}" for lv in group]))
    y = alt.Y("share:Q", title="Proportion correct", scale=alt.Scale(domain=[0, 1]),
              axis=alt.Axis(format=".0%", tickCount=5))
    base = alt.Chart(_data(rows)).encode(x=x, xOffset=alt.XOffset("who:N", sort=[YOU, GROUP]),
                                         color=colour)
    layers: list[alt.Chart] = [
        base.mark_rule(strokeWidth=1.5).encode(y=y, y2="high:Q"),
        base.mark_rule(strokeWidth=1.5).encode(y=alt.Y("low:Q"), y2="share:Q"),
        base.mark_point(filled=True, size=45, opacity=1).encode(y=y, shape=shape),
    ]
    if calibrated:
        stated = [r for r in rows if r["who"] == GROUP and r["stated"] is not None]
        layers.insert(0, alt.Chart(_data(stated)).mark_tick(
            color=DARK, strokeDash=[3, 2], thickness=1, size=34).encode(
            x=x, y=alt.Y("stated:Q")))
    return alt.layer(*layers).properties(width=240, height=150)


def confidence_right_wrong(own: Sequence[LevelRow], group: Sequence[LevelRow]
                           ) -> alt.TopLevelMixin:
    """How often each confidence level was used when right and when wrong, you beside the group."""
    rows = confidence_shares(own, YOU) + confidence_shares(group, GROUP)
    chart: alt.TopLevelMixin = alt.Chart(_data(rows)).mark_bar(width={"band": 0.9}).encode(
        x=alt.X("level:O", title="Confidence level", axis=alt.Axis(labelAngle=0),
                scale=alt.Scale(domain=[f"{lv.level:g}" for lv in group])),
        xOffset=alt.XOffset("kind:N", sort=["right", "wrong"]),
        y=alt.Y("share:Q", title="Share of answers", axis=alt.Axis(format=".0%", tickCount=4)),
        color=alt.Color("kind:N", scale=alt.Scale(domain=["right", "wrong"],
                                                  range=[RIGHT_COLOUR, WRONG_COLOUR]),
                        legend=alt.Legend(title=None, labelExpr="'when ' + datum.label")),
        column=alt.Column("who:N", sort=[YOU, GROUP], title=None,
                          header=alt.Header(labelFontSize=10, labelColor=DARK)),
    ).properties(width=105, height=150)
    return chart


def position_in_group(values: Sequence[float], own: float | None, *, accent: str
                      ) -> alt.TopLevelMixin:
    """The group's accuracy distribution (counts in 5-point bins) with a rule at yours."""
    bars = alt.Chart(_data(histogram(values, 0.0, 1.0, 20))).mark_bar(
        color=GREY, binSpacing=1).encode(
        x=alt.X("start:Q", bin="binned", title="Accuracy",
                scale=alt.Scale(domain=[0, 1]), axis=alt.Axis(format=".0%", tickCount=10)),
        x2="end:Q",
        y=alt.Y("count:Q", title="Participants", axis=alt.Axis(tickMinStep=1)),
    )
    if own is None:
        alone: alt.TopLevelMixin = bars.properties(width=590, height=110)
        return alone
    marker = _data([{"x": own, "label": YOU}])
    rule = alt.Chart(marker).mark_rule(color=accent, strokeWidth=2.5).encode(x="x:Q")
    right_edge = own > 0.9
    text = alt.Chart(marker).mark_text(color=accent, align="right" if right_edge else "left",
                                       dx=-4 if right_edge else 4, dy=-4, baseline="top",
                                       fontWeight="bold", fontSize=11).encode(
        x="x:Q", y=alt.value(0), text="label:N")
    return alt.layer(bars, rule, text).properties(width=590, height=110)


# ---------------------------------------------------------------------------------------------
# Appendix charts


def group_distributions(panels: Sequence[tuple[str, Sequence[float], float, float, str]]
                        ) -> alt.TopLevelMixin:
    """Small multiples: one histogram per (title, values, low, high, axis format)."""
    charts = []
    for title, values, lo, hi, fmt in panels:
        charts.append(alt.Chart(_data(histogram(values, lo, hi, 16))).mark_bar(
            color=GREY, binSpacing=1).encode(
            x=alt.X("start:Q", bin="binned", title=title, scale=alt.Scale(domain=[lo, hi]),
                    axis=alt.Axis(format=fmt, tickCount=6)),
            x2="end:Q",
            y=alt.Y("count:Q", title="Participants", axis=alt.Axis(tickMinStep=1)),
        ).properties(width=265, height=110))
    rows = [alt.hconcat(*charts[i:i + 2], spacing=30) for i in range(0, len(charts), 2)]
    chart: alt.TopLevelMixin = alt.vconcat(*rows, spacing=16)
    return chart


def group_calibration(levels: Sequence[LevelRow], *, accent: str, method: Method
                      ) -> alt.TopLevelMixin:
    """Pooled proportion correct by confidence level, with interval and the stated probability."""
    rows = level_rows(levels, GROUP, method)
    x = alt.X("level:O", title="Confidence level", axis=alt.Axis(labelAngle=0),
              scale=alt.Scale(domain=[f"{lv.level:g}" for lv in levels]))
    y = alt.Y("share:Q", title="Proportion correct", scale=alt.Scale(domain=[0, 1]),
              axis=alt.Axis(format=".0%", tickCount=5))
    base = alt.Chart(_data(rows)).encode(x=x)
    layers: list[alt.Chart] = [
        base.mark_rule(color=accent, strokeWidth=1.5).encode(y=alt.Y("low:Q"), y2="high:Q"),
        base.mark_point(filled=True, size=50, color=accent, opacity=1).encode(y=y),
    ]
    stated = [r for r in rows if r["stated"] is not None]
    if stated:
        layers.insert(0, alt.Chart(_data(stated)).mark_tick(
            color=DARK, strokeDash=[3, 2], thickness=1, size=40).encode(x=x, y="stated:Q"))
    return alt.layer(*layers).properties(width=280, height=170)


def item_map(rows: Sequence[Mapping[str, Any]], *, accent: str) -> alt.TopLevelMixin:
    """Items by difficulty (share correct) and discrimination; flagged items highlighted."""
    points = alt.Chart(_data(rows)).mark_point(filled=True, size=40, opacity=0.85)
    chart: alt.TopLevelMixin = points.encode(
        x=alt.X("difficulty:Q", title="Share of the group correct",
                scale=alt.Scale(domain=[0, 1]), axis=alt.Axis(format=".0%")),
        y=alt.Y("discrimination:Q", title="Discrimination",
                scale=alt.Scale(domain=[-1, 1])),
        color=alt.Color("status:N", scale=alt.Scale(domain=["flagged", "other"],
                                                    range=[WRONG_COLOUR, GREY]),
                        legend=alt.Legend(title=None)),
        shape=alt.Shape("status:N", scale=alt.Scale(domain=["flagged", "other"],
                                                    range=["diamond", "circle"]), legend=None),
    ).properties(width=280, height=170)
    return chart
