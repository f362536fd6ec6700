"""round.toml, parsed into typed, frozen objects: one model per TOML table.

Every key is documented in docs/round-format.md. Unknown keys are reported, not ignored.
"""

from __future__ import annotations

import datetime as dt
import re
import unicodedata
from typing import Literal

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    ValidationInfo,
    field_validator,
    model_validator,
)

from reportgen.metrics.stability import FEW_ERRORS_THRESHOLD

ABSTAIN = "inconclusive"
"""What a decision label maps to when it is an abstention rather than a claim about a class."""


class _Table(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False)


_CONTROL = re.compile(r"[\x00-\x1f\x7f]")


def _no_control_characters(value: str | None, what: str) -> None:
    if value is not None and _CONTROL.search(value):
        raise ValueError(f"{what} contains a control character (such as a NUL or a line break)")


def _fold(label: str) -> str:
    """A label as compared when ``normalise_labels`` is on: NFKC, stripped, any case."""
    return unicodedata.normalize("NFKC", label).strip().casefold()


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


class Provider(_Table):
    """[provider]: the provider block printed on every report. Branding is data, not code."""

    name: str = Field(min_length=1)
    address: str = ""
    contact: str = ""
    logo: str | None = None
    accent: str = "#5f6b73"

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


class Classes(_Table):
    """[classes]: the truth classes and which one is the positive (same-source) class."""

    labels: tuple[str, ...] = ("same", "different")
    positive: str = "same"

    @model_validator(mode="after")
    def _positive_declared(self) -> Classes:
        if len(self.labels) != 2:
            raise ValueError("exactly two truth classes are supported (positive and negative)")
        if len(set(self.labels)) != 2:
            raise ValueError("the two truth classes must differ")
        if self.positive not in self.labels:
            raise ValueError(f"positive class {self.positive!r} is not one of labels {self.labels}")
        for label in self.labels:
            if not label.strip():
                raise ValueError("a truth class label is blank")
            if label == ABSTAIN:
                raise ValueError(f"{ABSTAIN!r} is the abstention, not a truth class")
        if _fold(self.labels[0]) == _fold(self.labels[1]):
            raise ValueError("the two truth classes differ only by case or spaces")
        return self

    @property
    def negative(self) -> str:
        return next(c for c in self.labels if c != self.positive)


class Confidence(_Table):
    """[confidence]: the confidence scale.

    ``kind = "ordinal"``: integers ``min..max``; ``probability_map = "linear"`` declares the
    convention min -> ``map_low`` ... max -> 1.0 (by default 0.5 .. 1.0) so calibration can be
    computed.
    ``kind = "probability"``: numbers in ``min..max`` (e.g. 0-100 or 50-100) read as percent.
    """

    kind: Literal["ordinal", "probability"] = "ordinal"
    min: float = 1
    max: float = 5
    probability_map: Literal["none", "linear"] = "none"
    map_low: float = Field(default=0.5, ge=0.0, le=1.0)

    @model_validator(mode="after")
    def _scale_ok(self) -> Confidence:
        if self.min >= self.max:
            raise ValueError(f"min ({self.min:g}) must be below max ({self.max:g})")
        if self.kind == "ordinal":
            if self.min != int(self.min) or self.max != int(self.max):
                raise ValueError("an ordinal scale needs whole-number min and max")
            if self.max - self.min > 19:
                raise ValueError("an ordinal scale may have at most 20 levels")
        if self.kind == "probability" and not (self.min >= 0 and self.max <= 100):
            raise ValueError("a probability scale is in percent: 0 <= min < max <= 100")
        return self

    @property
    def levels(self) -> int:
        """Number of ordinal levels (K). Probability scales are binned by distinct value."""
        return int(self.max - self.min) + 1 if self.kind == "ordinal" else 0

    @property
    def calibration_applies(self) -> bool:
        return self.kind == "probability" or self.probability_map == "linear"


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


