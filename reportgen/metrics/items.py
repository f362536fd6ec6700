"""Item analysis for the group appendix: difficulty, discrimination, items strong performers miss.

Classical test theory (Lord & Novick 1968, *Statistical Theories of Mental Test Scores*; Crocker &
Algina 1986, *Introduction to Classical and Modern Test Theory*, ch. 14): difficulty is the share
answering correctly; discrimination is the corrected item–total (point-biserial) correlation,
i.e. the item is left out of the total it is correlated with (Henrysson 1963, *Psychometrika*
28:211). Flagging items that the strong performers answer against the key is common PT practice
before results are released (a possible key error).

Inputs are participants × items boolean matrices (P, I), optionally with leading axes (..., P, I).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]
ObjectArray = npt.NDArray[np.object_]
ItemField = Literal["difficulty", "discrimination", "inconclusive_rate", "strong_against"]


@dataclass(frozen=True)
class ItemAnalysis:
    """Per-item results, each of shape (..., I); NaN marks "not estimable" (see :meth:`reason`)."""

    answered: IntArray
    n_correct: IntArray
    n_wrong: IntArray
    n_inconclusive: IntArray
    difficulty: FloatArray
    discrimination: FloatArray
    inconclusive_rate: FloatArray
    strong_against: FloatArray
    n_strong_conclusive: IntArray
    flagged: BoolArray

    def reason(self, field: ItemField) -> ObjectArray:
        """Why ``field`` is NaN for an item, else None."""
        out = np.full(self.answered.shape, None, dtype=object)
        if field == "strong_against":
            out[self.n_strong_conclusive == 0] = "no strong participant answered conclusively"
            return out
        if field == "discrimination":
            out[np.isnan(self.discrimination)] = "other items' scores do not vary"
            out[self.n_correct == self.answered] = "every participant who answered was correct"
            out[self.n_correct == 0] = "no participant who answered was correct"
            out[self.answered < 2] = "fewer than two participants answered"
        out[self.answered == 0] = "no participant answered"
        return out


def item_analysis(
    correct: npt.ArrayLike,
    wrong: npt.ArrayLike,
    inconclusive: npt.ArrayLike,
    strong: npt.ArrayLike,
    flag_share: float = 0.5,
    min_strong: int = 3,
) -> ItemAnalysis:
    """Item statistics from (..., P, I) boolean matrices; ``strong`` is (..., P).

    A participant answered item i when exactly one of correct / wrong / inconclusive is True
    (all False means missing; more than one True raises ValueError). Over items:

    * difficulty = n_correct / answered; inconclusive_rate = n_inconclusive / answered;
    * discrimination = Pearson correlation, over the participants who answered item i, between
      x_pi = 1 if correct on i else 0 and the rest score r_pi = (Σ_j x_pj − x_pi) / (I − 1), the
      proportion correct on the other items (missing counts as not correct). Computed exactly
      from integer sums: (n Σxr − Σx Σr) / sqrt((n Σx² − (Σx)²)(n Σr² − (Σr)²)); NaN when
      either variable is constant;
    * strong_against = (strong participants wrong on i) / (strong participants conclusive on i);
    * flagged = strong_against ≥ ``flag_share`` and at least ``min_strong`` strong participants
      answered i conclusively.
    """
    c = np.asarray(correct, dtype=bool)
    w = np.asarray(wrong, dtype=bool)
    u = np.asarray(inconclusive, dtype=bool)
    s = np.asarray(strong, dtype=bool)
    c, w, u = np.broadcast_arrays(c, w, u)
    if c.ndim < 2 or s.shape != c.shape[:-1]:
        raise ValueError(f"need (..., P, I) answers and (..., P) strong; got {c.shape}, {s.shape}")
    x = c.astype(np.float64)
    a = x + w + u
    if np.any(a > 1):
        raise ValueError("an answer is marked as more than one of correct / wrong / inconclusive")

    answered = np.sum(a, axis=-2)
    n_correct = np.sum(x, axis=-2)
    n_wrong = np.sum(w, axis=-2)
    n_inconclusive = np.sum(u, axis=-2)
    safe = np.where(answered == 0, 1.0, answered)
    difficulty = np.where(answered == 0, np.nan, n_correct / safe)
    inconclusive_rate = np.where(answered == 0, np.nan, n_inconclusive / safe)

    # Rest scores as integer counts (dividing by I − 1 does not change a correlation).
    rest = np.sum(x, axis=-1, keepdims=True) - x
    s_r = np.sum(a * rest, axis=-2)
    s_rr = np.sum(a * rest**2, axis=-2)
    s_xr = np.sum(x * rest, axis=-2)
    var_x = answered * n_correct - n_correct**2
    var_r = answered * s_rr - s_r**2
    denominator = var_x * var_r
    constant = denominator <= 0
    discrimination = np.where(
        constant,
        np.nan,
        (answered * s_xr - n_correct * s_r) / np.sqrt(np.where(constant, 1.0, denominator)),
    )

    sf = s.astype(np.float64)
    strong_wrong = np.einsum("...p,...pi->...i", sf, w.astype(np.float64))
    strong_conclusive = np.einsum("...p,...pi->...i", sf, (x + w))
    none_strong = strong_conclusive == 0
    strong_against = np.where(
        none_strong, np.nan, strong_wrong / np.where(none_strong, 1.0, strong_conclusive)
    )
    flagged = (strong_conclusive >= min_strong) & (strong_against >= flag_share)

    return ItemAnalysis(
        answered=answered.astype(np.int64),
        n_correct=n_correct.astype(np.int64),
        n_wrong=n_wrong.astype(np.int64),
        n_inconclusive=n_inconclusive.astype(np.int64),
        difficulty=np.asarray(difficulty, dtype=np.float64),
        discrimination=np.asarray(discrimination, dtype=np.float64),
        inconclusive_rate=np.asarray(inconclusive_rate, dtype=np.float64),
        strong_against=np.asarray(strong_against, dtype=np.float64),
        n_strong_conclusive=strong_conclusive.astype(np.int64),
        flagged=np.asarray(flagged, dtype=np.bool_),
    )
