"""Group views for the appendix: self-estimates against scores, and insight against ability.

Self-estimates come from the estimates file (a percent of items right, set against accuracy);
without one, each participant's mean stated confidence read as a probability of being right is
used instead and set against the accuracy of conclusive answers, and the view says so.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from reportgen.metrics.ideal_observer import ideal_observer
from reportgen.metrics.selfestimate import (
    AbilityGroup,
    insight_by_ability,
    quartile_view,
)
from reportgen.results.model import EstimateSource, IdealPoint, SelfEstimateView
from reportgen.rounds.model import Round
from reportgen.scoring.columns import Array, Column, Tables

N_PERMUTATIONS = 2000
_D_GRID = tuple(round(0.25 * i, 2) for i in range(1, 17))  # 0.25 ... 4.0


def self_estimate_view(rnd: Round, columns: dict[str, Column], tables: Tables,
                       probabilities: Array | None,
                       in_group: npt.NDArray[np.bool_] | None = None
                       ) -> tuple[SelfEstimateView | None, str | None]:
    """The quartile view over the participants in the group statistics, or None with the reason
    it cannot be drawn."""
    seed = rnd.config.scoring.seed
    if rnd.estimates:
        estimate = np.array([rnd.estimates.get(code, np.nan) for code in rnd.participants])
        score, score_name = columns["accuracy"].value, "accuracy"
        source: EstimateSource = "estimates file"
    elif probabilities is not None:
        n = (tables.correct + tables.wrong).sum(axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            estimate = ((tables.correct + tables.wrong) * probabilities).sum(axis=1) / n
        score, score_name = columns["decisive_accuracy"].value, "decisive_accuracy"
        source = "mean stated confidence"
    else:
        return None, ("no estimates file, and the confidence scale is not declared mappable to "
                      "a probability of being right")
    if in_group is not None:
        estimate = np.where(in_group, estimate, np.nan)
    view = quartile_view(score, estimate, n_perm=N_PERMUTATIONS, seed=seed)
    if view.n < 8:
        return None, f"only {view.n} participants have both a score and an estimate (8 needed)"
    return SelfEstimateView(source, score_name, view), None


def ability_groups(columns: dict[str, Column],
                   in_group: npt.NDArray[np.bool_] | None = None) -> tuple[AbilityGroup, ...]:
    """Insight by ability quarter, over the participants in the group statistics."""
    def kept(name: str) -> Array:
        value = columns[name].value
        return value if in_group is None else np.where(in_group, value, np.nan)

    return insight_by_ability(kept("accuracy"), kept("mean_confidence_correct"),
                              kept("mean_confidence_wrong"))


def ideal_curve(n_levels: int) -> tuple[IdealPoint, ...]:
    """Type-2 ROC area of an ideal observer (meta-d′ = d′, c = 0) across d′, levels used equally
    (Maniscalco & Lau 2012's model; the closed form of metrics.metad.ideal_observer)."""
    if n_levels < 2:
        return ()
    return tuple(IdealPoint(d, ideal_observer(d, 0.0, n_levels).type2_auroc) for d in _D_GRID)
