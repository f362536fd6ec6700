"""The certificate's submission block: how much was answered, whether the participant counts in
the group statistics, and their own estimate of their score beside it (issue 11)."""

from __future__ import annotations

from typing import Any

import numpy as np

from reportgen.metrics.selfestimate import rank_groups
from reportgen.render.wording import submission as words
from reportgen.results.model import ParticipantResult, RoundResults

__all__ = ["submission_context"]


def _quarter(results: RoundResults, p: ParticipantResult) -> tuple[int | None, float | None,
                                                                    float | None]:
    """The participant's quarter of the self-estimate view, with its mean estimate and score."""
    view = results.group.self_estimates
    estimates = results.round.estimates or {}
    if view is None or view.source != "estimates file" or view.score_name != "accuracy":
        return None, None, None
    paired = [(q.code, q.metrics["accuracy"].value) for q in results.participants
              if q.code in estimates and q.metrics["accuracy"].value is not None]
    codes = [code for code, _ in paired]
    if p.code not in codes:
        return None, None, None
    groups = rank_groups(np.array([score for _, score in paired], dtype=float), 4)
    quarter = int(groups[codes.index(p.code)])
    row = next((r for r in view.view.rows if r.quartile == quarter + 1), None)
    if row is None:
        return None, None, None
    return quarter, row.mean_estimate, row.mean_score


def submission_context(results: RoundResults, p: ParticipantResult) -> dict[str, Any]:
    """``submission``: the sentences of the block (empty lists when there is nothing to say)."""
    scoring = results.round.config.scoring
    answered, n_items = p.counts["n_answered"], p.counts["n_items"]
    incomplete = [words.answered_sentence(answered, n_items)] if answered < n_items else []
    if not p.counts["in_group"]:
        incomplete.append(words.excluded_sentence(scoring.min_answered))
    estimate = (results.round.estimates or {}).get(p.code)
    own: list[str] = []
    if estimate is not None:
        own = words.estimate_sentences(estimate, p.metrics["accuracy"].value,
                                       *_quarter(results, p))
    return {"submission": {"incomplete": incomplete, "estimate": own},
            "min_answered_text": words.share_text(scoring.min_answered),
            "allow_missing": scoring.allow_missing}
