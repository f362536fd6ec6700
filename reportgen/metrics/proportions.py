"""Binomial proportions with a confidence interval.

Every rate carries a 95 % interval (docs/design.md §3).

Two intervals are offered:

* Wilson score interval (Wilson 1927, *JASA* 22:209; recommended by Brown, Cai & DasGupta 2001,
  *Stat Sci* 16:101) — the default;
* Clopper–Pearson "exact" interval (Clopper & Pearson 1934, *Biometrika* 26:404) from beta
  quantiles.

All functions work element-wise on arrays of any shape (e.g. one entry per participant).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
import numpy.typing as npt
from scipy import stats

FloatArray = npt.NDArray[np.float64]
ObjectArray = npt.NDArray[np.object_]
Method = Literal["wilson", "clopper-pearson"]


@dataclass(frozen=True)
class ProportionCI:
    """A proportion k/n with its two-sided interval; every field has the shape of ``k`` and ``n``.

    Where ``n == 0`` all three values are NaN; :meth:`reason` says why.
    """

    estimate: FloatArray
    low: FloatArray
    high: FloatArray
    n: FloatArray

    def reason(self, empty: str = "no observations") -> ObjectArray:
        """``empty`` where the proportion is not estimable (n == 0), else None."""
        out = np.full(self.n.shape, None, dtype=object)
        out[self.n == 0] = empty
        return out


def proportion_ci(
    k: npt.ArrayLike,
    n: npt.ArrayLike,
    method: Method = "wilson",
    level: float = 0.95,
) -> ProportionCI:
    """Proportion ``k / n`` with a two-sided ``level`` interval, element-wise.

    Wilson (score) interval, with z = Φ⁻¹(1 − α/2)::

        centre = (k + z²/2) / (n + z²)
        half   = z / (n + z²) · sqrt(k (n − k) / n + z²/4)

    The bounds are pinned to exactly 0 when k = 0 and exactly 1 when k = n (they are so
    analytically; this removes rounding noise).

    Clopper–Pearson: low = B⁻¹(α/2; k, n − k + 1), high = B⁻¹(1 − α/2; k + 1, n − k), with
    low = 0 when k = 0 and high = 1 when k = n. Matches
    ``scipy.stats.binomtest(k, n).proportion_ci(method="exact")``.

    Raises ValueError unless 0 ≤ k ≤ n and 0 < level < 1.
    """
    kk = np.asarray(k, dtype=np.float64)
    nn = np.asarray(n, dtype=np.float64)
    kk, nn = np.broadcast_arrays(kk, nn)
    if np.any(nn < 0) or np.any(kk < 0) or np.any(kk > nn):
        raise ValueError("proportion_ci needs 0 <= k <= n")
    if not 0.0 < level < 1.0:
        raise ValueError(f"level must lie strictly between 0 and 1, got {level}")
    empty = nn == 0
    safe_n = np.where(empty, 1.0, nn)
    estimate = np.where(empty, np.nan, kk / safe_n)
    alpha = 1.0 - level
    if method == "wilson":
        low, high = _wilson(kk, safe_n, float(stats.norm.ppf(1.0 - alpha / 2.0)))
    elif method == "clopper-pearson":
        low, high = _clopper_pearson(kk, safe_n, alpha)
    else:
        raise ValueError(f"unknown interval method {method!r}")
    low = np.where(kk == 0, 0.0, low)
    high = np.where(kk == nn, 1.0, high)
    return ProportionCI(
        estimate=np.asarray(estimate, dtype=np.float64),
        low=np.asarray(np.where(empty, np.nan, low), dtype=np.float64),
        high=np.asarray(np.where(empty, np.nan, high), dtype=np.float64),
        n=np.asarray(nn, dtype=np.float64),
    )


def _wilson(k: FloatArray, n: FloatArray, z: float) -> tuple[FloatArray, FloatArray]:
    z2 = z * z
    centre = (k + z2 / 2.0) / (n + z2)
    half = z / (n + z2) * np.sqrt(k * (n - k) / n + z2 / 4.0)
    return np.clip(centre - half, 0.0, 1.0), np.clip(centre + half, 0.0, 1.0)


def _clopper_pearson(k: FloatArray, n: FloatArray, alpha: float) -> tuple[FloatArray, FloatArray]:
    # Beta shapes must be positive; the k = 0 and k = n ends are overwritten by the caller.
    low = stats.beta.ppf(alpha / 2.0, np.where(k > 0, k, 1.0), n - k + 1.0)
    high = stats.beta.ppf(1.0 - alpha / 2.0, k + 1.0, np.where(n > k, n - k, 1.0))
    return np.asarray(low, dtype=np.float64), np.asarray(high, dtype=np.float64)
