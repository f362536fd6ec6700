"""Charts of the reports: Altair specifications exported to static PNG (scale 2) by vl-convert.

Every chart is drawn with one shipped font (DejaVu Sans, ``templates/assets/fonts``), registered
with vl-convert so labels are measured and drawn with the same glyphs the PDF uses. Data are
aggregated before charting (counts per level or bin): no chart carries a row per answer, and none
carries a participant code.

Embedding was measured (issue 14, ENGINEERING notes): opaque RGB PNG at scale 2 cost WeasyPrint
no more than ``<img>`` SVG and less than vl-convert's RGBA PNG, keeps the HTML small, and prints
at 144 dpi. The functions building a chart return an Altair chart; :func:`image` exports it.
The certificate's charts are built in :mod:`reportgen.render.certificate_charts` (a backdrop per
round from these helpers, and each participant's marks over it).
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
from reportgen.results.model import LevelRow

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
    """The PNG without its alpha channel. Every chart is drawn on a white background, so its
    alpha is 255 everywhere and dropping the channel is exact (no compositing needed); anything
    else is composited on white. zlib level 1: ≈ 20 % faster than level 6 for ≈ 12 % more bytes
    (pixels identical)."""
    with PIL.Image.open(io.BytesIO(data)) as image:
        if image.mode == "RGB":
            return data
        if image.mode == "RGBA" and image.getchannel("A").getextrema() == (255, 255):
            rgb = image.convert("RGB")
        else:
            rgb = PIL.Image.new("RGB", image.size, "white")
            rgb.paste(image, mask=image.getchannel("A") if image.mode == "RGBA" else None)
    out = io.BytesIO()
    rgb.save(out, format="PNG", compress_level=1)
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


# ---------------------------------------------------------------------------------------------
# Group views: self-estimates by quartile, insight against ability, type-2 area against d′

SCORE_SERIES = ("Mean score", "Regression expectation")
NULL_BAND = "Shuffled estimates, 95\u00a0%"
BAND_COLOUR = "#dfe2e5"


def _padded_domain(values: Sequence[float], lo: float, hi: float, step: float
                   ) -> tuple[float, float]:
    """[floor, ceil] of ``values`` to multiples of ``step``, kept within [lo, hi]."""
    finite = [v for v in values if np.isfinite(v)]
    if not finite:
        return lo, hi
    low = max(lo, round(float(np.floor(min(finite) / step + 1e-9) * step), 9))
    high = min(hi, round(float(np.ceil(max(finite) / step - 1e-9) * step), 9))
    return (low, high) if high > low else (lo, hi)


def self_estimate_quartiles(rows: Sequence[Mapping[str, Any]], *,
                            y_title: str = "Share right / estimate",
                            estimate_label: str = "Mean estimate") -> alt.TopLevelMixin:
    """Per quarter of score: mean score, mean estimate, the regression expectation (dashed) and
    the band of mean estimates under shuffled estimates (grey).

    ``rows``: ``quarter`` (axis label), ``score``, ``estimate``, ``fitted``, ``null_low``,
    ``null_high`` as proportions; quarters without participants are left out by the caller.
    """
    order = [str(r["quarter"]) for r in rows]
    values = [float(r[k]) for r in rows
              for k in ("score", "estimate", "fitted", "null_low", "null_high")
              if r.get(k) is not None]
    y_domain = _padded_domain(values, 0.0, 1.0, 0.1)
    x = alt.X("quarter:N", sort=order, title="Quarter of the group by actual score",
              axis=alt.Axis(labelAngle=0), scale=alt.Scale(padding=0.3))
    y_axis = alt.Axis(format=".0%", tickCount=6)
    lines_named = (estimate_label, *SCORE_SERIES)
    series = [*lines_named, NULL_BAND]
    colour = alt.Color("series:N", scale=alt.Scale(domain=series,
                                                   range=[RIGHT_COLOUR, DARK, GREY, BAND_COLOUR]),
                       legend=alt.Legend(title=None, orient="top", columns=2, symbolType="stroke",
                                         symbolStrokeWidth=3, symbolSize=250))
    band_rows = [{**r, "series": NULL_BAND} for r in rows
                 if r.get("null_low") is not None and r.get("null_high") is not None]
    band = alt.Chart(_data(band_rows)).mark_area(opacity=1).encode(
        x=x, y=alt.Y("null_low:Q", title=y_title, scale=alt.Scale(
            domain=list(y_domain)), axis=y_axis), y2="null_high:Q", color=colour)
    long_rows = [{"quarter": r["quarter"], "series": name, "value": r[key]}
                 for r in rows
                 for name, key in zip(lines_named, ("estimate", "score", "fitted"),
                                      strict=True)
                 if r.get(key) is not None]
    dash = alt.StrokeDash("series:N", scale=alt.Scale(domain=series,
                                                      range=[[1, 0], [1, 0], [4, 2], [1, 0]]),
                          legend=None)
    lines = alt.Chart(_data(long_rows)).mark_line(strokeWidth=2).encode(
        x=x, y=alt.Y("value:Q"), color=colour, strokeDash=dash)
    points = alt.Chart(_data([r for r in long_rows if r["series"] != SCORE_SERIES[1]])
                       ).mark_point(filled=True, size=45, opacity=1).encode(
        x=x, y=alt.Y("value:Q"), color=colour)
    chart: alt.TopLevelMixin = alt.layer(band, lines, points).properties(width=270, height=190)
    return chart


def insight_by_ability(rows: Sequence[Mapping[str, Any]], *, scale: tuple[float, float]
                       ) -> alt.TopLevelMixin:
    """Mean confidence when right and when wrong per accuracy group, with 95 % intervals.

    ``rows``: ``group`` (axis label), ``kind`` ("right"/"wrong"), ``mean``, ``low``, ``high``.
    """
    order = list(dict.fromkeys(str(r["group"]) for r in rows))
    x = alt.X("group:N", sort=order, title="Accuracy group (range of accuracy)",
              axis=alt.Axis(labelAngle=0))
    colour = alt.Color("kind:N", scale=alt.Scale(domain=["right", "wrong"],
                                                 range=[RIGHT_COLOUR, WRONG_COLOUR]),
                       legend=alt.Legend(title=None, labelExpr="'when ' + datum.label"))
    y = alt.Y("mean:Q", title="Mean confidence", scale=alt.Scale(domain=list(scale)),
              axis=alt.Axis(tickCount=5))
    base = alt.Chart(_data(rows)).encode(x=x, xOffset=alt.XOffset("kind:N",
                                                                   sort=["right", "wrong"]),
                                         color=colour)
    chart: alt.TopLevelMixin = alt.layer(
        base.mark_rule(strokeWidth=1.5).encode(y=alt.Y("low:Q", scale=alt.Scale(
            domain=list(scale))), y2="high:Q"),
        base.mark_point(filled=True, size=50, opacity=1).encode(y=y),
    ).properties(width=280, height=180)
    return chart


def insight_domains(points: Sequence[Mapping[str, Any]], curve: Sequence[Mapping[str, float]],
                    extra: Sequence[tuple[float, float]] = ()
                    ) -> tuple[tuple[float, float], tuple[float, float]]:
    """The d′ and type-2 area axes holding ``points``, ``curve``, the (d′, area) pairs ``extra``
    and chance (0, 0.5), padded to steps of 0.5 and 0.1."""
    xs = [p["d_prime"] for p in points] + [c["d_prime"] for c in curve] + [0.0]
    ys = [p["type2_auroc"] for p in points] + [c["type2_auroc"] for c in curve] + [0.5]
    xs += [d for d, _ in extra]
    ys += [a for _, a in extra]
    return _padded_domain(xs, -2.0, 6.0, 0.5), _padded_domain(ys, 0.0, 1.0, 0.1)


def insight_axes(x_domain: tuple[float, float], y_domain: tuple[float, float]
                 ) -> tuple[alt.X, alt.Y]:
    """The d′ and type-2 area channels of :func:`insight_against_dprime` on fixed axes."""
    x = alt.X("d_prime:Q", title="Discriminability d\u2032",
              scale=alt.Scale(domain=list(x_domain), nice=False),
              axis=alt.Axis(values=_ticks(*x_domain), format=".1f"))
    y = alt.Y("type2_auroc:Q", title="Type-2 ROC area",
              scale=alt.Scale(domain=list(y_domain), nice=False), axis=alt.Axis(tickCount=6))
    return x, y


def insight_against_dprime(points: Sequence[Mapping[str, Any]],
                           curve: Sequence[Mapping[str, float]], *, few_errors: int,
                           domains: tuple[tuple[float, float], tuple[float, float]] | None = None,
                           light: bool = False) -> alt.TopLevelMixin:
    """Each participant's type-2 ROC area against d′ (anonymous grey points; open when resting on
    fewer than ``few_errors`` errors) with the ideal-observer curve. ``light`` greys the points
    lighter, for a certificate that highlights one point over them
    (:mod:`reportgen.render.certificate_charts`); ``domains`` fixes the axes
    (default :func:`insight_domains` of what is drawn).

    ``points``: ``d_prime``, ``type2_auroc`` and ``few`` (bool) and nothing else: no code, no
    name. ``curve``: ``d_prime``, ``type2_auroc``.
    """
    enough, few = f"{few_errors} or more errors", f"fewer than {few_errors} errors: unstable"
    rows = [{"d_prime": p["d_prime"], "type2_auroc": p["type2_auroc"],
             "errors": few if p["few"] else enough} for p in points]
    x_domain, y_domain = domains or insight_domains(points, curve)
    x, y = insight_axes(x_domain, y_domain)
    y_scale = alt.Scale(domain=list(y_domain), nice=False)
    point_colour = LIGHT if light else GREY
    layers: list[alt.Chart] = [
        alt.Chart(_data([{"chance": 0.5}])).mark_rule(
            color=LIGHT, strokeDash=[2, 2], strokeWidth=1).encode(
            y=alt.Y("chance:Q", scale=y_scale)),
    ]
    if rows:
        layers.append(alt.Chart(_data(rows)).mark_point(size=28, strokeWidth=1, opacity=1,
                                                        clip=True).encode(
            x=x, y=y, color=alt.value(point_colour),
            fill=alt.Fill("errors:N", scale=alt.Scale(domain=[enough, few],
                                                      range=[point_colour, "white"]),
                          legend=alt.Legend(title=None, symbolStrokeColor=point_colour,
                                            symbolStrokeWidth=1))))
    layers.append(alt.Chart(_data(curve)).mark_line(color=DARK, strokeWidth=1.8).encode(
        x=x, y=y))
    if curve:
        end = max(curve, key=lambda c: c["d_prime"])
        layers.append(alt.Chart(_data([{**end, "label": "ideal observer"}])).mark_text(
            color=DARK, align="right", dy=-9, fontSize=9).encode(x=x, y=y, text="label:N"))
    chart: alt.TopLevelMixin = alt.layer(*layers).properties(width=290, height=180)
    return chart


def _ticks(lo: float, hi: float) -> list[float]:
    """Axis values every 0.5 on a short axis, every 1 on a longer one (labels must not clash)."""
    step = 0.5 if hi - lo <= 4.0 else 1.0
    first = float(np.ceil(lo / step - 1e-9))
    return [(first + i) * step for i in range(int((hi - first * step) / step + 1e-9) + 1)]
