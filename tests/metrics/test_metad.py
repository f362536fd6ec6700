"""meta-d′ / M-ratio (Maniscalco & Lau 2012) — reportgen.metrics.metad.

Reference values are from /work/shared/REFERENCES.md ("Insight"): vector B is the authors' own
example from their fit_meta_d_MLE code; the values for A and B were computed by two independent
implementations (one is reportgen.metrics.metad_reference, a brute-force multi-start fit).
"""

from __future__ import annotations

import itertools

import numpy as np
import numpy.typing as npt
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats
from sklearn.metrics import roc_auc_score

from reportgen.metrics import metad
from reportgen.metrics.ideal_observer import ideal_observer
from reportgen.metrics.metad import (
    D_PRIME_MIN,
    FEW_ERRORS_THRESHOLD,
    MetaDResult,
    few_errors_flag,
    fit_meta_d,
    fit_meta_d_many,
    meta_d_interval,
    n_errors,
    pool_tables,
)

IntArray = npt.NDArray[np.int64]

# REFERENCES.md, Rating ROC / Insight: vector A (4 levels per side), vector B (3 levels).
A_NOISE = [52, 32, 35, 37, 26, 12, 4, 2]
A_SIGNAL = [2, 5, 15, 22, 33, 38, 40, 45]
B_NOISE = [100, 50, 20, 10, 5, 1]
B_SIGNAL = [3, 7, 8, 12, 27, 89]


def _estimable(result: MetaDResult) -> tuple[float, float, float, float]:
    assert result.meta_d is not None
    assert result.m_ratio is not None
    assert result.d_prime is not None
    assert result.log_likelihood is not None
    return result.d_prime, result.meta_d, result.m_ratio, result.log_likelihood


# ------------------------------------------------------------------------ reference values


def test_vector_a_unpadded() -> None:
    d, meta_d, m_ratio, loglik = _estimable(fit_meta_d(A_NOISE, A_SIGNAL, pad=False))
    assert d == pytest.approx(1.5444, abs=1e-4)  # REFERENCES: yes/no split at the middle
    assert meta_d == pytest.approx(1.6538, abs=1e-3)  # REFERENCES: meta-d′ 1.6538
    assert m_ratio == pytest.approx(1.0709, abs=1e-3)  # REFERENCES: M-ratio 1.0709
    assert loglik == pytest.approx(-523.1704, abs=1e-3)  # REFERENCES: logL −523.1704


def test_vector_b_unpadded() -> None:
    d, meta_d, m_ratio, loglik = _estimable(fit_meta_d(B_NOISE, B_SIGNAL, pad=False))
    assert d == pytest.approx(2.5244, abs=1e-4)  # REFERENCES: d′ 2.5244 (authors' example)
    assert meta_d == pytest.approx(2.3370, abs=1e-3)  # REFERENCES: meta-d′ 2.3370
    assert m_ratio == pytest.approx(0.9258, abs=1e-3)  # REFERENCES: M-ratio 0.9258
    assert loglik == pytest.approx(-293.4057, abs=1e-3)  # REFERENCES: logL −293.4057


@pytest.mark.parametrize(
    ("noise", "signal", "expected"),
    [
        (A_NOISE, A_SIGNAL, 1.6338),  # REFERENCES: padded A → meta-d′ 1.6338
        (B_NOISE, B_SIGNAL, 2.3021),  # REFERENCES: padded B → meta-d′ 2.3021
    ],
)
def test_padded_vectors(noise: list[int], signal: list[int], expected: float) -> None:
    result = fit_meta_d(noise, signal)  # pad=True is the default (docs/design.md §3)
    assert result.meta_d == pytest.approx(expected, abs=1e-3)
    assert result.converged
    assert result.note is None


