"""round.toml, parsed into typed, frozen objects: one model per TOML table.

Every key is documented in docs/round-format.md. Unknown keys are reported, not ignored.
"""

from __future__ import annotations

import datetime as dt
import re
from typing import Literal

from pydantic import (
    Field,
    ValidationInfo,
    field_validator,
    model_validator,
)

from reportgen.metrics.stability import FEW_ERRORS_THRESHOLD
from reportgen.rounds.schema_base import ABSTAIN, _fold, _no_control_characters, _Table
from reportgen.rounds.schema_files import (
    TABLE_COLUMNS,
    Attributes,
    Columns,
    Files,
    Limits,
    TableFile,
    Wide,
)
from reportgen.rounds.schema_scales import (
    DEFAULT_BINS,
    ERRORS_AT_STRENGTH,
    MAX_LEVELS,
    MAX_STRENGTH,
    STRONGEST_ERRORS,
    Classes,
    Confidence,
    Grade,
    _graded_problems,
)

__all__ = [
    "ABSTAIN", "DEFAULT_BINS", "ERRORS_AT_STRENGTH", "MAX_LEVELS", "MAX_STRENGTH",
    "STRONGEST_ERRORS", "TABLE_COLUMNS", "Attributes", "Authoriser", "Classes", "Columns",
    "Confidence", "Criterion", "Files", "Grade", "Limits", "Provider", "RoundConfig", "RoundInfo",
    "Scoring", "TableFile", "Wide",
]


class RoundInfo(_Table):
    """[round]: who, what and when."""

    id: str = Field(min_length=1)
    scheme: str = Field(min_length=1)
    title: str = Field(min_length=1)
    opened: dt.date
    closed: dt.date
    issued: dt.date
    status: Literal["final", "preliminary"] = "final"
    coordinator: str = ""
    key_statement: str = Field(
        min_length=1, description="How the key (ground truth) of every item was established."
    )
    description: str = ""

    @model_validator(mode="after")
    def _dates_in_order(self) -> RoundInfo:
        if not self.opened <= self.closed <= self.issued:
            raise ValueError("dates must satisfy opened <= closed <= issued")
        return self


class Authoriser(_Table):
    """[provider] authorised_by: who authorises the reports (ISO/IEC 17043 asks for the name and
    function of the person authorising a report)."""

    name: str = Field(min_length=1)
    role: str = Field(min_length=1)

    @field_validator("name", "role")
    @classmethod
    def _plain(cls, value: str) -> str:
        _no_control_characters(value, "the text")
        return value


class Provider(_Table):
    """[provider]: the provider block printed on every report. Branding is data, not code."""

    name: str = Field(min_length=1)
    address: str = ""
    contact: str = ""
    logo: str | None = None
    accent: str = "#5f6b73"
    authorised_by: Authoriser | None = None

    @field_validator("accent")
    @classmethod
    def _accent_is_hex(cls, accent: str) -> str:
        if not re.fullmatch(r"#[0-9a-fA-F]{6}", accent):
            raise ValueError("accent must be a colour like #5f6b73")
        return accent

    @field_validator("logo")
    @classmethod
    def _plain_logo(cls, value: str | None) -> str | None:
        _no_control_characters(value, "the file name")
        return value


MIN_ANSWERED = 0.8
"""Default of ``[scoring] min_answered``: below 80 % of the items answered, a participant's rates
rest on a visibly different set of items from the group's (docs/round-format.md)."""


class Scoring(_Table):
    """[scoring]: how answers are scored."""

    interval: Literal["wilson", "clopper-pearson"] = "wilson"
    inconclusive_is_error: bool = False
    allow_missing: bool = Field(
        default=False,
        description="Score an item a participant did not answer as missing (neither correct nor "
        "an error, but counted in the item total) instead of refusing the round.",
    )
    normalise_labels: bool = Field(
        default=False,
        description="Accept decision and truth labels that differ only by case or surrounding "
        "spaces; every normalisation is reported as a warning.",
    )
    few_errors: int = Field(
        default=FEW_ERRORS_THRESHOLD, ge=0,
        description="Below this many errors, insight indices are flagged as unstable (default "
        "from the simulation in docs/metacognition.md).",
    )
    seed: int = Field(default=20240601, ge=0)
    min_answered: float = Field(
        default=MIN_ANSWERED, gt=0.0, le=1.0,
        description="A participant who answered less than this share of the items is flagged "
        "as incomplete and left out of the group statistics.",
    )
    estimates_required: bool = Field(
        default=False,
        description="Refuse the round when a participant's self-estimate is blank or absent "
        "(by default a blank estimate is simply missing).",
    )


