"""Results -> the HTML of one confidential certificate and feedback report per participant.

Confidentiality: a certificate's context holds the participant's own code and identity and, for
the group, only aggregates (distributions, pooled counts, item shares).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from reportgen import catalogue
from reportgen.render import chart_tables, wording
from reportgen.render.certificate_charts import certificate_charts
from reportgen.render.context import (
    common_context,
    criterion_value,
    insight_points,
    metric_values,
    render_template,
    report_id,
    rule_text,
)
from reportgen.render.identity import Identity, Signed, identity_context
from reportgen.render.pdf import PdfAttachment
from reportgen.render.results_json import participant_results_json
from reportgen.render.submission import submission_context
from reportgen.render.wording import breakdown as breakdown_words
from reportgen.render.wording import scale as scale_words
from reportgen.render.wording import statements
from reportgen.results.model import (
    ParticipantResult,
    PreviousRound,
    RoundResults,
)
from reportgen.rounds.model import ABSTAINED, MISSING, SAID_NEGATIVE, SAID_POSITIVE
from reportgen.settings import Settings

CERTIFICATE_TEMPLATE = "certificate.html.j2"
ATTACHMENT_NAME = "participant-results.json"


def _metric_rows(p: ParticipantResult, results: RoundResults, readings: Mapping[str, str]
                 ) -> list[dict[str, Any]]:
    """Sections of (label, value, interval, group median, reading, caution) rows, each with an
    optional note shown under its rows."""
    dists = results.group.distributions
    sections = []
    for title, names in catalogue.SECTIONS:
        rows = []
        for name in names:
            m = p.metrics.get(name)
            if m is None:
                continue
            kind = "percent" if name in catalogue.RATES else "number"
            dist = dists.get(name)
            median = dist.median if dist is not None else None
            rows.append({
                "name": name,
                "label": catalogue.label(name),
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


def _criteria_rows(p: ParticipantResult, results: RoundResults) -> list[dict[str, str]]:
    cfg = results.round.config
    announced = {c.id: c for c in cfg.criteria}
    rows = []
    for co in p.criteria:
        rule = announced.get(co.id)
        # The detail adds to value and requirement only for z-scores and unassessable results.
        show_detail = co.outcome == "not assessable" or (rule is not None and rule.kind == "z")
        rows.append({
            "id": co.id, "label": co.label,
            "rule": rule_text(rule, cfg) if rule is not None else "",
            "value": criterion_value(co.metric, co.value),
            "outcome": co.outcome,
            "detail": (statements.criterion_detail(co, rule, results.group.robust)
                       if show_detail else ""),
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


def _chart_tables(results: RoundResults, p: ParticipantResult, accuracies: list[float],
                  ctx: dict[str, Any]) -> dict[str, chart_tables.Table]:
    """The numbers behind each certificate chart (see :mod:`.chart_tables`)."""
    method = results.round.config.scoring.interval
    points = [] if ctx["small_group"] else insight_points(results, p.code)
    return {
        "by_level": chart_tables.accuracy_by_level(p.levels, results.group.levels, method),
        "right_wrong": chart_tables.right_wrong_by_level(p.levels, results.group.levels),
        "position": chart_tables.accuracy_histogram(accuracies, p.metrics["accuracy"].value),
        "insight": chart_tables.insight_summary(results, points, p),
    }


def certificate_context(results: RoundResults, participant: ParticipantResult,
                        settings: Settings,
                        previous_rounds: Sequence[PreviousRound] | None = None
                        ) -> dict[str, Any]:
    """Everything certificate.html.j2 needs for one participant: their own code and identity,
    and only aggregates of the group."""
    cfg = results.round.config
    identity = results.round.identity(participant.code)
    readings = wording.metric_readings(participant, cfg)
    accuracies = metric_values(results, "accuracy")
    ctx = common_context(results, settings)
    ctx.update({
        "doc_title": f"Proficiency test report {cfg.round.id} \u2014 {participant.code}",
        "report_id": report_id(cfg.round.id, participant.code),
        "participant": {"code": participant.code, "name": identity.name,
                        "organisation": identity.organisation},
        "counts": participant.counts,
        "overall_text": statements.overall_text(participant),
        "overall_class": {"all criteria met": "ok", "not all criteria met": "fail"}.get(
            participant.overall, "neutral"),
        "criteria": _criteria_rows(participant, results),
        "summary": _summary_tiles(participant),
        "sections": _metric_rows(participant, results, readings),
        "relative_insight": readings.get("relative_insight", ""),
        "own_insight": {
            "estimable": participant.metrics["type2_auroc"].estimable
            and participant.metrics["d_prime"].estimable,
            "note": participant.metrics["type2_auroc"].note or "",
        },
        "answer_table": _answer_table(results, participant.row),
        "conclusions": scale_words.conclusion_table(participant.conclusions, cfg),
        "breakdowns": breakdown_words.own_tables(results.breakdowns, participant.code),
        "item_pairs": _two_columns(_item_rows(results, participant.row, settings)),
        "charts": certificate_charts(results, participant, ctx),
        "chart_tables": _chart_tables(results, participant, accuracies, ctx),
        "position_sentence": "" if ctx["small_group"] else _position_sentence(
            accuracies, participant.metrics["accuracy"].value),
        "previous_rounds": tuple(previous_rounds or ()),
        "group_methods": False,
    })
    ctx.update(submission_context(results, participant))
    return ctx


def certificate_attachments(results: RoundResults, participant: ParticipantResult,
                            identity: Identity | None = None) -> tuple[PdfAttachment, ...]:
    """What the certificate PDF embeds: the participant's own results as JSON ("Data")."""
    cfg = results.round.config
    own_id = (identity.report_id if identity is not None
              else report_id(cfg.round.id, participant.code))
    return (PdfAttachment(
        name=ATTACHMENT_NAME,
        data=participant_results_json(results, participant, own_id),
        description=f"Your own results in round {cfg.round.id} as JSON "
                    "(reportgen-participant-results/1)"),)


def render_certificate(results: RoundResults, participant: ParticipantResult,
                       settings: Settings,
                       previous_rounds: Sequence[PreviousRound] | None = None, *,
                       identity: Identity | None = None, signed: Signed | None = None) -> str:
    """The participant's confidential certificate and feedback report as one HTML document.

    ``identity``: the report id and amendment notice it carries (default: the round's base id,
    no notice); ``signed``: how its PDF will be signed, for the note on page 1."""
    ctx = certificate_context(results, participant, settings, previous_rounds)
    ctx.update(identity_context(identity, signed))
    return render_template(CERTIFICATE_TEMPLATE, ctx, settings)
