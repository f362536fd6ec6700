"""Tests for reportgen.metrics.calibration: Brier (sklearn), Murphy (1973), Lichtenstein et al."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from sklearn.metrics import brier_score_loss

from reportgen.metrics.calibration import calibration

# REFERENCES.md "Calibration": forecasts and outcomes of 20 answers.
FORECASTS = np.array(
    [0.5, 0.5, 0.6, 0.6, 0.6, 0.7, 0.7, 0.7, 0.8, 0.8, 0.8, 0.8, 0.9, 0.9, 0.9, 0.9, 1, 1, 1, 1]
)
OUTCOMES = np.array([1, 0, 1, 0, 1, 1, 1, 0, 1, 1, 0, 1, 1, 1, 1, 0, 1, 1, 1, 1])
PROBS = np.unique(FORECASTS)


def to_counts(f: np.ndarray, o: np.ndarray, probs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    correct = np.array([np.sum((f == p) & (o == 1)) for p in probs])
    wrong = np.array([np.sum((f == p) & (o == 0)) for p in probs])
    return correct, wrong


CORRECT, WRONG = to_counts(FORECASTS, OUTCOMES, PROBS)


def test_reference_values() -> None:
    r = calibration(PROBS, CORRECT, WRONG)
    assert float(r.brier) == pytest.approx(0.1725, abs=1e-12)  # REFERENCES.md
    assert float(r.brier) == pytest.approx(
        brier_score_loss(OUTCOMES, FORECASTS), abs=1e-12
    )  # sklearn
    assert float(r.reliability) == pytest.approx(0.005833, abs=5e-7)  # REFERENCES.md, Murphy 1973
    assert float(r.resolution) == pytest.approx(0.020833, abs=5e-7)  # REFERENCES.md
    assert float(r.uncertainty) == pytest.approx(0.1875, abs=1e-12)  # REFERENCES.md
    assert float(r.overconfidence) == pytest.approx(0.035, abs=1e-12)  # REFERENCES.md (LFP 1982)
    assert float(r.ece) == pytest.approx(0.055, abs=1e-12)  # REFERENCES.md, ECE by level
    assert float(r.n) == 20
    assert float(r.mean_confidence) == pytest.approx(FORECASTS.mean())
    assert float(r.proportion_correct) == pytest.approx(OUTCOMES.mean())
    np.testing.assert_allclose(r.level_n, [2, 3, 3, 4, 4, 4])
    np.testing.assert_allclose(r.level_accuracy, [1 / 2, 2 / 3, 2 / 3, 3 / 4, 3 / 4, 1])


def test_murphy_identity_reference() -> None:
    r = calibration(PROBS, CORRECT, WRONG)
    assert float(r.reliability - r.resolution + r.uncertainty) == pytest.approx(
        float(r.brier), abs=1e-14
    )


def test_levels_sharing_a_probability_are_pooled() -> None:
    # Two scale levels mapped to the same probability must decompose like one level.
    probs = np.array([0.5, 0.7, 0.7, 0.9])
    split = calibration(probs, [3, 2, 4, 5], [2, 1, 2, 1])
    pooled = calibration([0.5, 0.7, 0.9], [3, 6, 5], [2, 3, 1])
    for name in ("brier", "reliability", "resolution", "uncertainty", "ece", "overconfidence"):
        assert float(getattr(split, name)) == pytest.approx(float(getattr(pooled, name)), abs=1e-14)


def test_unused_levels_and_empty_rows() -> None:
    r = calibration([0.6, 0.8, 1.0], [[0, 0, 0], [2, 0, 3]], [[0, 0, 0], [1, 0, 0]])
    assert np.isnan(r.brier[0])
    assert np.isnan(r.ece[0])
    assert np.isnan(r.overconfidence[0])
    assert r.reason().tolist() == ["no conclusive answers", None]
    assert np.isnan(r.level_accuracy[1, 1])
    assert r.brier[1] == pytest.approx(brier_score_loss([1, 1, 0, 1, 1, 1], [0.6] * 3 + [1.0] * 3))


def test_invalid_input_raises() -> None:
    with pytest.raises(ValueError, match=r"\[0, 1\]"):
        calibration([0.5, 1.2], [1, 1], [1, 1])
    with pytest.raises(ValueError, match="do not match"):
        calibration([0.5, 1.0], [1, 1, 1], [1, 1, 1])


probabilities = hnp.arrays(
    np.float64,
    st.integers(1, 6),
    elements=st.floats(0, 1).map(lambda x: round(x, 2)),
)


@settings(max_examples=40)  # sklearn on expanded data is the slow part
@given(
    probabilities.flatmap(
        lambda p: st.tuples(
            st.just(p),
            hnp.arrays(np.int64, (4, p.size), elements=st.integers(0, 9)),
            hnp.arrays(np.int64, (4, p.size), elements=st.integers(0, 9)),
        )
    )
)
def test_decomposition_and_brier_properties(
    case: tuple[np.ndarray, np.ndarray, np.ndarray],
) -> None:
    probs, correct, wrong = case
    r = calibration(probs, correct, wrong)
    for p in range(correct.shape[0]):
        one = calibration(probs, correct[p], wrong[p])
        np.testing.assert_equal(r.brier[p], one.brier)  # vectorised == element-wise
        if correct[p].sum() + wrong[p].sum() == 0:
            assert np.isnan(r.brier[p])
            continue
        # Murphy (1973): BS = REL − RES + UNC, with each distinct forecast its own bin.
        rebuilt = r.reliability[p] - r.resolution[p] + r.uncertainty[p]
        assert rebuilt == pytest.approx(r.brier[p], abs=1e-12)
        # sklearn brier_score_loss on the expanded answers.
        f = np.r_[np.repeat(probs, correct[p]), np.repeat(probs, wrong[p])]
        o = np.r_[np.ones(correct[p].sum()), np.zeros(wrong[p].sum())]
        assert r.brier[p] == pytest.approx(brier_score_loss(o, f), abs=1e-12)
        assert 0 <= r.ece[p] <= 1
        assert r.reliability[p] >= 0
        assert r.resolution[p] >= 0
