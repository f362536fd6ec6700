"""Item analysis of a round as :class:`ItemResult` records (difficulty, discrimination, flags)."""

from __future__ import annotations

import numpy as np

from reportgen.metrics.items import item_analysis
from reportgen.results.model import ItemResult
from reportgen.rounds.model import Round
from reportgen.scoring.columns import Array, Masks


def item_results(rnd: Round, m: Masks, accuracy: Array) -> tuple[ItemResult, ...]:
    """Item analysis; 'strong' performers are the top quarter of the group by accuracy."""
    strong = accuracy >= np.percentile(accuracy, 75) if accuracy.size else accuracy.astype(bool)
    ia = item_analysis(m.correct, m.wrong, m.abstain, strong)
    classes = rnd.config.classes
    out = []
    for i, item in enumerate(rnd.items):
        flagged = bool(ia.flagged[i])
        out.append(ItemResult(
            item=item,
            truth=classes.positive if rnd.truth[i] == 1 else classes.negative,
            answered=int(ia.answered[i]),
            correct=int(ia.n_correct[i]),
            wrong=int(ia.n_wrong[i]),
            inconclusive=int(ia.n_inconclusive[i]),
            difficulty=_opt(ia.difficulty[i]),
            discrimination=_opt(ia.discrimination[i]),
            inconclusive_rate=_opt(ia.inconclusive_rate[i]),
            flagged=flagged,
            strong_against=float(ia.strong_against[i]) if flagged else None,
        ))
    return tuple(out)


def _opt(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None