class Criterion(_Table):
    """[[criteria]]: one rule announced before the round.

    ``kind = "bound"``: the metric must be ``>= at_least`` and/or ``<= at_most``.
    ``kind = "z"``: the metric's robust z-score in the group (ISO 13528 Algorithm A) is classed
    satisfactory (|z| <= 2), questionable (2 < |z| < 3) or unsatisfactory (|z| >= 3); only the
    unsatisfactory side that is worse than the group counts (``worse = "low"`` or ``"high"``).
    """

    id: str = Field(min_length=1)
    label: str = Field(min_length=1)
    metric: str = Field(min_length=1)
    kind: Literal["bound", "z"] = "bound"
    at_least: float | None = None
    at_most: float | None = None
    worse: Literal["low", "high"] = "low"

    @model_validator(mode="after")
    def _bound_given(self) -> Criterion:
        if self.kind == "bound" and self.at_least is None and self.at_most is None:
            raise ValueError("a bound criterion needs at_least, at_most or both")
        if self.kind == "z" and (self.at_least is not None or self.at_most is not None):
            raise ValueError("a z criterion takes no at_least/at_most; its limits are 2 and 3")
        if (self.at_least is not None and self.at_most is not None
                and self.at_least > self.at_most):
            raise ValueError("at_least is above at_most: no result could meet it")
        return self


