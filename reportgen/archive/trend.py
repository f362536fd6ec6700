"""One examiner across rounds: values per round, pooled insight, change tests and group standing.

Pure computation on archived records (:class:`reportgen.archive.queries.ArchivedRound`);
:func:`build_trend` reads the archive and calls :func:`trend_from_history`.

* **Per round**: the archived metrics with their 95 % intervals, unchanged.
* **Pooled insight**: the raw rating tables of all (or the last N) rounds are summed and fitted
  once (meta-d′ by maximum likelihood, Maniscalco & Lau 2012), with a seeded stratified bootstrap
  interval, and compared with an observer whose confidence reads the same evidence as its decisions
  (the "relative insight" of :func:`reportgen.metrics.ideal_observer.ideal_observer`).
* **Change** between the latest and the previous round: the two-proportion z-test with pooled
  variance for the error rates, with Newcombe's (1998) hybrid score interval for the difference;
  the difference of d′ with the standard error from Gourevitch & Galanter (1967). A difference is
  read as a change only when chance alone would seldom produce it.
* **Standing**: z = (accuracy − x*) / s* with the group's robust x*, s* of that round (ISO 13528
  Algorithm A, stored when the round was recorded), classed by |z| ≤ 2 / 2–3 / ≥ 3. As in the
  rounds' own criteria, only low accuracy counts against the examiner.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
from scipy import special, stats

from reportgen.archive import queries as archive
from reportgen.archive.queries import ArchivedRound, Rename
from reportgen.catalogue import INTERVAL_LEVEL, TREND_METRICS, short_label
from reportgen.errors import InputError
from reportgen.metrics.ideal_observer import ideal_observer
from reportgen.metrics.insight import type2_auroc
from reportgen.metrics.metad import (
    fit_meta_d,
    meta_d_interval,
    n_errors,
    pool_tables,
)
from reportgen.metrics.proportions import proportion_ci
from reportgen.metrics.robust import classify_z
from reportgen.metrics.sdt import sdt_loglinear
from reportgen.metrics.uncertainty import hanley_mcneil_se
from reportgen.results import reasons
from reportgen.results.model import Metric

ALPHA = 0.05
"""A difference counts as more than chance when its two-sided p-value is below this."""
FloatArray = npt.NDArray[np.float64]
Z = float(special.ndtri(0.5 + INTERVAL_LEVEL / 2))



# ---------------------------------------------------------------------------------------------
# Result objects


@dataclass(frozen=True)
class Standing:
    """The examiner's accuracy against the group of one round (ISO 13528 z-score).

    ``band`` is the ISO band of |z|; ``classification`` its ISO reading on the unfavourable (low)
    side, and "satisfactory" on the favourable side, as in the rounds' criteria for accuracy.
    """

    z: float | None
    band: str
    classification: str
    x_star: float | None
    s_star: float | None
    n_group: int
    note: str | None


@dataclass(frozen=True)
class RoundPoint:
    """One round of the examiner: the archived metrics and the standing in that round's group."""

    round_id: str
    issued: dt.date
    version: int
    code: str
    n_items: int
    errors: int
    conclusive_errors: int
    few_errors: bool
    metrics: Mapping[str, Metric]
    standing: Standing
    levels: tuple[float, ...] = ()  # the round's confidence levels (its scale)


@dataclass(frozen=True)
class DifferenceTest:
    """Latest minus earlier value with a 95 % interval, a z statistic and a two-sided p-value.

    ``statistic`` and ``p_value`` are ``None`` (``note`` says why) when there is nothing to test.
    """

    difference: float | None
    low: float | None
    high: float | None
    statistic: float | None
    p_value: float | None
    note: str | None = None


@dataclass(frozen=True)
class ChangeTest:
    metric: str
    label: str
    method: str
    earlier_round: str
    latest_round: str
    earlier: Metric
    latest: Metric
    test: DifferenceTest
    noun: str  # what the counted events are called ("" for d′)


@dataclass(frozen=True)
class PooledInsight:
    """meta-d′ and the M-ratio fitted once on the summed rating tables of ``round_ids``."""

    round_ids: tuple[str, ...]
    excluded: tuple[str, ...]
    noise: tuple[int, ...]
    signal: tuple[int, ...]
    n_conclusive: int
    n_errors: int
    threshold: int
    d_prime: float | None
    meta_d: Metric
    m_ratio: Metric
    type2_auroc: Metric
    expected_type2_auroc: float | None
    n_boot: int
    seed: int

    @property
    def few_errors(self) -> bool:
        return self.n_errors < self.threshold


