"""One-line plain-language readings of each metric on a certificate, and the report cautions."""

from __future__ import annotations

from collections.abc import Mapping

from reportgen.render.wording.numbers import (
    count_of,
    finite,
    fmt_interval,
    fmt_number,
    fmt_percent,
    plural,
)
from reportgen.results.model import Metric, ParticipantResult
from reportgen.rounds.schema import RoundConfig

CAUTIONS: tuple[str, ...] = (
    "Results from one round are a small sample of an examiner's work. The 95\u00a0% intervals "
    "shown beside every rate give the range of values compatible with this round; read them "
    "before the single numbers.",
    "Measures of insight (how well confidence separates right from wrong answers) rest on the "
    "errors made, and with few errors they are unstable. Such values are flagged in this report, "
    "not hidden, and should not be compared between examiners on their own.",
    "This report is evidence for the provider's own documented procedures. Decisions about an "
    "examiner's fitness for casework rest with the provider, the employer's quality system and "
    "the accreditation body, not with this report.",
)


# ---------------------------------------------------------------------------------------------
# One-line readings


def _caution(m: Metric) -> str:
    if m.estimable and m.note:
        return f" Caution: {m.note}."
    return ""


def not_estimable(m: Metric) -> str:
    reason = m.note or "the data cannot support it"
    return f"Not estimable for you in this round ({reason})."


def _scale_unit(cfg: RoundConfig) -> str:
    scale = cfg.confidence
    if scale.source == "strength":  # a graded scale without a confidence column
        return f"strength levels on the 1\u2013{cfg.max_strength} scale"
    if scale.kind == "probability":
        return "percentage points"
    return f"points on the {scale.min:g}\u2013{scale.max:g} scale"


def read_accuracy(c: Mapping[str, int], m: Metric) -> str:
    text = (f"You answered {count_of(c['correct'], c['items'])} items correctly "
            f"({fmt_percent(m.value)}).")
    if finite(m.low) and finite(m.high):
        text += (f" With this many items, your underlying rate could plausibly lie anywhere "
                 f"between {fmt_percent(m.low)} and {fmt_percent(m.high)}.")
    return text


def read_error_rate(c: Mapping[str, int], m: Metric) -> str:
    if c["errors"] == 0:
        return "You made no errors: every conclusive answer matched the key."
    return (f"{plural(c['errors'], 'answer')} contradicted the key "
            f"({fmt_percent(m.value)} of all items).")


def read_decisive_accuracy(c: Mapping[str, int], m: Metric) -> str:
    if not m.estimable:
        return not_estimable(m)
    decisive = c["correct"] + c["errors"]
    return (f"Of the {decisive} items on which you reached a conclusion, {c['correct']} were "
            f"correct ({fmt_percent(m.value)}).")


def read_false_positive_rate(c: Mapping[str, int], m: Metric, cfg: RoundConfig) -> str:
    if not m.estimable:
        return not_estimable(m)
    pos, neg = cfg.classes.positive, cfg.classes.negative
    return (f"You answered \u201c{pos}\u201d on {count_of(c['false_positives'], c['n_different'])} "
            f"{neg}-source items ({fmt_percent(m.value)}). In identification work this is the "
            "costliest error.")


def read_false_negative_rate(c: Mapping[str, int], m: Metric, cfg: RoundConfig) -> str:
    if not m.estimable:
        return not_estimable(m)
    pos, neg = cfg.classes.positive, cfg.classes.negative
    return (f"You answered \u201c{neg}\u201d on {count_of(c['false_negatives'], c['n_same'])} "
            f"{pos}-source items ({fmt_percent(m.value)}).")


def read_inconclusive_rate(c: Mapping[str, int], m: Metric, cfg: RoundConfig) -> str:
    if c["inconclusive"] == 0:
        return "You reached a conclusion on every item."
    pos, neg = cfg.classes.positive, cfg.classes.negative
    return (f"You answered inconclusive on {count_of(c['inconclusive'], c['items'])} items "
            f"({fmt_percent(m.value)}): {c['inconclusive_same']} {pos}-source and "
            f"{c['inconclusive_different']} {neg}-source. "
            + ("This round counts an inconclusive as an error." if cfg.scoring.inconclusive_is_error
               else "An inconclusive is counted neither right nor wrong."))


