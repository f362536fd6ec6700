"""Results -> HTML strings: one confidential certificate per participant and the group appendix.

The functions here only assemble a template context (plain values, formatted text, chart data
URIs) and render a Jinja2 template found on the search path (:mod:`reportgen.render.environment`).
The PDF renderer (:mod:`reportgen.render.pdf`) takes exactly this HTML.

Confidentiality: a certificate's context holds the participant's own code and identity and, for
the group, only aggregates (distributions, pooled counts, item shares). The appendix context
holds no code, name or organisation at all.
"""

from __future__ import annotations

import datetime as dt
import hashlib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import jinja2
import numpy as np

from reportgen import __version__
from reportgen.errors import BuildError, InputError
from reportgen.metrics.selfestimate import AbilityGroup, MeanInterval, QuartileRow
from reportgen.render import charts, wording
from reportgen.render.environment import environment
from reportgen.results import Metric, ParticipantResult, RoundResults, SelfEstimateView
from reportgen.rounds.model import ABSTAINED, MISSING, SAID_NEGATIVE, SAID_POSITIVE
from reportgen.rounds.schema import Criterion, RoundConfig
from reportgen.settings import Settings

CERTIFICATE_TEMPLATE = "certificate.html.j2"
APPENDIX_TEMPLATE = "appendix.html.j2"
LOGO_TYPES = {".png": "image/png", ".jpg": "image/jpeg", ".jpeg": "image/jpeg",
              ".svg": "image/svg+xml", ".gif": "image/gif"}

SECTIONS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("Decisions", ("accuracy", "error_rate", "decisive_accuracy", "false_positive_rate",
                   "false_negative_rate", "inconclusive_rate")),
    ("Discrimination", ("d_prime", "criterion", "auc")),
    ("Insight: does your confidence tell right from wrong?",
     ("conf_gap", "type2_auroc", "gamma", "meta_d", "m_ratio")),
    ("Calibration: does your confidence match how often you are right?",
     ("overconfidence", "brier", "ece")),
)

COUNT_METRICS = frozenset({
    "items", "answered", "correct", "errors", "inconclusive", "missing", "n_same", "n_different",
    "correct_same", "correct_different", "false_positives", "false_negatives",
    "inconclusive_same", "inconclusive_different"})

APPENDIX_METRICS: tuple[str, ...] = (
    "accuracy", "error_rate", "false_positive_rate", "false_negative_rate", "inconclusive_rate",
    "decisive_accuracy", "d_prime", "criterion", "auc", "conf_gap", "type2_auroc", "gamma",
    "meta_d", "m_ratio", "overconfidence", "brier", "ece",
)


@dataclass(frozen=True)
class PreviousRound:
    """One earlier round of the same participant, for the (later) "your previous rounds" block."""

    round_id: str
    issued: dt.date
    accuracy: Metric
    type2_auroc: Metric
    overall: str


# ---------------------------------------------------------------------------------------------
# Identifiers and shared context


def report_id(round_id: str, code: str) -> str:
    """Deterministic certificate id: the round id and 10 hex digits of SHA-256(round id, code)."""
    digest = hashlib.sha256(f"{round_id}\x1f{code}".encode()).hexdigest()[:10].upper()
    return f"{round_id}-{digest}"


def appendix_id(round_id: str) -> str:
    return f"{round_id}-GROUP"


def logo_data_uri(results: RoundResults) -> str | None:
    """The provider's logo (relative to the round folder) as a data: URI, or None."""
    logo = results.round.config.provider.logo
    if not logo:
        return None
    path = logo_path(results)
    mime = LOGO_TYPES.get(path.suffix.lower()) if path is not None else None
    if path is None or mime is None:
        raise InputError.single("round.toml", "the provider logo must be a .png, .jpg, .svg or "
                                ".gif file inside the round folder", column="provider.logo",
                                value=logo)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputError.single("round.toml", f"cannot read the provider logo: {exc.strerror}",
                                column="provider.logo", value=logo) from exc
    return charts.data_uri(data, mime)


def logo_path(results: RoundResults) -> Path | None:
    """The logo file, resolved; None when none is configured or it lies outside the folder."""
    logo = results.round.config.provider.logo
    if not logo:
        return None
    folder = results.round.folder.resolve()
    path = (folder / logo).resolve()
    return path if path.is_relative_to(folder) else None


