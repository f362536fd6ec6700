"""What each reported measure is, how it is computed and where the method comes from.

One table serves the workbook's methods sheet, results.json and the reports' methods notes.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Method:
    name: str
    label: str
    formula: str
    source: str


_WILSON = "Wilson (1927), J Am Stat Assoc 22:209 (Clopper & Pearson 1934 on request)"
_HM = "Hanley & McNeil (1982), Radiology 143:29"

METHODS: tuple[Method, ...] = (
    Method("accuracy", "Accuracy", "correct / items; 95 % interval by the score method",
           _WILSON),
    Method("error_rate", "Error rate", "errors / items (inconclusive is not an error unless "
           "round.toml says so)", _WILSON),
    Method("decisive_accuracy", "Accuracy of conclusive answers", "correct / (correct + errors)",
           _WILSON),
    Method("false_positive_rate", "False positive rate",
           "'same' answers on different-source items / different-source items",
           "Forensic black-box study convention (common practice); " + _WILSON),
    Method("false_negative_rate", "False negative rate",
           "'different' answers on same-source items / same-source items",
           "Forensic black-box study convention (common practice); " + _WILSON),
    Method("inconclusive_rate", "Inconclusive rate", "inconclusive answers / items", _WILSON),
    Method("hit_rate", "Hit rate (corrected)", "(hits + 0.5) / (conclusive same-source + 1)",
           "Hautus (1995), Behav Res Methods 27:46 (log-linear rule)"),
    Method("false_alarm_rate", "False-alarm rate (corrected)",
           "(false alarms + 0.5) / (conclusive different-source + 1)", "Hautus (1995)"),
    Method("d_prime", "Sensitivity d′", "z(H) − z(F) on conclusive answers, log-linear rates; "
           "interval ±1.96 SE (Gourevitch & Galanter 1967)",
           "Macmillan & Creelman (2005), Detection Theory; Hautus (1995)"),
    Method("criterion", "Response criterion c", "−(z(H) + z(F)) / 2; negative = leaning to 'same'",
           "Macmillan & Creelman (2005)"),
    Method("auc", "Rating ROC area", "trapezoid area of the ROC of the combined decision-and-"
           "confidence scale (inconclusive in the middle) = Mann–Whitney U / (n₁n₀)", _HM),
    Method("mean_confidence_correct", "Mean confidence when right",
           "mean stated confidence over correct conclusive answers", "descriptive"),
    Method("mean_confidence_wrong", "Mean confidence when wrong",
           "mean stated confidence over wrong conclusive answers", "descriptive"),
    Method("mean_confidence_inconclusive", "Mean confidence of inconclusives",
           "mean stated confidence over inconclusive answers", "descriptive"),
    Method("conf_gap", "Confidence gap", "mean confidence when right − when wrong; Welch 95 % "
           "interval", "Welch (1947), Biometrika 34:28"),
    Method("type2_auroc", "Type-2 ROC area", "area under the ROC of confidence for right vs wrong "
           "conclusive answers, from the raw counts", "Fleming & Lau (2014), Front Hum Neurosci "
           "8:443; interval " + _HM),
    Method("gamma", "Goodman–Kruskal gamma", "(C − D) / (C + D) over right/wrong × confidence",
           "Nelson (1984), Psychol Bull 95:109; Goodman & Kruskal (1954)"),
    Method("meta_d", "meta-d′", "maximum-likelihood fit of the type-2 rating table with d′ and c "
           "fixed, meta-c′ = c′, 1/(2K) added to every cell",
           "Maniscalco & Lau (2012), Conscious Cogn 21:422"),
    Method("m_ratio", "M-ratio", "meta-d′ / d′ of the same (padded) table",
           "Maniscalco & Lau (2012); Fleming & Lau (2014)"),
    Method("expected_type2_auroc", "Expected type-2 ROC area",
           "type-2 ROC area of an ideal observer with the participant's d′ and c (meta-d′ = d′)",
           "Galvin et al. (2003), Psychon Bull Rev 10:843; Maniscalco & Lau (2012)"),
    Method("expected_conf_gap", "Expected confidence gap",
           "confidence gap of the same ideal observer", "Maniscalco & Lau (2012)"),
    Method("overconfidence", "Over/underconfidence",
           "mean confidence as probability − proportion correct (conclusive answers)",
           "Lichtenstein, Fischhoff & Phillips (1982)"),
    Method("brier", "Brier score", "mean (p − outcome)²", "Brier (1950), Mon Weather Rev 78:1"),
    Method("brier_reliability", "Reliability (Murphy)", "Σ n_k (p_k − ō_k)² / N",
           "Murphy (1973), J Appl Meteorol 12:595"),
    Method("brier_resolution", "Resolution (Murphy)", "Σ n_k (ō_k − ō)² / N", "Murphy (1973)"),
    Method("brier_uncertainty", "Uncertainty (Murphy)", "ō (1 − ō)", "Murphy (1973)"),
    Method("ece", "Expected calibration error", "Σ (n_k / N) |p_k − ō_k| over confidence levels",
           "Naeini, Cooper & Hauskrecht (2015), AAAI"),
)

BY_NAME: dict[str, Method] = {m.name: m for m in METHODS}
