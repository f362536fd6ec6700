"""Tests for reportgen.metrics.insight: Fleming & Lau (2014), Goodman–Kruskal gamma, conf_gap."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from scipy import stats
from sklearn.metrics import roc_auc_score

from reportgen.metrics.insight import (
    concordance,
    conf_gap,
    gamma_correct_confidence,
    goodman_kruskal_gamma,
    reason,
    type2_auroc,
)

# REFERENCES.md "Rating ROC", vector A, ratings 1..8 ordered "sure different" ... "sure same".
NOISE_A = np.array([52, 32, 35, 37, 26, 12, 4, 2])
SIGNAL_A = np.array([2, 5, 15, 22, 33, 38, 40, 45])
LEVELS = np.array([1, 2, 3, 4])


def by_confidence(noise: np.ndarray, signal: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """REFERENCES.md construction: ratings 1..4 = "different" with confidence 4,3,2,1, ratings
    5..8 = "same" with confidence 1..4; correct = "different" on noise or "same" on signal."""
    confidence = np.array([4, 3, 2, 1, 1, 2, 3, 4])
    said_same = np.arange(1, 9) >= 5
    correct = np.zeros(4, dtype=np.int64)
    wrong = np.zeros(4, dtype=np.int64)
    for r in range(8):
        level = confidence[r] - 1
        correct[level] += signal[r] if said_same[r] else noise[r]
        wrong[level] += noise[r] if said_same[r] else signal[r]
    return correct, wrong


CORRECT_A, WRONG_A = by_confidence(NOISE_A, SIGNAL_A)


def expand(correct: np.ndarray, wrong: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Counts by level -> (is_correct, confidence) per answer."""
    conf = np.r_[np.repeat(LEVELS, correct), np.repeat(LEVELS, wrong)]
    is_correct = np.r_[np.ones(correct.sum()), np.zeros(wrong.sum())]
    return is_correct, conf


def test_vector_a_tables() -> None:
    # Derived by hand from vector A and checked by conf_gap's reference means below.
    assert CORRECT_A.tolist() == [70, 73, 72, 97]
    assert WRONG_A.tolist() == [48, 27, 9, 4]


def test_type2_auroc_vector_a() -> None:
    auc = float(type2_auroc(CORRECT_A, WRONG_A))
    assert auc == pytest.approx(0.737016, abs=5e-7)  # REFERENCES.md, Fleming & Lau 2014 (raw)
    is_correct, conf = expand(CORRECT_A, WRONG_A)
    assert auc == pytest.approx(roc_auc_score(is_correct, conf), abs=1e-12)  # sklearn identity
    somers = stats.somersd(is_correct, conf).statistic  # Somers' D(conf | correct) = 2·AUROC2 − 1
    assert 2 * auc - 1 == pytest.approx(somers, abs=1e-12)


def test_type2_auroc_padded_like_the_authors_code() -> None:
    # REFERENCES.md: 0.5 added to every cell (as in Fleming & Lau's code) -> 0.732307.
    assert float(type2_auroc(CORRECT_A, WRONG_A, pad=0.5)) == pytest.approx(0.732307, abs=5e-7)


def test_gamma_vector_a() -> None:
    g = float(gamma_correct_confidence(CORRECT_A, WRONG_A))
    assert g == pytest.approx(0.617146, abs=5e-7)  # REFERENCES.md, Nelson 1984
    assert g == pytest.approx(brute_force_gamma(np.stack([WRONG_A, CORRECT_A])), abs=1e-12)


def test_gamma_agresti_job_satisfaction() -> None:
    table = np.array([[1, 3, 10, 6], [2, 3, 10, 7], [1, 6, 14, 12], [0, 1, 9, 11]])
    c, d = concordance(table)
    assert (float(c), float(d)) == (1331.0, 849.0)  # REFERENCES.md (Agresti) [memory]
    assert float(goodman_kruskal_gamma(table)) == pytest.approx(0.2211, abs=5e-5)  # [memory] 0.221


def test_conf_gap_vector_a() -> None:
    gap = float(conf_gap(CORRECT_A, WRONG_A, LEVELS))
    assert gap == pytest.approx(0.980478, abs=5e-7)  # REFERENCES.md: 2.628205 − 1.647727
    is_correct, conf = expand(CORRECT_A, WRONG_A)
    assert gap == pytest.approx(conf[is_correct == 1].mean() - conf[is_correct == 0].mean())


