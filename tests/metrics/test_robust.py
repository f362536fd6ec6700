"""Tests for reportgen.metrics.robust: ISO 13528 Algorithm A and z-score classification."""

from __future__ import annotations

import statistics

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from statsmodels.robust.scale import Huber

from reportgen.metrics.robust import algorithm_a, classify_z, z_scores

# A worked dataset: 20 participants' accuracies with two low outliers.
DATA = [
    0.95, 0.9, 0.85, 0.925, 0.875, 0.8, 0.95, 0.975, 0.9, 0.6,
    0.875, 0.9, 0.825, 0.925, 0.3, 0.9, 0.85, 0.95, 1.0, 0.875,
]  # fmt: skip


def iso_loop(values: list[float], third_figure: bool = False) -> tuple[float, float]:
    """ISO 13528:2015 C.3.1 written out plainly with the statistics module: an independent check.

    ``third_figure`` uses ISO's own stopping rule (no change in the 3rd significant figure).
    """
    x_star = statistics.median(values)
    s_star = 1.483 * statistics.median([abs(v - x_star) for v in values])
    for _ in range(10_000):
        delta = 1.5 * s_star
        wins = [min(max(v, x_star - delta), x_star + delta) for v in values]
        new_x = statistics.fmean(wins)
        new_s = 1.134 * statistics.stdev(wins)
        if third_figure:
            done = f"{new_x:.3g}" == f"{x_star:.3g}" and f"{new_s:.3g}" == f"{s_star:.3g}"
        else:
            done = abs(new_x - x_star) <= 1e-13 * s_star and abs(new_s - s_star) <= 1e-13 * s_star
        x_star, s_star = new_x, new_s
        if done:
            return x_star, s_star
    raise AssertionError("reference loop did not converge")


def test_worked_dataset_matches_plain_loop() -> None:
    r = algorithm_a(DATA)
    x_ref, s_ref = iso_loop(DATA)  # independent straightforward implementation of ISO C.3.1
    assert float(r.mean) == pytest.approx(x_ref, rel=1e-9)
    assert float(r.sd) == pytest.approx(s_ref, rel=1e-9)
    assert bool(r.converged)
    assert int(r.iterations) > 1
    assert int(r.n) == 20


def test_agrees_with_iso_third_figure_stopping_rule() -> None:
    # ISO's hand-calculation rule stops once successive values agree to 3 significant figures,
    # which can be before the fixed point: on DATA it stops at s* = 0.0681 while the fixed point
    # is 0.06805. So agreement is to within one unit in the third significant figure.
    r = algorithm_a(DATA)
    x_iso, s_iso = iso_loop(DATA, third_figure=True)
    for ours, iso in ((float(r.mean), x_iso), (float(r.sd), s_iso)):
        unit = 10 ** (np.floor(np.log10(abs(iso))) - 2)
        assert abs(ours - iso) <= unit


def test_close_to_huber_proposal_2() -> None:
    # Algorithm A is Huber's proposal 2 with c = 1.5 (ISO 13528 C.3.1 note; Huber 1981).
    # statsmodels' Huber uses the exact consistency constant instead of the rounded 1.134 and a
    # slightly different scale update, so only close agreement is expected.
    mu, scale = Huber(c=1.5, tol=1e-12, maxiter=1000)(np.array(DATA))
    r = algorithm_a(DATA)
    assert float(r.mean) == pytest.approx(float(mu), rel=1e-4)
    assert float(r.sd) == pytest.approx(float(scale), rel=5e-3)


def test_robust_to_outliers() -> None:
    clean = algorithm_a([v for v in DATA if v > 0.7])
    dirty = algorithm_a(DATA)
    assert abs(float(dirty.mean) - float(clean.mean)) < abs(np.mean(DATA) - float(clean.mean))


def test_identical_majority_gives_zero_sd_and_no_z() -> None:
    r = algorithm_a([1.0, 1.0, 1.0, 0.9, 0.5])
    assert float(r.mean) == 1.0
    assert float(r.sd) == 0.0
    assert int(r.iterations) == 0
    assert bool(r.converged)
    assert r.reason().tolist() == "the group's robust standard deviation is 0"
    z = z_scores([0.5, 1.0], r.mean, r.sd)
    assert np.isnan(z).all()
    assert classify_z(z).tolist() == ["not assessable", "not assessable"]


def test_nan_values_are_left_out_and_rows_are_independent() -> None:
    data = np.array([DATA + [np.nan] * 3, [np.nan] * 23, [*DATA[:10], *[np.nan] * 13]])
    r = algorithm_a(data)
    assert r.mean.shape == (3,)
    one = algorithm_a(DATA)
    assert (r.mean[0], r.sd[0]) == (one.mean, one.sd)
    assert np.isnan(r.mean[1])
    assert np.isnan(r.sd[1])
    assert r.n[1] == 0
    assert r.reason().tolist() == [None, "no values", None]
    ten = algorithm_a(DATA[:10])
    assert r.mean[2] == pytest.approx(float(ten.mean), rel=1e-12)
    assert r.sd[2] == pytest.approx(float(ten.sd), rel=1e-12)


def test_empty_and_single() -> None:
    assert np.isnan(algorithm_a(np.empty(0)).mean)
    single = algorithm_a([0.7])
    assert (float(single.mean), float(single.sd)) == (0.7, 0.0)


def test_max_iter_reports_not_converged() -> None:
    r = algorithm_a(DATA, max_iter=1)
    assert not bool(r.converged)
    assert int(r.iterations) == 1


@given(
    st.lists(st.integers(-500, 500), min_size=3, max_size=25),
    st.sampled_from([-3.0, 0.5, 2.0, 1000.0]),
    st.floats(-1e3, 1e3),
)
def test_shift_and_scale_equivariance(values: list[int], a: float, b: float) -> None:
    x = np.array(values, dtype=float) / 10
    r = algorithm_a(x)
    t = algorithm_a(a * x + b)
    scale = abs(a) * (float(r.sd) + abs(float(r.mean)) + 1)
    assert float(t.mean) == pytest.approx(a * float(r.mean) + b, abs=1e-7 * scale + 1e-9 * abs(b))
    assert float(t.sd) == pytest.approx(abs(a) * float(r.sd), abs=1e-7 * scale)


@given(st.lists(st.lists(st.integers(0, 40), min_size=6, max_size=6), min_size=1, max_size=5))
def test_vectorised_equals_elementwise(rows: list[list[int]]) -> None:
    data = np.array(rows, dtype=float)
    r = algorithm_a(data)
    for p, row in enumerate(data):
        one = algorithm_a(row)
        assert (r.mean[p], r.sd[p]) == (one.mean, one.sd)


def test_z_scores_and_classification() -> None:
    # ISO 13528 clause 9.4: z = (x − x*) / s*; |z| ≤ 2 satisfactory, 2 < |z| < 3 questionable,
    # |z| ≥ 3 unsatisfactory.
    z = z_scores([10, 12, 12.5, 13, 7, 4, np.nan], 10, 1)
    np.testing.assert_array_equal(z, [0, 2, 2.5, 3, -3, -6, np.nan])
    assert classify_z(z).tolist() == [
        "satisfactory",
        "satisfactory",
        "questionable",
        "unsatisfactory",
        "unsatisfactory",
        "unsatisfactory",
        "not assessable",
    ]
    assert classify_z(-2.0000001).tolist() == "questionable"
