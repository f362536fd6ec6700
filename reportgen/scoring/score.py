"""Score a validated round: every measure of docs/design.md §3 for every participant and the group.

Steps: (1) outcome masks over the participants x items matrices; (2) count tables per participant
(by truth class, by confidence level); (3) the metrics, computed on whole arrays by
:mod:`reportgen.metrics`; (4) pre-announced criteria; (5) item analysis and group summaries.
No Python loop runs over items; loops over participants only assemble result objects.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Literal

import numpy as np
import numpy.typing as npt
from scipy import special

from reportgen.catalogue import INTERVAL_LEVEL, KNOWN_METRICS, METRIC_NAMES
from reportgen.metrics.calibration import calibration
from reportgen.metrics.insight import conf_gap, gamma_correct_confidence, type2_auroc
from reportgen.metrics.insight import reason as insight_reason
from reportgen.metrics.proportions import proportion_ci
from reportgen.metrics.sdt import rating_auc, sdt_loglinear
from reportgen.metrics.uncertainty import hanley_mcneil_se, mean_difference
from reportgen.results import reasons
from reportgen.results.model import (
    Distribution,
    GroupResult,
    LevelRow,
    ParticipantResult,
    RoundResults,
)
from reportgen.rounds.model import Round
from reportgen.scoring.breakdown import breakdowns
from reportgen.scoring.columns import Column, Tables, counts, masks, submission_counts, tables
from reportgen.scoring.criteria import judge
from reportgen.scoring.group_views import ability_groups, ideal_curve, self_estimate_view
from reportgen.scoring.items import item_results
from reportgen.scoring.metacognition import insight_columns
from reportgen.scoring.raw_values import scale_columns
from reportgen.scoring.scale import (
    bin_forecasts,
    binned,
    conclusion_rows,
    level_probabilities,
    strength_counts,
)
from reportgen.settings import Settings

__all__ = ["KNOWN_METRICS", "METRIC_NAMES", "score_round"]

Array = npt.NDArray[np.float64]
Z = float(special.ndtri(0.5 + INTERVAL_LEVEL / 2))
"""z of the two-sided interval level (1.959964 for 95 %)."""



def _rate(k: npt.ArrayLike, n: npt.ArrayLike, method: str, reason: str) -> Column:
    ci = proportion_ci(k, n, method=method)  # type: ignore[arg-type]
    return Column(ci.estimate, ci.low, ci.high, reason=reason)


def rate_columns(c: Mapping[str, npt.NDArray[np.int64]], method: str) -> dict[str, Column]:
    """Accuracy over all items (an unanswered item is not right); the error rates by class over
    the answered items of the class (unanswered counts are kept beside them)."""
    conclusive = c["answered"] - c["inconclusive"]
    return {
        "accuracy": _rate(c["correct"], c["items"], method, "no items"),
        "answered_accuracy": _rate(c["correct"], c["answered"], method, "no items answered"),
        "error_rate": _rate(c["errors"], c["items"], method, "no items"),
        "decisive_accuracy": _rate(c["correct"], conclusive, method, "no conclusive answers"),
        "false_positive_rate": _rate(c["false_positives"],
                                     c["n_different"] - c["missing_different"], method,
                                     "no different-source items answered"),
        "false_negative_rate": _rate(c["false_negatives"], c["n_same"] - c["missing_same"],
                                     method, "no same-source items answered"),
        "inconclusive_rate": _rate(c["inconclusive"], c["items"], method, "no items"),
    }


def sdt_columns(c: Mapping[str, npt.NDArray[np.int64]], t: Tables) -> dict[str, Column]:
    """d′ and c on conclusive answers with the log-linear rule (Hautus 1995), and the ROC area."""
    hits = c["correct_same"]
    n_signal = c["correct_same"] + c["false_negatives"]
    fas = c["false_positives"]
    n_noise = c["correct_different"] + c["false_positives"]
    sdt = sdt_loglinear(hits, n_signal, fas, n_noise)
    reason = "needs conclusive answers on both same- and different-source items"
    se = sdt.d_prime_se
    # Rating ROC: conclusive answers by rating, with inconclusives as the middle category.
    half = t.rating_noise.shape[1] // 2
    noise = np.concatenate([t.rating_noise[:, :half], t.inconclusive_by_truth[:, :1],
                            t.rating_noise[:, half:]], axis=1)
    signal = np.concatenate([t.rating_signal[:, :half], t.inconclusive_by_truth[:, 1:],
                             t.rating_signal[:, half:]], axis=1)
    auc = rating_auc(noise, signal)
    auc_se = hanley_mcneil_se(auc, signal.sum(axis=1), noise.sum(axis=1))
    return {
        "hit_rate": Column(sdt.hit_rate, reason=reason),
        "false_alarm_rate": Column(sdt.fa_rate, reason=reason),
        "d_prime": Column(sdt.d_prime, sdt.d_prime - Z * se, sdt.d_prime + Z * se,
                          reason=reason),
        "criterion": Column(sdt.criterion, reason=reason),
        "auc": Column(auc, np.clip(auc - Z * auc_se, 0, 1), np.clip(auc + Z * auc_se, 0, 1),
                      reason="needs answers on both same- and different-source items"),
    }


def confidence_columns(t: Tables, levels: Array, few_errors: int) -> dict[str, Column]:
    """Insight from confidence on conclusive answers (docs/design.md §3); estimates resting on
    fewer than ``few_errors`` errors carry the note "few errors: unstable"."""
    def mean(counts: Array) -> Array:
        with np.errstate(divide="ignore", invalid="ignore"):
            result: Array = (counts * levels).sum(axis=1) / counts.sum(axis=1)
        return result

    gap = mean_difference(levels, t.correct, t.wrong)
    n_right, n_wrong = t.correct.sum(axis=1), t.wrong.sum(axis=1)
    few = [reasons.FEW_ERRORS if n < few_errors else None for n in n_wrong]
    auroc2 = type2_auroc(t.correct, t.wrong)
    se2 = hanley_mcneil_se(auroc2, n_right, n_wrong)
    gap_value = conf_gap(t.correct, t.wrong, levels)
    gamma = gamma_correct_confidence(t.correct, t.wrong)

    def notes(metric: Literal["type2_auroc", "gamma", "conf_gap"]) -> tuple[str | None, ...]:
        why = insight_reason(t.correct, t.wrong, metric)
        return tuple(w if w is not None else f for w, f in zip(why, few, strict=True))

    return {
        "mean_confidence_correct": Column(mean(t.correct), reason="no correct answers"),
        "mean_confidence_wrong": Column(mean(t.wrong), reason="no errors"),
        "mean_confidence_inconclusive": Column(mean(t.inconclusive),
                                               reason="no inconclusive answers"),
        "conf_gap": Column(gap_value, gap.low, gap.high, notes=notes("conf_gap")),
        "type2_auroc": Column(auroc2, np.clip(auroc2 - Z * se2, 0, 1),
                              np.clip(auroc2 + Z * se2, 0, 1), notes=notes("type2_auroc")),
        "gamma": Column(gamma, notes=notes("gamma")),
    }


def probabilities(rnd: Round, levels: Array) -> Array | None:
    """Confidence levels read as probabilities of being right, when calibration applies."""
    return level_probabilities(rnd, levels)


def calibration_columns(t: Tables, probs: Array) -> dict[str, Column]:
    cal = calibration(probs, t.correct, t.wrong)
    reason = "no conclusive answers"
    return {
        "overconfidence": Column(cal.overconfidence, reason=reason),
        "brier": Column(cal.brier, reason=reason),
        "brier_reliability": Column(cal.reliability, reason=reason),
        "brier_resolution": Column(cal.resolution, reason=reason),
        "brier_uncertainty": Column(cal.uncertainty, reason=reason),
        "ece": Column(cal.ece, reason=reason),
    }


def _levels(t: Tables, p: int | None, levels: Array, probs: Array | None,
            group: npt.NDArray[np.bool_] | None = None) -> tuple[LevelRow, ...]:
    def row(arr: Array, k: int) -> int:
        if p is None:
            return int(arr[:, k].sum() if group is None else arr[group, k].sum())
        return int(arr[p, k])

    return tuple(
        LevelRow(
            level=float(levels[k]),
            correct=row(t.correct, k),
            wrong=row(t.wrong, k),
            inconclusive=row(t.inconclusive, k),
            probability=None if probs is None else float(probs[k]),
        )
        for k in range(levels.size)
    )


def _distribution(values: Array) -> Distribution:
    v = values[np.isfinite(values)]
    if v.size == 0:
        return Distribution(0, None, None, None, None, None, None, None)
    q1, med, q3 = np.percentile(v, [25, 50, 75])
    return Distribution(
        n=int(v.size), mean=float(v.mean()), sd=float(v.std(ddof=1)) if v.size > 1 else None,
        minimum=float(v.min()), q1=float(q1), median=float(med), q3=float(q3),
        maximum=float(v.max()),
    )


def score_round(rnd: Round, settings: Settings) -> RoundResults:
    """Every measure of docs/design.md §3 for each participant of ``rnd``, the items, the group."""
    cfg = rnd.config
    m = masks(rnd)
    t = tables(m)
    c = counts(m, cfg.scoring.inconclusive_is_error)
    c.update(submission_counts(c, cfg.scoring.min_answered))
    in_group = c["in_group"] == 1  # incomplete submissions stay out of the group statistics
    by_strength = strength_counts(rnd, m.wrong, m.said_pos)  # graded scales only
    c.update(by_strength)
    columns: dict[str, Column] = {}
    columns.update(rate_columns(c, cfg.scoring.interval))
    columns.update(sdt_columns(c, t))
    columns.update(confidence_columns(t, m.levels, cfg.scoring.few_errors))
    columns.update(insight_columns(t, m.levels, cfg.scoring, settings.report.bootstrap,
                                   rnd.participants))
    probs = probabilities(rnd, m.levels)
    if probs is not None and not binned(rnd):
        columns.update(calibration_columns(t, probs))
    columns.update(scale_columns(rnd, m, cfg.scoring.few_errors))  # raw values, graded scales
    columns = {name: columns[name] for name in METRIC_NAMES if name in columns}

    values = {name: col.value for name, col in columns.items()}
    values.update({name: arr.astype(float) for name, arr in c.items()})
    verdicts = judge(cfg.criteria, values, in_group)

    conclusions, group_conclusions = conclusion_rows(rnd)
    participants = tuple(
        ParticipantResult(
            code=code,
            row=p,
            counts={name: int(arr[p]) for name, arr in c.items()},
            metrics={name: col.metric(p) for name, col in columns.items()},
            levels=_levels(t, p, m.levels, probs),
            criteria=verdicts.outcomes[p],
            overall=verdicts.overall[p],
            rating_noise=tuple(int(x) for x in t.rating_noise[p]),
            rating_signal=tuple(int(x) for x in t.rating_signal[p]),
            conclusions=conclusions[p],
        )
        for p, code in enumerate(rnd.participants)
    )
    view, view_note = self_estimate_view(
        rnd, columns, t, bin_forecasts(rnd, m.correct | m.wrong, m.level, m.levels.size)
        if binned(rnd) else probs, in_group)
    group = GroupResult(
        n_participants=rnd.n_participants,
        distributions={name: _distribution(col.value[in_group])
                       for name, col in columns.items()},
        criteria_counts=verdicts.counts,
        overall_counts=verdicts.overall_counts,
        robust=verdicts.robust,
        error_types={name: int(c[name][in_group].sum()) for name in (
            "false_positives", "false_negatives", "inconclusive_same", "inconclusive_different",
            "correct_same", "correct_different", "n_same", "n_different", "missing")}
        | {name: int(arr[in_group].sum()) for name, arr in by_strength.items()},
        levels=_levels(t, None, m.levels, probs, in_group),
        self_estimates=view,
        self_estimates_note=view_note,
        ability_groups=ability_groups(columns, in_group),
        ideal_curve=ideal_curve(m.levels.size),
        conclusions=group_conclusions,
    )
    return RoundResults(rnd, participants, item_results(rnd, m, columns["accuracy"].value), group,
                        breakdowns(rnd, m, in_group, settings.report.min_group_size))
