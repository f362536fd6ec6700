"""Results as JSON-ready records: the round block, the group, the items and each participant.

Numbers and reason phrases only: :mod:`reportgen.render.results_json` adds the statements of
results.json, and the archive stores these records as they are. Metric keys are the catalogue's
names (:mod:`reportgen.catalogue`). Every metric has the same three keys in every participant
object: ``<name>`` (``null`` when not estimable), ``<name>_ci`` (``[low, high]``, or ``null``
when there is no interval) and ``<name>_note`` (the reason or caution, or ``null``). Floats are
written at full precision (the shortest text that reads back as the same double), so the
workbook and results.json hold the same numbers. The format is described in
docs/results-format.md and checked by ``results.schema.json`` beside this module.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict
from functools import cache
from importlib import resources
from typing import Any

from reportgen.results.model import (
    AttributeBreakdown,
    ItemResult,
    LevelFigures,
    Metric,
    ParticipantResult,
    RoundResults,
)

NO_ESTIMATE = "no self-estimate given"  # self_estimate_note of a participant without one


def number(x: float | None) -> float | None:
    """A finite float as written to JSON (at full precision), else None."""
    if x is None or not math.isfinite(x):
        return None
    return float(x)


def _metric(name: str, m: Metric, into: dict[str, Any]) -> None:
    into[name] = number(m.value)
    has_ci = m.low is not None or m.high is not None
    into[f"{name}_ci"] = [number(m.low), number(m.high)] if has_ci else None
    into[f"{name}_note"] = m.note


def _figures(f: LevelFigures) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for name in ("accuracy", "false_positive_rate", "false_negative_rate", "type2_auroc"):
        _metric(name, getattr(f, name), out)
    return out


def _breakdown(b: AttributeBreakdown) -> dict[str, Any]:
    """The group's figures per level of one attribute (answers of the group pooled)."""
    return {"attribute": b.attribute, "min_items": b.min_items, "withheld": list(b.withheld),
            "levels": [{"name": level.name, "n_items": level.n_items,
                        "merged": list(level.merged), **_figures(level.group)}
                       for level in b.levels]}


def participant_json(results: RoundResults, p: ParticipantResult) -> dict[str, Any]:
    """One participant's counts, metrics, levels, criteria outcomes and rating table."""
    out: dict[str, Any] = {"participant": p.code}
    if results.round.identities is not None:
        ident = results.round.identity(p.code)
        out["name"], out["organisation"] = ident.name, ident.organisation
    out.update(p.counts)
    for name, metric in p.metrics.items():
        _metric(name, metric, out)
    out["levels"] = [asdict(level) for level in p.levels]
    out["criteria"] = [{**asdict(c), "value": number(c.value), "z": number(c.z)}
                       for c in p.criteria]
    out["rating_table"] = {"different_source": list(p.rating_noise),
                           "same_source": list(p.rating_signal)}
    if p.conclusions:  # graded conclusion scales: every level's answers by true class
        out["conclusions"] = [asdict(row) for row in p.conclusions]
    if results.breakdowns:  # [attributes] breakdown: the participant's own figures per level
        out["breakdowns"] = [
            {"attribute": b.attribute,
             "levels": [{"name": level.name, **_figures(level.participants[p.code])}
                        for level in b.levels]}
            for b in results.breakdowns]
    out["overall"] = p.overall
    if results.round.estimates is not None:  # the same keys for everyone in the round
        given = results.round.estimates.get(p.code)
        out["self_estimate"] = number(given)
        out["self_estimate_note"] = None if given is not None else NO_ESTIMATE
    return out


def round_json(results: RoundResults) -> dict[str, Any]:
    rnd = results.round
    cfg = rnd.config
    return {
        "id": cfg.round.id,
        "scheme": cfg.round.scheme,
        "title": cfg.round.title,
        "opened": cfg.round.opened.isoformat(),
        "closed": cfg.round.closed.isoformat(),
        "issued": cfg.round.issued.isoformat(),
        "status": cfg.round.status,
        "provider": cfg.provider.model_dump(),
        "classes": {"labels": list(cfg.classes.labels), "positive": cfg.classes.positive},
        "decisions": {k: g.dump() for k, g in sorted(cfg.decisions.items())},
        "confidence": cfg.confidence.model_dump(  # the keys of round.toml before bins/source
            exclude_none=True, exclude={"source"} if cfg.confidence.source == "column" else None),
        "scoring": cfg.scoring.model_dump(),
        "criteria": [c.model_dump() for c in cfg.criteria],
        "n_participants": rnd.n_participants,
        "n_items": rnd.n_items,
        "inputs": [{"name": s.name, "sha256": s.sha256} for s in rnd.sources],
        "warnings": [str(w) for w in rnd.warnings],
    }


def group_json(results: RoundResults) -> dict[str, Any]:
    group = results.group
    return {
        "n_participants": group.n_participants,
        "distributions": {
            k: {f: number(v) if isinstance(v, float) else v for f, v in asdict(d).items()}
            for k, d in group.distributions.items()
        },
        "criteria_counts": group.criteria_counts,
        "overall_counts": group.overall_counts,
        "robust": {k: {"x_star": number(v[0]), "s_star": number(v[1])}
                   for k, v in group.robust.items()},
        "error_types": group.error_types,
        "levels": [asdict(level) for level in group.levels],
        **({"conclusions": [asdict(row) for row in group.conclusions]}
           if group.conclusions else {}),
        **({"breakdowns": [_breakdown(b) for b in results.breakdowns]}
           if results.breakdowns else {}),
    }


def item_json(item: ItemResult) -> dict[str, Any]:
    return {**asdict(item), **{f: number(getattr(item, f)) for f in
                               ("difficulty", "discrimination", "inconclusive_rate",
                                "strong_against")}}


@cache
def results_schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of results.json, shipped beside this module."""
    text = (resources.files(__package__) / "results.schema.json").read_text(encoding="utf-8")
    schema: dict[str, Any] = json.loads(text)
    return schema