@dataclass(frozen=True)
class Trend:
    """Everything the trend report shows for one examiner."""

    code: str
    recorded_codes: tuple[str, ...]
    renames: tuple[Rename, ...]
    name: str
    organisation: str
    scheme: str
    provider: Mapping[str, Any]
    issued: dt.date
    points: tuple[RoundPoint, ...]
    pooled: PooledInsight
    changes: tuple[ChangeTest, ...]  # empty when the archive holds one round only
    last_n: int | None


# ---------------------------------------------------------------------------------------------
# Tests of change


def two_proportion_test(k_latest: int, n_latest: int, k_earlier: int,
                        n_earlier: int) -> DifferenceTest:
    """p_latest − p_earlier: two-sided z-test with the pooled proportion, and Newcombe's hybrid
    score interval (Newcombe 1998, *Stat Med* 17:873, method 10, from Wilson intervals)::

        z = (p1 − p0) / sqrt(p (1 − p) (1/n1 + 1/n0)),   p = (k1 + k0) / (n1 + n0)
        low  = d − sqrt((p1 − l1)² + (u0 − p0)²),   high = d + sqrt((u1 − p1)² + (p0 − l0)²)

    The test equals ``statsmodels.stats.proportion.proportions_ztest`` (two-sided, pooled).
    """
    if n_latest <= 0 or n_earlier <= 0:
        return DifferenceTest(None, None, None, None, None, "no items of this kind in a round")
    ci = proportion_ci([k_latest, k_earlier], [n_latest, n_earlier], method="wilson")
    p1, p0 = (float(x) for x in ci.estimate)
    l1, l0 = (float(x) for x in ci.low)
    u1, u0 = (float(x) for x in ci.high)
    d = p1 - p0
    low = d - math.sqrt((p1 - l1) ** 2 + (u0 - p0) ** 2)
    high = d + math.sqrt((u1 - p1) ** 2 + (p0 - l0) ** 2)
    pooled = (k_latest + k_earlier) / (n_latest + n_earlier)
    if pooled in (0.0, 1.0):
        note = "none in either round" if pooled == 0 else "all in both rounds"
        return DifferenceTest(d, low, high, None, None, note)
    se = math.sqrt(pooled * (1 - pooled) * (1 / n_latest + 1 / n_earlier))
    z = d / se
    return DifferenceTest(d, low, high, z, float(2 * stats.norm.sf(abs(z))))


def sdt_counts(counts: Mapping[str, int]) -> tuple[int, int, int, int]:
    """(hits, n_signal, false alarms, n_noise) on conclusive answers, as scoring forms d′."""
    hits, misses = counts["correct_same"], counts["false_negatives"]
    fas, rejections = counts["false_positives"], counts["correct_different"]
    return hits, hits + misses, fas, fas + rejections


def d_prime_difference(latest: Mapping[str, int], earlier: Mapping[str, int]) -> DifferenceTest:
    """d′_latest − d′_earlier (log-linear d′, Hautus 1995) with SE = sqrt(SE1² + SE0²), each SE
    from Gourevitch & Galanter (1967); z = difference / SE, interval difference ± z SE."""
    a = sdt_loglinear(*sdt_counts(latest))
    b = sdt_loglinear(*sdt_counts(earlier))
    d1, d0 = float(a.d_prime), float(b.d_prime)
    se = math.hypot(float(a.d_prime_se), float(b.d_prime_se))
    if not (math.isfinite(d1) and math.isfinite(d0) and math.isfinite(se) and se > 0):
        return DifferenceTest(None, None, None, None, None,
                              "d\u2032 not estimable in one of the rounds")
    diff = d1 - d0
    z = diff / se
    return DifferenceTest(diff, diff - Z * se, diff + Z * se, z,
                          float(2 * stats.norm.sf(abs(z))))


_PROPORTION_TESTS: tuple[tuple[str, str, str, str], ...] = (
    ("error_rate", "errors", "items", "errors"),
    ("false_positive_rate", "false_positives", "n_different", "false positives"),
    ("false_negative_rate", "false_negatives", "n_same", "false negatives"),
)


