"""Tests for reportgen.metrics.sdt: textbook values, Hautus (1995), Gourevitch–Galanter, sklearn."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from scipy import stats
from sklearn.metrics import roc_auc_score, roc_curve

from reportgen.metrics.sdt import (
    gourevitch_galanter_se,
    rating_auc,
    rating_auc_reason,
    sdt_loglinear,
)

# REFERENCES.md "Rating ROC", vector A: counts by rating "sure different" ... "sure same".
NOISE_A = np.array([52, 32, 35, 37, 26, 12, 4, 2])
SIGNAL_A = np.array([2, 5, 15, 22, 33, 38, 40, 45])


def test_direct_z_formula_textbook_example() -> None:
    # 3/4 hits and 0/4 false alarms give corrected rates (3.5/5, 0.5/5) = (.70, .10) exactly,
    # so the direct formula d' = z(H) − z(F), c = −(z(H)+z(F))/2 is checked at H=.70, F=.10.
    r = sdt_loglinear(3, 4, 0, 4)
    assert float(r.hit_rate) == pytest.approx(0.70)
    assert float(r.fa_rate) == pytest.approx(0.10)
    assert float(r.d_prime) == pytest.approx(
        1.8060, abs=5e-5
    )  # REFERENCES.md (Macmillan & Creelman)
    assert float(r.criterion) == pytest.approx(0.3786, abs=5e-5)  # REFERENCES.md (conservative)
    # Cross-check with scipy's normal quantile directly.
    assert float(r.d_prime) == pytest.approx(stats.norm.ppf(0.7) - stats.norm.ppf(0.1))
    assert float(r.criterion) == pytest.approx(-(stats.norm.ppf(0.7) + stats.norm.ppf(0.1)) / 2)


def test_loglinear_perfect_performance() -> None:
    r = sdt_loglinear(20, 20, 0, 20)
    assert float(r.hit_rate) == pytest.approx(0.97619, abs=5e-6)  # REFERENCES.md, Hautus 1995
    assert float(r.fa_rate) == pytest.approx(0.02381, abs=5e-6)  # REFERENCES.md
    assert float(r.d_prime) == pytest.approx(3.9615, abs=5e-5)  # REFERENCES.md
    assert float(r.criterion) == 0.0  # REFERENCES.md; exactly 0, not -0.0
    assert not np.signbit(r.criterion)


def test_loglinear_18_of_20_and_3_of_20() -> None:
    r = sdt_loglinear(18, 20, 3, 20)
    assert float(r.d_prime) == pytest.approx(2.1472, abs=5e-5)  # REFERENCES.md
    assert float(r.criterion) == pytest.approx(-0.1062, abs=5e-5)  # REFERENCES.md


def test_gourevitch_galanter_reference_value() -> None:
    # REFERENCES.md: H=.8, F=.1, 50 + 50 trials -> SE 0.3151 (uncorrected rates through the helper).
    assert float(gourevitch_galanter_se(0.8, 0.1, 50, 50)) == pytest.approx(0.3151, abs=5e-5)


def test_gourevitch_galanter_is_the_delta_method() -> None:
    # Identity: var(z(p̂)) ≈ (dz/dp)² p(1−p)/n, with dz/dp by a numerical derivative of norm.ppf.
    h, f, ns, nn, eps = 0.8, 0.1, 50, 50, 1e-6
    dz_h = (stats.norm.ppf(h + eps) - stats.norm.ppf(h - eps)) / (2 * eps)
    dz_f = (stats.norm.ppf(f + eps) - stats.norm.ppf(f - eps)) / (2 * eps)
    expected = np.sqrt(dz_h**2 * h * (1 - h) / ns + dz_f**2 * f * (1 - f) / nn)
    assert float(gourevitch_galanter_se(h, f, ns, nn)) == pytest.approx(expected, rel=1e-6)


def test_loglinear_se_uses_corrected_rates_and_actual_counts() -> None:
    # What sdt_loglinear reports: the G–G formula on the corrected rates with n_signal, n_noise.
    r = sdt_loglinear(18, 20, 3, 30)
    expected = gourevitch_galanter_se(18.5 / 21, 3.5 / 31, 20, 30)
    assert float(r.d_prime_se) == pytest.approx(float(expected))


def test_not_estimable_without_trials() -> None:
    r = sdt_loglinear([0, 5, 0], [0, 5, 3], [2, 0, 0], [4, 0, 0])
    assert np.isnan(r.d_prime).tolist() == [True, True, True]
    assert np.isnan(r.d_prime_se).all()
    assert np.isnan(r.criterion).all()
    assert r.reason("no same-source items", "no different-source items").tolist() == [
        "no same-source items",
        "no different-source items",
        "no different-source items",
    ]
    assert sdt_loglinear(1, 2, 1, 2).reason().tolist() is None


def test_invalid_counts_raise() -> None:
    with pytest.raises(ValueError, match="hits"):
        sdt_loglinear(5, 4, 0, 4)


def expand(noise: np.ndarray, signal: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Counts by rating -> (truth, rating) per trial, for sklearn and scipy."""
    ratings = np.arange(noise.size)
    score = np.r_[np.repeat(ratings, noise), np.repeat(ratings, signal)]
    truth = np.r_[np.zeros(noise.sum()), np.ones(signal.sum())]
    return truth, score