class RoundConfig(_Table):
    """The whole of round.toml."""

    round: RoundInfo
    provider: Provider
    classes: Classes = Classes()
    decisions: dict[str, Grade] = Field(
        default_factory=lambda: {"same": "same", "different": "different",
                                 "inconclusive": ABSTAIN},
        description="decision label -> truth class, or 'inconclusive' for an abstention; on a "
        "graded scale a table { class, strength, probability }",
        validate_default=True,
    )
    confidence: Confidence = Confidence()
    scoring: Scoring = Scoring()
    files: Files = Files()
    columns: Columns = Columns()
    wide: Wide = Wide()
    criteria: tuple[Criterion, ...] = ()
    limits: Limits = Limits()
    attributes: Attributes = Attributes()

    @field_validator("decisions", mode="before")
    @classmethod
    def _plain_labels(cls, decisions: object) -> object:
        """``label = "same"`` is the table ``{ class = "same" }``."""
        if isinstance(decisions, dict):
            return {k: {"class": v} if isinstance(v, str) else v for k, v in decisions.items()}
        return decisions

    @field_validator("decisions")
    @classmethod
    def _decisions_consistent(cls, decisions: dict[str, Grade],
                              info: ValidationInfo) -> dict[str, Grade]:
        classes = info.data.get("classes")
        if not isinstance(classes, Classes):
            return decisions  # [classes] is invalid, and reported as such
        targets = set(classes.labels) | {ABSTAIN}
        folded: dict[str, str] = {}
        for label, grade in sorted(decisions.items()):
            target = grade.target
            if not label.strip():
                raise ValueError("a decision label is blank: a blank cell would be read as it")
            twin = folded.setdefault(_fold(label), label)
            if twin != label:
                raise ValueError(f"decision labels {twin!r} and {label!r} differ only by case or "
                                 "spaces; give each a distinct label")
            if target not in targets:
                raise ValueError(
                    f"decision {label!r} maps to {target!r}, which is neither a declared class "
                    f"({', '.join(classes.labels)}) nor {ABSTAIN!r}"
                )
        for label in classes.labels:
            if label not in {g.target for g in decisions.values()}:
                raise ValueError(f"no decision label maps to class {label!r}")
        problem = _graded_problems(decisions)
        if problem:
            raise ValueError(problem)
        return decisions

    @field_validator("confidence")
    @classmethod
    def _strength_declared(cls, confidence: Confidence, info: ValidationInfo) -> Confidence:
        decisions = info.data.get("decisions")
        if (confidence.source == "strength" and isinstance(decisions, dict)
                and not any(g.strength for g in decisions.values())):
            raise ValueError("source = 'strength' needs a graded conclusion scale: give the "
                             "labels of [decisions] a strength ({ class = \"same\", strength "
                             "= 1 } ...)")
        return confidence

    @property
    def decision_classes(self) -> dict[str, str]:
        """Decision label -> the class it asserts, or 'inconclusive'."""
        return {label: g.target for label, g in self.decisions.items()}

    @property
    def graded(self) -> bool:
        """The decision labels form a graded conclusion scale (labels carry a strength)."""
        return any(g.strength is not None for g in self.decisions.values())

    @property
    def max_strength(self) -> int:
        return max((g.strength or 0 for g in self.decisions.values()), default=0)

    @property
    def strength_probabilities(self) -> dict[int, float] | None:
        """Strength -> the declared probability of being right, when every level has one."""
        out = {g.strength: g.probability for g in self.decisions.values()
               if g.strength is not None and g.probability is not None}
        return out or None

    @field_validator("provider")
    @classmethod
    def _authorised_when_final(cls, provider: Provider, info: ValidationInfo) -> Provider:
        info_round = info.data.get("round")
        if (provider.authorised_by is None and isinstance(info_round, RoundInfo)
                and info_round.status == "final"):
            raise ValueError(
                'authorised_by = { name = "...", role = "..." } is required when [round] '
                'status is "final": the name and function of who authorises the reports')
        return provider

    @field_validator("criteria")
    @classmethod
    def _unique_ids(cls, criteria: tuple[Criterion, ...]) -> tuple[Criterion, ...]:
        ids = [c.id for c in criteria]
        dupes = sorted({i for i in ids if ids.count(i) > 1})
        if dupes:
            raise ValueError(f"criterion ids must be unique; repeated: {', '.join(dupes)}")
        return criteria

    @field_validator("criteria")
    @classmethod
    def _strength_counts_exist(cls, criteria: tuple[Criterion, ...],
                               info: ValidationInfo) -> tuple[Criterion, ...]:
        decisions = info.data.get("decisions")
        if not isinstance(decisions, dict):
            return criteria
        top = max((g.strength or 0 for g in decisions.values()), default=0)
        for c in criteria:
            suffix = c.metric.removeprefix(ERRORS_AT_STRENGTH)
            strength = (top if c.metric == STRONGEST_ERRORS
                        else int(suffix) if suffix != c.metric and suffix.isdigit() else 0)
            if strength > top or (c.metric == STRONGEST_ERRORS and not top):
                raise ValueError(f"criterion {c.id!r} names {c.metric!r}, but the conclusion "
                                 "scale of [decisions] has " + (f"strengths 1 to {top} only"
                                                                if top else "no strengths"))
        return criteria

    @model_validator(mode="after")
    def _table_columns_distinct(self) -> RoundConfig:
        for table in TABLE_COLUMNS:
            self.columns_for(table)
        return self

    def columns_for(self, table: str) -> Columns:
        """[columns] with the table's own ``[files.<table>] columns`` laid over it."""
        spec = getattr(self.files, table)
        if not isinstance(spec, TableFile) or not spec.columns:
            return self.columns
        mine = {key: name for key, name in self.columns.model_dump().items()
                if key in TABLE_COLUMNS[table]}
        names = {**mine, **spec.columns}
        by_name: dict[str, list[str]] = {}
        for key, name in names.items():
            if not name.strip():
                raise ValueError(f"files.{table}.columns: the column name for {key} is blank")
            by_name.setdefault(name.strip(), []).append(key)
        for name, shared in by_name.items():
            if len(shared) > 1:
                raise ValueError(f"files.{table}.columns: {' and '.join(shared)} both name the "
                                 f"column {name!r}; each needs its own column")
        return self.columns.model_copy(update=spec.columns)
