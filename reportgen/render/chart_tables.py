"""The numbers behind each chart, as small tables of formatted text: a reader who cannot see
the chart (a screen reader, a text-only client) gets the same information.

Each table is ``{"header": [...], "rows": [[...], ...]}``; the first cell of a row is its
label. Group tables hold aggregates only, and nothing that the chart itself withholds.
"""

from __future__ import annotations

from collections.abc import Sequence
from statistics import median
from typing import Any

from reportgen.metrics.proportions import Method
from reportgen.render import charts, wording
from reportgen.results.model import LevelRow, Metric, ParticipantResult, RoundResults

Table = dict[str, Any]


def _pct(x: float | None) -> str:
    return wording.fmt_percent(x)


def accuracy_by_level(own: Sequence[LevelRow], group: Sequence[LevelRow], method: Method
                      ) -> Table:
    """Proportion correct at each confidence level, you beside the group, with intervals."""
    mine = {r["level"]: r for r in charts.level_rows(own, "you", method)}
    theirs = {r["level"]: r for r in charts.level_rows(group, "group", method)}

    def cell(r: dict[str, Any] | None) -> str:
        if r is None:
            return wording.DASH
        interval = wording.fmt_interval(Metric(r["share"], r["low"], r["high"]), "percent")
        return f"{_pct(r['share'])} ({interval}, n = {r['n']})"

    rows = [[f"{lv.level:g}", cell(mine.get(f"{lv.level:g}")), cell(theirs.get(f"{lv.level:g}"))]
            for lv in group]
    return {"header": ["Confidence level", "You: correct (95 % interval, n)",
                       "Group: correct (95 % interval, n)"], "rows": rows}


def right_wrong_by_level(own: Sequence[LevelRow], group: Sequence[LevelRow]) -> Table:
    """Share of right and of wrong answers at each confidence level, you and the group."""
    def shares(levels: Sequence[LevelRow]) -> dict[tuple[str, str], str]:
        return {(r["kind"], r["level"]): f"{_pct(r['share'])} ({r['n']})"
                for r in charts.confidence_shares(levels, "")}

    mine, theirs = shares(own), shares(group)
    rows = []
    for lv in group:
        key = f"{lv.level:g}"
        rows.append([key, mine.get(("right", key), wording.DASH),
                     mine.get(("wrong", key), wording.DASH),
                     theirs.get(("right", key), wording.DASH),
                     theirs.get(("wrong", key), wording.DASH)])
    return {"header": ["Confidence level", "You, when right", "You, when wrong",
                       "Group, when right", "Group, when wrong"], "rows": rows}


def accuracy_histogram(values: Sequence[float], own: float | None) -> Table:
    """Participants by accuracy in steps of 5 percentage points (empty steps left out)."""
    rows = []
    for b in charts.histogram(values, 0.0, 1.0, 20):
        mine = own is not None and (b["start"] <= own < b["end"]
                                    or (b["end"] == 1.0 and own == 1.0))
        if b["count"] or mine:
            label = f"{100 * b['start']:.0f}\u2013{100 * b['end']:.0f}\u00a0%"
            rows.append([label, str(b["count"]), "yours" if mine else ""])
    return {"header": ["Accuracy", "Participants", "Your accuracy"], "rows": rows}


def _median(values: Sequence[float]) -> str:
    return wording.fmt_number(median(values)) if values else wording.DASH


def insight_summary(results: RoundResults, points: Sequence[dict[str, Any]],
                    p: ParticipantResult | None = None) -> Table:
    """Type-2 ROC area against d′: your point, the ideal observer, the group's medians and the
    ideal curve at whole values of d′."""
    rows: list[list[str]] = []
    if p is not None:
        d, a = p.metrics["d_prime"], p.metrics["type2_auroc"]
        rows.append(["You", wording.fmt_number(d.value),
                     f"{wording.fmt_number(a.value)} ({wording.fmt_interval(a)})"])
        expected = p.metrics.get("expected_type2_auroc")
        if expected is not None and expected.value is not None:
            rows.append(["Ideal observer with your d\u2032, bias and use of the levels",
                         wording.fmt_number(d.value), wording.fmt_number(expected.value)])
    if points:
        rows.append([f"Median of {len(points)} participants",
                     _median([q["d_prime"] for q in points]),
                     _median([q["type2_auroc"] for q in points])])
    curve = results.group.ideal_curve
    for target in (0.0, 1.0, 2.0, 3.0):
        near = min(curve, key=lambda c: abs(c.d_prime - target), default=None)
        if near is not None and abs(near.d_prime - target) < 0.26:
            rows.append(["Ideal-observer curve", wording.fmt_number(near.d_prime),
                         wording.fmt_number(near.type2_auroc)])
    return {"header": ["Point", "d\u2032", "Type-2 ROC area"], "rows": rows}


def group_histograms(panels: Sequence[tuple[str, Sequence[float], float, float, str]]) -> Table:
    """The appendix's distribution histograms: participants per bin (empty bins left out)."""
    rows = []
    for title, values, lo, hi, fmt in panels:
        for b in charts.histogram(values, lo, hi, 16):
            if not b["count"]:
                continue
            if fmt.endswith("%"):
                span = f"{100 * b['start']:.1f}\u2013{100 * b['end']:.1f}\u00a0%"
            else:
                span = f"{b['start']:.2f} to {b['end']:.2f}".replace("-", "\u2212")
            rows.append([f"{title}, {span}", str(b["count"])])
    return {"header": ["Measure and bin", "Participants"], "rows": rows}
