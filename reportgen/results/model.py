"""Typed, frozen results of scoring a round: what rendering and writing consume.

Every per-participant measure is a :class:`Metric` under its name in :mod:`reportgen.catalogue`,
so the JSON, the workbook, the criteria and the templates all look values up by the same names.
Results hold numbers and reason phrases (:mod:`reportgen.results.reasons`), never sentences:
those are made by :mod:`reportgen.render.wording`.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Literal

from reportgen.metrics.selfestimate import AbilityGroup, QuartileView
from reportgen.rounds.model import Round


@dataclass(frozen=True)
class Metric:
    """A value with its 95 % interval, or ``value=None`` and a ``note`` saying why not estimable.

    ``note`` may also carry a caution on an estimable value (e.g. "few errors: unstable").
    """

    value: float | None
    low: float | None = None
    high: float | None = None
    note: str | None = None

    @property
    def estimable(self) -> bool:
        return self.value is not None


Outcome = Literal[
    "met", "not met", "not assessable", "satisfactory", "questionable", "unsatisfactory"
]


@dataclass(frozen=True)
class CriterionOutcome:
    """How one participant fared against one pre-announced criterion."""

    id: str
    label: str
    metric: str
    value: float | None
    outcome: Outcome
    z: float | None = None  # z-score rules: the participant's robust z
    reason: str | None = None  # why "not assessable": a phrase of reportgen.results.reasons


@dataclass(frozen=True)
class LevelRow:
    """One confidence level of one participant (conclusive answers only, plus inconclusives)."""

    level: float
    correct: int
    wrong: int
    inconclusive: int
    probability: float | None  # the level read as a probability of being right, when calibrated


@dataclass(frozen=True)
class ConclusionRow:
    """One label of a graded conclusion scale: how often it was given on same-source (positive)
    and on different-source items."""

    label: str  # in the scheme's own words
    asserts: str  # the class it asserts, or "inconclusive"
    strength: int | None
    on_same: int
    on_different: int


Overall = Literal["all criteria met", "not all criteria met", "no criteria announced"]


@dataclass(frozen=True)
class ParticipantResult:
    code: str
    row: int  # index into Round.participants and the response matrices
    counts: Mapping[str, int]
    metrics: Mapping[str, Metric]
    levels: tuple[LevelRow, ...]
    criteria: tuple[CriterionOutcome, ...]
    overall: Overall
    # Conclusive answers by rating, "sure different" ... "sure same" (2K cells), on different- and
    # on same-source items: the table meta-d′ is fitted on, kept so rounds can be pooled.
    rating_noise: tuple[int, ...] = ()
    rating_signal: tuple[int, ...] = ()
    # A graded conclusion scale: every label's answers by true class (empty when ungraded).
    conclusions: tuple[ConclusionRow, ...] = ()


@dataclass(frozen=True)
class ItemResult:
    item: str
    truth: str
    answered: int
    correct: int
    wrong: int
    inconclusive: int
    difficulty: float | None  # share of answering participants who were correct
    discrimination: float | None  # corrected item-total (point-biserial) correlation
    inconclusive_rate: float | None
    flagged: bool  # many strong performers answered against the key: review before release
    strong_against: float | None  # share of the strongest quarter that answered against the key


@dataclass(frozen=True)
class Distribution:
    n: int
    mean: float | None
    sd: float | None
    minimum: float | None
    q1: float | None
    median: float | None
    q3: float | None
    maximum: float | None


EstimateSource = Literal["estimates file", "mean stated confidence"]


@dataclass(frozen=True)
class SelfEstimateView:
    """The self-estimate-against-score quartile view with its null band and Glejser test."""

    source: EstimateSource
    score_name: str  # the metric the estimates are set against
    view: QuartileView


@dataclass(frozen=True)
class IdealPoint:
    """A point of the ideal-observer curve: type-2 ROC area expected at d′ (c = 0, levels used
    equally often), for the type2_auroc-against-d′ view."""

    d_prime: float
    type2_auroc: float


@dataclass(frozen=True)
class GroupResult:
    n_participants: int
    distributions: Mapping[str, Distribution]
    criteria_counts: Mapping[str, Mapping[str, int]]  # criterion id -> outcome -> count
    overall_counts: Mapping[str, int]
    robust: Mapping[str, tuple[float, float]]  # metric -> (x*, s*) of Algorithm A, for z criteria
    error_types: Mapping[str, int]  # false_positives, false_negatives, inconclusive_same, ...
    levels: tuple[LevelRow, ...]  # pooled over the group
    self_estimates: SelfEstimateView | None = None
    self_estimates_note: str | None = None  # why there is no view, when there is none
    ability_groups: tuple[AbilityGroup, ...] = ()
    ideal_curve: tuple[IdealPoint, ...] = ()
    conclusions: tuple[ConclusionRow, ...] = ()  # graded scales: pooled over the group


@dataclass(frozen=True)
class LevelFigures:
    """Accuracy, error rates by class and the type-2 ROC area on one attribute level's items."""

    accuracy: Metric
    false_positive_rate: Metric
    false_negative_rate: Metric
    type2_auroc: Metric


@dataclass(frozen=True)
class AttributeLevel:
    """One level of an item attribute (or the merged small levels): its items, the group's
    pooled figures (participants in the group only) and every participant's own, by code."""

    name: str
    n_items: int
    group: LevelFigures
    participants: Mapping[str, LevelFigures]
    merged: tuple[str, ...] = ()  # the small levels this one merges, when it is merged


@dataclass(frozen=True)
class AttributeBreakdown:
    """The break-down by one ``[attributes] breakdown`` column. Levels with fewer than
    ``min_items`` items are merged into one level, or withheld when even merged they are
    too few (``withheld`` names them)."""

    attribute: str
    levels: tuple[AttributeLevel, ...]
    min_items: int
    withheld: tuple[str, ...] = ()


@dataclass(frozen=True, eq=False)
class RoundResults:
    round: Round
    participants: tuple[ParticipantResult, ...]
    items: tuple[ItemResult, ...]
    group: GroupResult
    breakdowns: tuple[AttributeBreakdown, ...] = ()


@dataclass(frozen=True)
class PreviousRound:
    """One earlier archived round of the same participant, for the "previous rounds" block."""

    round_id: str
    issued: dt.date
    accuracy: Metric
    type2_auroc: Metric
    overall: str


@dataclass(frozen=True)
class IssuedDocument:
    """One certificate (``code``) or the group appendix (``code == ""``) as issued.

    ``content_sha256`` fingerprints the document's content: the SHA-256 of its HTML rendered with
    the round's base report id and no amendment notice, so an amended round can tell which
    documents really changed. ``replaces`` is the report id this one replaced, if any.
    """

    code: str
    report_id: str
    content_sha256: str
    issued: dt.date
    replaces: str | None = None
    replaced_issued: dt.date | None = None
    reason: str | None = None


@dataclass(frozen=True)
class Amendment:
    """Why and when a round's reports are amended (``issue --replace``): the tool never reads
    the clock, so the date is the provider's."""

    reason: str
    amended_on: dt.date
