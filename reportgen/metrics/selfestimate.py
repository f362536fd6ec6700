"""Group views of self-estimates and of insight against ability (the group appendix).

Quartile view. Participants are grouped by quartile of actual score, and the mean self-estimate of
each quarter is set beside its mean score. That familiar figure shows
"the weakest overestimate, the strongest underestimate" even when estimates carry no information
about score, through regression to the mean (Krueger & Mueller 2002; Nuhfer et al. 2016). So every
quarter carries a *null band*: the 2.5–97.5 % range of its mean estimate when estimates are
shuffled across participants (seeded permutations), i.e. what the quarter would show if estimates
were unrelated to score. Beside it, ``fitted`` is the estimate predicted at the quarter's mean score
by the least-squares line of estimate on score: what a linear relation with imperfect correlation
(plain regression toward the mean) predicts for that quarter.

Glejser test (Glejser 1969, *JASA* 64:316; used for this question by Gignac & Zajenkowski 2020,
*Intelligence* 80:101449): regress estimate on score; then regress the absolute residual on score.
A negative slope says the estimates of low scorers miss by more (the claim usually made about the
unskilled), a positive one the reverse; a quadratic term tests a curved dependence.

Insight by ability: per accuracy group, mean confidence when right and when wrong, with 95 %
t-intervals; participants without errors have no "wrong" mean and are left out of it (NaN-aware).

Pure numpy/scipy; nothing is read, written or printed here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy import stats

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.intp]
ArrayLike = npt.ArrayLike

NULL_LEVEL = 0.95
SIGNIFICANCE = 0.05


@dataclass(frozen=True)
class QuartileRow:
    """One quarter of participants by actual score (1 = weakest); ``None`` where it is empty."""

    quartile: int
    n: int
    mean_score: float | None
    mean_estimate: float | None
    null_low: float | None  # 2.5 % of the mean estimate under shuffled estimates
    null_high: float | None  # 97.5 %
    null_mean: float | None  # mean over the shuffles (≈ the overall mean estimate)
    fitted: float | None  # least-squares line of estimate on score, at this quarter's mean score

    @property
    def gap(self) -> float | None:
        """Mean estimate − mean score (positive: the quarter overestimated)."""
        if self.mean_estimate is None or self.mean_score is None:
            return None
        return self.mean_estimate - self.mean_score

    @property
    def inside_null(self) -> bool | None:
        """True when the quarter's mean estimate lies inside the shuffled-estimates band."""
        if self.mean_estimate is None or self.null_low is None or self.null_high is None:
            return None
        return self.null_low <= self.mean_estimate <= self.null_high


@dataclass(frozen=True)
class GlejserResult:
    """Estimate ~ score by least squares, then |residual| ~ score (and ~ score + score²)."""

    n: int
    estimate_intercept: float
    estimate_slope: float  # slope of estimate on score
    slope: float  # slope of |residual| on score
    slope_p: float | None  # two-sided t-test; None when the residuals are all zero
    quadratic_p: float | None  # p of the score² term in |residual| ~ score + score²


@dataclass(frozen=True)
class QuartileView:
    rows: tuple[QuartileRow, ...]
    glejser: GlejserResult | None  # None with fewer than 4 participants or a constant score
    n: int  # participants with both a score and an estimate
    n_perm: int
    seed: int


@dataclass(frozen=True)
class MeanInterval:
    """A mean with a 95 % t-interval; ``low``/``high`` are ``None`` below two values."""

    n: int
    mean: float | None
    low: float | None
    high: float | None


@dataclass(frozen=True)
class AbilityGroup:
    """One accuracy group (1 = least accurate) of :func:`insight_by_ability`."""

    group: int
    n: int
    accuracy_min: float | None
    accuracy_max: float | None
    accuracy_mean: float | None
    conf_correct: MeanInterval
    conf_wrong: MeanInterval  # participants without errors are left out (see ``n``)
    conf_gap: MeanInterval  # paired: correct − wrong, participants with both


