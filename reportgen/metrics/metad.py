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

from reportgen.metrics.metad_fit import Batch, edges_of, fit_batch
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
    """Percentile interval of a stratified bootstrap for meta-d′ and the M-ratio.

    Bounds are ``None`` where the point estimate is not estimable.
    """

    meta_d_low: float | None
    meta_d_high: float | None
    m_ratio_low: float | None
    m_ratio_high: float | None
    level: float
    n_boot: int


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
        batch = Batch(noise[rows], signal[rows], d[rows], c[rows] / d[rows])
        theta, loglik, converged = fit_batch(batch)
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
    exactly as :func:`fit_meta_d` does (padding included). Replicates whose fit does not converge
    are dropped; replicates with no errors are kept (the padded fit is defined for them). The
    M-ratio interval uses each replicate's own d′, so it carries the uncertainty of d′ too; with
    a d′ near 0 this makes it very wide, as it should be. Deterministic for a given ``seed``.
    500 replicates: about 0.1–0.2 s for a 60-item table (one vectorised fit of all replicates).
    Fewer than half the replicates usable: both intervals ``None``.
    """
    noise, signal = as_table(noise_counts, signal_counts)
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
    batch = Batch(boot_noise[usable], boot_signal[usable], d[usable], c[usable] / d[usable])
    theta, _, converged = fit_batch(batch, bootstrap=True)
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
