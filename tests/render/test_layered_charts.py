"""Certificate charts in two layers (reportgen.render.layered, .certificate_charts).

The reference for where a participant's own marks belong is Vega-Lite itself: each check adds a
further probe at the participant's own value to the backdrop chart, lays it out with vl-convert
(the renderer every chart of ours goes through) and compares Vega's position with the one our
SVG marks were drawn at.
"""

from __future__ import annotations

import json
import re

import pytest

from reportgen.errors import BuildError
from reportgen.render import certificate_charts as cc
from reportgen.render import layered
from reportgen.render.charts import YOU
from reportgen.render.context import common_context
from reportgen.results.model import LevelRow, RoundResults
from reportgen.settings import Settings

ACCENT = "#5f6b73"
NUMBER = r"(-?[\d.]+)"


def _levels(shift: int = 0) -> tuple[LevelRow, ...]:
    return tuple(LevelRow(float(k), correct=10 * k + shift, wrong=6 - k, inconclusive=1,
                          probability=0.5 + (k - 1) / 8) for k in range(1, 6))


def _own() -> tuple[LevelRow, ...]:
    return (LevelRow(1.0, 3, 4, 0, 0.5), LevelRow(2.0, 0, 0, 2, 0.625),
            LevelRow(3.0, 7, 2, 0, 0.75), LevelRow(4.0, 9, 1, 0, 0.875),
            LevelRow(5.0, 12, 0, 0, 1.0))


def _attrs(marks: str, element: str, *names: str) -> list[tuple[float, ...]]:
    found = []
    for tag in re.findall(rf"<{element}\b[^>]*>", marks):
        found.append(tuple(float(re.search(rf'\b{n}="{NUMBER}"', tag)[1])  # type: ignore[index]
                           for n in names))
    return found


def test_by_level_points_sit_where_vega_puts_them() -> None:
    group, own = _levels(), _own()
    back = cc.by_level_backdrop(group, ACCENT, "wilson", True)
    marks = str(cc.by_level_marks(back, own, ACCENT, "wilson").marks)
    circles = _attrs(marks, "circle", "cx", "cy")
    rows = list(cc.charts.level_rows(own, YOU, "wilson"))
    assert len(circles) == len(rows) == 4  # level 2 has no conclusive answer: no point
    checks = [{"key": f"check{k}", "level": r["level"], "who": YOU, "share": r["share"]}
              for k, r in enumerate(rows)]
    vega = layered.backdrop(cc.by_level_chart(group, ACCENT, "wilson", True, checks))
    for k, (cx, cy) in enumerate(circles):
        box = vega.probe(f"check{k}")
        assert (cx, cy) == pytest.approx((box.x, box.y), abs=0.01)


def test_right_wrong_bars_match_vega_bars() -> None:
    group, own = _levels(), _own()
    top = cc.right_wrong_top(group, own)
    assert top == 0.6  # own wrong answers: 4 of 7 at level 1 = 57 %, rounded up to 60 %
    marks = str(cc.right_wrong_marks(cc.right_wrong_backdrop(group, top), own, top).marks)
    bars = _attrs(marks, "rect", "x", "y", "width", "height")
    shares = [r for r in cc.charts.confidence_shares(own, YOU) if r["share"] > 0]
    assert len(bars) == len(shares)
    checks = [{"key": f"check{k}", "level": r["level"], "who": YOU, "kind": r["kind"],
               "share": r["share"]} for k, r in enumerate(shares)]
    vega = layered.backdrop(cc.right_wrong_chart(group, top, checks))
    for k, bar in enumerate(bars):
        box = vega.probe(f"check{k}")
        assert bar == pytest.approx((box.x, box.y, box.width, box.height), abs=0.01)


def test_position_line_marks_your_accuracy_across_the_plot() -> None:
    values = (0.3, 0.55, 0.6, 0.62, 0.7, 0.7, 0.81, 0.95)
    marks = str(cc.position_marks(cc.position_backdrop(values, 255, 185), 0.62, ACCENT).marks)
    ((x1, y1, x2, y2),) = _attrs(marks, "line", "x1", "y1", "x2", "y2")
    vega = layered.backdrop(cc.position_chart(values, 255, 185, [
        {"key": "check", "start": 0.62, "count": 0}]))
    box = vega.probe("check")
    assert x1 == x2 == pytest.approx(box.x, abs=0.01)
    assert (y1, y2) == pytest.approx((box.view_top, box.bottom), abs=0.01)  # full height
    assert 'text-anchor="start"' in marks and f">{YOU}</text>" in marks
    near_top = str(cc.position_marks(cc.position_backdrop(values, 255, 185), 0.97,
                                     ACCENT).marks)
    assert 'text-anchor="end"' in near_top  # the label turns left near 100 %


