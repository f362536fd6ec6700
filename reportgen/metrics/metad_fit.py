"""The batched maximum-likelihood fit behind :mod:`.metad`: Fisher scoring with step-halving on
log-gap criteria, vectorised over many rating tables at once (see :mod:`.metad` for the model)."""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
import numpy.typing as npt
from scipy import optimize, special

FloatArray = npt.NDArray[np.float64]
BoolArray = npt.NDArray[np.bool_]

MAX_ITER = 100
_TOL = 1e-10  # Newton decrement (log-likelihood units) at which a fit counts as converged
_BOOT_TOL = 1e-7  # bootstrap replicates: ample for percentiles
_BOOTMAX_ITER = 40
_BOOT_ACCEPT = 1e-3  # a replicate still short of _BOOT_TOL after 40 steps is kept below this
_GAP_BOUNDS = (-20.0, 6.0)  # log-gap clip: e^-20 is a zero-width bin, e^6 an infinite criterion
_META_D_BOUND = 15.0
_HALVINGS = 30  # step-halvings per line search
_POLISH_MAX_ITER = 2000  # L-BFGS-B iterations of the fallback for one table

TIME_LIMIT = 120.0
"""Seconds one :func:`fit_batch` call may run (a safety net, issue 10: no input may make a
command run unbounded). Every loop is already capped by a count (``MAX_ITER`` Fisher steps of
``_HALVINGS`` halvings each, ``_POLISH_MAX_ITER`` fallback iterations), and tables are capped at
``metad.MAX_LEVELS`` levels, so the work is bounded by the input's size; this limit only stops a
pathological batch on a slow machine. Tables still open when it passes are reported as not
finished (``timed_out``), never silently kept. Reaching it is the only way the machine's speed
could change a result, so ordinary rounds finish orders of magnitude below it."""


class Fit(NamedTuple):
    """What :func:`fit_batch` returns for B tables."""

    theta: FloatArray  # (B, P): meta-d′ then the log-gaps
    loglik: FloatArray  # (B,)
    converged: BoolArray  # (B,)
    timed_out: BoolArray  # (B,) stopped by ``TIME_LIMIT`` (then ``converged`` is False)


# ---------------------------------------------------------------------------- batched fitting


@dataclass(frozen=True)
class Batch:
    """B tables (already padded) with their fixed type-1 quantities."""

    noise: FloatArray  # (B, 2K)
    signal: FloatArray  # (B, 2K)
    d: FloatArray  # (B,)
    ratio: FloatArray  # (B,) c / d′: meta-c = meta-d′ · ratio

    @property
    def k(self) -> int:
        return int(self.noise.shape[1]) // 2


def edges_of(theta: FloatArray, k: int) -> FloatArray:
    """Criteria (B, 2K+1) on the shifted axis (type-1 criterion at 0) from log-gaps."""
    b = theta.shape[0]
    gaps = np.exp(theta[:, 1:])
    left = -np.cumsum(gaps[:, : k - 1], axis=1)[:, ::-1]
    right = np.cumsum(gaps[:, k - 1 :], axis=1)
    inf = np.full((b, 1), np.inf)
    return np.hstack([-inf, left, np.zeros((b, 1)), right, inf])


def _means(theta: FloatArray, ratio: FloatArray) -> tuple[FloatArray, FloatArray]:
    m = theta[:, 0]
    return -m * (0.5 + ratio), m * (0.5 - ratio)


def _log_cells(z: FloatArray) -> FloatArray:
    """log(Φ(z[j+1]) − Φ(z[j])), in log space on the side of 0 that keeps precision in the tails.

    log Φ(z) and log Φ(−z) are evaluated once per edge and shared by the two cells beside it."""
    log_below, log_above = special.log_ndtr(z), special.log_ndtr(-z)
    upper = z[:, :-1] > 0
    big: FloatArray = np.where(upper, log_above[:, :-1], log_below[:, 1:])
    small: FloatArray = np.where(upper, log_above[:, 1:], log_below[:, :-1])
    out: FloatArray = big + np.log1p(-np.exp(small - big))
    return out


def _log_pdf(z: FloatArray) -> FloatArray:
    out: FloatArray = -0.5 * z**2 - 0.5 * np.log(2 * np.pi)
    return out


