"""reportgen.render.wording: number formats and plain-language readings."""

from __future__ import annotations

import datetime as dt

import pytest

from reportgen.metrics.robust import classify_z
from reportgen.render import wording
from reportgen.render.wording import readings, statements
from reportgen.results.model import CriterionOutcome, Metric, RoundResults
from reportgen.rounds.schema import Criterion

from .render_fixtures import round_config


@pytest.mark.parametrize(("x", "digits", "expected"), [
    (1.2345, 2, "1.23"),
    (-0.5, 2, "\u22120.50"),
    (-0.001, 2, "0.00"),  # rounds to zero: no sign
    (None, 2, "\u2014"),
    (float("nan"), 2, "\u2014"),
    (3.0, 0, "3"),
])
def test_fmt_number(x: float | None, digits: int, expected: str) -> None:
    assert wording.fmt_number(x, digits) == expected


def test_fmt_percent_and_interval() -> None:
    assert wording.fmt_percent(0.85) == "85.0\u00a0%"
    assert wording.fmt_percent(1.0, 0) == "100\u00a0%"
    m = Metric(0.85, 0.64, 0.948)
    assert wording.fmt_interval(m, "percent") == "64.0\u201394.8\u00a0%"
    assert wording.fmt_interval(Metric(1.5, -0.25, 3.0)) == "\u22120.25 to 3.00"
    assert wording.fmt_interval(Metric(1.5)) == "\u2014"


def test_fmt_signed() -> None:
    assert wording.fmt_signed(0.25) == "+0.25"
    assert wording.fmt_signed(-0.25) == "\u22120.25"
    assert wording.fmt_signed(0.0001) == "0.00"


def test_dates_do_not_depend_on_the_locale() -> None:
    assert wording.fmt_date(dt.date(2026, 5, 15)) == "15 May 2026"
    assert wording.fmt_date(dt.date(2026, 1, 2)) == "2 January 2026"


def test_conf_gap_reading_states_direction_and_size() -> None:
    cfg = round_config()
    text = readings.read_conf_gap(Metric(1.2, 0.4, 2.0), cfg)
    assert text == ("When you were wrong you were on average 1.2 points on the 1\u20135 scale less "
                    "confident than when you were right.")
    assert "more confident" in readings.read_conf_gap(Metric(-0.7), cfg)
    assert "about as confident" in readings.read_conf_gap(Metric(0.01), cfg)


def test_not_estimable_and_caution_notes_are_shown() -> None:
    cfg = round_config()
    assert readings.read_conf_gap(Metric(None, note="no errors"), cfg) == (
        "Not estimable for you in this round (no errors).")
    assert readings.read_type2_auroc(Metric(0.7, 0.5, 0.9, "few errors: unstable")).endswith(
        "Caution: few errors: unstable.")


def test_overconfidence_reading_names_the_convention() -> None:
    text = readings.read_overconfidence(Metric(0.062), round_config())
    assert "6.2 percentage points above" in text
    assert "overconfident" in text
    assert "1 \u2192 50\u00a0%" in text
    assert "underconfident" in readings.read_overconfidence(Metric(-0.1), round_config())


def test_relative_insight_compares_with_the_ideal_observer() -> None:
    # Expected value above the observed interval: less than expected.
    below = readings.read_relative_insight(Metric(0.6, 0.5, 0.7), Metric(0.8))
    assert "above your interval" in below
    assert "less than expected for your accuracy" in below
    # Inside the interval: about as well as expected, whatever the point estimate says.
    within = readings.read_relative_insight(Metric(0.75, 0.6, 0.9), Metric(0.8))
    assert "inside your interval" in within
    assert "about as well as expected for your accuracy" in within
    # Below the interval: more than expected.
    above = readings.read_relative_insight(Metric(0.9, 0.82, 0.97), Metric(0.8))
    assert "more than expected for your accuracy" in above
    # The sentence names both values and the interval it judged by.
    assert "0.75" in within and "0.80" in within and "0.60 to 0.90" in within
    assert readings.read_relative_insight(Metric(None, note="no errors"), Metric(0.8)) == ""