def test_insight_point_interval_and_tick_match_vega() -> None:
    points = ((0.5, 0.55, False), (1.2, 0.7, True), (2.0, 0.8, False), (3.1, 0.85, False))
    curve = ((0.5, 0.6), (2.0, 0.78), (4.0, 0.9))
    own = {"d_prime": 1.2, "type2_auroc": 0.7, "low": 0.52, "high": 0.88, "expected": 0.74}
    x_domain, y_domain = (0.0, 4.0), (0.4, 1.0)
    frame = cc.insight_backdrop(points, curve, 11, x_domain, y_domain, True)
    marks = str(cc.insight_marks(frame, own, ACCENT).marks)
    ((cx, cy),) = _attrs(marks, "circle", "cx", "cy")
    (interval, tick) = _attrs(marks, "line", "x1", "y1", "x2", "y2")
    vega = layered.backdrop(cc.insight_chart(points, curve, 11, x_domain, y_domain, True, [
        {"key": f"own-{name}", "d_prime": 1.2, "type2_auroc": own[name]}
        for name in ("type2_auroc", "low", "high", "expected")]))
    point, low, high, expected = (vega.probe(f"own-{k}") for k in ("type2_auroc", "low", "high",
                                                          "expected"))
    assert (cx, cy) == pytest.approx((point.x, point.y), abs=0.01)
    assert interval == pytest.approx((low.x, low.y, high.x, high.y), abs=0.01)
    assert tick == pytest.approx((expected.x - 8, expected.y, expected.x + 8, expected.y),
                                 abs=0.01)


def test_no_own_point_draws_no_own_marks() -> None:
    frame = cc.insight_backdrop((), ((0.5, 0.6), (4.0, 0.9)), 11, (0.0, 4.0), (0.4, 1.0), False)
    assert str(cc.insight_marks(frame, {"d_prime": 1.0, "type2_auroc": None}, ACCENT).marks) == ""
    back = cc.position_backdrop((0.5, 0.6), 255, 185)
    assert str(cc.position_marks(back, None, ACCENT).marks) == ""


def test_a_round_shares_its_backdrops_and_they_name_nobody(results: RoundResults) -> None:
    settings = Settings()
    ctx = common_context(results, settings)
    cc.forget_backdrops()
    drawn = [cc.certificate_charts(results, p, ctx) for p in results.participants]
    by_level = {d["by_level"].uri for d in drawn if d["by_level"] is not None}
    assert len(by_level) == 1  # one backdrop for the whole round
    assert cc.by_level_backdrop.cache_info().misses == 1
    for d in drawn:
        for chart in d.values():
            if chart is not None:
                assert chart.uri.startswith("data:image/png;base64,")
    # The backdrops' specs carry aggregates and anonymous points only.
    specs = json.dumps([cc.charts._spec(cc.by_level_chart(results.group.levels, ACCENT,
                                                          "wilson", True)),
                        cc.charts._spec(cc.position_chart(
                            [p.metrics["accuracy"].value or 0.0 for p in results.participants],
                            255, 185))])
    for p in results.participants:
        ident = results.round.identity(p.code)
        for token in (p.code, ident.name, ident.organisation):
            assert not token or token not in specs


def test_probe_lookups_and_maps_fail_loudly() -> None:
    back = cc.position_backdrop((0.5,), 255, 185)
    with pytest.raises(BuildError, match="no probe 'elsewhere'"):
        back.probe("elsewhere")
    with pytest.raises(BuildError, match="share one value"):
        layered.Linear(1.0, 0.0, 1.0, 5.0)
    with pytest.raises(BuildError, match="placed twice"):
        layered.backdrop(cc.position_chart((0.5,), 255, 185, [
            {"key": "0", "start": 0.2, "count": 0}]))
    with pytest.raises(BuildError, match="finite"):
        layered.line(float("nan"), 0, 1, 1, ACCENT, 1)


def test_svg_text_is_escaped_and_colours_checked() -> None:
    assert "&lt;b&gt;" in layered.text(1, 2, "<b>", ACCENT, size=11)
    for bad in ('#fff" onload="x', "red", "#12345"):
        with pytest.raises(BuildError, match="not a colour"):
            layered.rect(0, 0, 1, 1, bad)
