"""Results -> the HTML of the anonymous group appendix.

The appendix context holds no participant code, name or organisation at all.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from reportgen import catalogue
from reportgen.metrics.selfestimate import AbilityGroup, MeanInterval, QuartileRow
from reportgen.render import chart_tables, charts, wording
from reportgen.render.context import (
    appendix_id,
    common_context,
    insight_chart,
    insight_points,
    metric_values,
    render_template,
    rule_text,
)
from reportgen.render.identity import Identity, Signed, identity_context
from reportgen.render.wording import breakdown as breakdown_words
from reportgen.render.wording import scale as scale_words
from reportgen.render.wording import statements
from reportgen.results.model import (
    Metric,
    RoundResults,
    SelfEstimateView,
)
from reportgen.settings import Settings

APPENDIX_TEMPLATE = "appendix.html.j2"


def _distribution_rows(results: RoundResults, small: bool) -> list[dict[str, Any]]:
    rows = []
    for name in catalogue.APPENDIX_METRICS:
        dist = results.group.distributions.get(name)
        if dist is None:
            continue

        def f(x: float | None, name: str = name) -> str:
            return (wording.fmt_percent(x) if name in catalogue.RATES
                    else wording.fmt_number(x))

        rows.append({"label": catalogue.label(name), "n": dist.n, "mean": f(dist.mean),
                     "sd": f(dist.sd), "min": wording.DASH if small else f(dist.minimum),
                     "q1": f(dist.q1), "median": f(dist.median), "q3": f(dist.q3),
                     "max": wording.DASH if small else f(dist.maximum)})
    return rows


def _error_type_rows(results: RoundResults) -> list[dict[str, str]]:
    e = results.group.error_types
    cfg = results.round.config
    pos, neg = cfg.classes.positive, cfg.classes.negative
    n_same, n_diff = e.get("n_same", 0), e.get("n_different", 0)

    def row(label: str, k: int, n: int, of: str) -> dict[str, str]:
        return {"label": label, "count": str(k), "of": str(n),
                "rate": wording.fmt_percent(k / n) if n else wording.DASH}

    return [
        row(f"False positives (\u201c{pos}\u201d on {neg}-source items)",
            e.get("false_positives", 0), n_diff, f"{neg}-source answers"),
        row(f"False negatives (\u201c{neg}\u201d on {pos}-source items)",
            e.get("false_negatives", 0), n_same, f"{pos}-source answers"),
        row(f"Inconclusive on {pos}-source items", e.get("inconclusive_same", 0), n_same,
            f"{pos}-source answers"),
        row(f"Inconclusive on {neg}-source items", e.get("inconclusive_different", 0), n_diff,
            f"{neg}-source answers"),
        row(f"Correct on {pos}-source items", e.get("correct_same", 0), n_same,
            f"{pos}-source answers"),
        row(f"Correct on {neg}-source items", e.get("correct_different", 0), n_diff,
            f"{neg}-source answers"),
    ]


def _criteria_count_rows(results: RoundResults) -> list[dict[str, Any]]:
    cfg = results.round.config
    out = []
    for c in cfg.criteria:
        counts = results.group.criteria_counts.get(c.id, {})
        outcomes = (("satisfactory", "questionable", "unsatisfactory") if c.kind == "z"
                    else ("met", "not met"))
        cells = [{"outcome": o, "count": int(counts.get(o, 0))} for o in outcomes]
        cells.append({"outcome": "not assessable", "count": int(counts.get("not assessable", 0))})
        out.append({"id": c.id, "label": c.label, "rule": rule_text(c, cfg), "cells": cells})
    return out


def _calibration_rows(results: RoundResults) -> list[dict[str, str]]:
    method = results.round.config.scoring.interval
    by_level = {r["level"]: r for r in charts.level_rows(results.group.levels, "group", method)}
    rows = []
    for lv in results.group.levels:
        key = f"{lv.level:g}"
        r = by_level.get(key)
        rows.append({
            "level": key,
            "stated": wording.fmt_percent(lv.probability, 0),
            "correct": str(lv.correct), "wrong": str(lv.wrong),
            "inconclusive": str(lv.inconclusive),
            "share": wording.fmt_percent(r["share"]) if r else wording.DASH,
            "interval": (wording.fmt_interval(Metric(r["share"], r["low"], r["high"]), "percent")
                         if r else wording.DASH),
        })
    return rows


def _item_analysis_rows(results: RoundResults, settings: Settings) -> list[dict[str, Any]]:
    minimum = settings.report.min_item_answers
    return [{
        "item": it.item, "truth": it.truth, "answered": it.answered, "correct": it.correct,
        "wrong": it.wrong, "inconclusive": it.inconclusive,
        "difficulty": (wording.fmt_percent(it.difficulty, 0) if it.answered >= minimum
                       else wording.DASH),
        "discrimination": wording.fmt_number(it.discrimination),
        "inconclusive_rate": wording.fmt_percent(it.inconclusive_rate, 0),
        "flagged": it.flagged, "flag_reason": statements.flag_reason(it) or "",
    } for it in results.items]


# ---------------------------------------------------------------------------------------------
# Appendix group views (docs/design.md §3): self-estimates by quartile, insight against ability

QUARTERS = {1: "1 (weakest)", 2: "2", 3: "3", 4: "4 (strongest)"}


def _points(x: float | None) -> str:
    """A difference of proportions in percentage points: ``+6.2 points``."""
    return wording.DASH if x is None else f"{wording.fmt_signed(100 * x, 1)} points"


def _band_position(r: QuartileRow) -> str:
    if r.inside_null is None or r.mean_estimate is None or r.null_high is None:
        return wording.DASH
    if r.inside_null:
        return "inside"
    return "above" if r.mean_estimate > r.null_high else "below"


def _quartile_rows(rows: Sequence[QuartileRow]) -> list[dict[str, Any]]:
    return [{
        "quarter": QUARTERS.get(r.quartile, str(r.quartile)), "n": r.n,
        "score": wording.fmt_percent(r.mean_score),
        "estimate": wording.fmt_percent(r.mean_estimate),
        "gap": _points(r.gap), "fitted": wording.fmt_percent(r.fitted),
        "band": wording.fmt_interval(Metric(r.mean_estimate, r.null_low, r.null_high), "percent"),
        "position": _band_position(r),
    } for r in rows]


def _self_estimates(view: SelfEstimateView | None) -> dict[str, Any] | None:
    if view is None:
        return None
    v, g = view.view, view.view.glejser
    chart_rows = [{"quarter": QUARTERS.get(r.quartile, str(r.quartile)), "score": r.mean_score,
                   "estimate": r.mean_estimate, "fitted": r.fitted, "null_low": r.null_low,
                   "null_high": r.null_high} for r in v.rows if r.n > 0]
    y_title = ("Share right / own estimate" if view.source == "estimates file"
               else "Share right / mean confidence")
    return {
        "from_file": view.source == "estimates file",
        "score_label": catalogue.short_label(view.score_name),
        "n": v.n, "n_perm": v.n_perm, "reading": statements.quartile_reading(v),
        "rows": _quartile_rows(v.rows),
        "glejser": None if g is None else {
            "n": g.n, "estimate_slope": wording.fmt_number(g.estimate_slope),
            "slope": wording.fmt_signed(g.slope, 3), "p": wording.fmt_p(g.slope_p),
            "quadratic_p": wording.fmt_p(g.quadratic_p)},
        "chart": charts.image(charts.self_estimate_quartiles(
            chart_rows, y_title=y_title,
            estimate_label="Mean estimate" if view.source == "estimates file"
            else "Mean confidence")),
    }


def _mean_text(mi: MeanInterval, digits: int) -> str:
    if mi.mean is None:
        return wording.DASH
    text = wording.fmt_number(mi.mean, digits)
    if mi.low is not None and mi.high is not None:
        text += (f" ({wording.fmt_number(mi.low, digits)}\u2013"
                 f"{wording.fmt_number(mi.high, digits)})")
    return text


def _accuracy_range(a: AbilityGroup) -> str:
    lo, hi = wording.fmt_percent(a.accuracy_min, 0), wording.fmt_percent(a.accuracy_max, 0)
    return lo if lo == hi else f"{lo.split(wording.NBSP)[0]}\u2013{hi}"


def _ability(results: RoundResults) -> dict[str, Any] | None:
    groups = [a for a in results.group.ability_groups if a.n > 0]
    if not groups:
        return None
    scale = results.round.config.confidence
    digits = 2 if scale.kind == "ordinal" else 1
    chart_rows = [{"group": _accuracy_range(a), "kind": kind, "mean": mi.mean, "low": mi.low,
                   "high": mi.high}
                  for a in groups
                  for kind, mi in (("right", a.conf_correct), ("wrong", a.conf_wrong))
                  if mi.mean is not None]
    return {
        "rows": [{"group": a.group, "range": _accuracy_range(a), "n": a.n,
                  "no_errors": a.n - a.conf_wrong.n,
                  "right": _mean_text(a.conf_correct, digits),
                  "wrong": _mean_text(a.conf_wrong, digits),
                  "gap": _mean_text(a.conf_gap, digits)} for a in groups],
        "chart": charts.image(charts.insight_by_ability(chart_rows,
                                                        scale=(scale.min, scale.max))),
    }


def _group_views(results: RoundResults, ctx: Mapping[str, Any]) -> dict[str, Any]:
    """The appendix's group views; accuracy groups and individual points are withheld in small
    groups, where they could single a participant out."""
    g = results.group
    points = insight_points(results)
    return {
        "self_estimates": _self_estimates(g.self_estimates),
        "self_estimates_note": g.self_estimates_note or "",
        "ability": None if ctx["small_group"] else _ability(results),
        "insight_chart": insight_chart(results, ctx),
        "n_insight": len(points),
        "n_insight_few": sum(p["few"] for p in points),
    }


def appendix_context(results: RoundResults, settings: Settings) -> dict[str, Any]:
    """Everything appendix.html.j2 needs: aggregates only, no participant code or identity."""
    cfg = results.round.config
    ctx = common_context(results, settings)
    method = cfg.scoring.interval
    accent = ctx["accent"]
    panels = [
        ("Accuracy", metric_values(results, "accuracy"), 0.0, 1.0, ".0%"),
        ("False-positive rate", metric_values(results, "false_positive_rate"), 0.0, 1.0, ".0%"),
        ("Discriminability d\u2032", metric_values(results, "d_prime"), -1.0, 5.0, ".1f"),
        ("Type-2 ROC area (insight)", metric_values(results, "type2_auroc"), 0.0, 1.0, ".1f"),
    ]
    item_points = [{"difficulty": it.difficulty, "discrimination": it.discrimination,
                    "status": "flagged" if it.flagged else "other"}
                   for it in results.items
                   if it.difficulty is not None and it.discrimination is not None]
    ctx.update({
        "doc_title": f"Proficiency test group appendix {cfg.round.id}",
        "report_id": appendix_id(cfg.round.id),
        "distributions": _distribution_rows(results, ctx["small_group"]),
        "error_types": _error_type_rows(results),
        "conclusions": scale_words.conclusion_table(results.group.conclusions, cfg),
        "breakdowns": breakdown_words.group_tables(results.breakdowns),
        "criteria_counts": _criteria_count_rows(results),
        "overall_counts": sorted(results.group.overall_counts.items()),
        "calibration": _calibration_rows(results),
        "items": _item_analysis_rows(results, settings),
        "flagged": [it for it in _item_analysis_rows(results, settings) if it["flagged"]],
        "views": _group_views(results, ctx),
        "group_methods": True,
        "chart_tables": {
            "distributions": chart_tables.group_histograms([] if ctx["small_group"] else panels),
            "insight": chart_tables.insight_summary(
                results, [] if ctx["small_group"] else insight_points(results)),
        },
        "charts": {
            "distributions": None if ctx["small_group"] else charts.image(
                charts.group_distributions(panels)),
            "calibration": charts.image(charts.group_calibration(
                results.group.levels, accent=accent, method=method)),
            "item_map": charts.image(charts.item_map(item_points, accent=accent)),
        },
    })
    return ctx


def render_appendix(results: RoundResults, settings: Settings, *,
                    identity: Identity | None = None, signed: Signed | None = None) -> str:
    """The anonymous group appendix as one HTML document (``identity`` and ``signed`` as for
    :func:`reportgen.render.certificate.render_certificate`)."""
    ctx = appendix_context(results, settings)
    ctx.update(identity_context(identity, signed))
    return render_template(APPENDIX_TEMPLATE, ctx, settings)
