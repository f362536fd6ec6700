"""meta-d′ and the M-ratio by maximum likelihood (Maniscalco & Lau 2012).

Model (Maniscalco & Lau 2012, *Consciousness and Cognition* 21:422–430; the authors'
``fit_meta_d_MLE``): the rating table of one participant is read as an equal-variance signal-
detection observer. Type-1 d′ and c come from the middle split of the table and are held fixed. A
second observer with sensitivity meta-d′ (evidence means ±meta-d′/2) and the same relative
criterion (meta-c = meta-d′·c/d′) places 2(K−1) ordered type-2 criteria, K−1 below meta-c for
"different" (noise) answers and K−1 above it for "same" (signal) answers. The likelihood is that of
the confidence ratings *given* the type-1 answer. M-ratio = meta-d′/d′.

Tables are ordered "sure different, confidence K" … "different, 1", "same, 1" … "sure same, K", and
built from conclusive answers only. With ``pad=True`` 1/(2K) is added to every cell before d′, c and
meta-d′ are computed (DESIGN §3, following the authors' code).

Fitting: the ordered criteria are written as log-gaps from the type-1 criterion outwards, so the
problem is unconstrained; it is solved by Fisher scoring with step-halving, vectorised over many
tables at once (one participant, a whole round, or every bootstrap replicate in one call). It starts
from meta-d′ = d′ and the criteria implied by the observed cumulative rating rates (the authors'
starting guess). :mod:`.metad_reference` holds a slow brute-force fit used to check this one.

Degenerate tables never raise: ``meta_d`` is ``None`` and ``note`` says why (see the ``NOTE_*``
constants). Nothing here prints, reads files or uses pandas.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy import optimize, special

FloatArray = npt.NDArray[np.float64]
BoolArray = npt.NDArray[np.bool_]
Counts = npt.ArrayLike  # one rating table side: 2K counts

NOTE_NO_ANSWERS = "no conclusive answers"
NOTE_ONE_TRUTH_CLASS = "no conclusive answers on one truth class"
NOTE_ONE_CLASS = "only one class answered"
NOTE_NO_ERRORS = "no errors"
NOTE_ONE_LEVEL = "only one confidence level used"
NOTE_D_NEAR_ZERO = "d′ too close to 0 for an M-ratio"
NOTE_RATE_0_OR_1 = "a hit or false-alarm rate of 0 or 1 (unpadded table)"
NOTE_NOT_CONVERGED = "the fit did not converge"

D_PRIME_MIN = 0.3
"""Below this |d′| the M-ratio is not reported (meta-d′ still is; at |d′| < 1e-6 neither is, as
meta-c = meta-d′·c/d′ is undefined). A d′ below −0.3 (systematically reversed answers) keeps its
ratio, as in the authors' code.

0.3 is about one standard error of d′ at d′ = 0 for a 60-item round (30 + 30 conclusive answers:
Gourevitch–Galanter SE ≈ 0.32), i.e. a d′ this small cannot be told from chance, and a ratio with
such a denominator swings without bound."""

FEW_ERRORS_THRESHOLD = 11
"""Fewer conclusive errors than this: meta-d′ and the M-ratio are flagged as unstable.