def _rule_text(c: Criterion, cfg: RoundConfig) -> str:
    name = wording.LABELS.get(c.metric, c.metric.replace("_", " "))
    if c.kind == "z":
        side = "low" if c.worse == "low" else "high"
        return (f"{name}: robust z-score in the group (ISO 13528, Algorithm A); |z| \u2264 2 "
                f"satisfactory, 2 < |z| < 3 questionable, |z| \u2265 3 unsatisfactory; only "
                f"a {side} value counts against you")
    parts = []
    if c.at_least is not None:
        parts.append(f"at least {_limit(c.metric, c.at_least)}")
    if c.at_most is not None:
        parts.append(f"at most {_limit(c.metric, c.at_most)}")
    return f"{name}: " + " and ".join(parts)


def _limit(metric: str, x: float) -> str:
    return wording.fmt_percent(x, 0) if metric in wording.RATES else f"{x:g}"


def _criterion_value(metric: str, x: float | None) -> str:
    """A criterion's metric value: rates in percent, counts as whole numbers."""
    if x is None:
        return wording.DASH
    if metric in wording.RATES:
        return wording.fmt_percent(x)
    if metric in COUNT_METRICS:
        return f"{x:.0f}"
    return wording.fmt_number(x)


def _scale_text(cfg: RoundConfig) -> str:
    s = cfg.confidence
    if s.kind == "probability":
        return f"probability of being right, {s.min:g}\u2013{s.max:g}\u00a0%"
    text = f"ordinal, {s.min:g} (least sure) to {s.max:g} (most sure)"
    if s.probability_map == "linear":
        text += (f"; for calibration read as probability by a linear convention, {s.min:g} "
                 f"\u2192 {wording.fmt_percent(s.map_low, 0)} \u2026 {s.max:g} \u2192 100\u00a0%")
    return text


def _common(results: RoundResults, settings: Settings) -> dict[str, Any]:
    rnd = results.round
    cfg = rnd.config
    info = cfg.round
    return {
        "lang": "en",
        "round": info,
        "provider": cfg.provider,
        "accent": cfg.provider.accent,
        "logo_uri": logo_data_uri(results),
        "issued": wording.fmt_date(info.issued),
        "issued_iso": info.issued.isoformat(),
        "opened": wording.fmt_date(info.opened),
        "closed": wording.fmt_date(info.closed),
        "preliminary": info.status == "preliminary",
        "n_items": rnd.n_items,
        "n_same": int((rnd.truth == 1).sum()),
        "n_different": int((rnd.truth == 0).sum()),
        "n_participants": results.group.n_participants,
        "positive": cfg.classes.positive,
        "negative": cfg.classes.negative,
        "scale_text": _scale_text(cfg),
        "calibrated": cfg.confidence.calibration_applies,
        "interval_name": "Wilson score" if cfg.scoring.interval == "wilson"
        else "Clopper\u2013Pearson",
        "inconclusive_is_error": cfg.scoring.inconclusive_is_error,
        "few_errors": cfg.scoring.few_errors,
        "criteria_rules": [{"id": c.id, "label": c.label, "rule": _rule_text(c, cfg)}
                           for c in cfg.criteria],
        "cautions": wording.CAUTIONS,
        "version": __version__,
        "small_group": results.group.n_participants < settings.report.min_group_size,
        "min_group_size": settings.report.min_group_size,
    }


def _render(template: str, context: dict[str, Any], settings: Settings) -> str:
    try:
        return environment(settings).get_template(template).render(context)
    except jinja2.TemplateError as exc:
        raise BuildError(f"template {template!r} failed: {exc}") from exc


# ---------------------------------------------------------------------------------------------
# Certificate