def test_type1_from_the_padded_table() -> None:
    # Identity (docs/design.md §3): d′ and c of the same table with 1/(2K) added to every cell.
    k = 4
    noise = np.array(A_NOISE) + 1 / (2 * k)
    signal = np.array(A_SIGNAL) + 1 / (2 * k)
    hit = signal[k:].sum() / signal.sum()
    fa = noise[k:].sum() / noise.sum()
    result = fit_meta_d(A_NOISE, A_SIGNAL)
    z_h, z_f = stats.norm.ppf(hit), stats.norm.ppf(fa)
    assert result.d_prime == pytest.approx(z_h - z_f, abs=1e-12)
    assert result.criterion == pytest.approx(-(z_h + z_f) / 2, abs=1e-12)
    assert result.m_ratio == pytest.approx(result.meta_d / result.d_prime)  # type: ignore[operator]


def test_type2_criteria_are_ordered_around_meta_c() -> None:
    result = fit_meta_d(B_NOISE, B_SIGNAL)
    assert result.type2_criteria is not None
    crit = np.array(result.type2_criteria)
    assert crit.size == 2 * (3 - 1)
    assert np.all(np.diff(crit) > 0)
    meta_c = result.meta_d * result.criterion / result.d_prime  # type: ignore[operator]
    assert crit[1] < meta_c < crit[2]


@pytest.mark.slow
def test_fast_fit_agrees_with_reference_fit() -> None:
    # Two implementations (the brute-force one shares no code with the fast one).
    from reportgen.metrics.metad_reference import reference_fit_meta_d

    rng = np.random.default_rng(7)
    noise, signal = _simulate(rng, 2, 60, 1.8, 5)
    for n, s in zip(noise, signal, strict=True):
        fast = fit_meta_d(n, s)
        slow = reference_fit_meta_d(n, s, n_starts=3)
        assert fast.meta_d == pytest.approx(slow.meta_d, abs=1e-3)
        assert fast.log_likelihood is not None
        assert fast.log_likelihood >= slow.log_likelihood - 1e-6


def test_batch_equals_single_fits() -> None:
    rng = np.random.default_rng(3)
    noise, signal = _simulate(rng, 12, 60, 1.5, 4)
    batch = fit_meta_d_many(noise, signal)
    for n, s, b in zip(noise, signal, batch, strict=True):
        single = fit_meta_d(n, s)
        assert single.meta_d == pytest.approx(b.meta_d, abs=1e-7)
        assert single.note == b.note


# ---------------------------------------------------------------------- simulated observers


