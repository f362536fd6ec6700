"""Judge every participant against the criteria announced before the round (round.toml).

A ``bound`` rule is met or not met; a ``z`` rule classes the participant's robust z-score in the
group (ISO 13528 Algorithm A; |z| <= 2 satisfactory, 2 < |z| < 3 questionable, |z| >= 3
unsatisfactory) and only a deviation on the ``worse`` side counts against the participant.
A rule whose metric is not estimable for a participant is "not assessable", never silently met.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from reportgen.metrics.robust import MIN_GROUP, algorithm_a, classify_z, z_scores
from reportgen.results import reasons
from reportgen.results.model import CriterionOutcome, Outcome, Overall
from reportgen.rounds.schema import Criterion

Array = npt.NDArray[np.float64]
PASSING: frozenset[str] = frozenset({"met", "satisfactory", "questionable"})


@dataclass(frozen=True)
class Verdicts:
    outcomes: tuple[tuple[CriterionOutcome, ...], ...]  # per participant, per criterion
    overall: tuple[Overall, ...]
    counts: Mapping[str, Mapping[str, int]]
    overall_counts: Mapping[str, int]
    robust: Mapping[str, tuple[float, float]]


def _not_estimable(rule: Criterion) -> CriterionOutcome:
    return CriterionOutcome(rule.id, rule.label, rule.metric, None, "not assessable",
                            reason=reasons.NOT_ESTIMABLE)


def _bound(rule: Criterion, values: Array) -> list[CriterionOutcome]:
    out = []
    for v in values:
        if not np.isfinite(v):
            out.append(_not_estimable(rule))
            continue
        ok_low = rule.at_least is None or v >= rule.at_least
        ok_high = rule.at_most is None or v <= rule.at_most
        outcome: Outcome = "met" if ok_low and ok_high else "not met"
        out.append(CriterionOutcome(rule.id, rule.label, rule.metric, float(v), outcome))
    return out


def _z(rule: Criterion, values: Array, in_group: npt.NDArray[np.bool_] | None = None
       ) -> tuple[list[CriterionOutcome], tuple[float, float]]:
    usable = np.isfinite(values) if in_group is None else np.isfinite(values) & in_group
    finite = values[usable]
    est = algorithm_a(finite) if finite.size >= MIN_GROUP else None
    if est is None or not est.sd > 0:
        why = reasons.FEW_IN_GROUP if est is None else reasons.ROBUST_SD_ZERO
        return ([CriterionOutcome(rule.id, rule.label, rule.metric,
                                  float(v) if np.isfinite(v) else None, "not assessable",
                                  reason=why)
                 for v in values], (float("nan"), float("nan")))
    z = z_scores(values, est.mean, est.sd)
    classes = classify_z(z)
    out = []
    for v, zi, cls in zip(values, z, classes, strict=True):
        if not np.isfinite(zi):
            out.append(_not_estimable(rule))
            continue
        better_side = zi > 0 if rule.worse == "low" else zi < 0
        outcome: Outcome = "satisfactory" if better_side else str(cls)  # type: ignore[assignment]
        out.append(CriterionOutcome(rule.id, rule.label, rule.metric, float(v), outcome,
                                    z=float(zi)))
    return out, (float(est.mean), float(est.sd))


def judge(rules: Sequence[Criterion], values: Mapping[str, Array],
          in_group: npt.NDArray[np.bool_] | None = None) -> Verdicts:
    """Every participant's outcome on every rule, the overall statement, and the group counts.
    A z rule's x* and s* come from the participants ``in_group`` only (all by default); every
    participant is then placed against them."""
    n = len(next(iter(values.values())))
    per_rule: list[list[CriterionOutcome]] = []
    robust: dict[str, tuple[float, float]] = {}
    for rule in rules:
        vals = np.asarray(values[rule.metric], dtype=float)
        if rule.kind == "z":
            outcomes, robust[rule.metric] = _z(rule, vals, in_group)
        else:
            outcomes = _bound(rule, vals)
        per_rule.append(outcomes)
    by_participant = tuple(tuple(r[p] for r in per_rule) for p in range(n))
    overall: tuple[Overall, ...] = tuple(
        "no criteria announced" if not rules
        else "all criteria met" if all(o.outcome in PASSING for o in outs)
        else "not all criteria met"
        for outs in by_participant
    )
    counts: dict[str, dict[str, int]] = {
        rule.id: dict(sorted(Counter[str](o.outcome for o in outcomes).items()))
        for rule, outcomes in zip(rules, per_rule, strict=True)
    }
    return Verdicts(
        outcomes=by_participant,
        overall=overall,
        counts=counts,
        overall_counts=dict(sorted(Counter(overall).items())),
        robust=robust,
    )
