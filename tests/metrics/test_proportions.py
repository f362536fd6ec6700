"""Tests for reportgen.metrics.proportions against scipy, statsmodels and REFERENCES.md values."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats
from statsmodels.stats.proportion import proportion_confint

from reportgen.metrics.proportions import proportion_ci

GRID = [
    (k, n) for n in (1, 2, 3, 5, 10, 17, 20, 50, 137) for k in range(n + 1) if k % 3 == 0 or k == n
]


@pytest.mark.parametrize(
    ("k", "n", "low", "high"),
    [
        (18, 20, 0.698966, 0.972134),  # REFERENCES.md, scipy binomtest / statsmodels 'wilson'
        (20, 20, 0.838875, 1.0),  # REFERENCES.md
        (0, 10, 0.0, 0.277533),  # REFERENCES.md
    ],
)
def test_wilson_reference_values(k: int, n: int, low: float, high: float) -> None:
    ci = proportion_ci(k, n)
    assert float(ci.estimate) == pytest.approx(k / n)
    assert float(ci.low) == pytest.approx(low, abs=1e-6)
    assert float(ci.high) == pytest.approx(high, abs=1e-6)


@pytest.mark.parametrize(
    ("k", "n", "low", "high"),
    [
        (18, 20, 0.683017, 0.987651),  # REFERENCES.md, scipy binomtest 'exact' / statsmodels 'beta'
        (0, 10, 0.0, 0.308497),  # REFERENCES.md
    ],
)
def test_clopper_pearson_reference_values(k: int, n: int, low: float, high: float) -> None:
    ci = proportion_ci(k, n, method="clopper-pearson")
    assert float(ci.low) == pytest.approx(low, abs=1e-6)
    assert float(ci.high) == pytest.approx(high, abs=1e-6)


@pytest.mark.parametrize(
    ("method", "scipy_method", "sm_method"),
    [("wilson", "wilson", "wilson"), ("clopper-pearson", "exact", "beta")],
)
@pytest.mark.parametrize("level", [0.95, 0.90])
def test_grid_matches_scipy_and_statsmodels(
    method: str, scipy_method: str, sm_method: str, level: float
) -> None:
    k = np.array([g[0] for g in GRID])
    n = np.array([g[1] for g in GRID])
    ci = proportion_ci(k, n, method=method, level=level)  # type: ignore[arg-type]
    for i, (kk, nn) in enumerate(GRID):
        # Reference: scipy.stats.binomtest(k, n).proportion_ci
        ref = stats.binomtest(kk, nn).proportion_ci(confidence_level=level, method=scipy_method)
        assert ci.low[i] == pytest.approx(ref.low, abs=1e-9)
        assert ci.high[i] == pytest.approx(ref.high, abs=1e-9)
        # Reference: statsmodels.stats.proportion.proportion_confint
        sm_low, sm_high = proportion_confint(kk, nn, alpha=1 - level, method=sm_method)
        assert ci.low[i] == pytest.approx(sm_low, abs=1e-9)
        assert ci.high[i] == pytest.approx(sm_high, abs=1e-9)


def test_ends_are_exact() -> None:
    for method in ("wilson", "clopper-pearson"):
        ci = proportion_ci([0, 7], [7, 7], method=method)
        assert ci.low[0] == 0.0
        assert ci.high[1] == 1.0


def test_empty_denominator_is_nan_with_reason() -> None:
    ci = proportion_ci([0, 3], [0, 4])
    assert np.isnan(ci.estimate[0])
    assert np.isnan(ci.low[0])
    assert np.isnan(ci.high[0])
    assert ci.reason("no different-source items").tolist() == ["no different-source items", None]


def test_leading_axes_and_scalars() -> None:
    ci = proportion_ci(np.array([[1, 2], [3, 4]]), 5)
    assert ci.estimate.shape == (2, 2)
    scalar = proportion_ci(3, 4)
    assert isinstance(scalar.low, np.ndarray)
    assert scalar.low.shape == ()


@pytest.mark.parametrize(("k", "n"), [(-1, 3), (4, 3)])
def test_invalid_counts_raise(k: int, n: int) -> None:
    with pytest.raises(ValueError, match="k <= n"):
        proportion_ci(k, n)


def test_unknown_method_raises() -> None:
    with pytest.raises(ValueError, match="unknown"):
        proportion_ci(1, 2, method="wald")  # type: ignore[arg-type]


counts = st.integers(1, 200).flatmap(lambda n: st.tuples(st.integers(0, n), st.just(n)))


@given(counts, st.sampled_from(["wilson", "clopper-pearson"]))
def test_interval_contains_estimate_and_lies_in_unit_interval(
    kn: tuple[int, int], method: str
) -> None:
    ci = proportion_ci(*kn, method=method)  # type: ignore[arg-type]
    assert 0.0 <= ci.low <= ci.estimate <= ci.high <= 1.0


@given(st.lists(counts, min_size=1, max_size=8))
def test_vectorised_equals_elementwise(pairs: list[tuple[int, int]]) -> None:
    k, n = np.array(pairs).T
    ci = proportion_ci(k, n)
    for i, (kk, nn) in enumerate(pairs):
        one = proportion_ci(kk, nn)
        assert (ci.low[i], ci.high[i]) == (one.low, one.high)