def change_tests(latest: ArchivedRound, earlier: ArchivedRound) -> tuple[ChangeTest, ...]:
    """The error rates (two-proportion test) and d′ (difference with its SE), latest vs earlier."""
    out = []
    for name, k, n, noun in _PROPORTION_TESTS:
        test = two_proportion_test(latest.counts[k], latest.counts[n],
                                   earlier.counts[k], earlier.counts[n])
        out.append(_change(name, "two-proportion z-test; Newcombe interval", latest, earlier,
                           test, noun))
    out.append(_change("d_prime", "difference of d\u2032 with Gourevitch\u2013Galanter SE",
                       latest, earlier, d_prime_difference(latest.counts, earlier.counts)))
    return tuple(out)


def _change(name: str, method: str, latest: ArchivedRound, earlier: ArchivedRound,
            test: DifferenceTest, noun: str = "") -> ChangeTest:
    return ChangeTest(name, short_label(name), method, earlier.round_id, latest.round_id,
                      earlier.metric(name), latest.metric(name), test, noun)


# ---------------------------------------------------------------------------------------------
# Standing in the group


def standing(accuracy: float | None, x_star: float | None, s_star: float | None,
             n_group: int, note: str | None = None) -> Standing:
    """z = (accuracy − x*) / s* classed by ISO 13528 (|z| ≤ 2, 2 < |z| < 3, |z| ≥ 3); a high
    accuracy is never held against the examiner. z is classed after rounding to 9 decimals, so
    floating-point noise (0.4 − 0.7 = −0.29999…) does not move a value off a limit."""
    if accuracy is None or x_star is None or s_star is None or not s_star > 0:
        why = note or ("your accuracy was not estimable" if accuracy is None
                       else reasons.ROBUST_SD_ZERO)
        return Standing(None, "not assessable", "not assessable", x_star, s_star, n_group, why)
    z = (accuracy - x_star) / s_star
    iso = str(classify_z(round(z, 9)))  # rounding noise must not move z = -3.0 across a limit
    band = ("|z| \u2264 2" if iso == "satisfactory" else
            "2 < |z| < 3" if iso == "questionable" else "|z| \u2265 3")
    if z > 0 and iso != "satisfactory":
        return Standing(z, band, "satisfactory", x_star, s_star, n_group,
                        "well above the group's robust mean")
    return Standing(z, band, iso, x_star, s_star, n_group, None)


def round_point(a: ArchivedRound) -> RoundPoint:
    conclusive_errors = n_errors(a.rating_noise, a.rating_signal) if a.rating_noise else 0
    metrics = {name: a.metric(name) for name in TREND_METRICS}
    return RoundPoint(
        round_id=a.round_id, issued=a.issued, version=a.version, code=a.code,
        n_items=a.n_items, errors=int(a.counts.get("errors", 0)),
        conclusive_errors=conclusive_errors, few_errors=conclusive_errors < a.few_errors,
        metrics=metrics,
        standing=standing(metrics["accuracy"].value, a.accuracy_x_star, a.accuracy_s_star,
                          a.n_participants, a.robust_note),
        levels=a.levels,
    )


# ---------------------------------------------------------------------------------------------
# Pooled insight


