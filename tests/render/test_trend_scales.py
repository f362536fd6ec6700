"""Trend charts never put confidence gaps of two different scales on one axis (issue 13)."""

from __future__ import annotations

import datetime as dt
import json
from typing import Any

from reportgen.archive.trend import RoundPoint, Standing
from reportgen.render.trend import GAP_SHARE_TITLE, INSIGHT_PANELS, insight_chart, mixed_scales
from reportgen.results.model import Metric

FIVE = (1.0, 2.0, 3.0, 4.0, 5.0)
SEVEN = (1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0)


def _point(round_id: str, levels: tuple[float, ...], gap: float) -> RoundPoint:
    metrics = {name: Metric(0.5, 0.4, 0.6) for name, _, _ in INSIGHT_PANELS}
    metrics["conf_gap"] = Metric(gap, gap - 0.3, gap + 0.3)
    return RoundPoint(round_id=round_id, issued=dt.date(2026, 1, 1), version=1, code="0012",
                      n_items=60, errors=5, conclusive_errors=5, few_errors=True,
                      metrics=metrics, standing=Standing(0.1, "|z| \u2264 2", "satisfactory",
                                                         0.7, 0.1, 100, None),
                      levels=levels)


def _gap_panel(spec: dict[str, Any]) -> dict[str, Any]:
    panels = [p for row in spec["vconcat"] for p in row["hconcat"]]
    (panel,) = [p for p in panels if "onfidence gap" in json.dumps(p["title"])]
    found: dict[str, Any] = panel
    return found


def _values(panel: dict[str, Any], spec: dict[str, Any]) -> list[float]:
    out = []
    for layer in panel["layer"]:
        data = layer.get("data", {})
        values = data.get("values") or spec.get("datasets", {}).get(data.get("name"), [])
        out += [v["value"] for v in values if "value" in v]
    return out


def test_one_scale_keeps_the_gap_in_its_own_units() -> None:
    points = [_point("R1", FIVE, 0.8), _point("R2", FIVE, 1.2)]
    assert not mixed_scales(points)
    spec = insight_chart(points, accent="#335577").to_dict()
    panel = _gap_panel(spec)
    assert panel["title"]["text"] != GAP_SHARE_TITLE
    assert sorted(set(_values(panel, spec))) == [0.8, 1.2]


def test_two_scales_are_drawn_as_a_share_of_each_scale() -> None:
    points = [_point("R1", FIVE, 0.8), _point("R2", SEVEN, 1.2)]
    assert mixed_scales(points)
    spec = insight_chart(points, accent="#335577").to_dict()
    panel = _gap_panel(spec)
    assert panel["title"]["text"] == GAP_SHARE_TITLE
    # 0.8 on a 1-5 scale (range 4) and 1.2 on a 1-7 scale (range 6): both a fifth of the range
    assert {round(v, 12) for v in _values(panel, spec)} == {0.2}
