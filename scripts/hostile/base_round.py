"""The valid base round every hostile case starts from, and helpers to change its text."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

ROUND_TOML = """\
[round]
id = "H-1"
scheme = "Hostile input scheme"
title = "Tiny round"
opened = 2026-01-05
closed = 2026-01-20
issued = 2026-02-01
key_statement = "Known from the capture sessions."

[provider]
name = "Test Provider"
authorised_by = { name = "Wren Talbot", role = "Scheme coordinator" }

[confidence]
kind = "ordinal"
min = 1
max = 5
probability_map = "linear"

[[criteria]]
id = "C1"
label = "No false positives"
metric = "false_positives"
at_most = 0

[[criteria]]
id = "C2"
label = "Accuracy at least 0.5"
metric = "accuracy"
at_least = 0.5
"""

ITEMS = ["0001", "0002", "0003", "0004", "0005", "0006"]
TRUTH = ["same", "same", "same", "different", "different", "different"]
QUALITY = ["good", "poor", "good", "good", "fair", "poor"]

# participant -> (decision, confidence) for each item, in the order of ITEMS
ANSWERS: dict[str, list[tuple[str, int]]] = {
    "0042": [("same", 5), ("same", 4), ("same", 3), ("different", 5), ("different", 4),
             ("different", 2)],
    "A7": [("same", 4), ("different", 2), ("same", 5), ("same", 2), ("different", 5),
           ("inconclusive", 3)],
    "B3": [("inconclusive", 2), ("same", 3), ("different", 1), ("different", 4),
           ("different", 3), ("same", 1)],
    "C9": [("same", 3), ("same", 5), ("same", 4), ("different", 3), ("same", 2),
           ("different", 5)],
}
PEOPLE = [("0042", "Ines Varga", "Lab North"), ("A7", "Tomas Reyl", "Lab North"),
          ("B3", "Odile Marsh", "Lab South"), ("C9", "Piet Salo", "Lab East")]

Cell = Any  # str | int | float | bool | date | datetime | None, as openpyxl writes it
Rows = list[list[Cell]]


def items_rows() -> Rows:
    return [["item", "truth", "quality"], *map(list, zip(ITEMS, TRUTH, QUALITY, strict=True))]


def responses_rows() -> Rows:
    """Header row 1; 0042 on rows 2-7, A7 on 8-13, B3 on 14-19, C9 on 20-25."""
    rows: Rows = [["participant", "item", "decision", "confidence"]]
    for code, answers in ANSWERS.items():
        rows += [[code, item, d, c] for item, (d, c) in zip(ITEMS, answers, strict=True)]
    return rows


def participants_rows() -> Rows:
    return [["participant", "name", "organisation"], *map(list, PEOPLE)]


def csv_text(rows: Rows, delimiter: str = ",") -> str:
    return "".join(delimiter.join(str(c) for c in row) + "\n" for row in rows)


def base(folder: Path, **files: str | bytes | None) -> None:
    """Write the valid base round into ``folder``; ``files`` replace (``None``: remove) files,
    named with ``__`` for ``.`` (``responses__csv``)."""
    folder.mkdir(parents=True, exist_ok=True)
    contents: dict[str, str | bytes | None] = {
        "round.toml": ROUND_TOML,
        "items.csv": csv_text(items_rows()),
        "responses.csv": csv_text(responses_rows()),
        "participants.csv": csv_text(participants_rows()),
    }
    contents.update({k.replace("__", "."): v for k, v in files.items()})
    for name, content in contents.items():
        if content is None:
            continue
        data = content.encode("utf-8") if isinstance(content, str) else content
        (folder / name).write_bytes(data)


def replace_once(text: str, old: str, new: str) -> str:
    """``text`` with the first ``old`` replaced by ``new`` (``old`` must be there)."""
    if old not in text:
        raise ValueError(f"{old!r} is not in the text")
    return text.replace(old, new, 1)


def toml(old: str, new: str) -> str:
    """round.toml with ``old`` replaced by ``new``."""
    return replace_once(ROUND_TOML, old, new)


def toml_table(table: str) -> str:
    """round.toml with a table (or keys) added before [confidence]."""
    return toml("[confidence]", f"{table}\n\n[confidence]")


def swap(rows: Rows, row: int, column: int, value: Cell) -> Rows:
    """A copy of ``rows`` with one cell changed (``row`` as the spreadsheet numbers it)."""
    out = [list(r) for r in rows]
    out[row - 1][column] = value
    return out



def responses_csv(change: Callable[[str], str]) -> str:
    return change(csv_text(responses_rows()))


def replace_line(old: str, new: str) -> Callable[[str], str]:
    def change(text: str) -> str:
        return replace_once(text, old, new)
    return change

