"""Scoring of the tiny round, checked by hand and against reference libraries.

Sources: scikit-learn's roc_auc_score and brier_score_loss, statsmodels' proportion_confint,
scipy's norm.ppf and ttest_ind; Goodman–Kruskal gamma counted pair by pair from its definition
(Goodman & Kruskal 1954). Expected counts below are worked out by hand from tests/conftest.py.
"""

from __future__ import annotations

import itertools
import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import stats
from sklearn.metrics import brier_score_loss, roc_auc_score
from statsmodels.stats.proportion import proportion_confint

from reportgen.pipeline import score_folder
from reportgen.render.results_json import results_json
from reportgen.results.model import RoundResults
from reportgen.settings import ReportSettings, Settings
from tests.conftest import _ANSWERS, ITEMS, ROUND_TOML, responses_csv

MakeRound = Callable[..., Path]
TRUTH = {f"I{n}": ("same" if n <= 3 else "different") for n in range(1, 7)}


@pytest.fixture
def results(make_round: MakeRound) -> RoundResults:
    return score_folder(make_round())


def _by_code(results: RoundResults, code: str):  # type: ignore[no-untyped-def]
    return next(p for p in results.participants if p.code == code)


def test_counts_by_hand(results: RoundResults) -> None:
    # A7: I2 answered different (FN), I4 answered same (FP), I6 inconclusive.
    a7 = _by_code(results, "A7").counts
    assert (a7["correct"], a7["errors"], a7["inconclusive"]) == (3, 2, 1)
    assert (a7["false_positives"], a7["false_negatives"]) == (1, 1)
    assert (a7["inconclusive_same"], a7["inconclusive_different"]) == (0, 1)
    assert _by_code(results, "0042").counts["errors"] == 0
    c9 = _by_code(results, "C9").counts
    assert (c9["correct"], c9["errors"], c9["false_positives"]) == (5, 1, 1)


def test_rates_match_statsmodels_wilson(results: RoundResults) -> None:
    for p in results.participants:
        acc = p.metrics["accuracy"]
        low, high = proportion_confint(p.counts["correct"], 6, method="wilson")  # statsmodels
        assert (acc.value, acc.low, acc.high) == pytest.approx((p.counts["correct"] / 6, low,
                                                                high))
        fpr = p.metrics["false_positive_rate"]
        assert fpr.value == pytest.approx(p.counts["false_positives"] / 3)


def test_d_prime_log_linear_by_hand(results: RoundResults) -> None:
    # A7 conclusive: same-source 2 hits of 3, different-source 1 false alarm of 2.
    # Hautus (1995): H = 2.5/4, F = 1.5/3; d' = z(H) - z(F) with scipy.stats.norm.ppf.
    h, f = 2.5 / 4, 1.5 / 3
    m = _by_code(results, "A7").metrics
    assert m["d_prime"].value == pytest.approx(stats.norm.ppf(h) - stats.norm.ppf(f))
    assert m["criterion"].value == pytest.approx(-(stats.norm.ppf(h) + stats.norm.ppf(f)) / 2)


def _answers(code: str) -> list[tuple[str, str, str, int]]:
    return [(f"I{n}", TRUTH[f"I{n}"], d, c) for n, (d, c) in enumerate(_ANSWERS[code], start=1)]


@pytest.mark.parametrize("code", sorted(_ANSWERS))
def test_rating_auc_matches_sklearn(results: RoundResults, code: str) -> None:
    # The combined scale: different 5..1, inconclusive, same 1..5 (inconclusive in the middle).
    scores, truth = [], []
    for _, t, d, c in _answers(code):
        scores.append({"different": -c, "inconclusive": 0, "same": c}[d])
        truth.append(t == "same")
    expected = roc_auc_score(truth, scores)  # scikit-learn
    assert _by_code(results, code).metrics["auc"].value == pytest.approx(expected)


@pytest.mark.parametrize("code", ["A7", "B3", "C9"])
def test_insight_matches_references(results: RoundResults, code: str) -> None:
    conclusive = [(t, d, c) for _, t, d, c in _answers(code) if d != "inconclusive"]
    right = np.array([t == d for t, d, _ in conclusive])
    conf = np.array([c for _, _, c in conclusive], dtype=float)
    m = _by_code(results, code).metrics
    # Fleming & Lau (2014): raw type-2 AUROC = ROC area of confidence for right vs wrong.
    assert m["type2_auroc"].value == pytest.approx(roc_auc_score(right, conf))
    assert m["conf_gap"].value == pytest.approx(conf[right].mean() - conf[~right].mean())
    # Goodman–Kruskal gamma, pair by pair from the definition.
    conc = disc = 0
    for (r1, c1), (r2, c2) in itertools.combinations(zip(right, conf, strict=True), 2):
        s = (int(r1) - int(r2)) * (c1 - c2)
        conc, disc = conc + (s > 0), disc + (s < 0)
    if conc + disc:
        assert m["gamma"].value == pytest.approx((conc - disc) / (conc + disc))
    # Brier score with the linear convention 1 -> 0.5 ... 5 -> 1.0 (scikit-learn).
    prob = 0.5 + (conf - 1) / 4 * 0.5
    assert m["brier"].value == pytest.approx(brier_score_loss(right, prob))
    assert m["overconfidence"].value == pytest.approx(prob.mean() - right.mean())