# --------------------------------------------------------------------------------- grouping


def rank_groups(values: ArrayLike, n_groups: int) -> IntArray:
    """Group index 0..n_groups−1 by rank; tied values always share a group (average ranks)."""
    x = np.asarray(values, dtype=np.float64)
    if x.size == 0:
        return np.zeros(0, dtype=np.intp)
    ranks = stats.rankdata(x, method="average")
    groups: IntArray = np.clip(np.floor(n_groups * (ranks - 0.5) / x.size), 0, n_groups - 1)
    return groups.astype(np.intp)


def _paired_finite(a: ArrayLike, b: ArrayLike) -> tuple[FloatArray, FloatArray]:
    x = np.asarray(a, dtype=np.float64).ravel()
    y = np.asarray(b, dtype=np.float64).ravel()
    if x.shape != y.shape:
        raise ValueError(f"arrays differ in length: {x.size} and {y.size}")
    keep = np.isfinite(x) & np.isfinite(y)
    return x[keep], y[keep]


# ----------------------------------------------------------------------------- quartile view


def quartile_view(
    score: ArrayLike, estimate: ArrayLike, n_perm: int = 2000, seed: int = 0
) -> QuartileView:
    """Quartiles of actual score with mean score, mean estimate, null band and fitted line.

    ``score`` and ``estimate`` are on the same scale (both proportions, or both percent). Pairs with
    a missing (NaN) value are left out. The null band permutes the estimates across participants
    ``n_perm`` times with ``numpy.random.default_rng(seed)``; quartile membership stays fixed.
    """
    x, y = _paired_finite(score, estimate)
    groups = rank_groups(x, 4)
    onehot = (groups[:, None] == np.arange(4)[None, :]).astype(np.float64)
    sizes = onehot.sum(0)
    glejser = glejser_test(x, y)
    null = _null_means(y, onehot, sizes, n_perm, seed)
    rows = []
    for g in range(4):
        members = groups == g
        if not members.any():
            rows.append(QuartileRow(g + 1, 0, None, None, None, None, None, None))
            continue
        mean_score = float(x[members].mean())
        fitted = None
        if glejser is not None:
            fitted = glejser.estimate_intercept + glejser.estimate_slope * mean_score
        low, high = np.quantile(null[:, g], [(1 - NULL_LEVEL) / 2, (1 + NULL_LEVEL) / 2])
        rows.append(
            QuartileRow(
                quartile=g + 1,
                n=int(sizes[g]),
                mean_score=mean_score,
                mean_estimate=float(y[members].mean()),
                null_low=float(low),
                null_high=float(high),
                null_mean=float(null[:, g].mean()),
                fitted=fitted,
            )
        )
    return QuartileView(tuple(rows), glejser, int(x.size), n_perm, seed)


