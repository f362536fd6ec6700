"""The four charts of a certificate, each a backdrop shared by the round plus the participant's
own marks (:mod:`reportgen.render.layered`).

* **by level**: the group's proportion correct per confidence level (backdrop) and yours beside
  it (circles with their intervals);
* **right / wrong**: the group's use of each level when right and when wrong (backdrop, right
  panel) and yours (bars, left panel), on one y axis fixed for the round;
* **position**: the group's accuracy histogram (backdrop) and a line at yours;
* **insight**: every participant's type-2 ROC area against d′ as an anonymous grey point, with
  the ideal-observer curve (backdrop), and yours highlighted with its interval and the ideal
  observer's value for you (marks).

Backdrops are made once per round and process (:func:`functools.lru_cache` on hashable
inputs). A participant shapes one only through an axis's extent: the right/wrong panels' top
(rounded up to 10 points) and the insight axes (stretched to hold your interval and expected
value, in steps of 0.5 and 0.1), so a handful of backdrops serve a whole round and no backdrop
carries anything of a participant but where its axes end.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import altair as alt

from reportgen.metrics.proportions import Method
from reportgen.render import charts
from reportgen.render.charts import DARK, GROUP, LIGHT, RIGHT_COLOUR, WRONG_COLOUR, YOU
from reportgen.render.context import insight_points, metric_values
from reportgen.render.layered import (
    Backdrop,
    Layered,
    Linear,
    backdrop,
    circle,
    layered,
    line,
    probe_layer,
    rect,
    text,
)
from reportgen.results.model import LevelRow, ParticipantResult, RoundResults

Levels = tuple[LevelRow, ...]
InsightPoint = tuple[float, float, bool]  # d′, type-2 area, rests on few errors


def _labels(levels: Sequence[LevelRow]) -> list[str]:
    return [f"{lv.level:g}" for lv in levels]


# ---------------------------------------------------------------------------------------------
# Proportion correct by confidence level


@functools.lru_cache(maxsize=8)
def by_level_backdrop(group: Levels, accent: str, method: Method, calibrated: bool) -> Backdrop:
    return backdrop(by_level_chart(group, accent, method, calibrated))


def by_level_chart(group: Sequence[LevelRow], accent: str, method: Method, calibrated: bool,
                   extra: Sequence[Mapping[str, Any]] = ()) -> alt.TopLevelMixin:
    """The group's side with probes at shares 0 and 1 in your slot of each level; ``extra``:
    further probe rows (``key``, ``level``, ``who``, ``share``), for checks."""
    rows = charts.level_rows(group, GROUP, method)
    labels = _labels(group)
    colour = alt.Color("who:N", scale=alt.Scale(domain=[YOU, GROUP], range=[accent, LIGHT]),
                       legend=alt.Legend(title=None))
    shape = alt.Shape("who:N", scale=alt.Scale(domain=[YOU, GROUP], range=["circle", "square"]),
                      legend=alt.Legend(title=None))
    x = alt.X("level:O", title="Confidence level", axis=alt.Axis(labelAngle=0),
              scale=alt.Scale(domain=labels))
    offset = alt.XOffset("who:N", scale=alt.Scale(domain=[YOU, GROUP]))
    y = alt.Y("share:Q", title="Proportion correct", scale=alt.Scale(domain=[0, 1], nice=False),
              axis=alt.Axis(format=".0%", tickCount=5))
    base = alt.Chart(alt.InlineData(values=rows)).encode(x=x, xOffset=offset, color=colour)
    layers: list[alt.Chart] = [
        base.mark_rule(strokeWidth=1.5).encode(y=y, y2="high:Q"),
        base.mark_rule(strokeWidth=1.5).encode(y=alt.Y("low:Q"), y2="share:Q"),
        base.mark_point(filled=True, size=45, opacity=1).encode(y=y, shape=shape),
    ]
    if calibrated:
        stated = [r for r in rows if r["stated"] is not None]
        layers.insert(0, alt.Chart(alt.InlineData(values=stated)).mark_tick(
            color=DARK, strokeDash=[3, 2], thickness=1, size=34).encode(x=x, y=alt.Y("stated:Q")))
    probes = [{"key": f"{label}|{share}", "level": label, "who": YOU, "share": share}
              for label in labels for share in (0, 1)]
    layers.append(probe_layer([*probes, *extra], "point", x=x, xOffset=offset, y=y))
    chart: alt.TopLevelMixin = alt.layer(*layers).properties(width=240, height=150)
    return chart


def by_level_marks(back: Backdrop, own: Sequence[LevelRow], accent: str, method: Method
                   ) -> Layered:
    marks = []
    for row in charts.level_rows(own, YOU, method):
        bottom, top = back.probe(f"{row['level']}|0"), back.probe(f"{row['level']}|1")
        y = Linear(0.0, bottom.y, 1.0, top.y)
        marks.append(line(bottom.x, y(row["low"]), bottom.x, y(row["high"]), accent, 1.5))
        marks.append(circle(bottom.x, y(row["share"]), 45, accent))
    return layered(back, marks)


# ---------------------------------------------------------------------------------------------
# Confidence when right and when wrong

KINDS = ("right", "wrong")


def right_wrong_top(*levels: Sequence[LevelRow]) -> float:
    """The y axis's top: the largest share in either panel rounded up to 10 points, so that at
    most ten backdrops serve a round."""
    top = max((row["share"] for lv in levels for row in charts.confidence_shares(lv, "")),
              default=0.0)
    return min(1.0, max(0.1, math.ceil(top * 10 - 1e-9) / 10))


@functools.lru_cache(maxsize=16)
def right_wrong_backdrop(group: Levels, top: float) -> Backdrop:
    return backdrop(right_wrong_chart(group, top))


def right_wrong_chart(group: Sequence[LevelRow], top: float,
                      extra: Sequence[Mapping[str, Any]] = ()) -> alt.TopLevelMixin:
    """The group's panel and your empty panel with a full-height probe bar in each of your
    slots; ``extra``: further probe rows (``key``, ``level``, ``who``, ``kind``, ``share``)."""
    labels = _labels(group)
    rows = [{**r, "role": "bar"} for r in charts.confidence_shares(group, GROUP)]
    rows += [{"key": f"{label}|{kind}", "level": label, "who": YOU, "kind": kind, "share": top,
              "role": "probe"} for label in labels for kind in KINDS]
    rows += [{**r, "role": "probe"} for r in extra]
    x = alt.X("level:O", title="Confidence level", axis=alt.Axis(labelAngle=0),
              scale=alt.Scale(domain=labels))
    offset = alt.XOffset("kind:N", scale=alt.Scale(domain=list(KINDS)))
    y = alt.Y("share:Q", title="Share of answers", stack=None,
              scale=alt.Scale(domain=[0, top], nice=False),
              axis=alt.Axis(format=".0%", tickCount=4))
    colour = alt.Color("kind:N", scale=alt.Scale(domain=list(KINDS),
                                                 range=[RIGHT_COLOUR, WRONG_COLOUR]),
                       legend=alt.Legend(title=None, labelExpr="'when ' + datum.label"))
    bars = alt.Chart().mark_bar(width={"band": 0.9}).encode(
        x=x, xOffset=offset, y=y, color=colour).transform_filter("datum.role == 'bar'")
    probes = alt.Chart().mark_bar(width={"band": 0.9}, opacity=0).encode(
        x=x, xOffset=offset, y=y, description="key:N").transform_filter(
        "datum.role == 'probe'").properties(name="probe")
    chart: alt.TopLevelMixin = alt.layer(bars, probes, data=alt.InlineData(values=rows)).properties(
        width=105, height=150).facet(
        column=alt.Column("who:N", sort=[YOU, GROUP], title=None,
                          header=alt.Header(labelFontSize=10, labelColor=DARK)))
    return chart


def right_wrong_marks(back: Backdrop, own: Sequence[LevelRow], top: float) -> Layered:
    marks = []
    for row in charts.confidence_shares(own, YOU):
        if row["share"] <= 0:
            continue
        box = back.probe(f"{row['level']}|{row['kind']}")
        y = Linear(0.0, box.bottom, top, box.y)
        colour = RIGHT_COLOUR if row["kind"] == "right" else WRONG_COLOUR
        marks.append(rect(box.x, y(row["share"]), box.width, box.bottom - y(row["share"]),
                          colour))
    return layered(back, marks)


# ---------------------------------------------------------------------------------------------
# Where you stand: the group's accuracy histogram


@functools.lru_cache(maxsize=8)
def position_backdrop(values: tuple[float, ...], width: int, height: int) -> Backdrop:
    return backdrop(position_chart(values, width, height))


def position_chart(values: Sequence[float], width: int, height: int,
                   extra: Sequence[Mapping[str, Any]] = ()) -> alt.TopLevelMixin:
    """The group's histogram with probes at accuracy 0 and 1 on the axis; ``extra``: further
    probe rows (``key``, ``start``, ``count``)."""
    x = alt.X("start:Q", bin="binned", title="Accuracy",
              scale=alt.Scale(domain=[0, 1], nice=False),
              axis=alt.Axis(format=".0%", tickCount=10 if width >= 400 else 5))
    y = alt.Y("count:Q", title="Participants", axis=alt.Axis(tickMinStep=1))
    bars = alt.Chart(alt.InlineData(values=charts.histogram(values, 0.0, 1.0, 20))).mark_bar(
        color=charts.GREY, binSpacing=1).encode(x=x, x2="end:Q", y=y)
    probes = probe_layer([*({"key": str(v), "start": v, "count": 0} for v in (0, 1)), *extra],
                         "point", x=x, y=y)
    chart: alt.TopLevelMixin = alt.layer(bars, probes).properties(width=width, height=height)
    return chart


def position_marks(back: Backdrop, own: float | None, accent: str) -> Layered:
    if own is None or not math.isfinite(own):
        return layered(back, [])
    left, right = back.probe("0"), back.probe("1")
    x = Linear(0.0, left.x, 1.0, right.x)(own)
    edge = own > 0.9  # label to the left of the line near the right end
    return layered(back, [
        line(x, left.view_top, x, left.view_bottom, accent, 2.5),
        text(x - 4 if edge else x + 4, left.view_top - 4, YOU, accent, size=11,
             anchor="end" if edge else "start", baseline="top", bold=True),
    ])


# ---------------------------------------------------------------------------------------------
# Insight for accuracy: type-2 ROC area against d′


@dataclass(frozen=True)
class InsightBackdrop:
    back: Backdrop
    x_domain: tuple[float, float]
    y_domain: tuple[float, float]


@functools.lru_cache(maxsize=16)
def insight_backdrop(points: tuple[InsightPoint, ...], curve: tuple[tuple[float, float], ...],
                     few_errors: int, x_domain: tuple[float, float],
                     y_domain: tuple[float, float], highlighted: bool) -> InsightBackdrop:
    """The group's points and the ideal curve on the given axes, drawn lighter when a point is
    to be highlighted over them. The axes are padded to steps of 0.5 and 0.1, so a handful of
    backdrops serve a round."""
    chart = insight_chart(points, curve, few_errors, x_domain, y_domain, highlighted)
    return InsightBackdrop(backdrop(chart), x_domain, y_domain)


def insight_chart(points: Sequence[InsightPoint], curve: Sequence[tuple[float, float]],
                  few_errors: int, x_domain: tuple[float, float],
                  y_domain: tuple[float, float], highlighted: bool,
                  extra: Sequence[Mapping[str, Any]] = ()) -> alt.TopLevelMixin:
    """The group's points and curve with probes at the axes' corners; ``extra``: further probe
    rows (``key``, ``d_prime``, ``type2_auroc``)."""
    point_rows = [{"d_prime": d, "type2_auroc": a, "few": few} for d, a, few in points]
    curve_rows = [{"d_prime": d, "type2_auroc": a} for d, a in curve]
    chart = charts.insight_against_dprime(point_rows, curve_rows, few_errors=few_errors,
                                          domains=(x_domain, y_domain), light=highlighted)
    corners = [{"key": "low", "d_prime": x_domain[0], "type2_auroc": y_domain[0]},
               {"key": "high", "d_prime": x_domain[1], "type2_auroc": y_domain[1]}]
    probes = probe_layer([*corners, *extra], "point", *charts.insight_axes(x_domain, y_domain))
    layered_chart: alt.TopLevelMixin = alt.layer(chart, probes)  # type: ignore[arg-type]
    return layered_chart


def insight_marks(frame: InsightBackdrop, own: Mapping[str, float | None], accent: str
                  ) -> Layered:
    """Your point (labelled), its 95 % interval and the ideal observer's value for you (a dark
    tick)."""
    back = frame.back
    d, area = own.get("d_prime"), own.get("type2_auroc")
    if d is None or area is None:
        return layered(back, [])
    lo, hi = back.probe("low"), back.probe("high")
    px = Linear(frame.x_domain[0], lo.x, frame.x_domain[1], hi.x)(d)
    y = Linear(frame.y_domain[0], lo.y, frame.y_domain[1], hi.y)
    marks = []
    low, high, expected = own.get("low"), own.get("high"), own.get("expected")
    if low is not None and high is not None:
        marks.append(line(px, y(low), px, y(high), accent, 1.5))
    if expected is not None:
        marks.append(line(px - 8, y(expected), px + 8, y(expected), DARK, 2))
    marks.append(circle(px, y(area), 70, accent, stroke="white", stroke_width=0.8))
    # Right of the point: the interval and the tick run vertically through it.
    marks.append(text(px + 7, y(area), YOU, accent, size=11, baseline="middle", bold=True))
    return layered(back, marks)


# ---------------------------------------------------------------------------------------------
# A certificate's four charts


def _insight_points(results: RoundResults, small_group: bool) -> tuple[InsightPoint, ...]:
    """Every participant's (d′, type-2 area, few errors) point, yours too (your highlighted
    point covers it), in :func:`insight_points`' order; none in a small group."""
    if small_group:
        return ()
    return tuple((r["d_prime"], r["type2_auroc"], r["few"]) for r in insight_points(results))


