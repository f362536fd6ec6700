"""The provider's release review (key audit): items whose key deserves a second look, with the
evidence, the input warnings and a release checklist. Provider only: written to OUT/provider/.
"""

from __future__ import annotations

from typing import Any

from reportgen.render import wording
from reportgen.render.context import common_context, render_template
from reportgen.render.wording import statements
from reportgen.results.model import ItemResult, RoundResults
from reportgen.settings import Settings

KEY_AUDIT_TEMPLATE = "key_audit.html.j2"


def review_id(round_id: str) -> str:
    return f"{round_id}-REVIEW"


def _row(it: ItemResult, why: str) -> dict[str, Any]:
    return {
        "item": it.item, "truth": it.truth, "answered": it.answered, "correct": it.correct,
        "wrong": it.wrong, "inconclusive": it.inconclusive,
        "difficulty": wording.fmt_percent(it.difficulty, 0),
        "discrimination": wording.fmt_number(it.discrimination),
        "why": why,
    }


def key_audit_context(results: RoundResults, settings: Settings) -> dict[str, Any]:
    cfg = results.round.config
    ctx = common_context(results, settings)
    flagged = [_row(it, statements.flag_reason(it) or "") for it in results.items if it.flagged]
    negative = [_row(it, "negative discrimination") for it in results.items
                if not it.flagged and it.discrimination is not None and it.discrimination < 0]
    ctx.update({
        "doc_title": f"Release review {cfg.round.id}",
        "report_id": review_id(cfg.round.id),
        "flagged": flagged,
        "negative_items": negative,
        "warnings": [str(w) for w in results.round.warnings],
    })
    return ctx


def render_key_audit(results: RoundResults, settings: Settings) -> str:
    return render_template(KEY_AUDIT_TEMPLATE, key_audit_context(results, settings), settings)
