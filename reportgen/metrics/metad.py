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
meta-d′ are computed (docs/design.md §3, following the authors' code).

Fitting (:mod:`.metad_fit`): the ordered criteria are written as log-gaps from the type-1
criterion outwards, so the problem is unconstrained; it is solved by Fisher scoring with
step-halving, vectorised over many tables at once (one participant, a whole round, or every
bootstrap replicate in one call). It starts from meta-d′ = d′ and the criteria implied by the
observed cumulative rating rates (the authors' starting guess). :mod:`.metad_reference` holds a
slow brute-force fit used to check this one; :mod:`.ideal_observer` the observer the estimates
are compared with.

Degenerate tables never raise: ``meta_d`` is ``None`` and ``note`` says why (see the ``NOTE_*``
constants). Nothing here prints, reads files or uses pandas.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy import special

from reportgen.metrics.metad_fit import TIME_LIMIT, Batch, edges_of, fit_batch
from reportgen.metrics.metad_profile import profile_ends
from reportgen.metrics.stability import FEW_ERRORS_THRESHOLD

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
NOTE_TIME_LIMIT = "the fit did not finish within its time limit"

MAX_LEVELS = 20
"""Most confidence levels per side a meta-d′ fit takes (the limit of an ordinal scale). The fit
has 2K − 1 parameters and its cost grows as K³; a finer scale (a 0–100 slider read by distinct
value) must be binned first, else meta-d′ is not estimable with :data:`NOTE_TOO_MANY_LEVELS`."""
NOTE_TOO_MANY_LEVELS = f"more than {MAX_LEVELS} confidence levels: the scale needs bins"

D_PRIME_MIN = 0.3
"""Below this |d′| the M-ratio is not reported (meta-d′ still is; at |d′| < 1e-6 neither is, as
meta-c = meta-d′·c/d′ is undefined). A d′ below −0.3 (systematically reversed answers) keeps its
ratio, as in the authors' code.

0.3 is about one standard error of d′ at d′ = 0 for a 60-item round (30 + 30 conclusive answers:
Gourevitch–Galanter SE ≈ 0.32), i.e. a d′ this small cannot be told from chance, and a ratio with
such a denominator swings without bound."""

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
    """Interval for meta-d′ and the M-ratio: ``method`` "profile" (:func:`meta_d_profile_intervals`,
    ``n_boot`` 0) or "bootstrap" (percentiles of ``n_boot`` stratified resamples).

    Bounds are ``None`` where the point estimate is not estimable.
    """

    meta_d_low: float | None
    meta_d_high: float | None
    m_ratio_low: float | None
    m_ratio_high: float | None
    level: float
    n_boot: int
    method: str = "bootstrap"


# --------------------------------------------------------------------------------------- tables


def as_table(noise_counts: Counts, signal_counts: Counts) -> tuple[FloatArray, FloatArray]:
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
    noise, signal = as_table(noise_counts, signal_counts)
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


# ------------------------------------------------------------------------------- public fits


def fit_meta_d(noise_counts: Counts, signal_counts: Counts, pad: bool = True) -> MetaDResult:
    """meta-d′ and M-ratio of one rating table by maximum likelihood (Maniscalco & Lau 2012).

    ``noise_counts``/``signal_counts``: counts (2K,) on different-/same-source items, ordered "sure
    different, K" … "different, 1", "same, 1" … "sure same, K" (conclusive answers only). With
    ``pad`` 1/(2K) is added to every cell. Never raises on a valid table; see ``NOTE_*``.
    """
    noise, signal = as_table(noise_counts, signal_counts)
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
    tables = [as_table(n, s) for n, s in zip(noise_rows, signal_rows, strict=True)]
    if not tables:
        return []
    noise = np.vstack([t[0] for t in tables])
    signal = np.vstack([t[1] for t in tables])
    too_many = noise.shape[1] // 2 > MAX_LEVELS
    reasons = [NOTE_TOO_MANY_LEVELS if too_many else degenerate_reason(n, s) for n, s in tables]
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
        batch = Batch(noise[rows], signal[rows], d[rows], c[rows] / d[rows])
        fit = fit_batch(batch)
        for j, i in enumerate(fit_rows):
            if fit.timed_out[j]:
                results[i] = _not_estimable(d[i], c[i], NOTE_TIME_LIMIT)
                continue
            results[i] = _result(fit.theta[j], float(fit.loglik[j]), bool(fit.converged[j]),
                                 float(d[i]), float(c[i]), batch.k)
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
    edges = np.delete(edges_of(theta[None, :], k)[0, 1:-1], k - 1) + meta_c
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
    exactly as :func:`fit_meta_d` does (padding included).
    Replicates whose fit does not converge are dropped; replicates with no errors are kept (the
    padded fit is defined for them). The M-ratio interval uses each replicate's own d′, so it
    carries the uncertainty of d′ too; with a d′ near 0 this makes it very wide, as it should
    be. Deterministic for a given ``seed``. Fewer than half the replicates usable: both
    intervals ``None``. For many tables use :func:`meta_d_intervals` (one batch for all).
    """
    noise, signal = as_table(noise_counts, signal_counts)
    if point is None:  # callers that already fitted the table pass the fit, to save a refit
        point = fit_meta_d(noise, signal, pad=pad)
    return meta_d_intervals(noise[None, :], signal[None, :], [point], [seed], n_boot=n_boot,
                            level=level, pad=pad)[0]


def meta_d_profile_intervals(
    noise_counts: npt.ArrayLike,
    signal_counts: npt.ArrayLike,
    points: Sequence[MetaDResult],
    level: float = 0.95,
    pad: bool = True,
    time_limit: float = TIME_LIMIT,
) -> list[MetaDInterval]:
    """Profile-likelihood intervals for meta-d′ and the M-ratio of B tables (B, 2K) at once.

    meta-d′: the values whose profile log-likelihood is within χ²₁(level)/2 of the maximum
    (:mod:`.metad_profile`; Wilks 1938; Venzon & Moolgavkar 1988). M-ratio: the meta-d′ ends
    divided by d′, each half-width then combined with the uncertainty of d′ by the delta method
    for a ratio of independent estimates, ``half = sqrt(half_meta² + (M·SE(d′)/d′)²)``, with
    SE(d′)² = H(1−H)/(N_s φ(z_H)²) + F(1−F)/(N_n φ(z_F)²) on the padded table (Gourevitch &
    Galanter 1967, *Psychometrika* 32:25; Macmillan & Creelman 2005, ch. 13). Deterministic, no
    resampling. ``points`` are the tables' fits (:func:`fit_meta_d_many` with the same ``pad``).
    Coverage on simulated observers: ``benchmarks/bench_metad_coverage.py``.
    """
    noise_rows = np.atleast_2d(np.asarray(noise_counts, dtype=np.float64))
    signal_rows = np.atleast_2d(np.asarray(signal_counts, dtype=np.float64))
    out = [MetaDInterval(None, None, None, None, level, 0, "profile")] * len(points)
    todo = [b for b, p in enumerate(points) if p.meta_d is not None]
    for first in range(0, len(todo), PROFILE_CHUNK):
        rows = todo[first:first + PROFILE_CHUNK]
        for b, interval in zip(rows, _profile_chunk(noise_rows, signal_rows, points, rows,
                                                    level, pad, time_limit), strict=True):
            out[b] = interval
    return out


PROFILE_CHUNK = 5_000
"""Tables whose profile intervals are searched in one batch (each batch has its own time limit,
so a large round is never cut short by the safety net)."""


def _profile_chunk(noise_rows: FloatArray, signal_rows: FloatArray,
                   points: Sequence[MetaDResult], todo: Sequence[int], level: float, pad: bool,
                   time_limit: float) -> list[MetaDInterval]:
    k = noise_rows.shape[1] // 2
    extra = 1 / (2 * k) if pad else 0.0
    noise, signal = noise_rows[todo] + extra, signal_rows[todo] + extra
    d = np.array([points[b].d_prime for b in todo], dtype=np.float64)
    c = np.array([points[b].criterion for b in todo], dtype=np.float64)
    theta = np.vstack([_theta_of(points[b], k) for b in todo])
    loglik = np.array([points[b].log_likelihood for b in todo], dtype=np.float64)
    low, high = profile_ends(Batch(noise, signal, d, c / d), theta, loglik, level, time_limit)
    se_d = _d_prime_se(noise, signal)
    return [_profile_interval(points[b], float(low[j]), float(high[j]), float(se_d[j]), level)
            for j, b in enumerate(todo)]


def _d_prime_se(noise: FloatArray, signal: FloatArray) -> FloatArray:
    """SE of d′ from the middle split (Gourevitch & Galanter 1967), rows are tables."""
    k = noise.shape[1] // 2
    n_n, n_s = noise.sum(1), signal.sum(1)
    hit, fa = signal[:, k:].sum(1) / n_s, noise[:, k:].sum(1) / n_n
    with np.errstate(all="ignore"):
        var = (hit * (1 - hit) / (n_s * _phi(special.ndtri(hit)) ** 2)
               + fa * (1 - fa) / (n_n * _phi(special.ndtri(fa)) ** 2))
    out: FloatArray = np.sqrt(var)
    return out


def _phi(z: FloatArray) -> FloatArray:
    out: FloatArray = np.exp(-0.5 * z * z) / np.sqrt(2 * np.pi)
    return out


def _profile_interval(point: MetaDResult, low: float, high: float, se_d: float,
                      level: float) -> MetaDInterval:
    if not (np.isfinite(low) and np.isfinite(high)) or point.meta_d is None:
        return MetaDInterval(None, None, None, None, level, 0, "profile")
    ratio_low = ratio_high = None
    if point.m_ratio is not None and point.d_prime is not None and np.isfinite(se_d):
        d, m = point.d_prime, point.m_ratio
        ends = sorted((low / d, high / d))
        extra = abs(m) * se_d / abs(d)
        ratio_low = m - float(np.hypot(m - ends[0], extra))
        ratio_high = m + float(np.hypot(ends[1] - m, extra))
    return MetaDInterval(low, high, ratio_low, ratio_high, level, 0, "profile")


BOOT_CHUNK = 20_000
"""Bootstrap replicates fitted per batch: bounds memory (a few MB per batch) at any round size."""


def meta_d_intervals(
    noise_counts: npt.ArrayLike,
    signal_counts: npt.ArrayLike,
    points: Sequence[MetaDResult],
    seeds: Sequence[int],
    n_boot: int = 500,
    level: float = 0.95,
    pad: bool = True,
    time_limit: float = TIME_LIMIT,
) -> list[MetaDInterval]:
    """:func:`meta_d_interval` for B tables (B, 2K) at once, with their point fits and seeds.

    Table b's replicates are drawn from ``numpy.random.default_rng(seeds[b])`` exactly as
    :func:`meta_d_interval` draws them, so an interval does not depend on the other tables; all
    replicates of all tables are then fitted together, ``BOOT_CHUNK`` at a time. Each batch
    stops after ``time_limit`` seconds: replicates not finished then are dropped (and a table
    left with fewer than half gets no interval).
    """
    noise_rows = np.atleast_2d(np.asarray(noise_counts, dtype=np.float64))
    signal_rows = np.atleast_2d(np.asarray(signal_counts, dtype=np.float64))
    empty = MetaDInterval(None, None, None, None, level, n_boot)
    out = [empty] * len(points)
    todo = [b for b, p in enumerate(points) if p.meta_d is not None and n_boot > 0]
    if not todo:
        return out
    k = noise_rows.shape[1] // 2
    per_chunk = max(1, BOOT_CHUNK // n_boot)
    for first in range(0, len(todo), per_chunk):
        rows = todo[first:first + per_chunk]
        meta, d, owner = _bootstrap_fits(noise_rows[rows], signal_rows[rows],
                                         [points[b] for b in rows], [seeds[b] for b in rows],
                                         n_boot, pad, k, time_limit)
        for j, b in enumerate(rows):
            mine = owner == j
            out[b] = _percentiles(meta[mine], d[mine], points[b], n_boot, level)
    return out


def _bootstrap_fits(
    noise: FloatArray, signal: FloatArray, points: Sequence[MetaDResult], seeds: Sequence[int],
    n_boot: int, pad: bool, k: int, time_limit: float,
) -> tuple[FloatArray, FloatArray, npt.NDArray[np.intp]]:
    """meta-d′ and d′ of every converged replicate, and the index of the table it belongs to."""
    boot_noise = np.empty((len(seeds) * n_boot, 2 * k))
    boot_signal = np.empty_like(boot_noise)
    for j, seed in enumerate(seeds):
        rng = np.random.default_rng(seed)
        boot_noise[j * n_boot:(j + 1) * n_boot] = _resample(rng, noise[j], n_boot)
        boot_signal[j * n_boot:(j + 1) * n_boot] = _resample(rng, signal[j], n_boot)
    if pad:
        boot_noise, boot_signal = boot_noise + 1 / (2 * k), boot_signal + 1 / (2 * k)
    owner = np.repeat(np.arange(len(seeds)), n_boot)
    with np.errstate(all="ignore"):
        d, c = _type1(boot_noise, boot_signal)
    usable = np.flatnonzero(np.isfinite(d) & (np.abs(d) > 1e-6))
    batch = Batch(boot_noise[usable], boot_signal[usable], d[usable], c[usable] / d[usable])
    fit = fit_batch(batch, bootstrap=True, time_limit=time_limit)
    keep = usable[fit.converged]
    return fit.theta[fit.converged, 0], d[keep], owner[keep]


def _theta_of(point: MetaDResult, k: int) -> FloatArray:
    """The fit's parameters (meta-d′, log-gaps from meta-c outwards) back from a result."""
    if point.meta_d is None or point.type2_criteria is None or point.d_prime is None:
        raise ValueError("a bootstrap needs an estimable point fit")
    meta_c = point.meta_d * (point.criterion or 0.0) / point.d_prime
    crit = np.asarray(point.type2_criteria) - meta_c  # back on the axis with the criterion at 0
    left, right = np.r_[crit[: k - 1], 0.0], np.r_[0.0, crit[k - 1:]]
    gaps = np.r_[np.diff(left)[::-1], np.diff(right)]  # innermost first on each side
    theta: FloatArray = np.r_[point.meta_d, np.log(np.maximum(gaps, 1e-300))]
    return theta


def _percentiles(meta: FloatArray, d: FloatArray, point: MetaDResult, n_boot: int,
                 level: float) -> MetaDInterval:
    if meta.size < n_boot / 2:
        return MetaDInterval(None, None, None, None, level, n_boot)
    tails = [(1 - level) / 2, (1 + level) / 2]
    meta_low, meta_high = np.quantile(meta, tails)
    ratio_low = ratio_high = None
    if point.m_ratio is not None:
        ratio_low, ratio_high = (float(x) for x in np.quantile(meta / d, tails))
    return MetaDInterval(float(meta_low), float(meta_high), ratio_low, ratio_high, level, n_boot)


def _resample(rng: np.random.Generator, counts: FloatArray, n_boot: int) -> FloatArray:
    total = round(float(counts.sum()))
    return rng.multinomial(total, counts / counts.sum(), size=n_boot).astype(np.float64)


# ------------------------------------------------------------------------------- small helpers


def n_errors(noise_counts: Counts, signal_counts: Counts) -> int:
    """Conclusive errors in a raw table: "same" on different-source plus "different" on same."""
    noise, signal = as_table(noise_counts, signal_counts)
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
    pairs = [as_table(n, s) for n, s in tables]
    sizes = {n.size for n, _ in pairs}
    if len(sizes) != 1:
        raise ValueError(
            f"cannot pool rating tables with different numbers of levels: {sorted(sizes)}"
        )
    return np.sum([n for n, _ in pairs], axis=0), np.sum([s for _, s in pairs], axis=0)
