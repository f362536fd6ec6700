"""The response scale as scoring uses it: levels, bins, strengths (docs/round-format.md,
"Response scales"; docs/design.md §3).

Three shapes of scale reach scoring:

* **ordinal confidence** ``min..max`` (at most 20 levels): each value is a level (as before);
* **graded conclusions** (``[decisions]`` labels with a strength) without a confidence column:
  the strength 1..S of the conclusion is the confidence level; the rating scale of the ROC runs
  "different, strongest" ... inconclusive ... "same, strongest";
* **binned** scales (``kind = "probability"``, or ``bins`` declared): the measures that need levels
  (meta-d′, rating ROC, calibration table, ECE) use the bins (left-closed, the last closed on both
  sides, as ``numpy.histogram``); the measures defined on raw values (mean confidence, confidence
  gap, type-2 ROC area, gamma, Brier and its parts, over/underconfidence) use the raw values
  (:func:`raw_value_columns`).

Errors by strength (:func:`strength_counts`) and the conclusions-by-true-class table
(:func:`conclusion_rows`) apply to graded conclusion scales.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import numpy.typing as npt

from reportgen.metrics.binning import bin_index, counts_by_code
from reportgen.results.model import ConclusionRow
from reportgen.rounds.model import Round
from reportgen.rounds.schema import ABSTAIN, ERRORS_AT_STRENGTH, STRONGEST_ERRORS, RoundConfig

Array = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.intp]
BoolArray = npt.NDArray[np.bool_]

__all__ = ["as_probability", "bin_forecasts", "binned", "calibration_applies",
           "conclusion_rows", "forecast_sums", "level_probabilities", "rating_levels",
           "scale_order", "strength_counts", "strength_matrix"]


def binned(rnd: Round) -> bool:
    """The level measures use bins of the raw values (not the values themselves)."""
    return not rnd.strength_is_confidence and rnd.config.confidence.binned


def rating_levels(rnd: Round) -> tuple[IntArray, Array]:
    """The level code of every answer (P, I; 0 where there is no confidence) and the value each
    level stands for (K,): the strength, the ordinal value, or a bin's midpoint."""
    cfg, conf = rnd.config, rnd.confidence
    if rnd.strength_is_confidence:
        levels = np.arange(1, cfg.max_strength + 1, dtype=float)
        code = np.where(np.isfinite(conf), conf - 1, 0).astype(np.intp)
        return code, levels
    scale = cfg.confidence
    if binned(rnd):
        edges = np.asarray(scale.edges, dtype=float)
        code = np.maximum(bin_index(conf, edges), 0)
        return code, (edges[:-1] + edges[1:]) / 2
    levels = np.arange(scale.min, scale.max + 1, dtype=float)
    filled = np.where(np.isfinite(conf), conf, levels[0])
    code = np.clip(np.searchsorted(levels, filled), 0, levels.size - 1).astype(np.intp)
    return code, levels


def as_probability(cfg: RoundConfig, values: Array) -> Array | None:
    """Confidence values read as probabilities of being right (column scales), or None."""
    scale = cfg.confidence
    if not scale.calibration_applies:
        return None
    if scale.kind == "probability":
        return values / scale.unit
    return scale.map_low + (values - scale.min) / (scale.max - scale.min) * (1 - scale.map_low)


def level_probabilities(rnd: Round, levels: Array) -> Array | None:
    """The probability of being right each level stands for, when calibration applies: the
    declared probability of each strength, the linear convention of an ordinal scale, or a bin's
    midpoint (a binned scale's calibration itself is on the raw values)."""
    cfg = rnd.config
    if rnd.strength_is_confidence:
        declared = cfg.strength_probabilities
        if declared is None:
            return None
        return np.array([declared.get(int(s), np.nan) for s in levels], dtype=float)
    return as_probability(cfg, levels)


def strength_matrix(rnd: Round) -> npt.NDArray[np.int64]:
    """The strength of every answer's label (P, I); 0 for inconclusive, missing or plain labels."""
    labels, inverse = np.unique(rnd.raw_decision, return_inverse=True)
    lookup = np.array([(g.strength or 0) if (g := rnd.config.decisions.get(str(label)))
                       else 0 for label in labels], dtype=np.int64)
    return lookup[inverse].reshape(rnd.raw_decision.shape)


