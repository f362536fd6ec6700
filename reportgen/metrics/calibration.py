"""Calibration of confidence read as a probability of being right (conclusive answers only).

References: Brier (1950), *Mon Weather Rev* 78:1; Murphy (1973), *J Appl Meteorol* 12:595
(decomposition); Lichtenstein, Fischhoff & Phillips (1982), in Kahneman, Slovic & Tversky (eds.),
*Judgment under Uncertainty*, 306–334 (over/underconfidence); Naeini, Cooper & Hauskrecht (2015),
*AAAI* (expected calibration error).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]
ObjectArray = npt.NDArray[np.object_]


@dataclass(frozen=True)
class CalibrationResult:
    """Calibration indices; scalar fields have the leading shape (...), level fields (..., K).

    NaN where ``n == 0`` (see :meth:`reason`). ``level_accuracy`` is NaN at unused levels.
    """

    overconfidence: FloatArray
    brier: FloatArray
    reliability: FloatArray
    resolution: FloatArray
    uncertainty: FloatArray
    ece: FloatArray
    n: FloatArray
    mean_confidence: FloatArray
    proportion_correct: FloatArray
    level_n: FloatArray
    level_accuracy: FloatArray

    def reason(self, empty: str = "no conclusive answers") -> ObjectArray:
        """``empty`` where nothing is estimable (n == 0), else None."""
        out = np.full(self.n.shape, None, dtype=object)
        out[self.n == 0] = empty
        return out


def calibration(
    probabilities: npt.ArrayLike,
    correct_counts: npt.ArrayLike,
    wrong_counts: npt.ArrayLike,
) -> CalibrationResult:
    """Calibration of forecasts f_k (the (K,) ``probabilities``) given counts by level (..., K).

    With n_k = c_k + w_k answers at level k, N = Σ n_k, ō = Σ c_k / N:

    * overconfidence = Σ n_k f_k / N − ō  (Lichtenstein, Fischhoff & Phillips 1982);
    * brier = Σ_k [c_k (1 − f_k)² + w_k f_k²] / N, exact from the counts (Brier 1950);
    * Murphy (1973) decomposition over the *distinct* forecast values u (levels sharing a
      probability are pooled), o_u = c_u / n_u::

          reliability = Σ_u n_u (f_u − o_u)² / N
          resolution  = Σ_u n_u (o_u − ō)² / N
          uncertainty = ō (1 − ō)              brier = reliability − resolution + uncertainty

      exactly (up to rounding), because each forecast value is its own bin;
    * ece = Σ_u (n_u / N) |f_u − o_u| over the same distinct values.

    Raises ValueError unless every probability lies in [0, 1] and counts are non-negative.
    """
    f = np.asarray(probabilities, dtype=np.float64)
    correct = np.asarray(correct_counts, dtype=np.float64)
    wrong = np.asarray(wrong_counts, dtype=np.float64)
    correct, wrong = np.broadcast_arrays(correct, wrong)
    if f.ndim != 1 or correct.shape[-1:] != f.shape:
        raise ValueError(f"probabilities {f.shape} do not match counts {correct.shape}")
    if not np.all((f >= 0) & (f <= 1)):
        raise ValueError("probabilities must lie in [0, 1]")
    if np.any(correct < 0) or np.any(wrong < 0):
        raise ValueError("counts must be non-negative")

    level_n = correct + wrong
    n = np.sum(level_n, axis=-1)
    empty = n == 0
    safe_n = np.where(empty, 1.0, n)
    # Sums of products rather than matmul: BLAS may round a row differently from a whole matrix,
    # and a participant's numbers must not depend on who else is in the batch.
    mean_f = np.sum(level_n * f, axis=-1) / safe_n
    o_bar = np.sum(correct, axis=-1) / safe_n
    brier = np.sum(correct * (1.0 - f) ** 2 + wrong * f**2, axis=-1) / safe_n

    # Pool levels that share a forecast value: one-hot (K, U) matrix.
    values, inverse = np.unique(f, return_inverse=True)
    pool = (inverse[:, None] == np.arange(values.size)[None, :]).astype(np.float64)
    n_u = level_n @ pool  # integer-valued: exact
    c_u = correct @ pool
    o_u = np.divide(c_u, n_u, out=np.zeros_like(c_u), where=n_u > 0)
    gap_u = np.where(n_u > 0, values - o_u, 0.0)
    reliability = np.sum(n_u * gap_u**2, axis=-1) / safe_n
    resolution = np.sum(n_u * (o_u - o_bar[..., None]) ** 2, axis=-1) / safe_n
    ece = np.sum(n_u * np.abs(gap_u), axis=-1) / safe_n
    level_accuracy = np.divide(
        correct, level_n, out=np.full_like(level_n, np.nan), where=level_n > 0
    )

    def masked(a: npt.ArrayLike) -> FloatArray:
        return np.asarray(np.where(empty, np.nan, a), dtype=np.float64)

    return CalibrationResult(
        overconfidence=masked(mean_f - o_bar),
        brier=masked(brier),
        reliability=masked(reliability),
        resolution=masked(resolution),
        uncertainty=masked(o_bar * (1.0 - o_bar)),
        ece=masked(ece),
        n=np.asarray(n, dtype=np.float64),
        mean_confidence=masked(mean_f),
        proportion_correct=masked(o_bar),
        level_n=np.asarray(level_n, dtype=np.float64),
        level_accuracy=np.asarray(level_accuracy, dtype=np.float64),
    )
