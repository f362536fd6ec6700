"""Quartile view, Glejser test and insight by ability — reportgen.metrics.selfestimate.

Outside references: statsmodels OLS (slopes, t-test p-values), scipy.stats.t.interval (t-intervals),
numpy.polyfit (least-squares line); the regression-to-the-mean expectations are those stated in
REFERENCES.md ("Self-estimates against scores": Krueger & Mueller 2002; Nuhfer et al. 2016;
Gignac & Zajenkowski 2020).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt
import pytest
import statsmodels.api as sm
from scipy import stats

from reportgen.metrics.selfestimate import (
    glejser_test,
    insight_by_ability,
    mean_interval,
    quartile_view,
    rank_groups,
)
from reportgen.render.wording.statements import quartile_reading

FloatArray = npt.NDArray[np.float64]


def _independent(seed: int, n: int = 120) -> tuple[FloatArray, FloatArray]:
    """Scores and self-estimates drawn independently (REFERENCES: the quartile gap must appear)."""
    rng = np.random.default_rng(seed)
    score = np.clip(rng.normal(0.75, 0.1, n), 0, 1)
    estimate = np.clip(rng.normal(0.75, 0.1, n), 0, 1)
    return score, estimate


def _shrinking_error(seed: int, n: int = 120) -> tuple[FloatArray, FloatArray]:
    """Estimates whose absolute error shrinks as score rises (a true ability-dependent effect)."""
    rng = np.random.default_rng(seed)
    score = rng.uniform(0.4, 1.0, n)
    spread = 0.02 + 0.5 * (1.0 - score)
    estimate = score + rng.normal(0.0, 1.0, n) * spread
    return score, estimate


# ----------------------------------------------------------------------------- quartile view


def test_independent_estimates_show_the_gap_inside_the_null_band() -> None:
    # REFERENCES: with estimates independent of scores the quartile gap appears (weakest
    # overestimate, strongest underestimate) but stays inside the null band, and the Glejser
    # slope is not significant.
    # Fixed seeds; each quarter falls outside its 95 % band by chance 5 % of the time.
    score, estimate = _independent(seed=0)
    view = quartile_view(score, estimate, n_perm=2000, seed=1)
    weakest, strongest = view.rows[0], view.rows[-1]
    assert weakest.gap is not None and weakest.gap > 0.05
    assert strongest.gap is not None and strongest.gap < -0.05
    assert all(row.inside_null for row in view.rows)
    assert view.glejser is not None and view.glejser.slope_p is not None
    assert view.glejser.slope_p > 0.05
    reading = quartile_reading(view)
    assert "The weakest quarter's estimates exceed their scores, but by no more than shuffled" in (
        reading
    )
    assert "regression to the mean alone" in reading
    assert "no evidence" in reading


def test_ability_dependent_error_is_detected() -> None:
    score, estimate = _shrinking_error(seed=2)
    g = glejser_test(score, estimate)
    assert g is not None and g.slope_p is not None
    assert g.slope < 0
    assert g.slope_p < 0.01
    reading = quartile_reading(quartile_view(score, estimate, seed=3))
    assert "The estimates of lower scorers miss their scores by more" in reading


@pytest.mark.parametrize("make", [_independent, _shrinking_error])
def test_glejser_matches_statsmodels(make: object) -> None:
    score, estimate = make(seed=8)  # type: ignore[operator]
    ours = glejser_test(score, estimate)
    assert ours is not None
    # Outside reference: statsmodels OLS, the two-step Glejser procedure done by hand.
    first = sm.OLS(estimate, sm.add_constant(score)).fit()
    abs_resid = np.abs(first.resid)
    second = sm.OLS(abs_resid, sm.add_constant(score)).fit()
    quad = sm.OLS(abs_resid, np.column_stack([np.ones_like(score), score, score**2])).fit()
    assert ours.estimate_intercept == pytest.approx(first.params[0], abs=1e-10)
    assert ours.estimate_slope == pytest.approx(first.params[1], abs=1e-10)
    assert ours.slope == pytest.approx(second.params[1], abs=1e-10)
    assert ours.slope_p == pytest.approx(second.pvalues[1], rel=1e-6)
    assert ours.quadratic_p == pytest.approx(quad.pvalues[2], rel=1e-6)


def test_glejser_not_available_for_too_little_data() -> None:
    assert glejser_test([0.5, 0.6, 0.7], [0.5, 0.5, 0.5]) is None
    assert glejser_test([0.5] * 6, [0.1, 0.2, 0.3, 0.4, 0.5, 0.6]) is None  # constant score


def test_perfect_estimates_have_no_p_value() -> None:
    score = np.linspace(0.3, 0.9, 10)
    g = glejser_test(score, score)
    assert g is not None
    assert g.slope_p is None and g.quadratic_p is None


def test_null_band_is_seeded_and_centred_on_the_mean_estimate() -> None:
    score, estimate = _independent(seed=6)
    first = quartile_view(score, estimate, n_perm=500, seed=12)
    assert first == quartile_view(score, estimate, n_perm=500, seed=12)
    # Identity: the mean over permutations of a group mean is the overall mean estimate.
    for row in first.rows:
        assert row.null_mean == pytest.approx(estimate.mean(), abs=0.005)
        assert row.null_low is not None and row.null_high is not None
        assert row.null_low < estimate.mean() < row.null_high


def test_fitted_line_is_least_squares() -> None:
    score, estimate = _shrinking_error(seed=5)
    view = quartile_view(score, estimate, n_perm=100)
    slope, intercept = np.polyfit(score, estimate, 1)  # outside reference: numpy.polyfit
    for row in view.rows:
        assert row.mean_score is not None
        assert row.fitted == pytest.approx(intercept + slope * row.mean_score, abs=1e-10)


def test_strong_true_relation_is_not_called_an_artefact() -> None:
    # Estimates that track scores closely: the weakest quarter sits below the null band, and the
    # reading credits the estimates rather than regression to the mean.
    rng = np.random.default_rng(3)
    score = rng.uniform(0.4, 1.0, 100)
    estimate = score + rng.normal(0, 0.03, 100)
    view = quartile_view(score, estimate, seed=2)
    assert view.rows[0].inside_null is False
    reading = quartile_reading(view)
    assert "partly reflected their lower scores" in reading
    assert "regression to the mean alone" not in reading


def test_missing_estimates_are_left_out() -> None:
    score, estimate = _independent(seed=1, n=40)
    estimate[:5] = np.nan
    view = quartile_view(score, estimate, n_perm=100)
    assert view.n == 35
    assert sum(row.n for row in view.rows) == 35


def test_rank_groups_keep_ties_together_and_balance() -> None:
    values = np.array([0.5, 0.5, 0.5, 0.6, 0.7, 0.8, 0.8, 0.9])
    groups = rank_groups(values, 4)
    assert len(set(groups[:3])) == 1  # ties share a group
    assert groups[5] == groups[6]
    assert list(groups) == sorted(groups)
    balanced = rank_groups(np.arange(100.0), 4)
    assert np.bincount(balanced).tolist() == [25, 25, 25, 25]


def test_too_few_estimates_reading() -> None:
    view = quartile_view([0.5, 0.6, 0.7], [0.6, 0.6, 0.6], n_perm=50)
    assert quartile_reading(view) == "Too few self-estimates for a quartile view."


# ------------------------------------------------------------------------ insight by ability


def test_mean_interval_matches_scipy() -> None:
    x = np.array([3.1, 2.7, 3.9, 4.2, 3.3, np.nan])
    ours = mean_interval(x)
    finite = x[np.isfinite(x)]
    low, high = stats.t.interval(
        0.95, finite.size - 1, loc=finite.mean(), scale=stats.sem(finite)
    )  # outside reference
    assert ours.n == 5
    assert ours.low == pytest.approx(low, abs=1e-12)
    assert ours.high == pytest.approx(high, abs=1e-12)
    assert mean_interval([np.nan]).mean is None
    single = mean_interval([2.0])
    assert (single.n, single.mean, single.low, single.high) == (1, 2.0, None, None)


def test_insight_by_ability_excludes_participants_without_errors() -> None:
    rng = np.random.default_rng(0)
    accuracy = rng.uniform(0.6, 1.0, 80)
    right = 3.5 + accuracy + rng.normal(0, 0.2, 80)
    wrong = 2.5 + rng.normal(0, 0.3, 80)
    wrong[accuracy > 0.95] = np.nan  # no errors: no "wrong" mean
    groups = insight_by_ability(accuracy, right, wrong)
    assert [g.group for g in groups] == [1, 2, 3, 4]
    assert sum(g.n for g in groups) == 80
    top = groups[-1]
    assert top.conf_wrong.n == top.n - int(np.sum(accuracy > 0.95))
    assert top.conf_gap.n == top.conf_wrong.n
    assert top.conf_correct.n == top.n
    means = [g.accuracy_mean for g in groups]
    assert means == sorted(means)  # type: ignore[type-var]
    members = accuracy <= groups[0].accuracy_max  # type: ignore[operator]
    assert groups[0].conf_correct.mean == pytest.approx(right[members].mean())


def test_insight_by_ability_rejects_mismatched_arrays() -> None:
    with pytest.raises(ValueError, match="differ in length"):
        insight_by_ability([0.5, 0.6], [3.0], [2.0, 2.0])
