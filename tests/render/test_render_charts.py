"""reportgen.render.charts: aggregated data, shipped font, PNG export."""

from __future__ import annotations

import json

from reportgen.render import certificate_charts, charts
from reportgen.results.model import LevelRow, RoundResults


def _levels() -> tuple[LevelRow, ...]:
    return tuple(LevelRow(float(k), correct=10 * k, wrong=5 - k, inconclusive=1,
                          probability=0.5 + (k - 1) / 8) for k in range(1, 6))


def test_level_rows_skip_unused_levels_and_carry_intervals() -> None:
    levels = (*_levels(), LevelRow(6.0, 0, 0, 3, None))
    rows = charts.level_rows(levels, "You", "wilson")
    assert [r["level"] for r in rows] == ["1", "2", "3", "4", "5"]
    first = rows[0]
    assert first["share"] == 10 / 14
    assert first["low"] < first["share"] < first["high"]


def test_histogram_counts_every_value_once() -> None:
    rows = charts.histogram([0.0, 0.5, 0.51, 1.0, 1.2, float("nan")], 0.0, 1.0, 20)
    assert sum(r["count"] for r in rows) == 5
    assert rows[-1]["count"] == 2  # 1.0 and the clipped 1.2 fall in the last bin


def test_certificate_charts_carry_no_identity(results: RoundResults) -> None:
    accuracies = [q.metrics["accuracy"].value or 0.0 for q in results.participants]
    group = results.group.levels
    specs = [
        charts._spec(certificate_charts.by_level_chart(group, "#5f6b73", "wilson", True)),
        charts._spec(certificate_charts.right_wrong_chart(group, 0.5)),
        charts._spec(certificate_charts.position_chart(accuracies, 255, 185)),
    ]
    blob = json.dumps(specs)
    for q in results.participants:
        assert q.code not in blob
    assert all(s["config"]["font"] == charts.FONT_FAMILY for s in specs)


def test_png_export_is_sharp_and_deterministic() -> None:
    chart = charts.group_calibration(_levels(), accent="#5f6b73", method="wilson")
    image = charts.image(chart)
    again = charts.image(chart)
    assert image == again
    assert image.uri.startswith("data:image/png;base64,")
    width, height = charts.png_size(charts.png(chart))
    assert (width, height) == (2 * image.width, 2 * image.height)  # scale 2


def _insight_spec(light: bool) -> str:
    points = [{"d_prime": 1.0 + k / 10, "type2_auroc": 0.6 + k / 50, "few": k % 2 == 0}
              for k in range(10)]
    curve = [{"d_prime": d, "type2_auroc": 0.5 + d / 10} for d in (0.5, 1.0, 2.0, 4.0)]
    return json.dumps(charts._spec(charts.insight_against_dprime(
        points, curve, few_errors=11, light=light)))


def test_insight_scatter_flags_few_errors_and_names_the_curve() -> None:
    spec = _insight_spec(light=False)
    assert "fewer than 11 errors: unstable" in spec  # the few-errors flag has a legend
    assert "ideal observer" in spec
    assert charts.GREY in spec and charts.LIGHT in _insight_spec(light=True)
    assert f'"{charts.YOU}"' not in spec  # a participant's own point is drawn over it


def test_insight_axes_hold_every_value_they_are_given() -> None:
    points = [{"d_prime": 1.2, "type2_auroc": 0.66}]
    curve = [{"d_prime": 0.5, "type2_auroc": 0.6}, {"d_prime": 3.0, "type2_auroc": 0.88}]
    assert charts.insight_domains(points, curve) == ((0.0, 3.0), (0.5, 0.9))
    x, y = charts.insight_domains(points, curve, [(4.9, 0.31)])
    assert x == (0.0, 5.0) and y == (0.3, 0.9)


def test_axis_ticks_do_not_crowd() -> None:
    assert charts._ticks(0.0, 4.0) == [0.0, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0]
    assert charts._ticks(-0.5, 4.5) == [0.0, 1.0, 2.0, 3.0, 4.0]