def _log_lik(batch: Batch, theta: FloatArray) -> FloatArray:
    k = batch.k
    edges = edges_of(theta, k)
    total = np.zeros(theta.shape[0])
    for counts, mu in zip((batch.noise, batch.signal), _means(theta, batch.ratio), strict=True):
        logp = np.where(counts > 0, counts * _log_cells(edges - mu[:, None]), 0.0)
        left, right = special.log_ndtr(-mu), special.log_ndtr(mu)
        total += logp.sum(1) - counts[:, :k].sum(1) * left - counts[:, k:].sum(1) * right
    return total


def _score_and_info(batch: Batch, theta: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Gradient (B, P) and expected (Fisher) information (B, P, P) in log-gap coordinates."""
    k = batch.k
    n_b, n_p = theta.shape
    edges = edges_of(theta, k)
    free = np.r_[1:k, k + 1 : 2 * k]
    left_side = (np.arange(2 * k) < k)[None, :]  # cells of "different" answers
    grad_u = np.zeros((n_b, n_p))
    info_u = np.zeros((n_b, n_p, n_p))
    dmu_dm = (-(0.5 + batch.ratio), 0.5 - batch.ratio)
    means = _means(theta, batch.ratio)
    for counts, mu, dmu in zip((batch.noise, batch.signal), means, dmu_dm, strict=True):
        z = edges - mu[:, None]
        log_cells = _log_cells(z)
        log_pdf = _log_pdf(z)  # -inf at ±inf edges
        up = np.exp(log_pdf[:, 1:] - log_cells)  # d log P_j / d edge_{j+1}
        down = -np.exp(log_pdf[:, :-1] - log_cells)  # d log P_j / d edge_j
        # Jacobian of log P_j with respect to every edge (B, 2K, 2K+1).
        jac = np.zeros((n_b, 2 * k, 2 * k + 1))
        idx = np.arange(2 * k)
        jac[:, idx, idx + 1] = up
        jac[:, idx, idx] = down
        dlogp_dmu = -jac.sum(2)
        log_side = np.where(
            left_side, special.log_ndtr(-mu)[:, None], special.log_ndtr(mu)[:, None]
        )
        # d log Φ(∓μ)/dμ as Mills ratios in log space, so that large |μ| does not give 0/0.
        dlog_side = np.where(left_side, -1.0, 1.0) * np.exp(_log_pdf(mu)[:, None] - log_side)
        score = np.empty((n_b, 2 * k, n_p))
        score[:, :, 0] = (dlogp_dmu - dlog_side) * dmu[:, None]
        score[:, :, 1:] = jac[:, :, free]
        grad_u += (counts[:, None, :] @ score)[:, 0, :]
        side_total = np.where(
            left_side, counts[:, :k].sum(1, keepdims=True), counts[:, k:].sum(1, keepdims=True)
        )
        weight = side_total * np.exp(log_cells - log_side)  # expected count of each cell
        info_u += (score * weight[:, :, None]).transpose(0, 2, 1) @ score
    jac_theta = _edge_jacobian(theta, k)
    jac_t = jac_theta.transpose(0, 2, 1)
    grad = (jac_t @ grad_u[..., None])[..., 0]
    info = jac_t @ info_u @ jac_theta
    return grad, info


def _edge_jacobian(theta: FloatArray, k: int) -> FloatArray:
    """d(meta-d′, free edges)/d(theta): (B, P, P), block lower-triangular in the log-gaps."""
    n_b, n_p = theta.shape
    gaps = np.exp(theta[:, 1:])
    jac = np.zeros((n_b, n_p, n_p))
    jac[:, 0, 0] = 1.0
    h = k - 1
    for i in range(h):  # edge u-index 1 + i is the (h - i)-th gap outwards on the left
        depth = h - i
        jac[:, 1 + i, 1 : 1 + depth] = -gaps[:, :depth]
    for i in range(h):  # right edges: u-index k + i, sum of the first i + 1 right gaps
        jac[:, k + i, k : k + i + 1] = gaps[:, h : h + i + 1]
    return jac


def _start(batch: Batch) -> FloatArray:
    """meta-d′ = d′; criteria from cumulative rating rates (authors' guess), made ordered."""
    k = batch.k
    n_n = batch.noise.sum(1, keepdims=True)
    n_s = batch.signal.sum(1, keepdims=True)
    hr = np.cumsum(batch.signal[:, ::-1], 1)[:, ::-1][:, 1:] / n_s
    far = np.cumsum(batch.noise[:, ::-1], 1)[:, ::-1][:, 1:] / n_n
    hr = np.clip(hr, 0.5 / n_s, 1 - 0.5 / n_s)
    far = np.clip(far, 0.5 / n_n, 1 - 0.5 / n_n)
    crit = -(special.ndtri(hr) + special.ndtri(far)) / 2
    t2 = np.delete(crit - crit[:, k - 1 : k], k - 1, axis=1)
    left, right = t2[:, : k - 1][:, ::-1], t2[:, k - 1 :]  # both innermost first
    left_gaps = np.maximum(np.diff(np.hstack([np.zeros((len(t2), 1)), -left]), axis=1), 0.05)
    right_gaps = np.maximum(np.diff(np.hstack([np.zeros((len(t2), 1)), right]), axis=1), 0.05)
    m0 = np.clip(batch.d, -5.0, 5.0)[:, None]
    return np.hstack([m0, np.log(left_gaps), np.log(right_gaps)])


def _clip(theta: FloatArray) -> FloatArray:
    out = theta.copy()
    out[:, 0] = np.clip(out[:, 0], -_META_D_BOUND, _META_D_BOUND)
    out[:, 1:] = np.clip(out[:, 1:], *_GAP_BOUNDS)
    return out


def fit_batch(
    batch: Batch,
    bootstrap: bool = False,
    start: FloatArray | None = None,
    time_limit: float = TIME_LIMIT,
) -> Fit:
    """Fisher scoring with step-halving on all tables at once.

    ``start`` (B, P) replaces the authors' starting guess (bootstrap replicates start from their
    table's own fit). Single fits that stall go to an L-BFGS-B fallback. Bootstrap replicates
    use a looser tolerance and are accepted when nearly converged (no per-replicate fallback: it
    would cost more than the whole batch, for a change in meta-d′ of the order of 1e-3). Every
    loop has an iteration cap, and the whole call stops after ``time_limit`` seconds.
    """
    deadline = time.monotonic() + time_limit
    tol, max_iter = (_BOOT_TOL, _BOOTMAX_ITER) if bootstrap else (_TOL, MAX_ITER)
    with np.errstate(all="ignore"):
        theta = _start(batch) if start is None else _clip(np.asarray(start, dtype=np.float64))
        theta, loglik, converged, decrement, timed_out = _fisher_scoring(
            batch, theta, tol, max_iter, deadline)
        if bootstrap:
            accept = np.isfinite(loglik) & (decrement < _BOOT_ACCEPT) & ~timed_out
            return Fit(theta, loglik, converged | accept, timed_out)
        for i in np.flatnonzero(~converged & ~timed_out):
            if time.monotonic() > deadline:
                timed_out[i] = True
                continue
            theta[i], loglik[i], converged[i] = _polish(
                subset(batch, np.array([i])), theta[i], deadline)
            timed_out[i] = not converged[i] and time.monotonic() > deadline
    return Fit(theta, loglik, converged, timed_out)


def fit_criteria(batch: Batch, theta: FloatArray, deadline: float) -> Fit:
    """Fit only the type-2 criteria with meta-d′ held at ``theta[:, 0]`` (a profile likelihood).

    Starts from ``theta``'s criteria; no fallback (a profile point that does not converge is
    reported as such)."""
    with np.errstate(all="ignore"):
        theta, loglik, converged, _, timed_out = _fisher_scoring(
            batch, _clip(theta), _TOL, MAX_ITER, deadline, fixed_meta=True)
    return Fit(theta, loglik, converged, timed_out)


def score_and_info(batch: Batch, theta: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Gradient (B, P) and Fisher information (B, P, P) of the log-likelihood at ``theta``."""
    with np.errstate(all="ignore"):
        return _score_and_info(batch, theta)


def _fisher_scoring(
    batch: Batch, theta: FloatArray, tol: float, max_iter: int, deadline: float,
    fixed_meta: bool = False,
) -> tuple[FloatArray, FloatArray, BoolArray, FloatArray, BoolArray]:
    """(theta, logL, converged, last Newton decrement, timed out) for every table of the batch.

    With ``fixed_meta`` meta-d′ (``theta[:, 0]``) stays where it is and only the criteria move."""
    theta = theta.copy()
    n_b, n_p = theta.shape
    loglik = _log_lik(batch, theta)
    last_decrement = np.full(n_b, np.inf)
    done = np.zeros(n_b, dtype=bool)
    timed_out = np.zeros(n_b, dtype=bool)
    failed = ~np.isfinite(loglik)
    done |= failed
    ridge = 1e-9 * np.eye(n_p)
    for _ in range(max_iter):
        active = np.flatnonzero(~done)
        if active.size == 0:
            break
        if time.monotonic() > deadline:
            timed_out[active] = True
            break
        sub = subset(batch, active)
        grad, info = _score_and_info(sub, theta[active])
        if fixed_meta:
            grad[:, 0] = 0.0
            info[:, 0, :] = info[:, :, 0] = 0.0
            info[:, 0, 0] = 1.0
        bad = ~(np.isfinite(grad).all(1) & np.isfinite(info).all((1, 2)))
        grad[bad] = 0.0
        info[bad] = np.eye(n_p)
        scale = np.maximum(np.abs(np.einsum("bii->bi", info)).max(1), 1.0)
        step = np.linalg.solve(info + ridge * scale[:, None, None], grad[..., None])[..., 0]
        decrement = np.einsum("bp,bp->b", grad, step)
        last_decrement[active] = np.where(bad, np.inf, decrement)
        failed[active[bad]] = True
        done[active[bad | (decrement < tol)]] = True
        moved = _line_search(sub, theta[active], loglik[active], step)
        theta[active], loglik[active] = moved
    converged = done & ~failed & ~timed_out & (np.abs(theta[:, 0]) < _META_D_BOUND)
    return theta, loglik, converged, last_decrement, timed_out


def _polish(batch: Batch, theta: FloatArray, deadline: float) -> tuple[FloatArray, float, bool]:
    """Fallback for the rare table where scoring stalls (flat or boundary optimum): L-BFGS-B.

    The bounds are the clip limits of the log-gaps, where a criterion is effectively at infinity or
    two criteria coincide; an optimum there is a genuine boundary optimum (an empty cell).
    """
    start = _clip(theta[None, :])[0]

    def objective(x: FloatArray) -> tuple[float, FloatArray]:
        value = _log_lik(batch, x[None, :])[0]
        if not np.isfinite(value):
            return 1e300, np.zeros_like(x)
        grad, _ = _score_and_info(batch, x[None, :])
        return -float(value), -grad[0]

    def stop_at_deadline(intermediate_result: optimize.OptimizeResult) -> None:
        if time.monotonic() > deadline:
            raise StopIteration

    bounds = [(-_META_D_BOUND, _META_D_BOUND)] + [_GAP_BOUNDS] * (theta.size - 1)
    res = optimize.minimize(
        objective,
        start,
        jac=True,
        method="L-BFGS-B",
        bounds=bounds,
        callback=stop_at_deadline,
        options={"maxiter": _POLISH_MAX_ITER, "ftol": 1e-15, "gtol": 1e-8},
    )
    x = np.asarray(res.x, dtype=np.float64)
    finished = time.monotonic() <= deadline
    ok = bool(res.success) and finished and abs(x[0]) < _META_D_BOUND and float(res.fun) < 1e299
    return x, -float(res.fun), ok


def subset(batch: Batch, rows: npt.NDArray[np.intp]) -> Batch:
    return Batch(batch.noise[rows], batch.signal[rows], batch.d[rows], batch.ratio[rows])


def _line_search(
    batch: Batch, theta: FloatArray, loglik: FloatArray, step: FloatArray
) -> tuple[FloatArray, FloatArray]:
    """Halve the step until the log-likelihood does not fall (per table)."""
    theta = theta.copy()
    loglik = loglik.copy()
    pending = np.arange(theta.shape[0])
    alpha = 1.0
    for _ in range(_HALVINGS):
        trial = _clip(theta[pending] + alpha * step[pending])
        value = _log_lik(subset(batch, pending), trial)
        ok = np.isfinite(value) & (value >= loglik[pending] - 1e-12)
        theta[pending[ok]] = trial[ok]
        loglik[pending[ok]] = value[ok]
        pending = pending[~ok]
        if pending.size == 0:
            break
        alpha /= 2
    return theta, loglik
