"""Profile-likelihood interval for meta-d′, vectorised over many rating tables.

The level-L interval is the set of meta-d′ values whose profile log-likelihood (the type-2
criteria refitted at each fixed meta-d′, type-1 d′ and c held as in the point fit) lies within
q = χ²₁(L)/2 = z²/2 of the maximum, z = ndtri(0.5 + L/2) (Wilks 1938; Venzon & Moolgavkar 1988,
*Applied Statistics* 37:87, for finding the two ends by root search). Each end is found by a
safeguarded Newton search on g(m) = ℓ̂ − ℓₚ(m) − q: the slope of the profile is the meta-d′
component of the score at the refitted criteria (envelope theorem); the first trial lies one Wald
half-width (z·SE from the Fisher information) from the estimate; steps that leave a bracket fall
back to bisection. Every loop is capped, and an end not found (the profile does not fall by q
before |meta-d′| = 15) is NaN.
"""

from __future__ import annotations

import time

import numpy as np
import numpy.typing as npt
from scipy import special

from reportgen.metrics.metad_fit import (
    TIME_LIMIT,
    Batch,
    fit_criteria,
    score_and_info,
    subset,
)

FloatArray = npt.NDArray[np.float64]

MAX_STEPS = 40  # root-search steps per end
_G_TOL = 1e-6  # |g| (log-likelihood units) at which an end is found
_M_TOL = 1e-7  # bracket width at which an end is found
_BOUND = 14.5  # search no further than this |meta-d′| (the fit's own bound is 15)


def profile_ends(
    batch: Batch,
    theta_hat: FloatArray,
    loglik_hat: FloatArray,
    level: float,
    time_limit: float = TIME_LIMIT,
) -> tuple[FloatArray, FloatArray]:
    """(low, high) ends of the profile-likelihood interval of meta-d′ for every table.

    ``theta_hat``/``loglik_hat``: the converged maximum-likelihood fit of each table of
    ``batch``. NaN where an end cannot be found within the caps.
    """
    deadline = time.monotonic() + time_limit
    n = theta_hat.shape[0]
    z = float(special.ndtri(0.5 + level / 2))
    q = z * z / 2
    _, info = score_and_info(batch, theta_hat)
    with np.errstate(all="ignore"):
        se = np.sqrt(np.linalg.pinv(info)[:, 0, 0])
    se = np.where(np.isfinite(se) & (se > 0), se, 1.0)
    rows = np.r_[np.arange(n), np.arange(n)]
    side = np.r_[-np.ones(n), np.ones(n)]
    both = subset(batch, rows)
    ends = _search(both, theta_hat[rows], loglik_hat[rows] - q, side, z * se[rows], deadline)
    return ends[:n], ends[n:]


def _search(
    batch: Batch, theta: FloatArray, floor: FloatArray, side: FloatArray, first: FloatArray,
    deadline: float,
) -> FloatArray:
    """Where the profile log-likelihood falls to ``floor`` on ``side`` of each estimate."""
    m_hat = theta[:, 0].copy()
    inside = m_hat.copy()  # g < 0 here
    outside = np.full_like(m_hat, np.nan)  # g > 0 here, once found
    m = np.clip(m_hat + side * first, -_BOUND, _BOUND)
    theta = theta.copy()
    found = np.full_like(m_hat, np.nan)
    open_ = np.arange(m_hat.size)
    for _ in range(MAX_STEPS):
        if open_.size == 0 or time.monotonic() > deadline:
            break
        sub = subset(batch, open_)
        trial = theta[open_].copy()
        trial[:, 0] = m[open_]
        fit = fit_criteria(sub, trial, deadline)
        theta[open_] = fit.theta
        grad, _ = score_and_info(sub, fit.theta)
        g = floor[open_] - fit.loglik
        slope = grad[:, 0]  # d profile / d meta-d′
        ok = fit.converged & np.isfinite(g)
        mo = m[open_]
        done = ok & ((np.abs(g) < _G_TOL) | (np.abs(outside[open_] - inside[open_]) < _M_TOL))
        found[open_[done]] = mo[done]
        out = ok & (g > 0)
        outside[open_[out]] = mo[out]
        inside[open_[ok & ~out]] = mo[ok & ~out]
        at_bound = ok & ~out & (np.abs(mo) >= _BOUND)  # never falls far enough: unbounded
        nxt = _next(mo, g, slope, inside[open_], outside[open_], m_hat[open_], side[open_])
        nxt = np.where(ok, nxt, (inside[open_] + mo) / 2)  # a failed fit: step back halfway
        m[open_] = np.clip(nxt, -_BOUND, _BOUND)
        open_ = open_[~(done | at_bound)]
    return found


def _next(
    m: FloatArray, g: FloatArray, slope: FloatArray, inside: FloatArray, outside: FloatArray,
    m_hat: FloatArray, side: FloatArray,
) -> FloatArray:
    """A Newton step on g, kept within the bracket; before one is found, step outwards."""
    with np.errstate(all="ignore"):
        newton = m + g / slope  # g' = −slope
    bracketed = np.isfinite(outside)
    between = (np.minimum(inside, outside) < newton) & (newton < np.maximum(inside, outside))
    bisect = (inside + outside) / 2
    outwards = side * (newton - m_hat) > side * (m - m_hat)
    expand = m_hat + 2 * (m - m_hat)
    guess = np.where(np.isfinite(newton) & outwards, newton, expand)
    out: FloatArray = np.where(bracketed, np.where(np.isfinite(newton) & between, newton, bisect),
                               guess)
    return out
