"""One rooted error tree for reportgen.

::

    ReportgenError        anything reportgen raises on purpose
     ├── InputError       the provider can fix it (exit status 2); carries every Problem found
     ├── OutputError      OUT cannot be written: locked, not a folder, not writable (exit 2)
     └── BuildError       we must fix it: a renderer or a dependency failed (exit 3)

Only ``reportgen.cli`` turns these into messages and exit codes. Library code raises; it never
prints or exits. Input problems are *collected* (see :class:`ProblemLog`) and raised once, so the
provider sees all of them in one run.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Literal

Severity = Literal["error", "warning"]


@dataclass(frozen=True, order=True)
class Problem:
    """One located problem in the input.

    ``row`` is the 1-based row as a spreadsheet shows it (the header is row 1 unless the header sits
    lower); ``None`` where the problem is not tied to a row (a missing column, a missing file).
    """

    file: str
    message: str
    sheet: str | None = None
    row: int | None = None
    column: str | None = None
    value: str | None = None
    allowed: str | None = None
    severity: Severity = "error"

    def location(self) -> str:
        parts = [self.file]
        if self.sheet is not None:
            parts.append(f"sheet {self.sheet!r}")
        if self.row is not None:
            parts.append(f"row {self.row}")
        if self.column is not None:
            parts.append(f"column {self.column!r}")
        return ", ".join(parts)

    def __str__(self) -> str:
        text = f"{self.location()}: {self.message}"
        if self.value is not None:
            text += f" (value {self.value!r})"
        if self.allowed is not None:
            text += f"; allowed: {self.allowed}"
        return text


@dataclass
class ProblemLog:
    """Collects problems while reading; ``raise_if_errors`` stops once, with all of them."""

    problems: list[Problem] = field(default_factory=list)

    def add(self, problem: Problem) -> None:
        self.problems.append(problem)

    def error(self, file: str, message: str, **where: str | int | None) -> None:
        self.problems.append(Problem(file=file, message=message, **where))  # type: ignore[arg-type]

    def warn(self, file: str, message: str, **where: str | int | None) -> None:
        self.problems.append(
            Problem(file=file, message=message, severity="warning", **where)  # type: ignore[arg-type]
        )

    def extend(self, problems: Iterable[Problem]) -> None:
        self.problems.extend(problems)

    @property
    def errors(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == "error"]

    @property
    def warnings(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == "warning"]

    def raise_if_errors(self) -> None:
        if self.errors:
            raise InputError(self.problems)


class ReportgenError(Exception):
    """Root of every error reportgen raises on purpose."""


class InputError(ReportgenError):
    """The round folder has problems the provider can fix. ``problems`` lists all of them."""

    def __init__(self, problems: Iterable[Problem]) -> None:
        self.problems: list[Problem] = list(problems)
        n = sum(1 for p in self.problems if p.severity == "error")
        super().__init__(f"{n} problem(s) in the input")

    @classmethod
    def single(cls, file: str, message: str, **where: str | int | None) -> InputError:
        return cls([Problem(file=file, message=message, **where)])  # type: ignore[arg-type]


class OutputError(ReportgenError):
    """The output folder cannot be used (locked by another run, not a folder, not writable)."""


class BuildError(ReportgenError):
    """Rendering or writing failed for a reason that is ours to fix, not the provider's."""
