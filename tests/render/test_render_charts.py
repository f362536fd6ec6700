"""reportgen.render.charts: aggregated data, shipped font, PNG export."""

from __future__ import annotations

import json

from reportgen.render import charts
from reportgen.results import LevelRow, RoundResults


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