def read_d_prime(m: Metric) -> str:
    if not m.estimable:
        return not_estimable(m)
    return (f"Your conclusive answers separated the two kinds of item with d\u2032 = "
            f"{fmt_number(m.value)}; 0 is chance and values above 2 mean a clear separation."
            + _caution(m))


def read_criterion(m: Metric, cfg: RoundConfig) -> str:
    if not m.estimable or m.value is None:
        return not_estimable(m)
    pos, neg = cfg.classes.positive, cfg.classes.negative
    if abs(m.value) < 0.1:
        lean = "you had no marked lean towards either answer"
    elif m.value > 0:
        lean = f"you leaned towards answering \u201c{neg}\u201d"
    else:
        lean = f"you leaned towards answering \u201c{pos}\u201d"
    return f"c = {fmt_number(m.value)}: {lean} (0 means no lean)." + _caution(m)


def read_auc(m: Metric, cfg: RoundConfig) -> str:
    if not m.estimable:
        return not_estimable(m)
    pos, neg = cfg.classes.positive, cfg.classes.negative
    return (f"Taking conclusion and confidence together, a {pos}-source item got a more "
            f"\u201c{pos}\u201d rating than a {neg}-source item {fmt_percent(m.value, 0)} of the "
            "time (50\u00a0% is chance, 100\u00a0% perfect).")


def read_conf_gap(m: Metric, cfg: RoundConfig) -> str:
    if not m.estimable or m.value is None:
        return not_estimable(m)
    unit = _scale_unit(cfg)
    gap = m.value
    if abs(gap) < 0.05:
        text = "when you were wrong you were about as confident as when you were right"
    elif gap > 0:
        text = (f"when you were wrong you were on average {fmt_number(gap, 1)} {unit} less "
                "confident than when you were right")
    else:
        text = (f"when you were wrong you were on average {fmt_number(-gap, 1)} {unit} more "
                "confident than when you were right")
    return text[0].upper() + text[1:] + "." + _caution(m)


def read_type2_auroc(m: Metric) -> str:
    if not m.estimable:
        return not_estimable(m)
    return (f"Picking one of your right and one of your wrong answers at random, the right one "
            f"carried the higher confidence {fmt_percent(m.value, 0)} of the time (50\u00a0% means "
            "confidence did not separate them)." + _caution(m))


def read_gamma(m: Metric) -> str:
    if not m.estimable:
        return not_estimable(m)
    return (f"Association between your confidence and being right: {fmt_number(m.value)} on a "
            "scale from \u22121 to +1, where 0 means none." + _caution(m))


def read_meta_d(m: Metric, d_prime: Metric) -> str:
    if not m.estimable or m.value is None:
        return not_estimable(m)
    against = (f" against your d\u2032 of {fmt_number(d_prime.value)}"
               if d_prime.estimable else "")
    return (f"meta-d\u2032 = {fmt_number(m.value)}{against}: how well your confidence separated "
            "right from wrong, in units of d\u2032 (an ideal observer\u2019s meta-d\u2032 equals "
            "its d\u2032)." + _caution(m))


def read_m_ratio(m: Metric) -> str:
    if not m.estimable or m.value is None:
        return not_estimable(m)
    if m.value <= 0:
        return ("Your confidence carried none of the information your decisions contained (an "
                "M-ratio at or below 0 means confidence was no higher, or even lower, when you "
                "were right; 100\u00a0% is what an ideal observer with your d\u2032 would show)."
                + _caution(m))
    return (f"Your confidence carried about {fmt_percent(m.value, 0)} of the information your "
            "decisions contained (100\u00a0% is what an ideal observer with your d\u2032 would "
            "show)." + _caution(m))


