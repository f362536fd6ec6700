"""Results as JSON-ready records: the round block, the group, the items and each participant.

Numbers and reason phrases only: :mod:`reportgen.render.results_json` adds the statements of
results.json, and the archive stores these records as they are. Metric keys are the catalogue's
names (:mod:`reportgen.catalogue`). A metric that is not estimable is ``null`` with a sibling
``<name>_note`` giving the reason; an interval is ``<name>_ci: [low, high]``.
"""

from __future__ import annotations

import math
from dataclasses import asdict
from typing import Any

from reportgen.results.model import ItemResult, Metric, ParticipantResult, RoundResults


def number(x: float | None) -> float | None:
    """A finite float as written to JSON (12 significant digits), else None."""
    if x is None or not math.isfinite(x):
        return None
    return float(f"{x:.12g}")


def _metric(name: str, m: Metric, into: dict[str, Any]) -> None:
    into[name] = number(m.value)
    if m.low is not None or m.high is not None:
        into[f"{name}_ci"] = [number(m.low), number(m.high)]
    if m.note is not None:
        into[f"{name}_note"] = m.note


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
    out["overall"] = p.overall
    if results.round.estimates is not None and p.code in results.round.estimates:
        out["self_estimate"] = number(results.round.estimates[p.code])
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
        "decisions": dict(sorted(cfg.decisions.items())),
        "confidence": cfg.confidence.model_dump(),
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
    }


def item_json(item: ItemResult) -> dict[str, Any]:
    return {**asdict(item), **{f: number(getattr(item, f)) for f in
                               ("difficulty", "discrimination", "inconclusive_rate",
                                "strong_against")}}
