"""results.json: the round block, the group, the items and one object per participant.

The records come from :mod:`reportgen.results.records` (numbers and reason phrases); this module
adds the statements a reader of the file expects beside them (the overall verdict, each
criterion's detail, why an item is flagged), made by :mod:`reportgen.render.wording`.
"""

from __future__ import annotations

import json
from typing import Any

from reportgen import __version__, catalogue
from reportgen.render.wording import statements
from reportgen.results.model import ParticipantResult, RoundResults
from reportgen.results.records import (
    group_json,
    item_json,
    number,
    participant_json,
    round_json,
)

FORMAT = "reportgen-results/1"
SCHEMA_ID = "urn:reportgen:schema:results:1"
"""The ``$id`` of the JSON Schema shipped as reportgen/results/results.schema.json."""


def _participant(results: RoundResults, p: ParticipantResult) -> dict[str, Any]:
    rules = {c.id: c for c in results.round.config.criteria}
    out: dict[str, Any] = {}
    for key, value in participant_json(results, p).items():
        if key == "criteria":
            value = [
                {"id": c.id, "label": c.label, "metric": c.metric, "value": number(c.value),
                 "outcome": c.outcome,
                 "detail": statements.criterion_detail(c, rules.get(c.id), results.group.robust)}
                for c in p.criteria
            ]
        out[key] = value
        if key == "overall":
            out["overall_text"] = statements.overall_text(p)
    return out


def _item(results: RoundResults, i: int) -> dict[str, Any]:
    item = results.items[i]
    record = item_json(item)
    del record["strong_against"]
    record["flag_reason"] = statements.flag_reason(item)
    return record


def results_json(results: RoundResults) -> bytes:
    doc = {
        "$schema": SCHEMA_ID,
        "format": FORMAT,
        "software": {"reportgen": __version__},
        "interval_level": catalogue.INTERVAL_LEVEL,
        "round": round_json(results),
        "group": group_json(results),
        "items": [_item(results, i) for i in range(len(results.items))],
        "participants": [_participant(results, p) for p in results.participants],
    }
    return (json.dumps(doc, indent=1, ensure_ascii=False, allow_nan=False) + "\n").encode()


PARTICIPANT_FORMAT = "reportgen-participant-results/1"


def participant_results_json(results: RoundResults, p: ParticipantResult,
                             report: str) -> bytes:
    """One participant's own results (their object of results.json, with the round named), as
    embedded in their certificate PDF. Nothing of another participant: no round warnings, items
    or group block (the group's figures are printed in the certificate)."""
    info = results.round.config.round
    doc = {
        "format": PARTICIPANT_FORMAT,
        "software": {"reportgen": __version__},
        "report_id": report,
        "round": {"id": info.id, "scheme": info.scheme, "title": info.title,
                  "issued": info.issued.isoformat(), "status": info.status,
                  "provider": results.round.config.provider.name,
                  "n_participants": results.round.n_participants,
                  "n_items": results.round.n_items},
        "participant": _participant(results, p),
    }
    return (json.dumps(doc, indent=1, ensure_ascii=False, allow_nan=False) + "\n").encode()