def _correct_wrong(noise: FloatArray, signal: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Counts of right and of wrong answers by confidence level 1..K from a rating table."""
    k = noise.size // 2
    correct = noise[:k][::-1] + signal[k:]
    wrong = signal[:k][::-1] + noise[k:]
    return correct, wrong


def pooled_type2_auroc(noise: FloatArray, signal: FloatArray) -> Metric:
    """Type-2 ROC area (Fleming & Lau 2014) of the pooled table with a Hanley–McNeil interval."""
    correct, wrong = _correct_wrong(noise, signal)
    area = float(type2_auroc(correct, wrong))
    if not math.isfinite(area):
        return Metric(None, note="no errors" if wrong.sum() == 0 else "no correct answers")
    se = float(hanley_mcneil_se(area, correct.sum(), wrong.sum()))
    return Metric(area, max(0.0, area - Z * se), min(1.0, area + Z * se))


def select_pooled(history: Sequence[ArchivedRound], last_n: int | None
                  ) -> tuple[list[ArchivedRound], list[ArchivedRound]]:
    """(rounds pooled, rounds left out): the last ``last_n`` rounds (all when ``None``) whose
    confidence scale matches the latest round's, since only equal tables can be summed."""
    window = list(history[-last_n:] if last_n else history)
    levels = history[-1].levels
    same = [a for a in window if a.levels == levels and len(a.rating_noise) == 2 * len(levels)]
    return same, [a for a in window if a not in same]


def pooled_insight(history: Sequence[ArchivedRound], *, last_n: int | None, seed: int,
                   n_boot: int) -> PooledInsight:
    """Sum the rating tables, then fit once (padding is the fit's, as for a single round)."""
    used, excluded = select_pooled(history, last_n)
    threshold = history[-1].few_errors
    noise, signal = pool_tables([(a.rating_noise, a.rating_signal) for a in used])
    fit = fit_meta_d(noise, signal)
    ci = (meta_d_interval(noise, signal, n_boot=n_boot, seed=seed)
          if n_boot > 0 and fit.meta_d is not None else None)
    errors = n_errors(noise, signal)
    flag = reasons.FEW_ERRORS if errors < threshold else None
    meta_d = Metric(fit.meta_d, ci.meta_d_low if ci else None, ci.meta_d_high if ci else None,
                    fit.note if fit.meta_d is None else flag)
    m_ratio = Metric(fit.m_ratio, ci.m_ratio_low if ci else None,
                     ci.m_ratio_high if ci else None, fit.note if fit.m_ratio is None else flag)
    auroc = pooled_type2_auroc(noise, signal)
    expected = None
    if fit.d_prime is not None and fit.criterion is not None and auroc.estimable:
        expected = ideal_observer(fit.d_prime, fit.criterion, noise.size // 2,
                                  noise_counts=noise, signal_counts=signal).type2_auroc
    pooled = PooledInsight(
        round_ids=tuple(a.round_id for a in used), excluded=tuple(a.round_id for a in excluded),
        noise=tuple(int(x) for x in noise), signal=tuple(int(x) for x in signal),
        n_conclusive=int(noise.sum() + signal.sum()), n_errors=errors, threshold=threshold,
        d_prime=fit.d_prime, meta_d=meta_d, m_ratio=m_ratio, type2_auroc=auroc,
        expected_type2_auroc=expected, n_boot=n_boot if ci else 0, seed=seed)
    return pooled


# ---------------------------------------------------------------------------------------------
# The whole trend


def trend_from_history(history: Sequence[ArchivedRound], *, code: str,
                       renames: Sequence[Rename] = (), last_n: int | None = None,
                       seed: int = 0, n_boot: int = 500) -> Trend:
    """The trend of one examiner from their archived rounds (sorted by issue date)."""
    if not history:
        raise ValueError("trend_from_history needs at least one archived round")
    rounds = sorted(history, key=lambda a: (a.issued, a.round_id))
    points = tuple(round_point(a) for a in rounds)
    changes = change_tests(rounds[-1], rounds[-2]) if len(rounds) > 1 else ()
    pooled = pooled_insight(rounds, last_n=last_n, seed=seed, n_boot=n_boot)
    latest = rounds[-1]
    return Trend(
        code=code,
        recorded_codes=tuple(sorted({a.code for a in rounds})),
        renames=tuple(renames),
        name=str(latest.record.get("name") or ""),
        organisation=str(latest.record.get("organisation") or ""),
        scheme=latest.scheme,
        provider=latest.provider,
        issued=latest.issued,
        points=points,
        pooled=pooled,
        changes=changes,
        last_n=last_n,
    )


def build_trend(path: Path, code: str, *, last_n: int | None, seed: int, n_boot: int) -> Trend:
    """Read ``code``'s rounds from the archive at ``path`` and compute the trend.

    Unknown code: :class:`InputError` naming similar codes. ``last_n`` limits the rounds pooled
    for insight (the table and charts show every round); ``seed`` and ``n_boot`` drive the pooled
    bootstrap.
    """
    if last_n is not None and last_n < 1:
        raise InputError.single("--last", "the number of rounds to pool must be at least 1",
                                value=str(last_n))
    if n_boot < 0:
        raise InputError.single("--bootstrap", "the number of resamples cannot be negative",
                                value=str(n_boot))
    history = archive.participant_history(path, code)
    current = archive.current_code(path, code)
    return trend_from_history(history, code=current, renames=archive.renames(path, code),
                              last_n=last_n, seed=seed, n_boot=n_boot)