def _own_insight(p: ParticipantResult) -> dict[str, float | None]:
    m = p.metrics
    expected = m.get("expected_type2_auroc")
    return {"d_prime": m["d_prime"].value, "type2_auroc": m["type2_auroc"].value,
            "low": m["type2_auroc"].low, "high": m["type2_auroc"].high,
            "expected": expected.value if expected is not None else None}


def certificate_charts(results: RoundResults, p: ParticipantResult, ctx: Mapping[str, Any]
                       ) -> dict[str, Layered | None]:
    """The four certificate charts of ``p``; the group distribution is withheld in small
    groups, and the insight chart is left out when there is nothing to draw."""
    group = results.group.levels
    method = results.round.config.scoring.interval
    accent, small = str(ctx["accent"]), bool(ctx["small_group"])
    top = right_wrong_top(group, p.levels)
    accuracies = tuple(sorted(metric_values(results, "accuracy")))
    points = _insight_points(results, small)
    curve = tuple((c.d_prime, c.type2_auroc) for c in results.group.ideal_curve)
    own = _own_insight(p)
    drawn = own["d_prime"] is not None and own["type2_auroc"] is not None
    insight = None
    if points or curve or drawn:
        own_d = own["d_prime"]
        extra = [(own_d, v) for k in ("type2_auroc", "low", "high", "expected")
                 if drawn and own_d is not None and (v := own[k]) is not None]
        x_domain, y_domain = charts.insight_domains(
            [{"d_prime": pd, "type2_auroc": pa} for pd, pa, _ in points],
            [{"d_prime": cd, "type2_auroc": ca} for cd, ca in curve], extra)
        frame = insight_backdrop(points, curve, int(ctx["few_errors"]), x_domain, y_domain,
                                 drawn)
        insight = insight_marks(frame, own, accent)
    return {
        "by_level": by_level_marks(by_level_backdrop(group, accent, method,
                                                     bool(ctx["calibrated"])),
                                   p.levels, accent, method),
        "right_wrong": right_wrong_marks(right_wrong_backdrop(group, top), p.levels, top),
        "position": None if small else position_marks(
            position_backdrop(accuracies, 255, 185), p.metrics["accuracy"].value, accent),
        "insight": insight,
    }


def forget_backdrops() -> None:
    """Empty the per-process backdrop caches (benchmarks time a round from cold)."""
    for cached in (by_level_backdrop, right_wrong_backdrop, position_backdrop,
                   insight_backdrop):
        cached.cache_clear()
