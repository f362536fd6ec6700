"""Metacognitive insight: does confidence separate right answers from wrong ones?

Conclusive answers only (docs/design.md §3). Inputs are counts by confidence level on the last axis,
ordered low → high confidence; ``correct_counts`` and ``wrong_counts`` have shape (..., K).

References: Fleming & Lau (2014), *Front Hum Neurosci* 8:443 (type-2 ROC);
Goodman & Kruskal (1954), *JASA* 49:732 and Nelson (1984), *Psych Bull* 95:109 (gamma).
"""

from __future__ import annotations

from typing import Literal

import numpy as np
import numpy.typing as npt

from reportgen.metrics.sdt import rating_auc

FloatArray = npt.NDArray[np.float64]
ObjectArray = npt.NDArray[np.object_]
InsightMetric = Literal["type2_auroc", "gamma", "conf_gap"]


def _pair(
    correct_counts: npt.ArrayLike, wrong_counts: npt.ArrayLike
) -> tuple[FloatArray, FloatArray]:
    correct = np.asarray(correct_counts, dtype=np.float64)
    wrong = np.asarray(wrong_counts, dtype=np.float64)
    correct, wrong = np.broadcast_arrays(correct, wrong)
    if correct.ndim == 0 or np.any(correct < 0) or np.any(wrong < 0):
        raise ValueError("need non-negative counts with confidence levels on the last axis")
    return correct, wrong


def type2_auroc(
    correct_counts: npt.ArrayLike, wrong_counts: npt.ArrayLike, pad: float = 0.0
) -> FloatArray:
    """Type-2 AUROC: the area under the ROC of confidence for correct versus wrong answers.

    Fleming & Lau (2014), computed from the raw counts (``pad=0``), so it equals the
    Mann–Whitney probability that a correct answer carries higher confidence than a wrong one,
    ties counted ½::

        AUROC2 = P(conf_correct > conf_wrong) + ½ P(conf_correct = conf_wrong)

    ``pad`` is added to every cell first (the authors' code adds 0.5); the product uses 0.
    NaN where there are no correct or no wrong answers (see :func:`reason`).
    """
    correct, wrong = _pair(correct_counts, wrong_counts)
    missing = (np.sum(correct, axis=-1) == 0) | (np.sum(wrong, axis=-1) == 0)
    auc = rating_auc(wrong + pad, correct + pad)
    return np.asarray(np.where(missing, np.nan, auc), dtype=np.float64)


def concordance(table: npt.ArrayLike) -> tuple[FloatArray, FloatArray]:
    """Concordant and discordant pair counts (C, D) of a table (..., R, C) of ordered categories.

    C = Σ t_ij · Σ_{i'>i, j'>j} t_i'j'  and  D = Σ t_ij · Σ_{i'>i, j'<j} t_i'j'.
    """
    t = np.asarray(table, dtype=np.float64)
    if t.ndim < 2 or np.any(t < 0):
        raise ValueError("need a non-negative table with rows and columns on the last two axes")
    # Strictly-below-and-right and strictly-below-and-left sums by 2-D cumulative sums.
    below = np.flip(np.cumsum(np.flip(t, axis=-2), axis=-2), axis=-2) - t  # rows i' > i
    right = np.flip(np.cumsum(np.flip(below, axis=-1), axis=-1), axis=-1) - below  # j' > j
    left = np.cumsum(below, axis=-1) - below  # j' < j
    c = np.sum(t * right, axis=(-2, -1))
    d = np.sum(t * left, axis=(-2, -1))
    return np.asarray(c, dtype=np.float64), np.asarray(d, dtype=np.float64)


def goodman_kruskal_gamma(table: npt.ArrayLike) -> FloatArray:
    """Goodman–Kruskal gamma of a table (..., R, C) with ordered rows and ordered columns.

    gamma = (C − D) / (C + D), C and D the concordant and discordant pair counts (pairs tied on
    either variable are ignored; Goodman & Kruskal 1954; used for confidence–accuracy by
    Nelson 1984). NaN where C + D = 0.
    """
    c, d = concordance(table)
    total = c + d
    with np.errstate(divide="ignore", invalid="ignore"):
        gamma = (c - d) / total
    return np.asarray(np.where(total == 0, np.nan, gamma), dtype=np.float64)


def gamma_correct_confidence(
    correct_counts: npt.ArrayLike, wrong_counts: npt.ArrayLike
) -> FloatArray:
    """Gamma between accuracy and confidence: the 2 × K table, wrong row first, correct second.

    Positive when higher confidence goes with being right (Nelson 1984). NaN when there are no
    correct or no wrong answers, or all conclusive answers share one confidence level.
    """
    correct, wrong = _pair(correct_counts, wrong_counts)
    return goodman_kruskal_gamma(np.stack([wrong, correct], axis=-2))


def conf_gap(
    correct_counts: npt.ArrayLike, wrong_counts: npt.ArrayLike, levels: npt.ArrayLike
) -> FloatArray:
    """Mean confidence when correct minus mean confidence when wrong.

    conf_gap = Σ_k c_k v_k / Σ_k c_k − Σ_k w_k v_k / Σ_k w_k, with v the (K,) level values.
    NaN where there are no correct or no wrong answers.
    """
    correct, wrong = _pair(correct_counts, wrong_counts)
    values = np.asarray(levels, dtype=np.float64)
    if values.shape != correct.shape[-1:]:
        raise ValueError(f"levels has shape {values.shape}, counts have {correct.shape[-1]} levels")
    n_correct = np.sum(correct, axis=-1)
    n_wrong = np.sum(wrong, axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        # Sums of products, not matmul, so a row's result does not depend on the batch.
        gap = (
            np.sum(correct * values, axis=-1) / n_correct
            - np.sum(wrong * values, axis=-1) / n_wrong
        )
    missing = (n_correct == 0) | (n_wrong == 0)
    return np.asarray(np.where(missing, np.nan, gap), dtype=np.float64)


def reason(
    correct_counts: npt.ArrayLike, wrong_counts: npt.ArrayLike, metric: InsightMetric
) -> ObjectArray:
    """Why an insight metric is NaN, else None. Checked in this order:

    "no conclusive answers", "no errors", "no correct answers", and for ``gamma`` only
    "only one confidence level used" (then every pair is tied on confidence: C + D = 0).
    With one level used, ``type2_auroc`` is 0.5 and ``conf_gap`` is 0: estimable, uninformative.
    """
    correct, wrong = _pair(correct_counts, wrong_counts)
    n_correct = np.sum(correct, axis=-1)
    n_wrong = np.sum(wrong, axis=-1)
    out = np.full(n_correct.shape, None, dtype=object)
    if metric == "gamma":
        out[np.sum((correct + wrong) > 0, axis=-1) == 1] = "only one confidence level used"
    out[n_correct == 0] = "no correct answers"
    out[n_wrong == 0] = "no errors"
    out[(n_correct + n_wrong) == 0] = "no conclusive answers"
    return out
