"""Robust mean and standard deviation (ISO 13528 Algorithm A) and z-scores for group criteria.

Reference: ISO 13528:2015, *Statistical methods for use in proficiency testing by interlaboratory
comparison*, Annex C.3 (Algorithm A) and clause 9.4 / 9.5 (z-scores and their classification).
Algorithm A is Huber's "proposal 2" M-estimator of location and scale with c = 1.5 (Huber 1981,
*Robust Statistics*), solved by iterative winsorisation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]
ObjectArray = npt.NDArray[np.object_]
StrArray = npt.NDArray[np.str_]

MAD_FACTOR = 1.483  # 1/Φ⁻¹(3/4), rounded as in ISO 13528
SD_FACTOR = 1.134  # corrects the sd of values winsorised at ±1.5 s*, rounded as in ISO 13528
WINSOR = 1.5


MIN_GROUP = 3
"""Fewest finite values from which a group's x* and s* are formed for z-scores (common practice:
Algorithm A of ISO 13528 needs a few values to be meaningful; with fewer, z is not assessable)."""


@dataclass(frozen=True)
class RobustEstimate:
    """Robust average x* and robust standard deviation s*; fields have the leading shape (...).

    ``iterations`` counts winsorisation passes; ``converged`` is False only if ``max_iter`` ran out.
    ``mean`` is NaN with no (non-NaN) values; ``sd`` is 0 when more than half the values coincide
    (see :func:`algorithm_a`). :meth:`reason` says why s* cannot support z-scores.
    """

    mean: FloatArray
    sd: FloatArray
    iterations: IntArray
    converged: BoolArray
    n: IntArray

    def reason(self) -> ObjectArray:
        """Why z-scores cannot be formed from this estimate, else None."""
        out = np.full(self.n.shape, None, dtype=object)
        out[self.sd == 0] = "the group's robust standard deviation is 0"
        out[self.n == 0] = "no values"
        return out


def algorithm_a(x: npt.ArrayLike, tol: float = 1e-10, max_iter: int = 1000) -> RobustEstimate:
    """ISO 13528 Algorithm A on the last axis of ``x``; NaN values are left out.

    Start x* = median(x), s* = 1.483 · median|x − x*|. Then repeat:
    δ = 1.5 s*; winsorise every value to [x* − δ, x* + δ]; x* = mean of the winsorised values;
    s* = 1.134 · their standard deviation (divisor p − 1).

    Stopping: ISO 13528 iterates "until there is no change in the third significant figure" of x*
    and s*, a rule for hand calculation. We iterate to the fixed point instead: stop when both
    |Δx*| and |Δs*| are at most ``tol`` · s* (scale-relative, so the result is equivariant under
    shift and scale), or after ``max_iter`` passes (then ``converged`` is False). The fixed point
    is the estimator's defined value and does not depend on how the data are scaled; the ISO rule
    can stop while s* is still drifting, so the two may differ by one unit in the third
    significant figure (e.g. 0.0681 by the ISO rule, 0.06805 at the fixed point).

    Degenerate data: when more than half the values coincide the starting MAD is 0, so s* = 0 and
    winsorising would collapse every value onto the median. We then return x* = median and
    s* = 0 without iterating (``iterations`` 0); :func:`z_scores` gives NaN for s* = 0 and
    :func:`classify_z` calls that "not assessable". ISO 13528 advises another method in this
    case; the provider chooses. A single value gives x* = that value and s* = 0 likewise.
    """
    data = np.asarray(x, dtype=np.float64)
    if data.ndim == 0:
        raise ValueError("algorithm_a needs values on the last axis")
    lead = data.shape[:-1]
    if data.shape[-1] == 0:
        data = np.full((*lead, 1), np.nan)
    flat = data.reshape(-1, data.shape[-1])
    p = np.sum(~np.isnan(flat), axis=1)
    none = p == 0
    # Rows with no values get a dummy 0 so that no all-NaN median is taken (result masked below).
    work = np.where(none[:, None], 0.0, flat)
    mean = np.nanmedian(work, axis=1)
    sd = MAD_FACTOR * np.nanmedian(np.abs(work - mean[:, None]), axis=1)
    count = np.maximum(p, 1)
    iterations = np.zeros(flat.shape[0], dtype=np.int64)
    active = ~none & (sd > 0)
    converged = ~active
    for _ in range(max_iter):
        if not active.any():
            break
        delta = WINSOR * sd
        wins = np.clip(work, (mean - delta)[:, None], (mean + delta)[:, None])
        new_mean = np.nansum(wins, axis=1) / count
        dev = np.where(np.isnan(wins), 0.0, wins - new_mean[:, None])
        new_sd = SD_FACTOR * np.sqrt(np.sum(dev**2, axis=1) / np.maximum(count - 1, 1))
        done = (np.abs(new_mean - mean) <= tol * sd) & (np.abs(new_sd - sd) <= tol * sd)
        mean = np.where(active, new_mean, mean)
        sd = np.where(active, new_sd, sd)
        iterations += active
        converged = converged | (active & done)
        active = active & ~done
    return RobustEstimate(
        mean=np.where(none, np.nan, mean).reshape(lead),
        sd=np.where(none, np.nan, sd).reshape(lead),
        iterations=iterations.reshape(lead),
        converged=converged.reshape(lead),
        n=p.astype(np.int64).reshape(lead),
    )


def z_scores(x: npt.ArrayLike, mean: npt.ArrayLike, sd: npt.ArrayLike) -> FloatArray:
    """z = (x − x*) / s* (ISO 13528 clause 9.4), broadcast; NaN where s* is 0, NaN or infinite."""
    xx, m, s = np.broadcast_arrays(*(np.asarray(a, dtype=np.float64) for a in (x, mean, sd)))
    usable = np.isfinite(s) & (s > 0)
    safe = np.where(usable, s, 1.0)
    return np.asarray(np.where(usable, (xx - m) / safe, np.nan), dtype=np.float64)


def classify_z(z: npt.ArrayLike) -> StrArray:
    """ISO 13528 classification, element-wise.

    |z| ≤ 2 "satisfactory"; 2 < |z| < 3 "questionable"; |z| ≥ 3 "unsatisfactory";
    NaN → "not assessable".
    """
    zz = np.abs(np.asarray(z, dtype=np.float64))
    out = np.full(zz.shape, "not assessable", dtype="<U14")
    out[zz <= 2] = "satisfactory"
    out[(zz > 2) & (zz < 3)] = "questionable"
    out[zz >= 3] = "unsatisfactory"
    return out
