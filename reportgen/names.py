"""The names of every count and metric a participant gets (DESIGN §3), in report order."""

from __future__ import annotations

COUNT_NAMES: tuple[str, ...] = (
    "items", "answered", "correct", "errors", "inconclusive", "missing",
    "n_same", "n_different", "correct_same", "correct_different",
    "false_positives", "false_negatives", "inconclusive_same", "inconclusive_different",
)
RATE_NAMES: tuple[str, ...] = (
    "accuracy", "error_rate", "decisive_accuracy", "false_positive_rate", "false_negative_rate",
    "inconclusive_rate",
)
METRIC_NAMES: tuple[str, ...] = (
    *RATE_NAMES,
    "hit_rate", "false_alarm_rate", "d_prime", "criterion", "auc",
    "mean_confidence_correct", "mean_confidence_wrong", "mean_confidence_inconclusive",
    "conf_gap", "type2_auroc", "gamma", "meta_d", "m_ratio",
    "expected_type2_auroc", "expected_conf_gap",
    "overconfidence", "brier", "brier_reliability", "brier_resolution", "brier_uncertainty", "ece",
)
KNOWN_METRICS = frozenset(METRIC_NAMES) | frozenset(COUNT_NAMES)
