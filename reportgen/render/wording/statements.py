"""Statements made from results: the overall verdict, criterion details, item flags and the
reading of the self-estimate view."""

from __future__ import annotations

from collections.abc import Mapping

from reportgen.metrics.robust import classify_z
from reportgen.metrics.selfestimate import SIGNIFICANCE, QuartileRow, QuartileView
from reportgen.render.wording.numbers import fmt_p, fmt_signed
from reportgen.results import reasons
from reportgen.results.model import CriterionOutcome, ItemResult, ParticipantResult
from reportgen.rounds.schema import Criterion

OVERALL_TEXT = {
    "all criteria met": "All criteria announced before the round were met.",
    "not all criteria met": "Not every criterion announced before the round was met; see the "
    "table of criteria for which and by how much.",
    "no criteria announced": "No performance criteria were announced for this round; the "
    "results are given for information.",
}
WARNING_TEXT = (" One result is a warning signal (questionable: 2 < |z| < 3), which ISO 13528 "
                "treats as a prompt to review rather than a failure.")


def overall_text(p: ParticipantResult) -> str:
    """The verdict line of a certificate."""
    warn = any(c.outcome == "questionable" for c in p.criteria)
    return OVERALL_TEXT[p.overall] + (WARNING_TEXT if warn else "")


def _g4(x: float) -> str:
    return f"{x:.4g}"


def z_digits(z: float) -> int:
    """How many decimals z needs so that the printed value falls in the same ISO 13528 class
    as z itself: two, or more near a limit (z = −2.9989 prints −2.999, never −3.00 beside
    "questionable"). The class of z is taken on z rounded to 9 decimals, as scoring takes it,
    so 9 decimals always agree."""
    target = str(classify_z(round(z, 9)))
    for digits in range(2, 9):
        if str(classify_z(float(f"{z:.{digits}f}"))) == target:
            return digits
    return 9


def fmt_z(z: float | None) -> str:
    """A z-score for reports: signed, with a true minus sign, as many decimals as
    :func:`z_digits` asks for (``+0.44``, ``−2.999``)."""
    return fmt_signed(z, 2 if z is None else z_digits(z))


def criterion_detail(co: CriterionOutcome, rule: Criterion | None,
                     robust: Mapping[str, tuple[float, float]]) -> str:
    """How an outcome came about: the value against the requirement, the z-score with the
    group's x* and s*, or why the rule could not be applied."""
    if co.outcome == "not assessable":
        if co.reason == reasons.NOT_ESTIMABLE:
            return f"{co.metric} could not be estimated"
        return co.reason or reasons.NOT_ESTIMABLE
    if co.z is not None:
        x_star, s_star = robust[co.metric]
        return (f"z = {co.z:+.{z_digits(co.z)}f} (x* = {_g4(x_star)}, s* = {_g4(s_star)}, "
                "ISO 13528 Algorithm A)")
    needs = []
    if rule is not None and rule.at_least is not None:
        needs.append(f"at least {_g4(rule.at_least)}")
    if rule is not None and rule.at_most is not None:
        needs.append(f"at most {_g4(rule.at_most)}")
    value = _g4(co.value) if co.value is not None else "\u2014"
    return f"{co.metric} = {value}; required {' and '.join(needs)}"


def flag_reason(item: ItemResult) -> str | None:
    """Why an item is flagged for review before release."""
    if not item.flagged or item.strong_against is None:
        return None
    return f"{item.strong_against:.0%} of the strongest quarter answered against the key"


def _quarter_sentence(row: QuartileRow, weakest: bool) -> str | None:
    if row.gap is None or row.inside_null is None or row.null_high is None:
        return None
    who = "The weakest quarter's" if weakest else "The strongest quarter's"
    over = row.gap > 0
    direction = "exceed their scores" if over else "fall short of their scores"
    if row.inside_null:
        classic = over == weakest  # weakest over, strongest under: the regression pattern
        why = (
            "this pattern is expected from regression to the mean alone."
            if classic
            else "this is what estimates unrelated to score would show."
        )
        return f"{who} estimates {direction}, but by no more than shuffled estimates do: {why}"
    assert row.mean_estimate is not None  # implied by inside_null not being None
    higher = row.mean_estimate > row.null_high
    comparison = "higher" if higher else "lower"
    if higher == weakest:  # weakest above the band, or strongest below it
        return (
            f"{who} estimates are {comparison} than shuffled estimates would give: more than "
            "regression to the mean explains."
        )
    return (
        f"{who} estimates are {comparison} than shuffled estimates would give: the estimates "
        f"partly reflected their {comparison} scores."
    )


def quartile_reading(view: QuartileView) -> str:
    """Plain-language reading of a quartile view that never claims what the null band explains."""
    if view.n < 4:
        return "Too few self-estimates for a quartile view."
    sentences = [
        s
        for s in (_quarter_sentence(view.rows[0], True), _quarter_sentence(view.rows[-1], False))
        if s is not None
    ]
    g = view.glejser
    if g is None or g.slope_p is None:
        sentences.append("The accuracy of the estimates could not be related to score.")
    elif g.slope_p < SIGNIFICANCE:
        who = "lower" if g.slope < 0 else "higher"
        sentences.append(
            f"The estimates of {who} scorers miss their scores by more (Glejser test, "
            f"{fmt_p(g.slope_p)})."
        )
    else:
        sentences.append(
            "There is no evidence that the size of the misestimate depends on score (Glejser test, "
            f"{fmt_p(g.slope_p)})."
        )
    if g is not None and g.quadratic_p is not None and g.quadratic_p < SIGNIFICANCE:
        sentences.append(
            f"The size of the misestimate changes with score along a curve (quadratic term, "
            f"{fmt_p(g.quadratic_p)})."
        )
    return " ".join(sentences)