def _simulate(
    rng: np.random.Generator,
    n_part: int,
    n_trials: int,
    d: float,
    k: int,
    conf_noise: float = 0.0,
    c: float = 0.0,
) -> tuple[IntArray, IntArray]:
    """Rating tables of SDT observers; confidence from the evidence plus optional extra noise.

    With ``conf_noise`` = 0 the observer is ideal (true M-ratio 1). Otherwise confidence reads
    ``x + N(0, conf_noise²)``, folded to the side of the decision (Maniscalco & Lau 2012's
    motivation: confidence noise that does not affect the decision lowers meta-d′).
    """
    edges = np.linspace(0.5, 0.5 * (k - 1), k - 1)  # distance of confidence criteria from c
    tables = []
    for mean, n in ((-d / 2, n_trials // 2), (d / 2, n_trials - n_trials // 2)):
        x = rng.normal(mean, 1.0, (n_part, n))
        said_signal = x > c
        y = x + rng.normal(0.0, conf_noise, x.shape) if conf_noise > 0 else x
        distance = np.where(said_signal, y - c, c - y)
        level = (distance[..., None] > edges).sum(-1)  # 0 .. K-1 (confidence 1 .. K)
        cell = np.where(said_signal, k + level, k - 1 - level)
        offset = np.arange(n_part)[:, None] * 2 * k
        counts = np.bincount((cell + offset).ravel(), minlength=n_part * 2 * k)
        tables.append(counts.reshape(n_part, 2 * k))
    return tables[0], tables[1]


def _median_m_ratio(noise: IntArray, signal: IntArray) -> float:
    fits = fit_meta_d_many(noise, signal)
    values = [f.m_ratio for f in fits if f.m_ratio is not None]
    assert len(values) > 0.95 * len(fits)
    return float(np.median(values))


@pytest.mark.parametrize("k", [4, 5])
def test_ideal_observer_recovers_m_ratio_one(k: int) -> None:
    # REFERENCES ("Simulation check"): an ideal SDT observer must recover M-ratio ≈ 1.
    rng = np.random.default_rng(100 + k)
    noise, signal = _simulate(rng, 300, 200, 1.5, k, c=0.1)
    assert _median_m_ratio(noise, signal) == pytest.approx(1.0, abs=0.05)


def test_confidence_noise_lowers_m_ratio_monotonically() -> None:
    # REFERENCES ("Simulation check"): added confidence noise must lower it.
    rng = np.random.default_rng(11)
    medians = [
        _median_m_ratio(*_simulate(rng, 200, 200, 1.5, 4, conf_noise=sd))
        for sd in (0.0, 0.5, 1.0, 2.0)
    ]
    assert all(a > b + 0.05 for a, b in itertools.pairwise(medians)), medians
    assert medians[-1] < 0.6


@pytest.mark.parametrize(("noise", "signal"), [(A_NOISE, A_SIGNAL), (B_NOISE, B_SIGNAL)])
def test_swapping_class_labels_leaves_meta_d_unchanged(noise: list[int], signal: list[int]) -> None:
    # Symmetry of the equal-variance model: "same" ↔ "different" mirrors the evidence axis.
    for pad in (True, False):
        original = fit_meta_d(noise, signal, pad=pad)
        swapped = fit_meta_d(signal[::-1], noise[::-1], pad=pad)
        assert swapped.meta_d == pytest.approx(original.meta_d, abs=1e-6)
        assert swapped.d_prime == pytest.approx(original.d_prime, abs=1e-12)
        assert swapped.criterion == pytest.approx(-original.criterion, abs=1e-12)  # type: ignore[operator]
        assert swapped.log_likelihood == pytest.approx(original.log_likelihood, abs=1e-6)


def test_swapping_labels_on_simulated_tables() -> None:
    rng = np.random.default_rng(5)
    noise, signal = _simulate(rng, 20, 60, 2.0, 5, c=0.3)
    plain = fit_meta_d_many(noise, signal)
    swapped = fit_meta_d_many(signal[:, ::-1], noise[:, ::-1])
    for p, s in zip(plain, swapped, strict=True):
        assert p.meta_d == pytest.approx(s.meta_d, abs=1e-5)


# ------------------------------------------------------------------------- degenerate tables


@pytest.mark.parametrize(
    ("noise", "signal", "note"),
    [
        ([0, 0, 0, 0], [0, 0, 0, 0], metad.NOTE_NO_ANSWERS),
        ([0, 0, 0, 0], [1, 2, 3, 4], metad.NOTE_ONE_TRUTH_CLASS),
        ([3, 1, 0, 0], [0, 0, 0, 0], metad.NOTE_ONE_TRUTH_CLASS),
        ([0, 0, 3, 4], [0, 0, 2, 9], metad.NOTE_ONE_CLASS),  # always "same"
        ([5, 2, 0, 0], [1, 3, 0, 0], metad.NOTE_ONE_CLASS),  # always "different"
        ([9, 3, 0, 0], [0, 0, 4, 8], metad.NOTE_NO_ERRORS),
        ([0, 7, 2, 0], [0, 3, 8, 0], metad.NOTE_ONE_LEVEL),  # only confidence 1
        ([4, 0, 0, 2], [3, 0, 0, 9], metad.NOTE_ONE_LEVEL),  # only confidence 2
        ([3, 4], [1, 6], metad.NOTE_ONE_LEVEL),  # K = 1: no confidence scale at all
        ([5, 5, 5, 5], [5, 5, 5, 5], metad.NOTE_D_NEAR_ZERO),  # d′ exactly 0
    ],
)
def test_degenerate_tables_are_not_estimable(
    noise: list[int], signal: list[int], note: str
) -> None:
    for pad in (True, False):
        result = fit_meta_d(noise, signal, pad=pad)
        assert result.meta_d is None
        assert result.m_ratio is None
        assert result.log_likelihood is None
        assert result.note == note
        assert not result.converged


def test_small_d_prime_keeps_meta_d_but_no_m_ratio() -> None:
    noise = [10, 9, 9, 8, 8, 9, 9, 8]
    signal = [8, 9, 8, 9, 9, 8, 9, 10]
    result = fit_meta_d(noise, signal)
    assert result.d_prime is not None
    assert 0 < abs(result.d_prime) < D_PRIME_MIN
    assert result.meta_d is not None
    assert result.m_ratio is None
    assert result.note == metad.NOTE_D_NEAR_ZERO


def test_unpadded_rate_of_one_is_reported() -> None:
    # No false alarms but a miss: the unpadded d′ is infinite.
    result = fit_meta_d([5, 4, 0, 0], [1, 0, 3, 6], pad=False)
    assert result.meta_d is None
    assert result.note == metad.NOTE_RATE_0_OR_1
    assert fit_meta_d([5, 4, 0, 0], [1, 0, 3, 6]).meta_d is not None


def test_invalid_tables_are_programming_errors() -> None:
    with pytest.raises(ValueError, match="even length"):
        fit_meta_d([1, 2, 3], [1, 2, 3])
    with pytest.raises(ValueError, match="negative"):
        fit_meta_d([1, -2], [1, 2])
    with pytest.raises(ValueError, match="same even length"):
        fit_meta_d([1, 2], [1, 2, 3, 4])


def _is_finite_or_none(x: float | None) -> bool:
    return x is None or bool(np.isfinite(x))


@settings(max_examples=150, deadline=None)
@given(
    k=st.integers(min_value=1, max_value=5),
    data=st.data(),
    pad=st.booleans(),
)
def test_random_small_tables_never_raise(k: int, data: st.DataObject, pad: bool) -> None:
    cells = st.lists(st.integers(min_value=0, max_value=6), min_size=2 * k, max_size=2 * k)
    noise, signal = data.draw(cells), data.draw(cells)
    result = fit_meta_d(noise, signal, pad=pad)
    for value in (result.d_prime, result.criterion, result.meta_d, result.m_ratio):
        assert _is_finite_or_none(value)
    assert _is_finite_or_none(result.log_likelihood)
    if result.meta_d is None:
        assert result.note is not None
    else:
        assert result.converged
        assert result.log_likelihood is not None and result.log_likelihood <= 1e-9


# -------------------------------------------------------------------------------- intervals


def test_interval_is_seeded_and_brackets_the_estimate() -> None:
    first = meta_d_interval(A_NOISE, A_SIGNAL, n_boot=200, seed=1)
    again = meta_d_interval(A_NOISE, A_SIGNAL, n_boot=200, seed=1)
    assert first == again
    point = fit_meta_d(A_NOISE, A_SIGNAL)
    assert first.meta_d_low is not None and first.meta_d_high is not None
    assert first.m_ratio_low is not None and first.m_ratio_high is not None
    assert first.meta_d_low < point.meta_d < first.meta_d_high  # type: ignore[operator]
    assert first.m_ratio_low < point.m_ratio < first.m_ratio_high  # type: ignore[operator]


def test_interval_widens_with_fewer_answers() -> None:
    big = meta_d_interval(np.array(A_NOISE) * 2, np.array(A_SIGNAL) * 2, n_boot=200)
    small = meta_d_interval(np.array(A_NOISE) // 4, np.array(A_SIGNAL) // 4, n_boot=200)
    assert big.meta_d_high - big.meta_d_low < small.meta_d_high - small.meta_d_low  # type: ignore[operator]


def test_interval_of_degenerate_table_is_empty() -> None:
    result = meta_d_interval([9, 3, 0, 0], [0, 0, 4, 8], n_boot=50)
    assert (result.meta_d_low, result.meta_d_high) == (None, None)
    assert (result.m_ratio_low, result.m_ratio_high) == (None, None)


@pytest.mark.slow
def test_interval_coverage_for_ideal_observers() -> None:
    # Frequentist check: the 90 % interval should cover the true meta-d′ roughly 90 % of the time
    # (approximate: a percentile bootstrap on 200 answers; accept 80–98 %).
    rng = np.random.default_rng(21)
    d = 1.5
    noise, signal = _simulate(rng, 60, 200, d, 4)
    covered = 0
    for n, s in zip(noise, signal, strict=True):
        interval = meta_d_interval(n, s, n_boot=200, level=0.9, seed=int(rng.integers(1 << 30)))
        assert interval.meta_d_low is not None and interval.meta_d_high is not None
        covered += interval.meta_d_low <= d <= interval.meta_d_high
    assert 0.8 <= covered / 60 <= 0.98


# --------------------------------------------------------------------------- small helpers


def test_n_errors_and_flag() -> None:
    # Errors: "same" on different-source items plus "different" on same-source items.
    assert n_errors(A_NOISE, A_SIGNAL) == (26 + 12 + 4 + 2) + (2 + 5 + 15 + 22)
    assert few_errors_flag(FEW_ERRORS_THRESHOLD - 1)
    assert not few_errors_flag(FEW_ERRORS_THRESHOLD)
    assert few_errors_flag(3, threshold=4)


def test_pool_tables_sums_raw_counts() -> None:
    noise, signal = pool_tables([(A_NOISE, A_SIGNAL), (A_NOISE, A_SIGNAL)])
    np.testing.assert_array_equal(noise, np.array(A_NOISE) * 2)
    np.testing.assert_array_equal(signal, np.array(A_SIGNAL) * 2)
    with pytest.raises(ValueError, match="different numbers of levels"):
        pool_tables([(A_NOISE, A_SIGNAL), (B_NOISE, B_SIGNAL)])
    with pytest.raises(ValueError, match="at least one"):
        pool_tables([])


# ------------------------------------------------------------------------- ideal observer


def test_ideal_observer_matches_simulation() -> None:
    # Closed form against a seeded Monte Carlo of the same observer, scored with sklearn's
    # roc_auc_score (REFERENCES: type-2 AUROC = roc_auc_score(correct, confidence)).
    d, c, k = 1.7, 0.2, 4
    expected = ideal_observer(d, c, k)
    rng = np.random.default_rng(9)
    n = 200_000
    truth = rng.random(n) < 0.5
    x = rng.normal(np.where(truth, d / 2, -d / 2), 1.0)
    said_signal = x > c
    confidence = np.empty(n, dtype=int)
    for side in (True, False):  # levels used equally often within each answer
        m = said_signal == side
        distance = np.abs(x[m] - c)
        cuts = np.quantile(distance, np.arange(1, k) / k)
        confidence[m] = 1 + np.searchsorted(cuts, distance)
    correct = said_signal == truth
    assert expected.type2_auroc == pytest.approx(roc_auc_score(correct, confidence), abs=0.005)
    gap = confidence[correct].mean() - confidence[~correct].mean()
    assert expected.conf_gap == pytest.approx(gap, abs=0.02)


def test_ideal_observer_limits_and_order() -> None:
    chance = ideal_observer(0.0, 0.0, 5)
    assert chance.type2_auroc == pytest.approx(0.5, abs=1e-9)
    assert chance.conf_gap == pytest.approx(0.0, abs=1e-9)
    values = [ideal_observer(d, 0.0, 5).type2_auroc for d in (0.5, 1.0, 2.0, 3.0)]
    assert values == sorted(values)


def test_ideal_observer_uses_the_participants_rating_use() -> None:
    # Vector A: the observed type-2 AUROC is 0.737016 (REFERENCES) with M-ratio ≈ 1.06, so an
    # ideal observer with the same rating use should come out close to it.
    fit = fit_meta_d(A_NOISE, A_SIGNAL)
    ideal = ideal_observer(
        fit.d_prime,  # type: ignore[arg-type]
        fit.criterion,  # type: ignore[arg-type]
        4,
        noise_counts=A_NOISE,
        signal_counts=A_SIGNAL,
    )
    assert ideal.type2_auroc == pytest.approx(0.737016, abs=0.03)
    assert ideal.conf_gap == pytest.approx(0.980478, abs=0.15)  # REFERENCES: gap 0.980478


# ------------------------------------------------------------- profile-likelihood intervals


def _profile_at(noise: list[int], signal: list[int], meta_d: float) -> float:
    """Profile log-likelihood at a fixed meta-d′ by brute force: the reference module's own
    likelihood (scipy.stats.norm.cdf, plain differences) maximised over the criteria with
    scipy.optimize Nelder–Mead, no code shared with the fast fit."""
    from scipy import optimize

    from reportgen.metrics.metad_reference import _neg_log_lik, _type1

    k = len(noise) // 2
    n = np.asarray(noise, float) + 1 / (2 * k)
    s = np.asarray(signal, float) + 1 / (2 * k)
    d1, c1 = _type1(n, s)
    start = np.r_[np.linspace(-2, -0.2, k - 1), np.linspace(0.2, 2, k - 1)]
    best = min(
        (optimize.minimize(lambda x: _neg_log_lik(np.r_[meta_d, x], n, s, d1, c1), x0,
                           method="Nelder-Mead",
                           options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 40000})
         for x0 in (start, 0.5 * start, 1.5 * start)),
        key=lambda r: r.fun,
    )
    return -float(best.fun)


@pytest.mark.parametrize(("noise", "signal"), [(A_NOISE, A_SIGNAL), (B_NOISE, B_SIGNAL)])
def test_profile_interval_ends_drop_by_half_the_chi_square_quantile(
    noise: list[int], signal: list[int]
) -> None:
    # Wilks (1938): the ends are where the profile log-likelihood is χ²₁(0.95)/2 below the
    # maximum; χ² quantile from scipy.stats.chi2, profile by brute force (scipy Nelder–Mead).
    point = fit_meta_d(noise, signal)
    (interval,) = metad.meta_d_profile_intervals([noise], [signal], [point], level=0.95)
    assert point.log_likelihood is not None and point.meta_d is not None
    assert interval.meta_d_low is not None and interval.meta_d_high is not None
    assert interval.meta_d_low < point.meta_d < interval.meta_d_high
    drop = stats.chi2.ppf(0.95, 1) / 2
    for end in (interval.meta_d_low, interval.meta_d_high):
        assert point.log_likelihood - _profile_at(noise, signal, end) == pytest.approx(
            drop, abs=1e-4)
    assert interval.method == "profile"


def test_profile_m_ratio_interval_contains_the_meta_d_ends_over_d_prime() -> None:
    # The M-ratio interval is the meta-d′ interval over d′ widened by d′'s own uncertainty
    # (delta method), so it contains [low / d′, high / d′].
    point = fit_meta_d(A_NOISE, A_SIGNAL)
    (ci,) = metad.meta_d_profile_intervals([A_NOISE], [A_SIGNAL], [point])
    assert point.d_prime is not None and point.m_ratio is not None
    assert ci.meta_d_low is not None and ci.meta_d_high is not None
    assert ci.m_ratio_low is not None and ci.m_ratio_high is not None
    assert ci.m_ratio_low < ci.meta_d_low / point.d_prime
    assert ci.m_ratio_high > ci.meta_d_high / point.d_prime


def test_batched_bootstrap_equals_one_table_at_a_time() -> None:
    # Each table's replicates come from its own seed: batching changes nothing.
    rng = np.random.default_rng(3)
    noise, signal = _simulate(rng, 4, 60, 1.5, 4, conf_noise=0.5)
    fits = fit_meta_d_many(noise, signal)
    together = metad.meta_d_intervals(noise, signal, fits, [11, 12, 13, 14], n_boot=60)
    for i in range(4):
        alone = meta_d_interval(noise[i], signal[i], n_boot=60, seed=11 + i, point=fits[i])
        assert together[i] == alone


def test_profile_interval_of_degenerate_table_is_empty() -> None:
    point = fit_meta_d([9, 3, 0, 0], [0, 0, 4, 8])
    (ci,) = metad.meta_d_profile_intervals([[9, 3, 0, 0]], [[0, 0, 4, 8]], [point])
    assert (ci.meta_d_low, ci.meta_d_high, ci.m_ratio_low, ci.m_ratio_high) == (None,) * 4
