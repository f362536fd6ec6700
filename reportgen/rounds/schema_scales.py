"""round.toml: the truth classes, the decision levels and the confidence scale ([classes],
[decisions], [confidence])."""

from __future__ import annotations

import itertools
from typing import Literal

from pydantic import (
    ConfigDict,
    Field,
    field_validator,
    model_validator,
)

from reportgen.rounds.schema_base import ABSTAIN, _fold, _Table


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


MAX_LEVELS = 20
"""The most levels a confidence scale may have without bins: the rating table of meta-d′ and the
rating ROC has 2K cells, and with more levels than a round has answers most cells are empty."""
MAX_STRENGTH = 10
"""The strongest level of a graded conclusion scale (strength 1 .. 10 per class)."""
STRONGEST_ERRORS = "strongest_errors"
"""The count of conclusive errors made at the strongest level of the class asserted."""
ERRORS_AT_STRENGTH = "errors_at_strength_"
"""Prefix of the counts of conclusive errors at each strength (``errors_at_strength_1`` ...)."""
DEFAULT_BINS = 5
"""A probability scale without ``bins`` is cut into this many bins of equal width."""


class Confidence(_Table):
    """[confidence]: the confidence scale.

    ``kind = "ordinal"``: integers ``min..max``; ``probability_map = "linear"`` declares the
    convention min -> ``map_low`` ... max -> 1.0 (by default 0.5 .. 1.0) so calibration can be
    computed.
    ``kind = "probability"``: any real numbers in ``min..max``, read as percent (0-100) or, when
    ``max <= 1``, as a proportion (0-1).
    ``source = "strength"``: no confidence column; the strength of the conclusion (graded
    ``[decisions]``) is the confidence level. A confidence column, when present, wins, and the
    other keys describe it.
    ``bins``: edges that group the values into levels for the measures that need levels (meta-d′,
    rating ROC, calibration table, ECE); each bin is left-closed, the last closed on both sides
    (as ``numpy.histogram``). Default for a probability scale: :data:`DEFAULT_BINS` equal bins.
    """

    kind: Literal["ordinal", "probability"] = "ordinal"
    source: Literal["column", "strength"] = "column"
    min: float = 1
    max: float = 5
    probability_map: Literal["none", "linear"] = "none"
    map_low: float = Field(default=0.5, ge=0.0, le=1.0)
    bins: tuple[float, ...] | None = None

    @model_validator(mode="after")
    def _scale_ok(self) -> Confidence:
        if self.min >= self.max:
            raise ValueError(f"min ({self.min:g}) must be below max ({self.max:g})")
        if self.kind == "ordinal":
            if self.min != int(self.min) or self.max != int(self.max):
                raise ValueError("an ordinal scale needs whole-number min and max")
            if self.max - self.min + 1 > MAX_LEVELS and self.bins is None:
                raise ValueError(f"an ordinal scale of more than {MAX_LEVELS} levels needs bins "
                                 f"(e.g. bins = [{self.min:g}, ..., {self.max:g}]); measures "
                                 f"that need levels use at most {MAX_LEVELS}")
        if self.kind == "probability" and not (self.min >= 0 and self.max <= 100):
            raise ValueError("a probability scale is in percent: 0 <= min < max <= 100")
        if self.bins is not None:
            self._bins_ok(self.bins)
        return self

    def _bins_ok(self, edges: tuple[float, ...]) -> None:
        shown = "[" + ", ".join(f"{e:g}" for e in edges) + "]"
        if not 2 <= len(edges) <= MAX_LEVELS + 1:
            raise ValueError(f"bins {shown} must give 1 to {MAX_LEVELS} bins (2 to "
                             f"{MAX_LEVELS + 1} edges)")
        if any(b <= a for a, b in itertools.pairwise(edges)):
            raise ValueError(f"bins {shown} must be increasing edges")
        if edges[0] > self.min or edges[-1] < self.max:
            raise ValueError(f"bins {shown} do not cover the scale {self.min:g} to "
                             f"{self.max:g}: the first edge must be at most {self.min:g} and "
                             f"the last at least {self.max:g}")

    @property
    def levels(self) -> int:
        """Number of levels (K) the level measures use: bins, else the ordinal levels."""
        if self.binned:
            return len(self.edges) - 1
        return int(self.max - self.min) + 1

    @property
    def binned(self) -> bool:
        """Values are grouped into bins for the measures that need levels."""
        return self.kind == "probability" or self.bins is not None

    @property
    def edges(self) -> tuple[float, ...]:
        """The bin edges: declared, or :data:`DEFAULT_BINS` equal bins over the scale."""
        if self.bins is not None:
            return self.bins
        span = self.max - self.min  # k * span / n, not k * step: 3 * 0.2 is not 0.6
        return tuple([self.min + k * span / DEFAULT_BINS for k in range(DEFAULT_BINS)]
                     + [self.max])

    @property
    def unit(self) -> float:
        """What a value is divided by to read it as a probability: 100 (percent) or 1."""
        return 1.0 if self.kind == "probability" and self.max <= 1 else 100.0

    @property
    def calibration_applies(self) -> bool:
        return self.kind == "probability" or self.probability_map == "linear"