def test_rating_auc_vector_a() -> None:
    auc = float(rating_auc(NOISE_A, SIGNAL_A))
    assert auc == pytest.approx(0.861387, abs=5e-7)  # REFERENCES.md
    truth, score = expand(NOISE_A, SIGNAL_A)
    assert auc == pytest.approx(roc_auc_score(truth, score), abs=1e-12)  # sklearn
    u = stats.mannwhitneyu(score[truth == 1], score[truth == 0]).statistic  # Mann–Whitney U
    assert auc == pytest.approx(u / (NOISE_A.sum() * SIGNAL_A.sum()), abs=1e-12)


def test_rating_auc_equals_trapezoid_under_roc_points() -> None:
    truth, score = expand(NOISE_A, SIGNAL_A)
    fpr, tpr, _ = roc_curve(truth, score)  # sklearn ROC points, one per rating threshold
    assert float(rating_auc(NOISE_A, SIGNAL_A)) == pytest.approx(np.trapezoid(tpr, fpr), abs=1e-12)


def test_rating_auc_not_estimable() -> None:
    noise = np.array([[0, 0, 0], [1, 2, 0], [0, 0, 0]])
    signal = np.array([[1, 0, 0], [0, 0, 0], [0, 0, 0]])
    assert np.isnan(rating_auc(noise, signal)).all()
    assert rating_auc_reason(noise, signal).tolist() == [
        "no noise trials",
        "no signal trials",
        "no signal trials",
    ]
    assert rating_auc_reason([1, 2], [2, 1]).tolist() is None


def test_rating_auc_leading_axes() -> None:
    stacked = rating_auc(np.stack([NOISE_A, SIGNAL_A]), np.stack([SIGNAL_A, NOISE_A]))
    assert stacked.shape == (2,)
    assert stacked[0] + stacked[1] == pytest.approx(1.0)


rating_pairs = st.integers(2, 8).flatmap(
    lambda k: st.tuples(
        hnp.arrays(np.int64, (4, k), elements=st.integers(0, 15)),
        hnp.arrays(np.int64, (4, k), elements=st.integers(0, 15)),
    )
)


@given(rating_pairs)
def test_swapping_classes_gives_one_minus_auc(pair: tuple[np.ndarray, np.ndarray]) -> None:
    noise, signal = pair
    auc = rating_auc(noise, signal)
    swapped = rating_auc(signal, noise)
    ok = ~np.isnan(auc)
    np.testing.assert_allclose(swapped[ok], 1 - auc[ok], atol=1e-12)
    assert np.all((auc[ok] >= 0) & (auc[ok] <= 1))


@given(rating_pairs)
def test_rating_auc_vectorised_equals_elementwise(pair: tuple[np.ndarray, np.ndarray]) -> None:
    noise, signal = pair
    auc = rating_auc(noise, signal)
    for p in range(noise.shape[0]):
        np.testing.assert_equal(auc[p], rating_auc(noise[p], signal[p]))


yes_no = st.integers(1, 60).flatmap(
    lambda ns: st.integers(1, 60).flatmap(
        lambda nn: st.tuples(st.integers(0, ns), st.just(ns), st.integers(0, nn), st.just(nn))
    )
)


@given(yes_no)
def test_swapping_classes_negates_criterion_keeps_d_prime(c: tuple[int, int, int, int]) -> None:
    hits, ns, fa, nn = c
    r = sdt_loglinear(hits, ns, fa, nn)
    # Noise becomes signal: its "hits" are the correct rejections nn − fa, and vice versa.
    s = sdt_loglinear(nn - fa, nn, ns - hits, ns)
    assert float(s.d_prime) == pytest.approx(float(r.d_prime), abs=1e-9)
    assert float(s.criterion) == pytest.approx(-float(r.criterion), abs=1e-9)
    assert float(s.d_prime_se) == pytest.approx(float(r.d_prime_se), rel=1e-9)


@given(st.lists(yes_no, min_size=1, max_size=6))
def test_sdt_vectorised_equals_elementwise(rows: list[tuple[int, int, int, int]]) -> None:
    arr = np.array(rows)
    r = sdt_loglinear(arr[:, 0], arr[:, 1], arr[:, 2], arr[:, 3])
    for i, row in enumerate(rows):
        one = sdt_loglinear(*row)
        assert (r.d_prime[i], r.criterion[i], r.d_prime_se[i]) == (
            one.d_prime,
            one.criterion,
            one.d_prime_se,
        )