def _metric_rows(p: ParticipantResult, results: RoundResults, readings: Mapping[str, str]
                 ) -> list[dict[str, Any]]:
    """Sections of (label, value, interval, group median, reading, caution) rows, each with an
    optional note shown under its rows."""
    dists = results.group.distributions
    sections = []
    for title, names in SECTIONS:
        rows = []
        for name in names:
            m = p.metrics.get(name)
            if m is None:
                continue
            kind = "percent" if name in wording.RATES else "number"
            dist = dists.get(name)
            median = dist.median if dist is not None else None
            rows.append({
                "name": name,
                "label": wording.LABELS[name],
                "value": wording.fmt_value(name, m),
                "interval": wording.fmt_interval(m, kind),
                "median": (wording.fmt_percent(median) if kind == "percent"
                           else wording.fmt_number(median)),
                "reading": readings.get(name, ""),
                "caution": bool(m.note and m.estimable),
                "estimable": m.estimable,
            })
        if rows:
            # The relative-insight sentence sits with the insight rows it explains.
            note = readings.get("relative_insight", "") if "type2_auroc" in names else ""
            sections.append({"title": title, "rows": rows, "note": note})
    return sections


def _outcome_class(outcome: str) -> str:
    if outcome in ("met", "satisfactory"):
        return "ok"
    if outcome in ("not met", "unsatisfactory"):
        return "fail"
    return "neutral"


def _criteria_rows(p: ParticipantResult, cfg: RoundConfig) -> list[dict[str, str]]:
    announced = {c.id: c for c in cfg.criteria}
    rows = []
    for co in p.criteria:
        rule = announced.get(co.id)
        # The detail adds to value and requirement only for z-scores and unassessable results.
        show_detail = co.outcome == "not assessable" or (rule is not None and rule.kind == "z")
        rows.append({
            "id": co.id, "label": co.label,
            "rule": _rule_text(rule, cfg) if rule is not None else "",
            "value": _criterion_value(co.metric, co.value),
            "outcome": co.outcome, "detail": co.detail if show_detail else "",
            "class": _outcome_class(co.outcome),
        })
    return rows


def _answer_table(results: RoundResults, row: int) -> list[dict[str, Any]]:
    """Counts by truth class (rows) and answer (columns) for one participant."""
    rnd = results.round
    cfg = rnd.config
    d, truth = rnd.decision[row], rnd.truth
    out = []
    for label, t in ((cfg.classes.positive, 1), (cfg.classes.negative, 0)):
        mask = truth == t
        out.append({
            "truth": label,
            "said_positive": int((mask & (d == SAID_POSITIVE)).sum()),
            "said_negative": int((mask & (d == SAID_NEGATIVE)).sum()),
            "inconclusive": int((mask & (d == ABSTAINED)).sum()),
            "missing": int((mask & (d == MISSING)).sum()),
            "total": int(mask.sum()),
        })
    return out


def _item_rows(results: RoundResults, row: int, settings: Settings) -> list[dict[str, str]]:
    rnd = results.round
    cfg = rnd.config
    minimum = settings.report.min_item_answers
    out = []
    for i, item in enumerate(results.items):
        d = int(rnd.decision[row, i])
        if d == MISSING:
            outcome, answer, conf = "missing", wording.DASH, wording.DASH
        else:
            answer = str(rnd.raw_decision[row, i])
            c = float(rnd.confidence[row, i])
            conf = f"{c:g}" if np.isfinite(c) else wording.DASH
            if d == ABSTAINED:
                outcome = "wrong" if cfg.scoring.inconclusive_is_error else "inconclusive"
            else:
                outcome = "right" if d == int(rnd.truth[i]) else "wrong"
        share = (wording.fmt_percent(item.difficulty, 0)
                 if item.difficulty is not None and item.answered >= minimum else wording.DASH)
        out.append({"item": item.item, "truth": item.truth, "answer": answer,
                    "confidence": conf, "outcome": outcome, "share": share})
    return out


def _two_columns(rows: Sequence[dict[str, str]]) -> list[tuple[dict[str, str],
                                                                  dict[str, str] | None]]:
    """Pair row i with row i + ceil(n/2): a long list reads down the left half, then the right."""
    half = (len(rows) + 1) // 2
    return [(rows[i], rows[i + half] if i + half < len(rows) else None) for i in range(half)]


def _position_sentence(values: Sequence[float], own: float | None) -> str:
    if own is None or not values:
        return ""
    below = sum(v < own for v in values)
    above = sum(v > own for v in values)
    n = len(values) - 1  # yourself excluded
    if n <= 0:
        return ""
    return (f"Of the other {n} participants, {below} had a lower "
            f"accuracy than yours, {above} a higher one and {n - below - above} the same.")