class Grade(_Table):
    """One label of [decisions]: the class it asserts (or the abstention) and, on a graded
    conclusion scale, its strength (1 = weakest) and optionally the probability of being right
    that the level stands for. Written ``label = "same"`` or
    ``label = { class = "same", strength = 3, probability = 0.9 }``."""

    model_config = ConfigDict(extra="forbid", frozen=True, allow_inf_nan=False,
                              populate_by_name=True)

    target: str = Field(alias="class", min_length=1)
    strength: int | None = Field(default=None, ge=1, le=MAX_STRENGTH)
    probability: float | None = None

    @field_validator("probability")
    @classmethod
    def _a_probability(cls, value: float | None) -> float | None:
        if value is not None and not 0 <= value <= 1:
            raise ValueError("a level's probability of being right is between 0 and 1 "
                             "(e.g. 0.9)")
        return value

    @model_validator(mode="after")
    def _strength_on_a_class(self) -> Grade:
        if self.target == ABSTAIN and (self.strength is not None or self.probability is not None):
            raise ValueError(f"{ABSTAIN!r} takes no strength or probability: it is not a "
                             "conclusion about a class")
        if self.probability is not None and self.strength is None:
            raise ValueError("a probability needs a strength: calibration reads the strength "
                             "as the confidence level")
        return self

    def dump(self) -> str | dict[str, str | int | float]:
        """As written in round.toml: the plain class, or the table."""
        if self.strength is None:
            return self.target
        out: dict[str, str | int | float] = {"class": self.target, "strength": self.strength}
        if self.probability is not None:
            out["probability"] = self.probability
        return out


def _graded_problems(decisions: dict[str, Grade]) -> str | None:
    """What is wrong with the strengths and probabilities of a graded scale, or None."""
    conclusive = {k: g for k, g in decisions.items() if g.target != ABSTAIN}
    if not any(g.strength is not None for g in conclusive.values()):
        return None
    plain = sorted(k for k, g in conclusive.items() if g.strength is None)
    if plain:
        return (f"decision {plain[0]!r} has no strength: on a graded scale every label of a "
                "class needs one ({ class = ..., strength = 1 } is the weakest)")
    by_grade: dict[tuple[str, int], str] = {}
    for label, g in sorted(conclusive.items()):
        twin = by_grade.setdefault((g.target, g.strength or 0), label)
        if twin != label:
            return (f"decisions {twin!r} and {label!r} both have class {g.target!r} and "
                    f"strength {g.strength}: each level of the scale needs its own strength")
    for target in sorted({g.target for g in conclusive.values()}):
        have = sorted(s for t, s in by_grade if t == target)
        gap = sorted(set(range(1, have[-1] + 1)) - set(have))
        if gap:
            return (f"class {target!r} has strengths {', '.join(map(str, have))} but no "
                    f"{', '.join(map(str, gap))}: strengths count 1, 2, 3 ... from the weakest, "
                    "without gaps")
    with_p = sorted(k for k, g in conclusive.items() if g.probability is not None)
    if with_p and len(with_p) != len(conclusive):
        missing = sorted(set(conclusive) - set(with_p))
        return (f"decision {missing[0]!r} has no probability while {with_p[0]!r} has one: "
                "declare a probability for every level, or for none")
    by_strength: dict[int, tuple[str, float]] = {}
    for label, g in sorted(conclusive.items()):
        if g.probability is None or g.strength is None:
            continue
        first = by_strength.setdefault(g.strength, (label, g.probability))
        if first[1] != g.probability:
            return (f"decisions {first[0]!r} and {label!r} have strength {g.strength} but "
                    "different probabilities: calibration reads the strength as the confidence "
                    "level, so levels of one strength need one probability")
    return None
