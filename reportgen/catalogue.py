"""The metric catalogue: one frozen record per count and metric, and every list derived from it.

A measure's results.json key, kind, label, short label, formula, published source, certificate
section and number format live here and nowhere else: results.json and the workbook take their
columns and the Methods sheet from it, the certificate its sections and labels, the appendix and
the trend report their metric lists. Adding a metric = its function in :mod:`reportgen.metrics`,
its column in :mod:`reportgen.scoring`, and its record here (docs/design.md §3 has the
definitions in prose).

This module imports nothing of reportgen: every stage may read it.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Literal

Kind = Literal["count", "rate", "number"]
Section = Literal["decisions", "discrimination", "insight", "calibration"]

INTERVAL_LEVEL = 0.95
"""The coverage of every interval the reports show (z = ndtri(0.5 + level / 2))."""


@dataclass(frozen=True)
class MetricSpec:
    """Everything the product says about one measure."""

    name: str  # results.json key, workbook column, criterion metric
    kind: Kind  # count: whole number; rate: proportion shown in percent; number: anything else
    label: str  # workbook, certificate, appendix and trend report alike
    short: str  # charts, change tables, compact lists
    formula: str = ""
    source: str = ""  # the published source ("descriptive" where none is needed)
    section: Section | None = None  # certificate section; None = not shown there
    appendix: int = 0  # position in the appendix's group distributions; 0 = not shown
    digits: int = 2  # decimals of a number (rates: one decimal of a percent)

    @property
    def percent(self) -> bool:
        return self.kind == "rate"


_WILSON = "Wilson (1927), J Am Stat Assoc 22:209 (Clopper & Pearson 1934 on request)"
_HM = "Hanley & McNeil (1982), Radiology 143:29"
_MURPHY = "Murphy (1973), J Appl Meteorol 12:595"


def _count(name: str, label: str) -> MetricSpec:
    return MetricSpec(name, "count", label, label)


COUNTS: tuple[MetricSpec, ...] = (
    _count("items", "Items"),
    _count("answered", "Answered"),
    _count("correct", "Correct"),
    _count("errors", "Errors"),
    _count("inconclusive", "Inconclusive"),
    _count("missing", "Not answered"),
    _count("missing_same", "Not answered, same-source items"),
    _count("missing_different", "Not answered, different-source items"),
    _count("n_items", "Items in the round"),
    _count("n_answered", "Items answered"),
    _count("complete", "Complete submission (1 = every item answered)"),
    _count("in_group", "In the group statistics (1 = at least [scoring] min_answered of the "
           "items answered)"),
    _count("n_same", "Same-source items"),
    _count("n_different", "Different-source items"),
    _count("correct_same", "Correct on same-source items"),
    _count("correct_different", "Correct on different-source items"),
    _count("false_positives", "False positives"),
    _count("false_negatives", "False negatives"),
    _count("inconclusive_same", "Inconclusive on same-source items"),
    _count("inconclusive_different", "Inconclusive on different-source items"),
)

MAX_STRENGTH = 10
"""Strengths of a graded conclusion scale run 1 .. 10 (= reportgen.rounds.schema.MAX_STRENGTH)."""
STRENGTH_COUNTS: tuple[MetricSpec, ...] = (
    MetricSpec("strongest_errors", "count", "Errors at the strongest level",
               "Strongest-level errors",
               "conclusive errors given at the strongest level of the class asserted "
               "(graded conclusion scales)", "descriptive"),
    *(MetricSpec(f"errors_at_strength_{s}", "count", f"Errors at strength {s}",
                 f"Errors, strength {s}",
                 f"conclusive errors given at strength {s} (1 = weakest; graded conclusion "
                 "scales)", "descriptive")
      for s in range(1, MAX_STRENGTH + 1)),
)
"""Errors by strength: counted only on a graded conclusion scale (``[decisions]`` with
strengths), where a strong wrong conclusion weighs more than a limited one."""

METRICS: tuple[MetricSpec, ...] = (
    MetricSpec("accuracy", "rate", "Accuracy (correct / all items)", "Accuracy",
               "correct / items; 95 % interval by the score method", _WILSON,
               "decisions", appendix=1),
    MetricSpec("answered_accuracy", "rate", "Accuracy on answered items",
               "Accuracy on answered items", "correct / items answered", _WILSON),
    MetricSpec("error_rate", "rate", "Error rate (errors / all items)", "Error rate",
               "errors / items (inconclusive is not an error unless round.toml says so)", _WILSON,
               "decisions", appendix=2),
    MetricSpec("decisive_accuracy", "rate", "Accuracy on conclusive answers",
               "Accuracy on conclusive answers", "correct / (correct + errors)", _WILSON,
               "decisions", appendix=6),
    MetricSpec("false_positive_rate", "rate", "False-positive rate", "False-positive rate",
               "'same' answers on different-source items / different-source items answered",
               "Forensic black-box study convention (common practice); " + _WILSON,
               "decisions", appendix=3),
    MetricSpec("false_negative_rate", "rate", "False-negative rate", "False-negative rate",
               "'different' answers on same-source items / same-source items answered",
               "Forensic black-box study convention (common practice); " + _WILSON,
               "decisions", appendix=4),
    MetricSpec("inconclusive_rate", "rate", "Inconclusive rate", "Inconclusive rate",
               "inconclusive answers / items", _WILSON, "decisions", appendix=5),
    MetricSpec("hit_rate", "number", "Hit rate (corrected)", "Hit rate",
               "(hits + 0.5) / (conclusive same-source + 1)",
               "Hautus (1995), Behav Res Methods 27:46 (log-linear rule)"),
    MetricSpec("false_alarm_rate", "number", "False-alarm rate (corrected)", "False-alarm rate",
               "(false alarms + 0.5) / (conclusive different-source + 1)", "Hautus (1995)"),
    MetricSpec("d_prime", "number", "Discriminability d\u2032", "Discriminability d\u2032",
               "z(H) \u2212 z(F) on conclusive answers, log-linear rates; 95 % interval "
               "\u00b1 z SE (Gourevitch & Galanter 1967)",
               "Macmillan & Creelman (2005), Detection Theory; Hautus (1995)",
               "discrimination", appendix=7),
    MetricSpec("criterion", "number", "Response bias c", "Response bias c",
               "\u2212(z(H) + z(F)) / 2; negative = leaning to 'same'",
               "Macmillan & Creelman (2005)", "discrimination", appendix=8),
    MetricSpec("auc", "number", "Rating ROC area", "Rating ROC area",
               "trapezoid area of the ROC of the combined decision-and-confidence scale "
               "(inconclusive in the middle) = Mann\u2013Whitney U / (n\u2081n\u2080)", _HM,
               "discrimination", appendix=9),
    MetricSpec("mean_confidence_correct", "number", "Mean confidence when right",
               "Mean confidence when right",
               "mean stated confidence over correct conclusive answers", "descriptive"),
    MetricSpec("mean_confidence_wrong", "number", "Mean confidence when wrong",
               "Mean confidence when wrong",
               "mean stated confidence over wrong conclusive answers", "descriptive"),
    MetricSpec("mean_confidence_inconclusive", "number", "Mean confidence when inconclusive",
               "Mean confidence when inconclusive",
               "mean stated confidence over inconclusive answers", "descriptive"),
    MetricSpec("conf_gap", "number", "Confidence gap (right \u2212 wrong)", "Confidence gap",
               "mean confidence when right \u2212 when wrong; Welch 95 % interval",
               "Welch (1947), Biometrika 34:28", "insight", appendix=10),
    MetricSpec("type2_auroc", "number", "Type-2 ROC area", "Type-2 ROC area",
               "area under the ROC of confidence for right vs wrong conclusive answers, from the "
               "raw counts", "Fleming & Lau (2014), Front Hum Neurosci 8:443; interval " + _HM,
               "insight", appendix=11),
    MetricSpec("gamma", "number", "Goodman\u2013Kruskal gamma", "Goodman\u2013Kruskal gamma",
               "(C \u2212 D) / (C + D) over right/wrong \u00d7 confidence",
               "Nelson (1984), Psychol Bull 95:109; Goodman & Kruskal (1954)",
               "insight", appendix=12),
    MetricSpec("meta_d", "number", "meta-d\u2032", "meta-d\u2032",
               "maximum-likelihood fit of the type-2 rating table with d\u2032 and c fixed, "
               "meta-c\u2032 = c\u2032, 1/(2K) added to every cell; 95 % interval by profile "
               "likelihood",
               "Maniscalco & Lau (2012), Conscious Cogn 21:422; interval: Wilks (1938), "
               "Ann Math Stat 9:60", "insight", appendix=13),
    MetricSpec("m_ratio", "number", "M-ratio (meta-d\u2032 / d\u2032)", "M-ratio",
               "meta-d\u2032 / d\u2032 of the same (padded) table; 95 % interval: the "
               "meta-d\u2032 interval over d\u2032, widened by the standard error of d\u2032 "
               "(delta method)",
               "Maniscalco & Lau (2012); Fleming & Lau (2014); SE of d\u2032: Gourevitch & "
               "Galanter (1967), Psychometrika 32:25", "insight", appendix=14),
    MetricSpec("expected_type2_auroc", "number", "Expected type-2 ROC area",
               "Expected type-2 ROC area",
               "type-2 ROC area of an ideal observer with the participant's d\u2032 and c "
               "(meta-d\u2032 = d\u2032)",
               "Galvin et al. (2003), Psychon Bull Rev 10:843; Maniscalco & Lau (2012)"),
    MetricSpec("expected_conf_gap", "number", "Expected confidence gap",
               "Expected confidence gap", "confidence gap of the same ideal observer",
               "Maniscalco & Lau (2012)"),
    MetricSpec("overconfidence", "number", "Over- / underconfidence", "Over- / underconfidence",
               "mean confidence as probability \u2212 proportion correct (conclusive answers)",
               "Lichtenstein, Fischhoff & Phillips (1982)", "calibration", appendix=15),
    MetricSpec("brier", "number", "Brier score", "Brier score", "mean (p \u2212 outcome)\u00b2",
               "Brier (1950), Mon Weather Rev 78:1", "calibration", appendix=16),
    MetricSpec("brier_reliability", "number", "Reliability (Murphy)", "Reliability",
               "\u03a3 n_k (p_k \u2212 \u014d_k)\u00b2 / N", _MURPHY),
    MetricSpec("brier_resolution", "number", "Resolution (Murphy)", "Resolution",
               "\u03a3 n_k (\u014d_k \u2212 \u014d)\u00b2 / N", "Murphy (1973)"),
    MetricSpec("brier_uncertainty", "number", "Uncertainty (Murphy)", "Uncertainty",
               "\u014d (1 \u2212 \u014d)", "Murphy (1973)"),
    MetricSpec("ece", "number", "Expected calibration error", "Expected calibration error",
               "\u03a3 (n_k / N) |p_k \u2212 \u014d_k| over confidence levels",
               "Naeini, Cooper & Hauskrecht (2015), AAAI", "calibration", appendix=17),
)

CATALOGUE: tuple[MetricSpec, ...] = COUNTS + STRENGTH_COUNTS + METRICS
BY_NAME: Mapping[str, MetricSpec] = {m.name: m for m in CATALOGUE}

COUNT_NAMES: tuple[str, ...] = tuple(m.name for m in COUNTS + STRENGTH_COUNTS)
METRIC_NAMES: tuple[str, ...] = tuple(m.name for m in METRICS)  # report order
RATE_NAMES: tuple[str, ...] = tuple(m.name for m in METRICS if m.kind == "rate")
RATES: frozenset[str] = frozenset(RATE_NAMES)
KNOWN_METRICS: frozenset[str] = frozenset(BY_NAME)

SECTION_TITLES: Mapping[Section, str] = {
    "decisions": "Decisions",
    "discrimination": "Discrimination",
    "insight": "Insight: does your confidence tell right from wrong?",
    "calibration": "Calibration: does your confidence match how often you are right?",
}
SECTIONS: tuple[tuple[str, tuple[str, ...]], ...] = tuple(
    (title, tuple(m.name for m in METRICS if m.section == key))
    for key, title in SECTION_TITLES.items()
)
"""The certificate's metric sections: (title, metric names in report order)."""

APPENDIX_METRICS: tuple[str, ...] = tuple(
    m.name for m in sorted((m for m in METRICS if m.appendix), key=lambda m: m.appendix))
TREND_METRICS: tuple[str, ...] = (
    "accuracy", "false_positive_rate", "false_negative_rate", "inconclusive_rate",
    "d_prime", "conf_gap", "type2_auroc", "m_ratio",
)
"""What the trend report follows across rounds."""


def label(name: str) -> str:
    """The label of a catalogued measure; an unknown name is shown as itself, readably."""
    spec = BY_NAME.get(name)
    return spec.label if spec is not None else name.replace("_", " ")


def short_label(name: str) -> str:
    spec = BY_NAME.get(name)
    return spec.short if spec is not None else name.replace("_", " ")