SUMMARY_TILES = (("Accuracy", "accuracy"), ("False positives", "false_positive_rate"),
                 ("False negatives", "false_negative_rate"), ("Inconclusive", "inconclusive_rate"))


def _summary_tiles(p: ParticipantResult) -> list[dict[str, str]]:
    return [{"label": label, "value": wording.fmt_value(name, p.metrics[name]),
             "interval": wording.fmt_interval(p.metrics[name], "percent")}
            for label, name in SUMMARY_TILES]


def _certificate_charts(results: RoundResults, p: ParticipantResult, accuracies: list[float],
                        ctx: dict[str, Any]) -> dict[str, charts.Image | None]:
    """The three certificate charts; the group distribution is withheld in small groups."""
    group = results.group.levels
    method = results.round.config.scoring.interval
    m = p.metrics
    own = {"d_prime": m["d_prime"].value, "type2_auroc": m["type2_auroc"].value,
           "low": m["type2_auroc"].low, "high": m["type2_auroc"].high,
           "expected": _value(m.get("expected_type2_auroc"))}
    return {
        "by_level": charts.image(charts.accuracy_by_confidence(
            p.levels, group, accent=ctx["accent"], method=method, calibrated=ctx["calibrated"])),
        "right_wrong": charts.image(charts.confidence_right_wrong(p.levels, group)),
        "position": None if ctx["small_group"] else charts.image(charts.position_in_group(
            accuracies, p.metrics["accuracy"].value, accent=ctx["accent"], width=255,
            height=185)),
        "insight": _insight_chart(results, ctx, own=own, exclude=p.code),
    }


def _value(m: Metric | None) -> float | None:
    return m.value if m is not None else None


def insight_points(results: RoundResults, exclude: str | None = None) -> list[dict[str, Any]]:
    """Anonymous (d′, type-2 area, few-errors flag) points, sorted by value so that their order
    says nothing about codes; ``exclude`` leaves one participant out (drawn highlighted)."""
    points = []
    for p in results.participants:
        d, a = p.metrics.get("d_prime"), p.metrics.get("type2_auroc")
        if p.code == exclude or d is None or a is None or d.value is None or a.value is None:
            continue
        points.append({"d_prime": d.value, "type2_auroc": a.value, "few": a.note is not None})
    return sorted(points, key=lambda r: (r["d_prime"], r["type2_auroc"], r["few"]))


def _insight_chart(results: RoundResults, ctx: Mapping[str, Any], *,
                   own: Mapping[str, float | None] | None = None,
                   exclude: str | None = None) -> charts.Image | None:
    """Type-2 area against d′ with the ideal curve; the group's points are withheld in small
    groups (each point is one participant)."""
    points = [] if ctx["small_group"] else insight_points(results, exclude)
    curve = [{"d_prime": c.d_prime, "type2_auroc": c.type2_auroc}
             for c in results.group.ideal_curve]
    if not points and not curve and not (own and own.get("type2_auroc") is not None):
        return None
    return charts.image(charts.insight_against_dprime(
        points, curve, accent=ctx["accent"], few_errors=ctx["few_errors"], own=own))


def certificate_context(results: RoundResults, participant: ParticipantResult,
                        settings: Settings,
                        previous_rounds: Sequence[PreviousRound] | None = None
                        ) -> dict[str, Any]:
    """Everything certificate.html.j2 needs for one participant: their own code and identity,
    and only aggregates of the group."""
    cfg = results.round.config
    identity = results.round.identity(participant.code)
    readings = wording.readings(participant, cfg)
    accuracies = _values(results, "accuracy")
    ctx = _common(results, settings)
    ctx.update({
        "doc_title": f"Proficiency test report {cfg.round.id} \u2014 {participant.code}",
        "report_id": report_id(cfg.round.id, participant.code),
        "participant": {"code": participant.code, "name": identity.name,
                        "organisation": identity.organisation},
        "counts": participant.counts,
        "overall_text": participant.overall_text,
        "overall_class": {"all criteria met": "ok", "not all criteria met": "fail"}.get(
            participant.overall, "neutral"),
        "criteria": _criteria_rows(participant, cfg),
        "summary": _summary_tiles(participant),
        "sections": _metric_rows(participant, results, readings),
        "relative_insight": readings.get("relative_insight", ""),
        "own_insight": {
            "estimable": participant.metrics["type2_auroc"].estimable
            and participant.metrics["d_prime"].estimable,
            "note": participant.metrics["type2_auroc"].note or "",
        },
        "answer_table": _answer_table(results, participant.row),
        "item_pairs": _two_columns(_item_rows(results, participant.row, settings)),
        "charts": _certificate_charts(results, participant, accuracies, ctx),
        "position_sentence": "" if ctx["small_group"] else _position_sentence(
            accuracies, participant.metrics["accuracy"].value),
        "previous_rounds": tuple(previous_rounds or ()),
        "group_methods": False,
    })
    return ctx


