"""Sentences about a participant's submission: how much of it was answered, whether it counts in
the group statistics, and their own estimate of their score beside the score."""

from __future__ import annotations

from reportgen.render.wording.numbers import fmt_number, fmt_percent

__all__ = ["answered_sentence", "estimate_sentences", "excluded_sentence", "share_text"]

QUARTERS = ("lowest", "second", "third", "highest")

REGRESSION_CAUTION = (
    "A caution in reading this: in any group, those with the lowest scores tend to have "
    "estimated above their score and those with the highest scores below it, even when the "
    "estimates carry no information at all (regression to the mean). The appendix sets each "
    "quarter's estimates against what shuffled estimates would show.")


def share_text(share: float) -> str:
    """``0.8`` -> ``"80 %"`` (a setting's share, with only the decimals it needs)."""
    return fmt_percent(share, 0 if round(share * 100, 6).is_integer() else 1)


def answered_sentence(n_answered: int, n_items: int) -> str:
    """Page 1 of an incomplete submission."""
    blank = n_items - n_answered
    return (f"You answered {n_answered} of {n_items} items; {blank} "
            f"{'was' if blank == 1 else 'were'} left blank. Accuracy counts a blank item as "
            "not right; the false-positive and false-negative rates are over the items you "
            "answered.")


def excluded_sentence(min_answered: float) -> str:
    return (f"Your results are not part of the group statistics of this round (medians, "
            f"distributions and pooled counts), because fewer than {share_text(min_answered)} "
            "of the items were answered, the minimum the provider set for them.")


def estimate_sentences(estimate: float, accuracy: float | None, quarter: int | None,
                       quarter_estimate: float | None, quarter_score: float | None) -> list[str]:
    """Their estimate beside their accuracy and, when there is a group view, their quarter."""
    out = [f"You estimated that you got {fmt_percent(estimate, 0)} "
           "of the items right."]
    if accuracy is not None:
        gap = 100 * (estimate - accuracy)
        if abs(gap) < 0.05:
            out.append(f"Your accuracy was {fmt_percent(accuracy)}: your estimate was right.")
        else:
            word = "above" if gap > 0 else "below"
            out.append(f"Your accuracy was {fmt_percent(accuracy)}, so your estimate was "
                       f"{fmt_number(abs(gap), 1)} percentage points {word} it.")
    if quarter is not None and quarter_estimate is not None and quarter_score is not None:
        out.append(f"Your accuracy places you in the {QUARTERS[quarter]} quarter of the group, "
                   f"whose members estimated {fmt_percent(quarter_estimate)} on average "
                   f"against a mean accuracy of {fmt_percent(quarter_score)}.")
        out.append(REGRESSION_CAUTION)
    return out
