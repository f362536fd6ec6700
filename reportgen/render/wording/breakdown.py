"""The break-down tables by item attribute: cells and the note on merged or withheld levels."""

from __future__ import annotations

from typing import Any

from reportgen.render.wording.numbers import DASH, fmt_interval, fmt_number, fmt_percent, plural
from reportgen.results.model import AttributeBreakdown, LevelFigures, Metric


def _cell(m: Metric, kind: str) -> str:
    """``"71.2 % (69.1–73.2 %)"``, ``"0.66 (0.63 to 0.70)"``, or a dash with the reason."""
    if not m.estimable:
        return f"{DASH} ({m.note})" if m.note else DASH
    value = fmt_percent(m.value) if kind == "percent" else fmt_number(m.value)
    interval = fmt_interval(m, kind)
    text = value if interval == DASH else f"{value} ({interval})"
    return f"{text} !" if m.note else text  # the caution is explained once, under the table


def _figures(f: LevelFigures) -> dict[str, str]:
    return {
        "accuracy": _cell(f.accuracy, "percent"),
        "false_positive_rate": _cell(f.false_positive_rate, "percent"),
        "false_negative_rate": _cell(f.false_negative_rate, "percent"),
        "type2_auroc": _cell(f.type2_auroc, "number"),
    }


def note(b: AttributeBreakdown) -> str:
    """What was merged or withheld, and why; empty when every level stands on its own."""
    parts = []
    for level in b.levels:
        if level.merged:
            parts.append(f"The levels {', '.join(level.merged)} have fewer than "
                         f"{plural(b.min_items, 'item')} each and are shown merged as one level.")
    if b.withheld:
        named = ", ".join(b.withheld)
        parts.append(f"Not shown: {named} (fewer than {plural(b.min_items, 'item')}"
                     f"{' each, and too few together to merge' if len(b.withheld) > 1 else ''}).")
    return " ".join(parts)


def group_tables(breakdowns: tuple[AttributeBreakdown, ...]) -> list[dict[str, Any]]:
    """The appendix: the group's pooled figures per level of every break-down attribute."""
    return [{"attribute": b.attribute, "note": note(b),
             "rows": [{"name": level.name, "n_items": level.n_items, **_figures(level.group)}
                      for level in b.levels]}
            for b in breakdowns]


def own_tables(breakdowns: tuple[AttributeBreakdown, ...], code: str) -> list[dict[str, Any]]:
    """A certificate: the participant's own figures per level, beside the group's accuracy."""
    return [{"attribute": b.attribute, "note": note(b),
             "rows": [{"name": level.name, "n_items": level.n_items,
                       **_figures(level.participants[code]),
                       "group_accuracy": _cell(level.group.accuracy, "percent")}
                      for level in b.levels]}
            for b in breakdowns]
