"""The canonical, validated round: what every later stage reads.

Responses are held as participants x items matrices so scoring can work on whole arrays.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import numpy.typing as npt

from reportgen.errors import Problem
from reportgen.rounds.schema import RoundConfig

# Codes in the ``decision`` matrix.
MISSING = -1
SAID_NEGATIVE = 0
SAID_POSITIVE = 1
ABSTAINED = 2


@dataclass(frozen=True)
class SourceFile:
    """An input file as read: its name inside the round folder and its SHA-256."""

    name: str
    sha256: str


@dataclass(frozen=True)
class Identity:
    """Confidential identity of a participant, from the optional participants file."""

    name: str = ""
    organisation: str = ""
    email: str = ""  # for the provider's distribution list only; never printed on a report


@dataclass(frozen=True, eq=False)
class Round:
    """A round that passed validation.

    ``truth[i]`` is 1 when item i belongs to the positive (same-source) class, else 0.
    ``decision[p, i]`` is one of MISSING / SAID_NEGATIVE / SAID_POSITIVE / ABSTAINED.
    ``confidence[p, i]`` is the stated confidence on the scale of round.toml (NaN where missing).
    ``raw_decision[p, i]`` is the label as written (after any allowed normalisation).
    ``strength_is_confidence``: the confidence is the strength of a graded conclusion (1 ..
    ``config.max_strength``), the responses having no confidence column.
    """

    config: RoundConfig
    folder: Path
    sources: tuple[SourceFile, ...]
    items: tuple[str, ...]
    truth: npt.NDArray[np.int8]
    item_attributes: Mapping[str, tuple[str, ...]]
    participants: tuple[str, ...]
    decision: npt.NDArray[np.int8]
    confidence: npt.NDArray[np.float64]
    raw_decision: npt.NDArray[np.str_]
    identities: Mapping[str, Identity] | None = None
    estimates: Mapping[str, float] | None = None
    warnings: tuple[Problem, ...] = field(default=())
    strength_is_confidence: bool = False

    @property
    def n_participants(self) -> int:
        return len(self.participants)

    @property
    def n_items(self) -> int:
        return len(self.items)

    def identity(self, code: str) -> Identity:
        if self.identities is None:
            return Identity()
        return self.identities.get(code, Identity())