Basis: ``scripts/simulate_metad_stability.py`` (numbers in ``docs/metacognition.md``). Ideal
observers (true M-ratio 1), 60 items, K = 5, d′ ~ U(1.5, 2): among those who made e errors, fewer
than 90 % get an M-ratio within a factor of two of the truth (0.5–2) for every e ≤ 10 (89 % at 10,
67 % at 5), and the median is biased low (0.86 at 10 errors, 0.60 at 5): with few errors, a lucky
run inflates d′ and an ideal observer looks like a poor one. At 11–17 errors 91–95 % (above that,
such a participant's d′ is small and the ratio widens for that reason). The cut depends on the
design (5–14 errors for other populations and round lengths, see the note); no published minimum
was found."""

_MAX_ITER = 100
_TOL = 1e-10  # Newton decrement (log-likelihood units) at which a fit counts as converged
_BOOT_TOL = 1e-7  # bootstrap replicates: ample for percentiles
_BOOT_MAX_ITER = 40
_BOOT_ACCEPT = 1e-3  # a replicate still short of _BOOT_TOL after 40 steps is kept below this
_GAP_BOUNDS = (-20.0, 6.0)  # log-gap clip: e^-20 is a zero-width bin, e^6 an infinite criterion
_META_D_BOUND = 15.0


@dataclass(frozen=True)
class MetaDResult:
    """One meta-d′ fit. Non-estimable quantities are ``None`` (never NaN) and ``note`` says why.

    ``d_prime`` and ``criterion`` are those of the (padded) table the fit used. ``type2_criteria``
    are the 2(K−1) fitted type-2 criteria on the meta-d′ axis (evidence means ±meta-d′/2),
    "different" side first, ascending.
    """

    d_prime: float | None
    criterion: float | None
    meta_d: float | None
    m_ratio: float | None
    log_likelihood: float | None
    note: str | None
    converged: bool
    type2_criteria: tuple[float, ...] | None = None


@dataclass(frozen=True)
class MetaDInterval:
    """Percentile interval of a stratified bootstrap for meta-d′ and the M-ratio.

    Bounds are ``None`` where the point estimate is not estimable.
    """

    meta_d_low: float | None
    meta_d_high: float | None
    m_ratio_low: float | None
    m_ratio_high: float | None
    level: float
    n_boot: int


@dataclass(frozen=True)
class IdealInsight:
    """What an observer whose confidence reads the same evidence as its decision would show."""

    type2_auroc: float
    conf_gap: float


# --------------------------------------------------------------------------------------- tables


def _as_table(noise_counts: Counts, signal_counts: Counts) -> tuple[FloatArray, FloatArray]:
    noise = np.asarray(noise_counts, dtype=np.float64).ravel()
    signal = np.asarray(signal_counts, dtype=np.float64).ravel()
    if noise.size != signal.size or noise.size < 2 or noise.size % 2:
        raise ValueError(
            f"rating tables must have the same even length 2K >= 2, got {noise.size} and "
            f"{signal.size}"
        )
    if not (np.all(np.isfinite(noise)) and np.all(np.isfinite(signal))):
        raise ValueError("rating counts must be finite")
    if np.any(noise < 0) or np.any(signal < 0):
        raise ValueError("rating counts must not be negative")
    return noise, signal


def degenerate_reason(noise_counts: Counts, signal_counts: Counts) -> str | None:
    """Why a raw (unpadded) rating table cannot support meta-d′, or ``None`` if it can."""
    noise, signal = _as_table(noise_counts, signal_counts)
    k = noise.size // 2
    if noise.sum() + signal.sum() == 0:
        return NOTE_NO_ANSWERS
    if noise.sum() == 0 or signal.sum() == 0:
        return NOTE_ONE_TRUTH_CLASS
    said_noise = noise[:k].sum() + signal[:k].sum()
    said_signal = noise[k:].sum() + signal[k:].sum()
    if said_noise == 0 or said_signal == 0:
        return NOTE_ONE_CLASS
    if noise[k:].sum() + signal[:k].sum() == 0:
        return NOTE_NO_ERRORS
    by_level = (noise + signal)[:k][::-1] + (noise + signal)[k:]  # confidence 1..K
    if np.count_nonzero(by_level) < 2:
        return NOTE_ONE_LEVEL
    return None


def _type1(noise: FloatArray, signal: FloatArray) -> tuple[FloatArray, FloatArray]:
    """d′ and c from the middle split of each row (rows are tables)."""
    k = noise.shape[-1] // 2
    with np.errstate(divide="ignore", invalid="ignore"):
        hit = signal[..., k:].sum(-1) / signal.sum(-1)
        fa = noise[..., k:].sum(-1) / noise.sum(-1)
        z_h, z_f = special.ndtri(hit), special.ndtri(fa)
        return z_h - z_f, -(z_h + z_f) / 2


# ---------------------------------------------------------------------------- batched fitting


@dataclass(frozen=True)
class _Batch:
    """B tables (already padded) with their fixed type-1 quantities."""

    noise: FloatArray  # (B, 2K)
    signal: FloatArray  # (B, 2K)
    d: FloatArray  # (B,)
    ratio: FloatArray  # (B,) c / d′: meta-c = meta-d′ · ratio

    @property
    def k(self) -> int:
        return int(self.noise.shape[1]) // 2


def _edges(theta: FloatArray, k: int) -> FloatArray:
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
    """log(Φ(z[j+1]) − Φ(z[j])), in log space on the side of 0 that keeps precision in the tails."""
    lo, hi = z[:, :-1], z[:, 1:]
    upper = lo > 0
    big: FloatArray = np.where(upper, special.log_ndtr(-lo), special.log_ndtr(hi))
    small: FloatArray = np.where(upper, special.log_ndtr(-hi), special.log_ndtr(lo))
    out: FloatArray = big + np.log1p(-np.exp(small - big))
    return out


def _log_pdf(z: FloatArray) -> FloatArray:
    out: FloatArray = -0.5 * z**2 - 0.5 * np.log(2 * np.pi)
    return out


def _log_lik(batch: _Batch, theta: FloatArray) -> FloatArray:
    k = batch.k
    edges = _edges(theta, k)
    total = np.zeros(theta.shape[0])
    for counts, mu in zip((batch.noise, batch.signal), _means(theta, batch.ratio), strict=True):
        logp = np.where(counts > 0, counts * _log_cells(edges - mu[:, None]), 0.0)
        left, right = special.log_ndtr(-mu), special.log_ndtr(mu)
        total += logp.sum(1) - counts[:, :k].sum(1) * left - counts[:, k:].sum(1) * right
    return total


def _score_and_info(batch: _Batch, theta: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Gradient (B, P) and expected (Fisher) information (B, P, P) in log-gap coordinates."""
    k = batch.k
    n_b, n_p = theta.shape
    edges = _edges(theta, k)
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
        grad_u += np.einsum("bj,bjp->bp", counts, score)
        side_total = np.where(
            left_side, counts[:, :k].sum(1, keepdims=True), counts[:, k:].sum(1, keepdims=True)
        )
        weight = side_total * np.exp(log_cells - log_side)  # expected count of each cell
        info_u += np.einsum("bj,bjp,bjq->bpq", weight, score, score)
    jac_theta = _edge_jacobian(theta, k)
    grad = np.einsum("bpq,bp->bq", jac_theta, grad_u)
    info = np.einsum("bpq,bpr,brs->bqs", jac_theta, info_u, jac_theta)
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


def _start(batch: _Batch) -> FloatArray:
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


def _fit_batch(batch: _Batch, bootstrap: bool = False) -> tuple[FloatArray, FloatArray, BoolArray]:
    """Fisher scoring with step-halving on all tables at once: (theta, logL, converged).

    Single fits that stall go to an L-BFGS-B fallback. Bootstrap replicates use a looser
    tolerance and are accepted when nearly converged (no per-replicate fallback: it would cost
    more than the whole batch, for a change in meta-d′ of the order of 1e-3).
    """
    tol, max_iter = (_BOOT_TOL, _BOOT_MAX_ITER) if bootstrap else (_TOL, _MAX_ITER)
    with np.errstate(all="ignore"):
        theta, loglik, converged, decrement = _fisher_scoring(batch, tol, max_iter)
        if bootstrap:
            return theta, loglik, converged | (np.isfinite(loglik) & (decrement < _BOOT_ACCEPT))
        for i in np.flatnonzero(~converged):
            theta[i], loglik[i], converged[i] = _polish(_subset(batch, np.array([i])), theta[i])
    return theta, loglik, converged


def _fisher_scoring(
    batch: _Batch, tol: float, max_iter: int
) -> tuple[FloatArray, FloatArray, BoolArray, FloatArray]:
    """(theta, logL, converged, last Newton decrement) for every table of the batch."""
    theta = _start(batch)
    n_b, n_p = theta.shape
    loglik = _log_lik(batch, theta)
    last_decrement = np.full(n_b, np.inf)
    done = np.zeros(n_b, dtype=bool)
    failed = ~np.isfinite(loglik)
    done |= failed
    ridge = 1e-9 * np.eye(n_p)
    for _ in range(max_iter):
        active = np.flatnonzero(~done)
        if active.size == 0:
            break
        sub = _subset(batch, active)
        grad, info = _score_and_info(sub, theta[active])
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
    converged = done & ~failed & (np.abs(theta[:, 0]) < _META_D_BOUND)
    return theta, loglik, converged, last_decrement


def _polish(batch: _Batch, theta: FloatArray) -> tuple[FloatArray, float, bool]:
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

    bounds = [(-_META_D_BOUND, _META_D_BOUND)] + [_GAP_BOUNDS] * (theta.size - 1)
    res = optimize.minimize(
        objective,
        start,
        jac=True,
        method="L-BFGS-B",
        bounds=bounds,
        options={"maxiter": 2000, "ftol": 1e-15, "gtol": 1e-8},
    )
    x = np.asarray(res.x, dtype=np.float64)
    ok = bool(res.success) and abs(x[0]) < _META_D_BOUND and float(res.fun) < 1e299
    return x, -float(res.fun), ok


def _subset(batch: _Batch, rows: npt.NDArray[np.intp]) -> _Batch:
    return _Batch(batch.noise[rows], batch.signal[rows], batch.d[rows], batch.ratio[rows])


def _line_search(
    batch: _Batch, theta: FloatArray, loglik: FloatArray, step: FloatArray
) -> tuple[FloatArray, FloatArray]:
    """Halve the step until the log-likelihood does not fall (per table)."""
    theta = theta.copy()
    loglik = loglik.copy()
    pending = np.arange(theta.shape[0])
    alpha = 1.0
    for _ in range(30):
        trial = _clip(theta[pending] + alpha * step[pending])
        value = _log_lik(_subset(batch, pending), trial)
        ok = np.isfinite(value) & (value >= loglik[pending] - 1e-12)
        theta[pending[ok]] = trial[ok]
        loglik[pending[ok]] = value[ok]
        pending = pending[~ok]
        if pending.size == 0:
            break
        alpha /= 2
    return theta, loglik


# ------------------------------------------------------------------------------- public fits


def fit_meta_d(noise_counts: Counts, signal_counts: Counts, pad: bool = True) -> MetaDResult:
    """meta-d′ and M-ratio of one rating table by maximum likelihood (Maniscalco & Lau 2012).

    ``noise_counts``/``signal_counts``: counts (2K,) on different-/same-source items, ordered "sure
    different, K" … "different, 1", "same, 1" … "sure same, K" (conclusive answers only). With
    ``pad`` 1/(2K) is added to every cell. Never raises on a valid table; see ``NOTE_*``.
    """
    noise, signal = _as_table(noise_counts, signal_counts)
    return fit_meta_d_many(noise[None, :], signal[None, :], pad=pad)[0]


def fit_meta_d_many(
    noise_counts: npt.ArrayLike, signal_counts: npt.ArrayLike, pad: bool = True
) -> list[MetaDResult]:
    """:func:`fit_meta_d` for many tables of the same K at once (much faster than a loop).

    ``noise_counts``/``signal_counts``: (B, 2K) arrays, or sequences of B tables of equal length.
    """
    try:
        noise_rows = np.asarray(noise_counts, dtype=np.float64)
        signal_rows = np.asarray(signal_counts, dtype=np.float64)
    except ValueError as exc:  # ragged input
        raise ValueError("fit_meta_d_many needs tables with the same number of levels") from exc
    if noise_rows.ndim != 2 or noise_rows.shape[0] != signal_rows.shape[0]:
        raise ValueError("fit_meta_d_many needs two (B, 2K) arrays of tables")
    tables = [_as_table(n, s) for n, s in zip(noise_rows, signal_rows, strict=True)]
    if not tables:
        return []
    noise = np.vstack([t[0] for t in tables])
    signal = np.vstack([t[1] for t in tables])
    reasons = [degenerate_reason(n, s) for n, s in tables]
    if pad:
        k = noise.shape[1] // 2
        noise, signal = noise + 1 / (2 * k), signal + 1 / (2 * k)
    with np.errstate(all="ignore"):
        d, c = _type1(noise, signal)
    results: list[MetaDResult | None] = [None] * len(tables)
    fit_rows: list[int] = []
    for i, reason in enumerate(reasons):
        early = reason or _type1_problem(float(d[i]))
        if early in (NOTE_NO_ANSWERS, NOTE_ONE_TRUTH_CLASS):  # d′ would rest on padding alone
            results[i] = _not_estimable(np.nan, np.nan, early)
        elif early is not None:
            results[i] = _not_estimable(d[i], c[i], early)
        else:
            fit_rows.append(i)
    if fit_rows:
        rows = np.asarray(fit_rows)
        batch = _Batch(noise[rows], signal[rows], d[rows], c[rows] / d[rows])
        theta, loglik, converged = _fit_batch(batch)
        for j, i in enumerate(fit_rows):
            results[i] = _result(
                theta[j], float(loglik[j]), bool(converged[j]), float(d[i]), float(c[i]), batch.k
            )
    return [r for r in results if r is not None]


def _type1_problem(d: float) -> str | None:
    if not np.isfinite(d):
        return NOTE_RATE_0_OR_1
    if abs(d) < 1e-6:
        return NOTE_D_NEAR_ZERO
    return None


def _finite_or_none(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None


def _not_estimable(d: float, c: float, note: str) -> MetaDResult:
    return MetaDResult(
        d_prime=_finite_or_none(d),
        criterion=_finite_or_none(c),
        meta_d=None,
        m_ratio=None,
        log_likelihood=None,
        note=note,
        converged=False,
    )


def _result(
    theta: FloatArray, loglik: float, converged: bool, d: float, c: float, k: int
) -> MetaDResult:
    if not converged:
        return _not_estimable(d, c, NOTE_NOT_CONVERGED)
    meta_d = float(theta[0])
    meta_c = meta_d * c / d
    edges = np.delete(_edges(theta[None, :], k)[0, 1:-1], k - 1) + meta_c
    return MetaDResult(
        d_prime=d,
        criterion=c,
        meta_d=meta_d,
        m_ratio=meta_d / d if abs(d) >= D_PRIME_MIN else None,
        log_likelihood=loglik,
        note=NOTE_D_NEAR_ZERO if abs(d) < D_PRIME_MIN else None,
        converged=True,
        type2_criteria=tuple(float(e) for e in edges),
    )


# ------------------------------------------------------------------------------------ intervals


def meta_d_interval(
    noise_counts: Counts,
    signal_counts: Counts,
    n_boot: int = 500,
    seed: int = 0,
    level: float = 0.95,
    pad: bool = True,
    point: MetaDResult | None = None,
) -> MetaDInterval:
    """Percentile interval for meta-d′ and the M-ratio by a stratified (per truth class) bootstrap.

    Each replicate redraws the counts on different-source and on same-source items from the
    multinomial with the observed proportions (class totals fixed), then refits d′, c and meta-d′
    exactly as :func:`fit_meta_d` does (padding included). Replicates whose fit does not converge
    are dropped; replicates with no errors are kept (the padded fit is defined for them). The
    M-ratio interval uses each replicate's own d′, so it carries the uncertainty of d′ too; with
    a d′ near 0 this makes it very wide, as it should be. Deterministic for a given ``seed``.
    500 replicates: about 0.1–0.2 s for a 60-item table (one vectorised fit of all replicates).
    Fewer than half the replicates usable: both intervals ``None``.
    """
    noise, signal = _as_table(noise_counts, signal_counts)
    if point is None:  # callers that already fitted the table pass the fit, to save a refit
        point = fit_meta_d(noise, signal, pad=pad)
    if point.meta_d is None:
        return MetaDInterval(None, None, None, None, level, n_boot)
    rng = np.random.default_rng(seed)
    boot_noise = _resample(rng, noise, n_boot)
    boot_signal = _resample(rng, signal, n_boot)
    k = noise.size // 2
    if pad:
        boot_noise, boot_signal = boot_noise + 1 / (2 * k), boot_signal + 1 / (2 * k)
    with np.errstate(all="ignore"):
        d, c = _type1(boot_noise, boot_signal)
    usable = np.flatnonzero(np.isfinite(d) & (np.abs(d) > 1e-6))
    batch = _Batch(boot_noise[usable], boot_signal[usable], d[usable], c[usable] / d[usable])
    theta, _, converged = _fit_batch(batch, bootstrap=True)
    meta = theta[converged, 0]
    if meta.size < n_boot / 2:
        return MetaDInterval(None, None, None, None, level, n_boot)
    tails = [(1 - level) / 2, (1 + level) / 2]
    meta_low, meta_high = np.quantile(meta, tails)
    ratio_low = ratio_high = None
    if point.m_ratio is not None:
        ratio_low, ratio_high = (float(x) for x in np.quantile(meta / batch.d[converged], tails))
    return MetaDInterval(float(meta_low), float(meta_high), ratio_low, ratio_high, level, n_boot)


def _resample(rng: np.random.Generator, counts: FloatArray, n_boot: int) -> FloatArray:
    total = round(float(counts.sum()))
    return rng.multinomial(total, counts / counts.sum(), size=n_boot).astype(np.float64)


# ------------------------------------------------------------------------------- small helpers


def n_errors(noise_counts: Counts, signal_counts: Counts) -> int:
    """Conclusive errors in a raw table: "same" on different-source plus "different" on same."""
    noise, signal = _as_table(noise_counts, signal_counts)
    k = noise.size // 2
    return round(float(noise[k:].sum() + signal[:k].sum()))


def few_errors_flag(n_errors: int, threshold: int = FEW_ERRORS_THRESHOLD) -> bool:
    """True when meta-d′/M-ratio rest on fewer than ``threshold`` errors and must be flagged."""
    return n_errors < threshold


def pool_tables(
    tables: Sequence[tuple[Counts, Counts]],
) -> tuple[FloatArray, FloatArray]:
    """Sum raw rating tables of one participant across rounds (all must have the same K).

    Pool raw counts, then fit once (padding is applied by the fit, not here).
    """
    if not tables:
        raise ValueError("pool_tables needs at least one table")
    pairs = [_as_table(n, s) for n, s in tables]
    sizes = {n.size for n, _ in pairs}
    if len(sizes) != 1:
        raise ValueError(
            f"cannot pool rating tables with different numbers of levels: {sorted(sizes)}"
        )
    return np.sum([n for n, _ in pairs], axis=0), np.sum([s for _, s in pairs], axis=0)


# ------------------------------------------------------------------------------ ideal observer


def ideal_observer(
    d_prime: float,
    criterion: float,
    n_levels: int,
    *,
    noise_counts: Counts | None = None,
    signal_counts: Counts | None = None,
) -> IdealInsight:
    """Expected type-2 AUROC and confidence gap of an observer with meta-d′ = d′ (closed form).

    The observer is the equal-variance SDT model with the given d′ and c (evidence means ±d′/2,
    answer "same" above c); its confidence is read from the same evidence, higher further from c.
    Its K−1 confidence criteria on each side are placed so that it uses the confidence levels as
    often as the participant did on that side (quantiles of the evidence given the answer), taken
    from ``noise_counts``/``signal_counts`` when given, otherwise equally often. Base rates of the
    two truth classes come from the same counts (otherwise 1/2). The type-2 AUROC is that of
    Fleming & Lau (2014): P(confidence correct > confidence wrong) + ½ P(tie); the gap is on the
    1..K scale (multiply by the step of a linear probability mapping to express it as probability).
    """
    k = n_levels
    use, base_signal = _rating_use(k, noise_counts, signal_counts)
    left_edges, right_edges = _ideal_edges(d_prime, criterion, base_signal, use)
    correct = np.zeros(k)
    wrong = np.zeros(k)
    for mean, weight, is_signal in (
        (-d_prime / 2, 1 - base_signal, False),
        (d_prime / 2, base_signal, True),
    ):
        said_noise = np.diff(special.ndtr(left_edges - mean))[::-1]  # confidence 1..K
        said_signal = np.diff(special.ndtr(right_edges - mean))
        (correct if not is_signal else wrong)[:] += weight * said_noise
        (correct if is_signal else wrong)[:] += weight * said_signal
    if not (correct.sum() > 0 and wrong.sum() > 0):
        raise ValueError(f"d′ = {d_prime} leaves no correct or no wrong answers to compare")
    return IdealInsight(type2_auroc=_auroc2(correct, wrong), conf_gap=_conf_gap(correct, wrong))


def _rating_use(
    k: int, noise_counts: Counts | None, signal_counts: Counts | None
) -> tuple[FloatArray, float]:
    """Share of each confidence level (1..K) within each answer, rows "different", "same"."""
    use = np.full((2, k), 1.0 / k)
    if noise_counts is None or signal_counts is None:
        return use, 0.5
    noise, signal = _as_table(noise_counts, signal_counts)
    if noise.size != 2 * k:
        raise ValueError(f"table has {noise.size // 2} levels per side, expected {k}")
    both = noise + signal
    for row, side in enumerate((both[:k][::-1], both[k:])):
        if side.sum() > 0:
            use[row] = side / side.sum()
    total = noise.sum() + signal.sum()
    return use, float(signal.sum() / total) if total > 0 else 0.5


def _ideal_edges(
    d: float, c: float, base_signal: float, use: FloatArray
) -> tuple[FloatArray, FloatArray]:
    """Criteria (K+1 each, ascending) for "different" (x < c) and "same" (x > c) answers."""

    def below(x: float) -> float:  # mixture mass below x (ndtr: the normal cdf, without the
        # argument checking of stats.norm.cdf that made this root search the slowest step)
        return float((1 - base_signal) * special.ndtr(x + d / 2)
                     + base_signal * special.ndtr(x - d / 2))

    def solve(target: float, lo: float, hi: float) -> float:
        if target <= below(lo):
            return lo
        if target >= below(hi):
            return hi
        return float(optimize.brentq(lambda x: below(x) - target, lo, hi, xtol=1e-12))

    at_c, span = below(c), 40.0 + abs(d)
    cum_left = np.cumsum(use[0])[:-1]  # confidence 1, 1–2, ...: mass just below c
    cum_right = np.cumsum(use[1])[:-1]
    left = [solve(at_c * (1 - q), c - span, c) for q in cum_left]
    right = [solve(at_c + (1 - at_c) * q, c, c + span) for q in cum_right]
    left_edges = np.array([-np.inf, *left[::-1], c])
    right_edges = np.array([c, *right, np.inf])
    return left_edges, right_edges


def _auroc2(correct: FloatArray, wrong: FloatArray) -> float:
    """Type-2 ROC area from confidence distributions (levels 1..K) of correct and wrong answers."""
    c = correct / correct.sum()
    w = wrong / wrong.sum()
    below = np.concatenate(([0.0], np.cumsum(w)[:-1]))
    return float(np.sum(c * (below + w / 2)))


def _conf_gap(correct: FloatArray, wrong: FloatArray) -> float:
    levels = np.arange(1, correct.size + 1)
    return float(levels @ correct / correct.sum() - levels @ wrong / wrong.sum())
