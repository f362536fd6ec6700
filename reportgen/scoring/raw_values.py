"""Metric columns on raw confidence values, for binned scales (docs/design.md §3, "Response
scales").

On a binned scale (``kind = "probability"``, or ``bins`` declared) the measures that are defined
on the values themselves are computed on the raw values, not on the bins: mean confidence, the
confidence gap (Welch interval), the type-2 ROC area (= ``roc_auc_score(correct, confidence)``),
gamma and, where calibration applies, over/underconfidence, the Brier score and its Murphy parts.
The ECE is over the bins. These columns replace the level-based ones of the same names.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
from scipy import special

from reportgen.catalogue import INTERVAL_LEVEL
from reportgen.metrics.binning import counts_by_code, row_levels
from reportgen.metrics.insight import gamma_correct_confidence, type2_auroc
from reportgen.metrics.insight import reason as insight_reason
from reportgen.metrics.raw_confidence import binned_ece, calibration_on_values
from reportgen.metrics.uncertainty import hanley_mcneil_se, mean_difference
from reportgen.results import reasons
from reportgen.rounds.model import Round
from reportgen.scoring.columns import Array, Column, Masks
from reportgen.scoring.scale import as_probability, binned, forecast_sums

__all__ = ["CALIBRATION", "calibration_not_declared", "raw_value_columns", "scale_columns"]

Z = float(special.ndtri(0.5 + INTERVAL_LEVEL / 2))
CALIBRATION = ("overconfidence", "brier", "brier_reliability", "brier_resolution",
               "brier_uncertainty", "ece")
_NO_CONCLUSIVE = "no conclusive answers"


def raw_value_columns(rnd: Round, m: Masks, few_errors: int) -> dict[str, Column]:
    """The raw-value measures of a binned scale, each participant's from their own answers."""
    conf = rnd.confidence
    conclusive = m.correct | m.wrong
    rows = row_levels(conf, conclusive)
    t_right = counts_by_code(rows.codes, m.correct, rows.width)
    t_wrong = counts_by_code(rows.codes, m.wrong, rows.width)
    n_right, n_wrong = t_right.sum(axis=1), t_wrong.sum(axis=1)
    few = [reasons.FEW_ERRORS if n < few_errors else None for n in n_wrong]

    def notes(metric: Literal["type2_auroc", "gamma", "conf_gap"]) -> tuple[str | None, ...]:
        why = insight_reason(t_right, t_wrong, metric)
        return tuple(w if w is not None else f for w, f in zip(why, few, strict=True))

    def mean(mask: np.ndarray) -> Array:
        with np.errstate(divide="ignore", invalid="ignore"):
            out: Array = np.where(mask, conf, 0.0).sum(axis=1) / mask.sum(axis=1)
        return out

    gap = mean_difference(rows.levels, t_right, t_wrong)
    auroc2 = type2_auroc(t_right, t_wrong)
    se2 = hanley_mcneil_se(auroc2, n_right, n_wrong)
    out = {
        "mean_confidence_correct": Column(mean(m.correct), reason="no correct answers"),
        "mean_confidence_wrong": Column(mean(m.wrong), reason=reasons.NO_ERRORS),
        "mean_confidence_inconclusive": Column(mean(m.abstain & np.isfinite(conf)),
                                               reason="no inconclusive answers"),
        "conf_gap": Column(gap.difference, gap.low, gap.high, notes=notes("conf_gap")),
        "type2_auroc": Column(auroc2, np.clip(auroc2 - Z * se2, 0, 1),
                              np.clip(auroc2 + Z * se2, 0, 1), notes=notes("type2_auroc")),
        "gamma": Column(gamma_correct_confidence(t_right, t_wrong), notes=notes("gamma")),
    }
    forecasts = as_probability(rnd.config, rows.levels)
    sums = forecast_sums(rnd, conclusive, m.level, m.levels.size)
    if forecasts is not None and sums is not None:
        raw = calibration_on_values(np.clip(forecasts, 0, 1), t_right, t_wrong)
        ece = binned_ece(sums, counts_by_code(m.level, m.correct, m.levels.size),
                         counts_by_code(m.level, conclusive, m.levels.size))
        for name, value in (("overconfidence", raw.overconfidence), ("brier", raw.brier),
                            ("brier_reliability", raw.reliability),
                            ("brier_resolution", raw.resolution),
                            ("brier_uncertainty", raw.uncertainty), ("ece", ece)):
            out[name] = Column(value, reason=_NO_CONCLUSIVE)
    return out


def calibration_not_declared(n: int) -> dict[str, Column]:
    """Calibration of a graded scale whose levels declare no probability: not estimable, with
    the reason."""
    return {name: Column(np.full(n, np.nan), reason=reasons.NO_LEVEL_PROBABILITY)
            for name in CALIBRATION}


def scale_columns(rnd: Round, m: Masks, few_errors: int) -> dict[str, Column]:
    """What the response scale changes in the columns: the raw-value measures of a binned scale;
    calibration not estimable on a graded scale without declared probabilities; else nothing."""
    if binned(rnd):
        return raw_value_columns(rnd, m, few_errors)
    if rnd.strength_is_confidence and rnd.config.strength_probabilities is None:
        return calibration_not_declared(rnd.n_participants)
    return {}
