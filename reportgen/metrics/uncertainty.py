"""Standard errors and intervals for the ROC areas and for differences of mean confidence.

Vectorised over leading axes, like the rest of :mod:`reportgen.metrics`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy import stats

Array = npt.NDArray[np.float64]


def hanley_mcneil_se(area: npt.ArrayLike, n_pos: npt.ArrayLike, n_neg: npt.ArrayLike) -> Array:
    """Standard error of a ROC area (Hanley & McNeil 1982, *Radiology* 143:29, eq. 1–3).

    SE² = [A(1−A) + (n₁−1)(Q₁−A²) + (n₀−1)(Q₂−A²)] / (n₁ n₀), with Q₁ = A/(2−A) and
    Q₂ = 2A²/(1+A); n₁ counts the positive cases, n₀ the negative ones. NaN where either is 0.
    """
    a = np.asarray(area, dtype=float)
    n1 = np.asarray(n_pos, dtype=float)
    n0 = np.asarray(n_neg, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        q1 = a / (2 - a)
        q2 = 2 * a**2 / (1 + a)
        var = (a * (1 - a) + (n1 - 1) * (q1 - a**2) + (n0 - 1) * (q2 - a**2)) / (n1 * n0)
        se = np.sqrt(np.clip(var, 0, None))
    return np.where((n1 > 0) & (n0 > 0), se, np.nan)


@dataclass(frozen=True)
class MeanDifference:
    """Difference of two means with a Welch 95 % interval (NaN where a group has < 2 values)."""

    difference: Array
    low: Array
    high: Array


def _moments(levels: Array, counts: Array) -> tuple[Array, Array, Array]:
    n = counts.sum(axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        mean = (counts * levels).sum(axis=-1) / n
        var = (counts * (levels - mean[..., None]) ** 2).sum(axis=-1) / (n - 1)
    return n, mean, var


def mean_difference(levels: npt.ArrayLike, counts_a: npt.ArrayLike, counts_b: npt.ArrayLike,
                    level: float = 0.95) -> MeanDifference:
    """Mean of group a − mean of group b from counts by level, with a Welch t interval.

    ``counts_*`` have shape (..., K) over the K values in ``levels``. Welch (1947) degrees of
    freedom by the Welch–Satterthwaite equation; the same as ``scipy.stats.ttest_ind(...,
    equal_var=False).confidence_interval()`` on the expanded data.
    """
    lv = np.asarray(levels, dtype=float)
    na, ma, va = _moments(lv, np.asarray(counts_a, dtype=float))
    nb, mb, vb = _moments(lv, np.asarray(counts_b, dtype=float))
    with np.errstate(divide="ignore", invalid="ignore"):
        sa, sb = va / na, vb / nb
        se = np.sqrt(sa + sb)
        df = (sa + sb) ** 2 / (sa**2 / (na - 1) + sb**2 / (nb - 1))
        t = stats.t.ppf(0.5 + level / 2, df)
        diff = ma - mb
        half = np.where(se == 0, 0.0, t * se)
    ok = (na >= 2) & (nb >= 2)
    return MeanDifference(
        difference=np.where((na > 0) & (nb > 0), diff, np.nan),
        low=np.where(ok, diff - half, np.nan),
        high=np.where(ok, diff + half, np.nan),
    )
