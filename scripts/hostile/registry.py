"""The two registries of cases: ``REFUSED`` (must be refused) and ``ACCEPTED`` (must be read)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

Build = Callable[[Path], None]
REFUSED: dict[str, Build] = {}
ACCEPTED: dict[str, Build] = {}


def refused(build: Build) -> Build:
    REFUSED[build.__name__] = build
    return build


def accepted(build: Build) -> Build:
    ACCEPTED[build.__name__] = build
    return build