def render_certificate(results: RoundResults, participant: ParticipantResult,
                       settings: Settings,
                       previous_rounds: Sequence[PreviousRound] | None = None) -> str:
    """The participant's confidential certificate and feedback report as one HTML document."""
    return _render(CERTIFICATE_TEMPLATE,
                   certificate_context(results, participant, settings, previous_rounds), settings)


# ---------------------------------------------------------------------------------------------
# Appendix


def _distribution_rows(results: RoundResults, small: bool) -> list[dict[str, Any]]:
    rows = []
    for name in APPENDIX_METRICS:
        dist = results.group.distributions.get(name)
        if dist is None:
            continue

        def f(x: float | None, name: str = name) -> str:
            return (wording.fmt_percent(x) if name in wording.RATES
                    else wording.fmt_number(x))

        rows.append({"label": wording.LABELS[name], "n": dist.n, "mean": f(dist.mean),
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
        out.append({"id": c.id, "label": c.label, "rule": _rule_text(c, cfg), "cells": cells})
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
        "flagged": it.flagged, "flag_reason": it.flag_reason or "",
    } for it in results.items]


def _values(results: RoundResults, name: str) -> list[float]:
    return [float(v) for p in results.participants
            if name in p.metrics and (v := p.metrics[name].value) is not None]


# ---------------------------------------------------------------------------------------------
# Appendix group views (DESIGN §3): self-estimates by quartile, insight against ability

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
        "score_label": wording.LABELS.get(view.score_name, view.score_name).split(" (")[0],
        "n": v.n, "n_perm": v.n_perm, "reading": view.reading,
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
        "insight_chart": _insight_chart(results, ctx),
        "n_insight": len(points),
        "n_insight_few": sum(p["few"] for p in points),
    }


def appendix_context(results: RoundResults, settings: Settings) -> dict[str, Any]:
    """Everything appendix.html.j2 needs: aggregates only, no participant code or identity."""
    cfg = results.round.config
    ctx = _common(results, settings)
    method = cfg.scoring.interval
    accent = ctx["accent"]
    panels = [
        ("Accuracy", _values(results, "accuracy"), 0.0, 1.0, ".0%"),
        ("False-positive rate", _values(results, "false_positive_rate"), 0.0, 1.0, ".0%"),
        ("Discriminability d\u2032", _values(results, "d_prime"), -1.0, 5.0, ".1f"),
        ("Type-2 ROC area (insight)", _values(results, "type2_auroc"), 0.0, 1.0, ".1f"),
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
        "criteria_counts": _criteria_count_rows(results),
        "overall_counts": sorted(results.group.overall_counts.items()),
        "calibration": _calibration_rows(results),
        "items": _item_analysis_rows(results, settings),
        "flagged": [it for it in _item_analysis_rows(results, settings) if it["flagged"]],
        "views": _group_views(results, ctx),
        "group_methods": True,
        "charts": {
            "distributions": None if ctx["small_group"] else charts.image(
                charts.group_distributions(panels)),
            "calibration": charts.image(charts.group_calibration(
                results.group.levels, accent=accent, method=method)),
            "item_map": charts.image(charts.item_map(item_points, accent=accent)),
        },
    })
    return ctx


def render_appendix(results: RoundResults, settings: Settings) -> str:
    """The anonymous group appendix as one HTML document."""
    return _render(APPENDIX_TEMPLATE, appendix_context(results, settings), settings)
