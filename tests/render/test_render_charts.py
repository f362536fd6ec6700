"""reportgen.render.charts: aggregated data, shipped font, PNG export."""

from __future__ import annotations

import json

from reportgen.render import charts
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
    p = results.participants[0]
    accuracies = [q.metrics["accuracy"].value or 0.0 for q in results.participants]
    specs = [
        charts._spec(charts.accuracy_by_confidence(p.levels, results.group.levels,
                                                   accent="#5f6b73", method="wilson",
                                                   calibrated=True)),
        charts._spec(charts.confidence_right_wrong(p.levels, results.group.levels)),
        charts._spec(charts.position_in_group(accuracies, accuracies[0], accent="#5f6b73")),
    ]
    blob = json.dumps(specs)
    for q in results.participants:
        assert q.code not in blob
    assert all(s["config"]["font"] == charts.FONT_FAMILY for s in specs)


def test_png_export_is_sharp_and_deterministic() -> None:
    chart = charts.accuracy_by_confidence(_levels(), _levels(), accent="#5f6b73",
                                          method="wilson", calibrated=True)
    image = charts.image(chart)
    again = charts.image(chart)
    assert image == again
    assert image.uri.startswith("data:image/png;base64,")
    width, height = charts.png_size(charts.png(chart))
    assert (width, height) == (2 * image.width, 2 * image.height)  # scale 2


def _insight_spec(own: dict[str, float | None] | None) -> str:
    points = [{"d_prime": 1.0 + k / 10, "type2_auroc": 0.6 + k / 50, "few": k % 2 == 0}
              for k in range(10)]
    curve = [{"d_prime": d, "type2_auroc": 0.5 + d / 10} for d in (0.5, 1.0, 2.0, 4.0)]
    return json.dumps(charts._spec(charts.insight_against_dprime(
        points, curve, accent="#123456", few_errors=11, own=own)))


def test_insight_scatter_highlights_only_a_drawable_own_point() -> None:
    with_point = _insight_spec({"d_prime": 1.5, "type2_auroc": 0.7, "low": 0.55, "high": 0.85,
                                "expected": 0.75})
    assert f'"{charts.YOU}"' in with_point
    assert "fewer than 11 errors: unstable" in with_point  # the few-errors flag has a legend
    assert "ideal observer" in with_point
    no_point = _insight_spec({"d_prime": 4.9, "type2_auroc": None, "low": None, "high": None,
                              "expected": 0.9})
    assert f'"{charts.YOU}"' not in no_point
    assert "4.9" not in no_point  # an undrawn point does not stretch the axis either


def test_axis_ticks_do_not_crowd() -> None:
    assert charts._ticks(0.0, 4.0) == [0.0, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0]
    assert charts._ticks(-0.5, 4.5) == [0.0, 1.0, 2.0, 3.0, 4.0]
