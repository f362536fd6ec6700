"""Checks shared by the readers of a round's tables: required columns, declared labels, and codes
that a spreadsheet program stored as something other than text."""

from __future__ import annotations

import unicodedata
from collections import defaultdict
from collections.abc import Iterable, Sequence

from reportgen.errors import ProblemLog
from reportgen.rounds.tables import Table

__all__ = ["Labels", "did_you_mean", "location", "non_text_codes", "require_columns",
           "row_ranges", "zero_twins"]


def location(table: Table, row: int, column: str | None = None) -> dict[str, str | int | None]:
    return {"sheet": table.sheet, "row": row, "column": column}


def require_columns(table: Table, names: Sequence[str], log: ProblemLog, *,
                    keys: Sequence[str] = (), table_key: str = "",
                    consequence: str = "") -> bool:
    """Report each missing column once, with what it stops (``consequence``) and how to name a
    column that has another header (``keys[n]`` is the [columns] key of ``names[n]``; the
    setting goes under ``[files.<table_key>.columns]``). No error is then reported row by row."""
    missing = [(n, name) for n, name in enumerate(names) if not table.has(name)]
    for n, name in missing:
        hint = ""
        if n < len(keys) and table_key:
            hint = (f"; if it has another header, name that header in round.toml: "
                    f"[files.{table_key}.columns] {keys[n]} = \"…\"")
        log.error(
            table.file,
            f"required column {name!r} is missing"
            + (f", {consequence}" if consequence else "") + hint,
            sheet=table.sheet,
            row=table.header_row,
            allowed="columns present: " + ", ".join(table.columns),
        )
    return not missing


class Labels:
    """Matches labels as written to the declared ones, normalising only where round.toml allows."""

    def __init__(self, declared: Sequence[str], normalise: bool, what: str, log: ProblemLog):
        self.declared = tuple(declared)
        self.normalise = normalise
        self.what = what
        self.log = log
        self._folded = {self._fold(d): d for d in declared}
        self.normalised: dict[tuple[str, str, str | None], list[int]] = defaultdict(list)

    @staticmethod
    def _fold(text: str) -> str:
        return unicodedata.normalize("NFKC", text).strip().casefold()

    def match(self, value: str, table: Table, row: int, column: str) -> str | None:
        if value in self.declared:
            return value
        near = self._folded.get(self._fold(value))
        if near is not None and self.normalise:
            self.normalised[(value, near, table.sheet)].append(row)
            return near
        allowed = ", ".join(self.declared)
        if near is not None:
            message = (
                f"{self.what} differs from the declared label {near!r} only by case or spaces; "
                "correct it, or set [scoring] normalise_labels = true in round.toml"
            )
        elif value == "":
            message = f"{self.what} is blank"
        else:
            message = f"undeclared {self.what}"
        self.log.error(table.file, message, value=value, allowed=allowed,
                       **location(table, row, column))
        return None

    def report(self, file: str, column: str) -> None:
        for (value, near, sheet), rows in sorted(self.normalised.items()):
            self.log.warn(
                file,
                f"{self.what} {value!r} read as {near!r} (allowed by normalise_labels) "
                f"in {len(rows)} row(s)",
                sheet=sheet,
                row=rows[0],
                column=column,
            )


_NOT_TEXT = {
    "d": "a date or time in the spreadsheet, not text: the spreadsheet program probably turned "
         "the code into a date",
    "b": "TRUE/FALSE in the spreadsheet, not text",
    "e": "a spreadsheet error value, not text",
    "p": "a number formatted as a percentage in the spreadsheet, not text",
}
_FIX_TEXT = "format the column as Text, type the codes again and save"


def non_text_codes(table: Table, name: str, what: str, log: ProblemLog) -> set[int]:
    """Report code cells (participant, item) that a spreadsheet stored as a date, TRUE/FALSE, an
    error value, or a number it may have rounded; return the row numbers reported."""
    if not table.has(name):
        return set()
    j = table.columns.index(name)
    bad: set[int] = set()
    for kinds, text, row in zip(table.kinds, table.column(name), table.row_numbers, strict=True):
        kind = kinds[j]
        if kind in _NOT_TEXT:
            problem = f"{what} is {_NOT_TEXT[kind]}; {_FIX_TEXT}"
        elif kind == "n" and not text.lstrip("-").isdigit():
            problem = (f"{what} is a number with a fraction or an exponent in the spreadsheet; "
                       "spreadsheets keep only 15 digits of a number, so a long code typed as a "
                       f"number is changed: {_FIX_TEXT}")
        else:
            continue
        log.error(table.file, problem, value=text, **location(table, row, name))
        bad.add(row)
    return bad


def zero_twins(values: Iterable[str]) -> dict[str, list[str]]:
    """Digit-only codes by their value without leading zeros (``'0042'`` and ``'42'`` -> '42')."""
    twins: dict[str, list[str]] = defaultdict(list)
    for value in sorted(set(values)):
        if value.isascii() and value.isdigit():
            twins[value.lstrip("0") or "0"].append(value)
    return twins


def did_you_mean(value: str, twins: dict[str, list[str]], here: str, there: str) -> str:
    """``"; did you mean '0042' ..."`` when ``value`` (in file ``here``) matches a code of file
    ``there`` but for leading zeros, naming the file to correct: a spreadsheet drops leading
    zeros and never adds them, so the file with the shorter code is the one that changed.
    ``""`` when there is no such code. Never a guess: the value is still refused."""
    if not (value.isascii() and value.isdigit()):
        return ""
    candidates = [c for c in twins.get(value.lstrip("0") or "0", []) if c != value]
    if not candidates:
        return ""
    shown = " or ".join(repr(c) for c in candidates)
    if all(len(c) > len(value) for c in candidates):
        return (f"; did you mean {shown} (as in {there})? A spreadsheet program may have "
                f"dropped the leading zeros in {here}: correct {here} (format the column as "
                "Text and type the code again)")
    return (f"; {there} has {shown}, probably this code with its leading zeros dropped by a "
            f"spreadsheet program: correct {there} (format the column as Text and type the "
            "code again)")


def row_ranges(rows: Iterable[int]) -> str:
    """Row numbers as runs: ``[2, 3, 4, 9]`` -> ``'2-4, 9'`` (every row is named)."""
    runs: list[list[int]] = []
    for row in sorted(set(rows)):
        if runs and row == runs[-1][1] + 1:
            runs[-1][1] = row
        else:
            runs.append([row, row])
    return ", ".join(f"{a}" if a == b else f"{a}-{b}" for a, b in runs)