class Files(_Table):
    """[files]: where the tables are. Each name may be .csv or .xlsx; ``None`` means discover."""

    items: str | None = None
    responses: str | None = None
    participants: str | None = None
    estimates: str | None = None
    layout: Literal["long", "wide"] = "long"
    sheet: str | None = Field(default=None, description="Sheet to read in xlsx files.")

    @field_validator("items", "responses", "participants", "estimates", "sheet")
    @classmethod
    def _plain_name(cls, value: str | None) -> str | None:
        _no_control_characters(value, "the name")
        if value is not None and not value.strip():
            raise ValueError("the name is blank; leave the key out to use the default")
        return value


class Limits(_Table):
    """[limits]: the most reportgen reads from one table file. A file beyond a limit is refused,
    and the message names the key here that would raise it. The ceilings keep the guards useful:
    beyond them a workbook could exhaust memory before it is refused."""

    max_rows: int = Field(default=200_000, ge=1, le=5_000_000)
    max_cells: int = Field(default=5_000_000, ge=1, le=100_000_000)
    max_file_mib: int = Field(default=256, ge=1, le=4096)
    max_unpacked_mib: int = Field(default=512, ge=1, le=16384)
    max_compression_ratio: float = Field(default=100.0, ge=2.0, le=10_000.0)


class Columns(_Table):
    """[columns]: column names, when a provider's files use other headers."""

    participant: str = "participant"
    item: str = "item"
    truth: str = "truth"
    decision: str = "decision"
    confidence: str = "confidence"
    name: str = "name"
    organisation: str = "organisation"
    estimate: str = "estimate"
    when: str = "when"

    @model_validator(mode="after")
    def _distinct_in_each_file(self) -> Columns:
        files = {
            "items": ("item", "truth"),
            "responses": ("participant", "item", "decision", "confidence"),
            "participants": ("participant", "name", "organisation"),
            "estimates": ("participant", "estimate", "when"),
        }
        for file, keys in files.items():
            by_name: dict[str, list[str]] = {}
            for key in keys:
                by_name.setdefault(getattr(self, key).strip(), []).append(key)
            for name, shared in by_name.items():
                if len(shared) > 1:
                    raise ValueError(f"{' and '.join(shared)} both name the column {name!r} of "
                                     f"the {file} table; each needs its own column")
            for key in keys:
                if not getattr(self, key).strip():
                    raise ValueError(f"the column name for {key} is blank")
        return self


class Wide(_Table):
    """[wide]: the column patterns of a wide responses sheet; ``{item}`` stands for the item id."""

    decision: str = "{item}_decision"
    confidence: str = "{item}_confidence"

    @model_validator(mode="after")
    def _has_placeholder(self) -> Wide:
        for pattern in (self.decision, self.confidence):
            if pattern.count("{item}") != 1:
                raise ValueError(f"pattern {pattern!r} must contain {{item}} exactly once")
        if self.decision == self.confidence:
            raise ValueError("decision and confidence patterns must differ")
        return self


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
    decisions: dict[str, str] = Field(
        default_factory=lambda: {"same": "same", "different": "different",
                                 "inconclusive": ABSTAIN},
        description="decision label -> truth class, or 'inconclusive' for an abstention",
        validate_default=True,
    )
    confidence: Confidence = Confidence()
    scoring: Scoring = Scoring()
    files: Files = Files()
    columns: Columns = Columns()
    wide: Wide = Wide()
    criteria: tuple[Criterion, ...] = ()
    limits: Limits = Limits()

    @field_validator("decisions")
    @classmethod
    def _decisions_consistent(cls, decisions: dict[str, str],
                              info: ValidationInfo) -> dict[str, str]:
        classes = info.data.get("classes")
        if not isinstance(classes, Classes):
            return decisions  # [classes] is invalid, and reported as such
        targets = set(classes.labels) | {ABSTAIN}
        folded: dict[str, str] = {}
        for label, target in sorted(decisions.items()):
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
            if label not in decisions.values():
                raise ValueError(f"no decision label maps to class {label!r}")
        return decisions

    @field_validator("criteria")
    @classmethod
    def _unique_ids(cls, criteria: tuple[Criterion, ...]) -> tuple[Criterion, ...]:
        ids = [c.id for c in criteria]
        dupes = sorted({i for i in ids if ids.count(i) > 1})
        if dupes:
            raise ValueError(f"criterion ids must be unique; repeated: {', '.join(dupes)}")
        return criteria
