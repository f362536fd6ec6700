"""What every round.toml model shares: the frozen base model and the text checks."""

from __future__ import annotations

import re
import unicodedata

from pydantic import (
    BaseModel,
    ConfigDict,
)

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