def _null_means(
    y: FloatArray, onehot: FloatArray, sizes: FloatArray, n_perm: int, seed: int
) -> FloatArray:
    """Mean estimate per group (n_perm, 4) with estimates permuted across participants."""
    rng = np.random.default_rng(seed)
    shuffled = rng.permuted(np.broadcast_to(y, (n_perm, y.size)), axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return (shuffled @ onehot) / sizes[None, :]


# ------------------------------------------------------------------------------ Glejser test


def _ols(design: FloatArray, y: FloatArray) -> tuple[FloatArray, FloatArray | None]:
    """Coefficients and their two-sided t-test p-values (None when the residual variance is 0)."""
    coef = np.asarray(np.linalg.lstsq(design, y, rcond=None)[0], dtype=np.float64)
    resid = y - design @ coef
    df = y.size - design.shape[1]
    sigma2 = float(resid @ resid) / df
    if sigma2 <= 1e-28 * max(float(y @ y), 1.0):
        return coef, None
    cov = sigma2 * np.linalg.inv(design.T @ design)
    t = coef / np.sqrt(np.diag(cov))
    p_values: FloatArray = 2 * stats.t.sf(np.abs(t), df)
    return coef, p_values


def glejser_test(score: ArrayLike, estimate: ArrayLike) -> GlejserResult | None:
    """Glejser (1969) heteroscedasticity test of estimate on score, linear and quadratic.

    Steps (Gignac & Zajenkowski 2020): (1) estimate = a + b·score by least squares; (2) |residual|
    = a₂ + b₂·score: ``slope`` = b₂ and ``slope_p`` its two-sided t-test; (3) |residual| = a₃ +
    b₃·score + q·score²: ``quadratic_p`` is the t-test of q. Needs 4 participants and a score that
    varies; otherwise ``None``.
    """
    x, y = _paired_finite(score, estimate)
    if x.size < 4 or np.ptp(x) == 0:
        return None
    ones = np.ones_like(x)
    (intercept, slope), _ = _ols(np.column_stack([ones, x]), y)
    abs_resid = np.abs(y - (intercept + slope * x))
    lin_coef, lin_p = _ols(np.column_stack([ones, x]), abs_resid)
    centred = x - x.mean()  # centring changes neither the fit nor the p of the square term
    _, quad_p = _ols(np.column_stack([ones, centred, centred**2]), abs_resid)
    return GlejserResult(
        n=int(x.size),
        estimate_intercept=float(intercept),
        estimate_slope=float(slope),
        slope=float(lin_coef[1]),
        slope_p=None if lin_p is None else float(lin_p[1]),
        quadratic_p=None if quad_p is None else float(quad_p[2]),
    )


# --------------------------------------------------------------------------- plain language


# ------------------------------------------------------------------------- insight by ability


def mean_interval(values: ArrayLike, level: float = 0.95) -> MeanInterval:
    """Mean of the finite values with a Student t-interval (``None`` bounds below two values)."""
    x = np.asarray(values, dtype=np.float64).ravel()
    x = x[np.isfinite(x)]
    if x.size == 0:
        return MeanInterval(0, None, None, None)
    mean = float(x.mean())
    if x.size < 2:
        return MeanInterval(1, mean, None, None)
    half = float(stats.t.ppf((1 + level) / 2, x.size - 1) * x.std(ddof=1) / np.sqrt(x.size))
    return MeanInterval(int(x.size), mean, mean - half, mean + half)


def insight_by_ability(
    accuracy: ArrayLike,
    mean_conf_correct: ArrayLike,
    mean_conf_wrong: ArrayLike,
    n_groups: int = 4,
) -> tuple[AbilityGroup, ...]:
    """Mean confidence when right and when wrong, per accuracy group (ties share a group).

    A participant's ``mean_conf_wrong`` is NaN when they made no error: they count in the group's
    ``n`` and in ``conf_correct`` but not in ``conf_wrong`` or ``conf_gap``.
    """
    acc = np.asarray(accuracy, dtype=np.float64).ravel()
    right = np.asarray(mean_conf_correct, dtype=np.float64).ravel()
    wrong = np.asarray(mean_conf_wrong, dtype=np.float64).ravel()
    if not acc.size == right.size == wrong.size:
        raise ValueError("accuracy and confidence arrays differ in length")
    keep = np.isfinite(acc)
    groups = np.full(acc.size, -1, dtype=np.intp)
    groups[keep] = rank_groups(acc[keep], n_groups)
    out = []
    for g in range(n_groups):
        m = groups == g
        out.append(
            AbilityGroup(
                group=g + 1,
                n=int(m.sum()),
                accuracy_min=float(acc[m].min()) if m.any() else None,
                accuracy_max=float(acc[m].max()) if m.any() else None,
                accuracy_mean=float(acc[m].mean()) if m.any() else None,
                conf_correct=mean_interval(right[m]),
                conf_wrong=mean_interval(wrong[m]),
                conf_gap=mean_interval(right[m] - wrong[m]),
            )
        )
    return tuple(out)
