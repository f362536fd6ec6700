"""Pre-announced criteria: bound rules and ISO 13528 z rules."""

from __future__ import annotations

import numpy as np
import pytest

from reportgen.render.wording.statements import criterion_detail
from reportgen.rounds.schema import Criterion
from reportgen.scoring.criteria import judge


def test_bound_rules_and_overall_statement() -> None:
    rules = [
        Criterion(id="C1", label="No false positives", metric="false_positives", at_most=0),
        Criterion(id="C2", label="Accuracy ≥ 0.85", metric="accuracy", at_least=0.85),
    ]
    values = {"false_positives": np.array([0.0, 1.0, 0.0]),
              "accuracy": np.array([0.9, 0.95, np.nan])}
    v = judge(rules, values)
    assert [o.outcome for o in v.outcomes[0]] == ["met", "met"]
    assert [o.outcome for o in v.outcomes[1]] == ["not met", "met"]
    assert [o.outcome for o in v.outcomes[2]] == ["met", "not assessable"]
    assert v.overall == ("all criteria met", "not all criteria met", "not all criteria met")
    assert v.counts == {"C1": {"met": 2, "not met": 1}, "C2": {"met": 2, "not assessable": 1}}
    # The detail is worded from the outcome and the announced rule.
    assert criterion_detail(v.outcomes[1][0], rules[0], v.robust) == (
        "false_positives = 1; required at most 0")


def test_boundary_value_meets_the_rule() -> None:
    rule = Criterion(id="C", label="acc", metric="accuracy", at_least=0.85)
    assert judge([rule], {"accuracy": np.array([0.85])}).outcomes[0][0].outcome == "met"


def test_z_rule_classes_by_iso13528_limits() -> None:
    # ISO 13528 §9.3 limits (|z| <= 2 satisfactory, 2 < |z| < 3 questionable, >= 3
    # unsatisfactory); the group here is large and tight so x* and s* are stable.
    rng = np.random.default_rng(1)
    group = rng.normal(0.8, 0.05, 200)
    from reportgen.metrics.robust import algorithm_a

    est = algorithm_a(group)
    low_q = est.mean - 2.5 * est.sd
    low_u = est.mean - 3.5 * est.sd
    high = est.mean + 3.5 * est.sd
    values = np.concatenate([group, [low_q, low_u, high]])
    rule = Criterion(id="Z", label="within range", metric="accuracy", kind="z", worse="low")
    v = judge([rule], {"accuracy": values})
    outs = [o[0].outcome for o in v.outcomes[-3:]]
    # The extra three points move x*, s* a little; they stay well inside their classes.
    assert outs == ["questionable", "unsatisfactory", "satisfactory"]  # high side is not worse
    assert v.overall[-3] == "all criteria met" and v.outcomes[-3][0].outcome == "questionable"
    assert v.overall[-2] == "not all criteria met"
    x, s = v.robust["accuracy"]
    assert x == pytest.approx(0.8, abs=0.02) and s == pytest.approx(0.05, abs=0.01)


def test_z_rule_not_assessable_when_group_has_no_spread() -> None:
    rule = Criterion(id="Z", label="z", metric="accuracy", kind="z")
    v = judge([rule], {"accuracy": np.array([1.0, 1.0, 1.0, 1.0])})
    assert {o[0].outcome for o in v.outcomes} == {"not assessable"}


def test_no_criteria() -> None:
    v = judge([], {"accuracy": np.array([0.5, 0.7])})
    assert v.overall == ("no criteria announced", "no criteria announced")


def test_z_rule_group_values_leave_out_participants_outside_the_group() -> None:
    # A participant below [scoring] min_answered is still placed against x* and s*, but the
    # group's robust values come from the others only (ISO 13528 Algorithm A on the group).
    from reportgen.metrics.robust import algorithm_a

    rng = np.random.default_rng(3)
    group = rng.normal(0.8, 0.05, 40)
    values = np.concatenate([group, [0.1]])
    in_group = np.array([True] * 40 + [False])
    rule = Criterion(id="Z", label="within range", metric="accuracy", kind="z", worse="low")
    v = judge([rule], {"accuracy": values}, in_group)
    est = algorithm_a(group)
    assert v.robust["accuracy"] == pytest.approx((float(est.mean), float(est.sd)), rel=1e-12)
    assert v.outcomes[-1][0].outcome == "unsatisfactory"
