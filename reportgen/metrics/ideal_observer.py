"""What an ideal observer would show: the type-2 ROC area and confidence gap expected when
confidence reads the same evidence as the decisions (meta-d′ = d′; Maniscalco & Lau 2012,
*Consciousness and Cognition* 21:422; Galvin et al. 2003, *Psychon Bull Rev* 10:843)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import optimize, special

from reportgen.metrics.metad import Counts, FloatArray, as_table


@dataclass(frozen=True)
class IdealInsight:
    """What an observer whose confidence reads the same evidence as its decision would show."""

    type2_auroc: float
    conf_gap: float


# ------------------------------------------------------------------------------ ideal observer


def ideal_observer(
    d_prime: float,
    criterion: float,
    n_levels: int,
    *,
    noise_counts: Counts | None = None,
    signal_counts: Counts | None = None,
) -> IdealInsight:
    """Expected type-2 AUROC and confidence gap of an observer with meta-d′ = d′ (closed form).

    The observer is the equal-variance SDT model with the given d′ and c (evidence means ±d′/2,
    answer "same" above c); its confidence is read from the same evidence, higher further from c.
    Its K−1 confidence criteria on each side are placed so that it uses the confidence levels as
    often as the participant did on that side (quantiles of the evidence given the answer), taken
    from ``noise_counts``/``signal_counts`` when given, otherwise equally often. Base rates of the
    two truth classes come from the same counts (otherwise 1/2). The type-2 AUROC is that of
    Fleming & Lau (2014): P(confidence correct > confidence wrong) + ½ P(tie); the gap is on the
    1..K scale (multiply by the step of a linear probability mapping to express it as probability).
    """
    k = n_levels
    use, base_signal = _rating_use(k, noise_counts, signal_counts)
    left_edges, right_edges = _ideal_edges(d_prime, criterion, base_signal, use)
    correct = np.zeros(k)
    wrong = np.zeros(k)
    for mean, weight, is_signal in (
        (-d_prime / 2, 1 - base_signal, False),
        (d_prime / 2, base_signal, True),
    ):
        said_noise = np.diff(special.ndtr(left_edges - mean))[::-1]  # confidence 1..K
        said_signal = np.diff(special.ndtr(right_edges - mean))
        (correct if not is_signal else wrong)[:] += weight * said_noise
        (correct if is_signal else wrong)[:] += weight * said_signal
    if not (correct.sum() > 0 and wrong.sum() > 0):
        raise ValueError(f"d′ = {d_prime} leaves no correct or no wrong answers to compare")
    return IdealInsight(type2_auroc=_auroc2(correct, wrong), conf_gap=_conf_gap(correct, wrong))


def _rating_use(
    k: int, noise_counts: Counts | None, signal_counts: Counts | None
) -> tuple[FloatArray, float]:
    """Share of each confidence level (1..K) within each answer, rows "different", "same"."""
    use = np.full((2, k), 1.0 / k)
    if noise_counts is None or signal_counts is None:
        return use, 0.5
    noise, signal = as_table(noise_counts, signal_counts)
    if noise.size != 2 * k:
        raise ValueError(f"table has {noise.size // 2} levels per side, expected {k}")
    both = noise + signal
    for row, side in enumerate((both[:k][::-1], both[k:])):
        if side.sum() > 0:
            use[row] = side / side.sum()
    total = noise.sum() + signal.sum()
    return use, float(signal.sum() / total) if total > 0 else 0.5


def _ideal_edges(
    d: float, c: float, base_signal: float, use: FloatArray
) -> tuple[FloatArray, FloatArray]:
    """Criteria (K+1 each, ascending) for "different" (x < c) and "same" (x > c) answers."""

    def below(x: float) -> float:  # mixture mass below x (ndtr: the normal cdf, without the
        # argument checking of stats.norm.cdf that made this root search the slowest step)
        return float((1 - base_signal) * special.ndtr(x + d / 2)
                     + base_signal * special.ndtr(x - d / 2))

    def solve(target: float, lo: float, hi: float) -> float:
        if target <= below(lo):
            return lo
        if target >= below(hi):
            return hi
        return float(optimize.brentq(lambda x: below(x) - target, lo, hi, xtol=1e-12))

    at_c, span = below(c), 40.0 + abs(d)
    cum_left = np.cumsum(use[0])[:-1]  # confidence 1, 1–2, ...: mass just below c
    cum_right = np.cumsum(use[1])[:-1]
    left = [solve(at_c * (1 - q), c - span, c) for q in cum_left]
    right = [solve(at_c + (1 - at_c) * q, c, c + span) for q in cum_right]
    left_edges = np.array([-np.inf, *left[::-1], c])
    right_edges = np.array([c, *right, np.inf])
    return left_edges, right_edges


def _auroc2(correct: FloatArray, wrong: FloatArray) -> float:
    """Type-2 ROC area from confidence distributions (levels 1..K) of correct and wrong answers."""
    c = correct / correct.sum()
    w = wrong / wrong.sum()
    below = np.concatenate(([0.0], np.cumsum(w)[:-1]))
    return float(np.sum(c * (below + w / 2)))


def _conf_gap(correct: FloatArray, wrong: FloatArray) -> float:
    levels = np.arange(1, correct.size + 1)
    return float(levels @ correct / correct.sum() - levels @ wrong / wrong.sum())
