"""Tests for reportgen.metrics.items: a hand-worked example and scipy's Pearson correlation."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from scipy import stats

from reportgen.metrics.items import item_analysis

# Hand-worked example: C correct, W wrong, U inconclusive, - missing.
GRID = ["CCC", "CWC", "WCU", "CCW", "-WC"]
STRONG = np.array([True, True, False, True, False])


def matrices(rows: list[str]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    a = np.array([list(r) for r in rows])
    return a == "C", a == "W", a == "U"


def test_hand_worked_example() -> None:
    r = item_analysis(*matrices(GRID), STRONG)
    assert r.answered.tolist() == [4, 5, 5]
    assert r.n_correct.tolist() == [3, 3, 3]
    assert r.n_wrong.tolist() == [1, 2, 1]
    assert r.n_inconclusive.tolist() == [0, 0, 1]
    np.testing.assert_allclose(r.difficulty, [3 / 4, 3 / 5, 3 / 5])
    np.testing.assert_allclose(r.inconclusive_rate, [0, 0, 1 / 5])
    # By hand: item 0 over p0..p3, x = [1,1,0,1], rest = [2,1,1,1]: cov .25 / var .75 = 1/3;
    # items 1 and 2: Σdxdr = −0.6, Σdx² = 1.2, Σdr² = 2.8 -> −0.6 / sqrt(3.36).
    np.testing.assert_allclose(
        r.discrimination, [1 / 3, -0.6 / np.sqrt(3.36), -0.6 / np.sqrt(3.36)], atol=1e-12
    )
    # Strong participants p0, p1, p3 all answered every item conclusively.
    assert r.n_strong_conclusive.tolist() == [3, 3, 3]
    np.testing.assert_allclose(r.strong_against, [0, 1 / 3, 1 / 3])
    assert r.flagged.tolist() == [False, False, False]


def test_flagging() -> None:
    # Item 0: 2 of 3 strong participants against the key -> flagged. Item 1: 2 of 2, too few.
    # Item 2: 1 of 3 -> not flagged.
    rows = ["WWW", "WWC", "CUC", "CCC", "CCC"]
    strong = np.array([True, True, True, False, False])
    r = item_analysis(*matrices(rows), strong)
    assert r.n_strong_conclusive.tolist() == [3, 2, 3]
    np.testing.assert_allclose(r.strong_against, [2 / 3, 1.0, 1 / 3])
    assert r.flagged.tolist() == [True, False, False]
    assert item_analysis(*matrices(rows), strong, min_strong=2).flagged.tolist() == [
        True,
        True,
        False,
    ]


def test_not_estimable_reasons() -> None:
    rows = ["C-CW", "C-WW", "C-CC", "W-UC"]
    r = item_analysis(*matrices(rows), np.array([False, False, False, False]))
    assert np.isnan(r.difficulty[1])
    assert np.isnan(r.discrimination[1])
    assert r.reason("difficulty").tolist() == [None, "no participant answered", None, None]
    assert (
        r.reason("strong_against").tolist() == ["no strong participant answered conclusively"] * 4
    )
    one = item_analysis(*matrices(["CC", "CW", "CW"]), np.array([True, True, True]))
    assert np.isnan(one.discrimination[0])
    assert one.reason("discrimination")[0] == "every participant who answered was correct"
    # Item 1: x = [1, 0, 0] but the rest scores are [1, 1, 1].
    assert np.isnan(one.discrimination[1])
    assert one.reason("discrimination")[1] == "other items' scores do not vary"
    ok = item_analysis(*matrices(["CC", "CW", "WW"]), np.array([True, True, True]))
    assert ok.reason("discrimination").tolist() == [None, None]


def test_overlapping_answers_raise() -> None:
    c, _, u = matrices(["CW"])
    with pytest.raises(ValueError, match="more than one"):
        item_analysis(c, c, u, np.array([True]))


answers = st.tuples(st.integers(3, 12), st.integers(2, 6)).flatmap(
    lambda shape: st.tuples(
        hnp.arrays(np.int8, shape, elements=st.integers(-1, 2)),  # -1 missing, 0 W, 1 C, 2 U
        hnp.arrays(np.bool_, shape[0]),
    )
)


@settings(max_examples=60)
@given(answers)
def test_discrimination_equals_scipy_pearsonr(case: tuple[np.ndarray, np.ndarray]) -> None:
    codes, strong = case
    correct, wrong, inconclusive = codes == 1, codes == 0, codes == 2
    r = item_analysis(correct, wrong, inconclusive, strong)
    n_items = codes.shape[1]
    for i in range(n_items):
        who = codes[:, i] >= 0
        x = correct[who, i].astype(float)
        # Proportion correct on the other items (missing counts as not correct).
        rest = (correct[who].sum(axis=1) - correct[who, i]) / (n_items - 1)
        if who.sum() < 2 or np.ptp(x) == 0 or np.ptp(rest) == 0:
            assert np.isnan(r.discrimination[i])
            continue
        expected = stats.pearsonr(x, rest).statistic  # scipy reference
        assert r.discrimination[i] == pytest.approx(expected, abs=1e-12)
        assert r.difficulty[i] == pytest.approx(x.mean())


def test_leading_axes() -> None:
    c, w, u = matrices(GRID)
    r = item_analysis(np.stack([c, c]), np.stack([w, w]), np.stack([u, u]), np.stack([STRONG] * 2))
    one = item_analysis(c, w, u, STRONG)
    assert r.discrimination.shape == (2, 3)
    np.testing.assert_array_equal(r.discrimination[1], one.discrimination)
