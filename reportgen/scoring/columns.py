"""Per-participant count tables and metric columns: the arrays every scoring step shares.

A :class:`Column` holds one metric over all participants (values, interval bounds, notes);
:class:`Masks` and :class:`Tables` are the outcome masks and count tables built once per round.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from reportgen.results.model import Metric
from reportgen.rounds.model import ABSTAINED, SAID_NEGATIVE, SAID_POSITIVE, Round
from reportgen.scoring.scale import rating_levels

Array = npt.NDArray[np.float64]
Counts = Mapping[str, npt.NDArray[np.int64]]


@dataclass(frozen=True)
class Column:
    """One metric over all participants: values, interval bounds, and a note per participant."""

    value: Array
    low: Array | None = None
    high: Array | None = None
    notes: tuple[str | None, ...] | None = None
    reason: str = "not estimable"  # the note where ``value`` is NaN and no note is given

    def metric(self, p: int) -> Metric:
        v = float(self.value[p])
        note = self.notes[p] if self.notes is not None else None
        if not np.isfinite(v):
            return Metric(None, note=note or self.reason)
        return Metric(v, _finite(self.low, p), _finite(self.high, p), note)


def _finite(arr: Array | None, p: int) -> float | None:
    if arr is None or not np.isfinite(arr[p]):
        return None
    return float(arr[p])


@dataclass(frozen=True)
class Masks:
    """Boolean participants x items masks of what each answer was."""

    said_pos: npt.NDArray[np.bool_]
    said_neg: npt.NDArray[np.bool_]
    abstain: npt.NDArray[np.bool_]
    missing: npt.NDArray[np.bool_]
    truth_pos: npt.NDArray[np.bool_]  # (1, I)
    correct: npt.NDArray[np.bool_]
    wrong: npt.NDArray[np.bool_]
    level: npt.NDArray[np.intp]  # index into ``levels`` (0 where confidence is missing)
    levels: Array  # the distinct confidence values, ascending


def masks(rnd: Round) -> Masks:
    dec = rnd.decision
    truth_pos = (rnd.truth == 1)[None, :]
    said_pos, said_neg = dec == SAID_POSITIVE, dec == SAID_NEGATIVE
    correct = (said_pos & truth_pos) | (said_neg & ~truth_pos)
    wrong = (said_pos & ~truth_pos) | (said_neg & truth_pos)
    level, levels = rating_levels(rnd)  # ordinal values, strengths or bins
    return Masks(said_pos, said_neg, dec == ABSTAINED, dec < 0, truth_pos, correct, wrong,
                 level, levels)


def _by_level(mask: npt.NDArray[np.bool_], level: npt.NDArray[np.intp], k: int) -> Array:
    """Counts per participant and confidence level of the answers in ``mask``: shape (P, K)."""
    p_idx = np.broadcast_to(np.arange(mask.shape[0])[:, None], mask.shape)
    flat = (p_idx * k + level)[mask]
    return np.bincount(flat, minlength=mask.shape[0] * k).reshape(mask.shape[0], k).astype(float)


@dataclass(frozen=True)
class Tables:
    """Per-participant count tables by confidence level."""

    correct: Array  # (P, K) conclusive and correct
    wrong: Array  # (P, K) conclusive and wrong
    inconclusive: Array  # (P, K)
    rating_noise: Array  # (P, 2K): different-source items, "sure different" ... "sure same"
    rating_signal: Array  # (P, 2K): same-source items
    inconclusive_by_truth: Array  # (P, 2): [different-source, same-source]


def tables(m: Masks) -> Tables:
    k = m.levels.size
    def by_level(mask: npt.NDArray[np.bool_]) -> Array:
        return _by_level(mask, m.level, k)

    noise, signal = ~m.truth_pos, m.truth_pos
    rating_noise = np.concatenate(
        [by_level(m.said_neg & noise)[:, ::-1], by_level(m.said_pos & noise)], axis=1)
    rating_signal = np.concatenate(
        [by_level(m.said_neg & signal)[:, ::-1], by_level(m.said_pos & signal)], axis=1)
    inc = np.stack([(m.abstain & noise).sum(axis=1), (m.abstain & signal).sum(axis=1)], axis=1)
    return Tables(
        correct=by_level(m.correct),
        wrong=by_level(m.wrong),
        inconclusive=by_level(m.abstain),
        rating_noise=rating_noise,
        rating_signal=rating_signal,
        inconclusive_by_truth=inc.astype(float),
    )


def counts(m: Masks, inconclusive_is_error: bool) -> dict[str, npt.NDArray[np.int64]]:
    n_items = m.correct.shape[1]
    pos = np.broadcast_to(m.truth_pos, m.correct.shape)
    c = {
        "items": np.full(m.correct.shape[0], n_items, dtype=np.int64),
        "answered": (~m.missing).sum(axis=1),
        "correct": m.correct.sum(axis=1),
        "errors": m.wrong.sum(axis=1) + (m.abstain.sum(axis=1) if inconclusive_is_error else 0),
        "inconclusive": m.abstain.sum(axis=1),
        "missing": m.missing.sum(axis=1),
        "missing_same": (m.missing & pos).sum(axis=1),
        "missing_different": (m.missing & ~pos).sum(axis=1),
        "n_same": pos.sum(axis=1),
        "n_different": (~pos).sum(axis=1),
        "correct_same": (m.correct & pos).sum(axis=1),
        "correct_different": (m.correct & ~pos).sum(axis=1),
        "false_positives": (m.said_pos & ~pos).sum(axis=1),
        "false_negatives": (m.said_neg & pos).sum(axis=1),
        "inconclusive_same": (m.abstain & pos).sum(axis=1),
        "inconclusive_different": (m.abstain & ~pos).sum(axis=1),
    }
    return {k: np.asarray(v, dtype=np.int64) for k, v in c.items()}


def submission_counts(c: Counts, min_answered: float) -> dict[str, npt.NDArray[np.int64]]:
    """Partial submissions: items and items answered, ``complete`` (1 when every item was
    answered) and ``in_group`` (1 when at least ``min_answered`` of the items were answered, so
    the participant counts in the group statistics)."""
    n_items, answered = c["items"], c["answered"]
    return {
        "n_items": n_items.copy(),
        "n_answered": answered.copy(),
        "complete": (answered == n_items).astype(np.int64),
        "in_group": (answered >= min_answered * n_items - 1e-9).astype(np.int64),
    }