def read_relative_insight(observed: Metric, expected: Metric) -> str:
    """Compare the type-2 ROC area with that of an ideal observer with the same d′, criterion and
    use of the confidence levels; the verdict rests on whether the ideal observer's value lies
    inside the 95 % interval of the observed one."""
    if not observed.estimable or not expected.estimable or expected.value is None:
        return ""
    exp = fmt_number(expected.value)
    text = (f"Your type-2 ROC area was {fmt_number(observed.value)}")
    lo, hi = observed.low, observed.high
    ideal = ("an ideal observer with your d\u2032, your response bias and your use of the "
             f"confidence levels would reach about {exp}")
    if lo is None or hi is None or not (finite(lo) and finite(hi)):
        text += (f"; {ideal}. Without an interval for your value, this round cannot tell "
                 "whether the difference is more than chance.")
    else:
        text += f" (95\u00a0% interval {fmt_interval(observed)}); {ideal}"
        if expected.value < lo:
            text += (", below your interval: your confidence separated right from wrong more "
                     "than expected for your accuracy.")
        elif expected.value > hi:
            text += (", above your interval: your confidence separated right from wrong less "
                     "than expected for your accuracy.")
        else:
            text += (", inside your interval: your confidence separated right from wrong about "
                     "as well as expected for your accuracy.")
    return text + _caution(observed)


def read_overconfidence(m: Metric, cfg: RoundConfig) -> str:
    if not m.estimable or m.value is None:
        return not_estimable(m)
    points = fmt_number(abs(100 * m.value), 1)
    if abs(m.value) < 0.005:
        text = "Your stated confidence matched your share of right answers"
    elif m.value > 0:
        text = (f"Your confidence was on average {points} percentage points above your share of "
                "right answers: overconfident")
    else:
        text = (f"Your confidence was on average {points} percentage points below your share of "
                "right answers: underconfident")
    return text + _probability_convention(cfg) + "." + _caution(m)


def _probability_convention(cfg: RoundConfig) -> str:
    scale = cfg.confidence
    if scale.source == "strength":
        return " (each strength read as the probability of being right declared for it)"
    if scale.kind == "probability":
        return ""
    return (f" (confidence read as probability by the convention {scale.min:g} \u2192 "
            f"{fmt_percent(scale.map_low, 0)} \u2026 {scale.max:g} \u2192 100\u00a0%)")


def read_brier(m: Metric) -> str:
    if not m.estimable:
        return not_estimable(m)
    return (f"Brier score {fmt_number(m.value, 3)}: the mean squared gap between stated "
            "probability and outcome (0 is perfect; lower is better).")


def read_ece(m: Metric) -> str:
    if not m.estimable or m.value is None:
        return not_estimable(m)
    return (f"At each confidence level, your share of right answers differed from the stated "
            f"probability by {fmt_number(100 * m.value, 1)} percentage points on average.")


def metric_readings(p: ParticipantResult, cfg: RoundConfig) -> dict[str, str]:
    """One plain-language line for every metric the certificate shows."""
    c, m = p.counts, p.metrics
    out = {
        "accuracy": read_accuracy(c, m["accuracy"]),
        "error_rate": read_error_rate(c, m["error_rate"]),
        "decisive_accuracy": read_decisive_accuracy(c, m["decisive_accuracy"]),
        "false_positive_rate": read_false_positive_rate(c, m["false_positive_rate"], cfg),
        "false_negative_rate": read_false_negative_rate(c, m["false_negative_rate"], cfg),
        "inconclusive_rate": read_inconclusive_rate(c, m["inconclusive_rate"], cfg),
        "d_prime": read_d_prime(m["d_prime"]),
        "criterion": read_criterion(m["criterion"], cfg),
        "auc": read_auc(m["auc"], cfg),
        "conf_gap": read_conf_gap(m["conf_gap"], cfg),
        "type2_auroc": read_type2_auroc(m["type2_auroc"]),
        "gamma": read_gamma(m["gamma"]),
        "m_ratio": read_m_ratio(m["m_ratio"]),
    }
    if "meta_d" in m:
        out["meta_d"] = read_meta_d(m["meta_d"], m["d_prime"])
    if "expected_type2_auroc" in m:
        out["relative_insight"] = read_relative_insight(m["type2_auroc"],
                                                        m["expected_type2_auroc"])
    if "overconfidence" in m:
        out["overconfidence"] = read_overconfidence(m["overconfidence"], cfg)
        out["brier"] = read_brier(m["brier"])
        out["ece"] = read_ece(m["ece"])
    return out