def _top_strength(rnd: Round, said_pos: BoolArray) -> npt.NDArray[np.int64]:
    """The strongest strength of the class each answer asserts (P, I)."""
    cfg = rnd.config
    tops = {cls: max((g.strength or 0 for g in cfg.decisions.values() if g.target == cls),
                     default=0) for cls in cfg.classes.labels}
    return np.where(said_pos, tops[cfg.classes.positive], tops[cfg.classes.negative])


def strength_counts(rnd: Round, wrong: BoolArray,
                    said_pos: BoolArray) -> dict[str, npt.NDArray[np.int64]]:
    """Conclusive errors at each strength, ``errors_at_strength_1`` ... and ``strongest_errors``
    (errors at the strongest level of the class asserted); empty on an ungraded scale."""
    cfg = rnd.config
    if not cfg.graded:
        return {}
    strength = strength_matrix(rnd)
    out = {f"{ERRORS_AT_STRENGTH}{s}": (wrong & (strength == s)).sum(axis=1)
           for s in range(1, cfg.max_strength + 1)}
    out[STRONGEST_ERRORS] = (wrong & (strength == _top_strength(rnd, said_pos))).sum(axis=1)
    return {k: np.asarray(v, dtype=np.int64) for k, v in out.items()}


def scale_order(cfg: RoundConfig) -> list[str]:
    """The decision labels in the order of the scale: the positive class strongest first, then
    the abstentions, then the negative class weakest first (plain labels by name)."""
    def key(label: str) -> tuple[int, int, str]:
        g = cfg.decisions[label]
        s = g.strength or 0
        if g.target == cfg.classes.positive:
            return (0, -s, label)
        if g.target == ABSTAIN:
            return (1, 0, label)
        return (2, s, label)
    return sorted(cfg.decisions, key=key)


def conclusion_rows(rnd: Round) -> tuple[tuple[tuple[ConclusionRow, ...], ...],
                                         tuple[ConclusionRow, ...]]:
    """Each participant's answers per decision label on same- and different-source items, and
    the group's: every level of a graded scale in the scheme's own words. Empty when ungraded."""
    cfg = rnd.config
    if not cfg.graded:
        return tuple(() for _ in rnd.participants), ()
    order = scale_order(cfg)
    pos = (rnd.truth == 1)[None, :]
    per_label = [(label, rnd.raw_decision == label) for label in order]
    on_same = np.stack([(m & pos).sum(axis=1) for _, m in per_label], axis=1)
    on_diff = np.stack([(m & ~pos).sum(axis=1) for _, m in per_label], axis=1)

    def rows(same: Sequence[int], diff: Sequence[int]) -> tuple[ConclusionRow, ...]:
        return tuple(ConclusionRow(label, cfg.decisions[label].target,
                                   cfg.decisions[label].strength, int(s), int(d))
                     for label, s, d in zip(order, same, diff, strict=True))

    per_participant = tuple(rows(on_same[p], on_diff[p]) for p in range(len(rnd.participants)))
    return per_participant, rows(on_same.sum(axis=0), on_diff.sum(axis=0))


def bin_forecasts(rnd: Round, conclusive: BoolArray, level: IntArray,
                  n_levels: int) -> Array | None:
    """Each participant's mean forecast per bin (P, K; 0 where a bin is empty), so a sum over
    levels weighted by counts gives the mean raw forecast; None without calibration."""
    f_sum = forecast_sums(rnd, conclusive, level, n_levels)
    if f_sum is None:
        return None
    n = counts_by_code(level, conclusive, n_levels)
    return np.divide(f_sum, n, out=np.zeros_like(f_sum), where=n > 0)


def forecast_sums(rnd: Round, conclusive: BoolArray, level: IntArray,
                  n_levels: int) -> Array | None:
    """The sum of the raw forecasts of each participant's conclusive answers per bin (P, K);
    None without calibration."""
    conf = rnd.confidence
    f_answer = as_probability(rnd.config, np.where(conclusive, conf, 0.0))
    if f_answer is None:
        return None
    f_sum = np.zeros((conf.shape[0], n_levels))
    np.add.at(f_sum, (np.nonzero(conclusive)[0], level[conclusive]), f_answer[conclusive])
    return f_sum


def calibration_applies(rnd: Round) -> bool:
    """Confidence is read as a probability of being right: a probability scale, the linear
    convention of an ordinal one, or the declared probabilities of a graded scale's levels."""
    if rnd.strength_is_confidence:
        return rnd.config.strength_probabilities is not None
    return rnd.config.confidence.calibration_applies