def test_relative_insight_without_an_interval_claims_no_verdict() -> None:
    text = readings.read_relative_insight(Metric(0.6), Metric(0.8))
    assert "cannot tell" in text
    for verdict in ("less than expected", "more than expected", "as well as expected"):
        assert verdict not in text


def test_relative_insight_carries_the_few_errors_caution() -> None:
    text = readings.read_relative_insight(Metric(0.7, 0.5, 0.9, "few errors: unstable"),
                                         Metric(0.75))
    assert text.endswith("Caution: few errors: unstable.")


def test_meta_d_reading_names_d_prime_and_caution() -> None:
    text = readings.read_meta_d(Metric(1.25, 0.44, 2.19, "few errors: unstable"), Metric(1.93))
    assert text.startswith("meta-d\u2032 = 1.25 against your d\u2032 of 1.93")
    assert text.endswith("Caution: few errors: unstable.")
    assert readings.read_meta_d(Metric(None, note="no errors"), Metric(1.9)) == (
        "Not estimable for you in this round (no errors).")


def test_fmt_p() -> None:
    assert wording.fmt_p(0.7471) == "p = 0.747"
    assert wording.fmt_p(0.0004) == "p < 0.001"
    assert wording.fmt_p(None) == "\u2014"


def test_every_reading_is_one_line(results: RoundResults) -> None:
    cfg = results.round.config
    for p in results.participants:
        for name, text in wording.metric_readings(p, cfg).items():
            assert "\n" not in text, name
            assert text == "" or text.endswith("."), (name, text)


def test_a_negative_m_ratio_is_not_read_as_a_negative_share() -> None:
    text = readings.read_m_ratio(Metric(-0.09, -1.5, 1.3))
    assert "\u22129" not in text and "none of the information" in text
    assert "about 65\u00a0%" in readings.read_m_ratio(Metric(0.65, 0.2, 1.1))


# ---------------------------------------------------------------------------------------------
# z-scores are printed so that the printed value falls in the class beside it (issue 13)


@pytest.mark.parametrize(("z", "expected"), [
    (0.4412, "+0.44"),
    (-1.994, "\u22121.99"),
    (-1.9951, "\u22122.00"),  # satisfactory, and so is |z| = 2.00
    (-2.0, "\u22122.00"),  # on the limit: satisfactory, |z| ≤ 2
    (-2.004, "\u22122.004"),  # questionable: never "−2.00"
    (-2.0000004, "\u22122.0000004"),
    (2.0049, "+2.005"),
    (-2.9989, "\u22122.999"),  # questionable: never "−3.00"
    (-2.99999, "\u22122.99999"),
    (-3.0, "\u22123.00"),  # on the limit: unsatisfactory, |z| ≥ 3
    (-3.004, "\u22123.00"),  # unsatisfactory either way
    (3.0000000001, "+3.00"),
])
def test_z_is_shown_with_the_digits_its_class_needs(z: float, expected: str) -> None:
    shown = statements.fmt_z(z)
    assert shown == expected
    value = float(shown.replace("\u2212", "-"))
    assert classify_z(value) == classify_z(round(z, 9))


def test_criterion_detail_never_contradicts_the_outcome() -> None:
    for z in (-2.9989, -2.0001, -1.99999, 2.9999999, -3.0):
        shown = statements.fmt_z(z).replace("\u2212", "-")
        assert classify_z(float(shown)) == classify_z(z)


def test_criterion_detail_prints_z_with_the_digits_its_class_needs() -> None:
    rule = Criterion(id="C3", label="z", metric="accuracy", kind="z", worse="low")
    outcome = CriterionOutcome(id="C3", label="z", metric="accuracy", value=0.4,
                               outcome="questionable", z=-2.9989, reason=None)
    detail = statements.criterion_detail(outcome, rule, {"accuracy": (0.7, 0.1)})
    assert detail.startswith("z = -2.999 ")