# A7's two wrong answers share one confidence level; scipy warns about that, and it is fine.
@pytest.mark.filterwarnings("ignore:Precision loss occurred:RuntimeWarning")
def test_conf_gap_interval_is_welch(results: RoundResults) -> None:
    # A7 has two errors, so a Welch interval exists; C9 has one error, so it does not.
    rows = [(t == d, c) for _, t, d, c in _answers("A7") if d != "inconclusive"]
    right = np.array([c for ok, c in rows if ok], dtype=float)
    wrong = np.array([c for ok, c in rows if not ok], dtype=float)
    ci = stats.ttest_ind(right, wrong, equal_var=False).confidence_interval()  # scipy (Welch)
    m = _by_code(results, "A7").metrics["conf_gap"]
    assert (m.low, m.high) == pytest.approx((ci.low, ci.high))
    assert _by_code(results, "C9").metrics["conf_gap"].low is None


def test_not_estimable_is_null_with_reason(results: RoundResults) -> None:
    doc = json.loads(results_json(results))
    perfect = next(p for p in doc["participants"] if p["participant"] == "0042")
    for name in ("type2_auroc", "conf_gap", "meta_d", "m_ratio"):
        assert perfect[name] is None
        assert perfect[f"{name}_note"] == "no errors"
    assert perfect["accuracy"] == 1.0 and perfect["accuracy_ci"][1] == 1.0


def test_criteria_outcomes(results: RoundResults) -> None:
    outcomes = {p.code: [c.outcome for c in p.criteria] for p in results.participants}
    assert outcomes == {"0042": ["met", "met"], "A7": ["not met", "met"],
                        "B3": ["not met", "met"], "C9": ["not met", "met"]}
    assert results.group.criteria_counts["C1"] == {"met": 1, "not met": 3}


def test_item_analysis(results: RoundResults) -> None:
    i6 = results.items[5]
    # I6 (different): 0042 right, A7 inconclusive, B3 wrong (same), C9 right.
    assert (i6.answered, i6.correct, i6.wrong, i6.inconclusive) == (4, 2, 1, 1)
    assert i6.difficulty == pytest.approx(2 / 4) and i6.inconclusive_rate == pytest.approx(1 / 4)


def _rows(text: str) -> list[str]:
    return text.splitlines()[1:]


@settings(max_examples=15, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.permutations(_rows(responses_csv())))
def test_order_of_response_rows_changes_nothing(make_round: MakeRound, rows: list[str]) -> None:
    import uuid

    base = make_round(folder=f"a{uuid.uuid4().hex}")
    shuffled = make_round(folder=f"b{uuid.uuid4().hex}", responses__csv="participant,item,"
                          "decision,confidence\n" + "\n".join(rows) + "\n")
    quick = Settings(report=ReportSettings(bootstrap=20))
    a = json.loads(results_json(score_folder(base, quick)))
    b = json.loads(results_json(score_folder(shuffled, quick)))
    for doc in (a, b):
        doc["round"].pop("inputs")
    assert a == b


def test_swapping_class_labels_negates_criterion_keeps_d_prime(make_round: MakeRound) -> None:
    """Relabelling which class is 'positive' mirrors SDT: d' is kept, c changes sign
    (Macmillan & Creelman 2005, ch. 2: c = -(z(H)+z(F))/2)."""
    base = score_folder(make_round(folder="base"))
    toml = ROUND_TOML.replace("[confidence]", '[classes]\nlabels = ["same", "different"]\n'
                              'positive = "different"\n\n[confidence]')
    swapped = score_folder(make_round(folder="swapped", round__toml=toml, items__csv=ITEMS))
    for a, b in zip(base.participants, swapped.participants, strict=True):
        assert a.metrics["d_prime"].value == pytest.approx(b.metrics["d_prime"].value)
        assert a.metrics["criterion"].value == pytest.approx(-b.metrics["criterion"].value)
        assert a.metrics["auc"].value == pytest.approx(b.metrics["auc"].value)
        assert a.metrics["accuracy"].value == b.metrics["accuracy"].value
        # false positives on one labelling are false negatives on the other
        assert a.counts["false_positives"] == b.counts["false_negatives"]
