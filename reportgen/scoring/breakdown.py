"""Break-downs by item attribute (docs/design.md §3, docs/round-format.md [attributes]).

For each column named by ``[attributes] breakdown``, the items are split by the column's value and
the outcome masks of :func:`reportgen.scoring.columns.masks` are restricted to each level's items:
accuracy (over the level's items), the false-positive and false-negative rates (over the level's
answered different- and same-source items), each with its interval from
:func:`reportgen.metrics.proportions.proportion_ci`, and the type-2 ROC area (Fleming & Lau 2014)
with a Hanley & McNeil (1982) interval. The group's figures pool the counts of the participants in
the group. Levels with fewer than ``min_items`` items are merged into one level when together
they reach ``min_items``, else withheld.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import numpy.typing as npt
from scipy import special

from reportgen.catalogue import INTERVAL_LEVEL
from reportgen.metrics.insight import reason as insight_reason
from reportgen.metrics.insight import type2_auroc
from reportgen.metrics.proportions import proportion_ci
from reportgen.metrics.uncertainty import hanley_mcneil_se
from reportgen.results import reasons
from reportgen.results.model import AttributeBreakdown, AttributeLevel, LevelFigures
from reportgen.rounds.model import Round
from reportgen.scoring.columns import Column, Masks, counts, tables

Array = npt.NDArray[np.float64]
Z = float(special.ndtri(0.5 + INTERVAL_LEVEL / 2))


Level = tuple[str, npt.NDArray[np.bool_], tuple[str, ...]]


def level_items(values: tuple[str, ...], min_items: int) -> tuple[list[Level], tuple[str, ...]]:
    """The levels of one attribute as (name, item mask, merged level names), sorted by name, with
    the merged level last; and the names of the withheld levels. A blank cell is the level
    :data:`reasons.BLANK_LEVEL`."""
    names = [v.strip() or reasons.BLANK_LEVEL for v in values]
    found = sorted(set(names))
    sizes = {name: names.count(name) for name in found}
    small = [name for name in found if sizes[name] < min_items]

    def mask(chosen: list[str]) -> npt.NDArray[np.bool_]:
        return np.array([name in chosen for name in names], dtype=bool)

    levels: list[Level] = [(name, mask([name]), ()) for name in found if name not in small]
    if len(small) > 1 and sum(sizes[name] for name in small) >= min_items:
        levels.append((reasons.merged_levels(min_items), mask(small), tuple(small)))
        return levels, ()
    return levels, tuple(small)


def _restrict(m: Masks, sel: npt.NDArray[np.bool_]) -> Masks:
    return Masks(m.said_pos[:, sel], m.said_neg[:, sel], m.abstain[:, sel], m.missing[:, sel],
                 m.truth_pos[:, sel], m.correct[:, sel], m.wrong[:, sel], m.level[:, sel],
                 m.levels)


def _figures(c: Mapping[str, npt.NDArray[np.int64]], correct: Array, wrong: Array,
             method: str, few_errors: int) -> dict[str, Column]:
    """The four figures for every row of the count arrays (participants, or the pooled group);
    a type-2 area resting on fewer than ``few_errors`` errors carries "few errors: unstable"."""
    def rate(k: npt.NDArray[np.int64], n: npt.NDArray[np.int64], why: str) -> Column:
        ci = proportion_ci(k, n, method=method)  # type: ignore[arg-type]
        return Column(ci.estimate, ci.low, ci.high, reason=why)

    area = type2_auroc(correct, wrong)
    se = hanley_mcneil_se(area, correct.sum(axis=1), wrong.sum(axis=1))
    few = wrong.sum(axis=1) < few_errors
    notes = tuple(why if why is not None else reasons.FEW_ERRORS if is_few else None
                  for why, is_few in zip(insight_reason(correct, wrong, "type2_auroc").tolist(),
                                         few.tolist(), strict=True))
    return {
        "accuracy": rate(c["correct"], c["items"], "no items"),
        "false_positive_rate": rate(c["false_positives"],
                                    c["n_different"] - c["missing_different"],
                                    "no different-source items answered"),
        "false_negative_rate": rate(c["false_negatives"], c["n_same"] - c["missing_same"],
                                   "no same-source items answered"),
        "type2_auroc": Column(area, np.clip(area - Z * se, 0, 1), np.clip(area + Z * se, 0, 1),
                              notes=notes),
    }


def _at(cols: Mapping[str, Column], p: int) -> LevelFigures:
    return LevelFigures(cols["accuracy"].metric(p), cols["false_positive_rate"].metric(p),
                        cols["false_negative_rate"].metric(p), cols["type2_auroc"].metric(p))


def breakdowns(rnd: Round, m: Masks, in_group: npt.NDArray[np.bool_],
               min_items: int) -> tuple[AttributeBreakdown, ...]:
    """One :class:`AttributeBreakdown` per ``[attributes] breakdown`` column, in the declared
    order. ``in_group`` marks the participants whose answers the group's figures pool."""
    cfg = rnd.config
    out = []
    for attribute in cfg.attributes.breakdown:
        levels, withheld = level_items(tuple(rnd.item_attributes[attribute]), min_items)
        rows = []
        for name, sel, merged in levels:
            sub = _restrict(m, sel)
            c = counts(sub, cfg.scoring.inconclusive_is_error)
            t = tables(sub)
            few = cfg.scoring.few_errors
            own = _figures(c, t.correct, t.wrong, cfg.scoring.interval, few)
            pooled = {key: arr[in_group].sum(axis=0, keepdims=True) for key, arr in c.items()}
            group = _figures(pooled, t.correct[in_group].sum(axis=0, keepdims=True),
                             t.wrong[in_group].sum(axis=0, keepdims=True),
                             cfg.scoring.interval, few)
            rows.append(AttributeLevel(
                name=name, n_items=int(sel.sum()), group=_at(group, 0),
                participants={code: _at(own, p) for p, code in enumerate(rnd.participants)},
                merged=merged))
        out.append(AttributeBreakdown(attribute, tuple(rows), min_items, withheld))
    return tuple(out)