def test_not_estimable_and_reasons() -> None:
    correct = np.array([[0, 0, 0], [3, 1, 0], [0, 0, 0], [0, 4, 0], [2, 1, 0]])
    wrong = np.array([[0, 0, 0], [0, 0, 0], [1, 2, 0], [0, 2, 0], [0, 1, 1]])
    auc = type2_auroc(correct, wrong)
    gamma = gamma_correct_confidence(correct, wrong)
    gap = conf_gap(correct, wrong, [1, 2, 3])
    assert np.isnan(auc).tolist() == [True, True, True, False, False]
    assert np.isnan(gap).tolist() == [True, True, True, False, False]
    assert np.isnan(gamma).tolist() == [True, True, True, True, False]
    # One level used: confidence cannot separate anything; AUROC 0.5 and gap 0 are estimable.
    assert auc[3] == 0.5
    assert gap[3] == 0.0
    base = ["no conclusive answers", "no errors", "no correct answers"]
    assert reason(correct, wrong, "type2_auroc").tolist() == [*base, None, None]
    assert reason(correct, wrong, "conf_gap").tolist() == [*base, None, None]
    assert reason(correct, wrong, "gamma").tolist() == [
        *base,
        "only one confidence level used",
        None,
    ]


def test_invalid_input_raises() -> None:
    with pytest.raises(ValueError, match="non-negative"):
        type2_auroc([1, -1], [1, 1])
    with pytest.raises(ValueError, match="levels"):
        conf_gap([1, 1], [1, 1], [1, 2, 3])


def brute_force_gamma(table: np.ndarray) -> float:
    """Goodman & Kruskal (1954) by enumerating every pair of observations: independent check."""
    rows, cols = np.nonzero(table)
    obs = [(r, c) for r, c in zip(rows, cols, strict=True) for _ in range(int(table[r, c]))]
    conc = disc = 0
    for (r1, c1), (r2, c2) in itertools.combinations(obs, 2):
        s = np.sign(r2 - r1) * np.sign(c2 - c1)
        conc += s > 0
        disc += s < 0
    return (conc - disc) / (conc + disc) if conc + disc else float("nan")


small_tables = hnp.arrays(
    np.int64,
    st.tuples(st.integers(2, 4), st.integers(2, 4)),
    elements=st.integers(0, 4),
)


@given(small_tables)
def test_gamma_equals_pair_enumeration_and_is_bounded(table: np.ndarray) -> None:
    g = float(goodman_kruskal_gamma(table))
    expected = brute_force_gamma(table)
    if np.isnan(expected):
        assert np.isnan(g)
    else:
        assert g == pytest.approx(expected, abs=1e-12)
        assert -1.0 <= g <= 1.0


confidence_tables = st.integers(2, 6).flatmap(
    lambda k: st.tuples(
        hnp.arrays(np.int64, (5, k), elements=st.integers(0, 12)),
        hnp.arrays(np.int64, (5, k), elements=st.integers(0, 12)),
    )
)


@given(confidence_tables)
def test_vectorised_equals_elementwise(pair: tuple[np.ndarray, np.ndarray]) -> None:
    correct, wrong = pair
    levels = np.arange(1, correct.shape[1] + 1)
    auc = type2_auroc(correct, wrong)
    gamma = gamma_correct_confidence(correct, wrong)
    gap = conf_gap(correct, wrong, levels)
    for p in range(correct.shape[0]):
        np.testing.assert_equal(auc[p], type2_auroc(correct[p], wrong[p]))
        np.testing.assert_equal(gamma[p], gamma_correct_confidence(correct[p], wrong[p]))
        np.testing.assert_equal(gap[p], conf_gap(correct[p], wrong[p], levels))


@settings(max_examples=40)  # sklearn on expanded data is the slow part
@given(confidence_tables)
def test_type2_auroc_matches_sklearn(pair: tuple[np.ndarray, np.ndarray]) -> None:
    correct, wrong = pair
    auc = type2_auroc(correct, wrong)
    for p in range(correct.shape[0]):
        if np.isnan(auc[p]):
            assert correct[p].sum() == 0 or wrong[p].sum() == 0
            continue
        conf = np.r_[
            np.repeat(np.arange(correct.shape[1]), correct[p]),
            np.repeat(np.arange(correct.shape[1]), wrong[p]),
        ]
        is_correct = np.r_[np.ones(correct[p].sum()), np.zeros(wrong[p].sum())]
        assert auc[p] == pytest.approx(roc_auc_score(is_correct, conf), abs=1e-12)  # sklearn
