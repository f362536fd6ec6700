"""Response forms: the layout ``reportgen forms`` writes, and reading returned forms back.

A form is one workbook per participant. Sheet ``Responses``: the participant code (B1), the
round id (B2), the participant's estimate of their score (B3), and from row 6 one row per item of
the key: item id (A), decision (B, a drop-down of the declared labels), confidence (C, validated
against the scale). A hidden sheet ``reportgen`` holds the round id, the participant code and a
checksum of the round's item list, so a form from another round, or one whose item list was
changed, is refused. Returned forms are named in round.toml as ``[files] responses =
"returned/*.xlsx"`` (a pattern inside the round folder); every form is guarded and read like any
other workbook, then checked here, and the answers of all forms become one long responses table.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from reportgen.errors import ProblemLog
from reportgen.rounds.checks import Labels
from reportgen.rounds.percent import fraction_problem, percent_value
from reportgen.rounds.responses import checked_confidence
from reportgen.rounds.schema import ABSTAIN, RoundConfig
from reportgen.rounds.table_types import Grid, ReadError, ReadLimits, Table
from reportgen.rounds.xlsx_files import xlsx_grid

__all__ = ["FIRST_ITEM_ROW", "FORM_SHEET", "FORM_TAG", "META_SHEET", "ReturnedForms",
           "is_form_pattern", "items_checksum", "read_forms"]

FORM_SHEET = "Responses"
META_SHEET = "reportgen"
FORM_TAG = "reportgen response form 1"
CODE_CELL, ROUND_CELL, ESTIMATE_CELL = (1, 2), (2, 2), (3, 2)  # (row, column) on FORM_SHEET
HEADER_ROW = 5
FIRST_ITEM_ROW = 6
META_ROWS = {"form": 1, "round": 2, "items_sha256": 3, "participant": 4}  # rows of column B
_COLUMNS = ("participant", "item", "decision", "confidence")
_NOT_A_FORM = ("is not a reportgen response form (make the forms with `reportgen forms` and "
               "have them returned unchanged but for the answers)")


def is_form_pattern(name: str | None) -> bool:
    """``[files] responses`` names returned forms when it holds a ``*`` (``returned/*.xlsx``)."""
    return name is not None and "*" in name


def items_checksum(round_id: str, items: Sequence[str]) -> str:
    """SHA-256 of the round id and the item ids in order (never the key's truth)."""
    text = "\n".join([round_id, *items])
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class ReturnedForms:
    """All returned forms as one long responses table, the estimates they carry, and each form's
    name and SHA-256 (the round's sources)."""

    table: Table
    estimates: dict[str, float]
    sources: tuple[tuple[str, str], ...]


def _cells(grid: Grid) -> dict[tuple[int, int], str]:
    return {(number, grid.first_column + j): text
            for number, row in zip(grid.numbers, grid.rows, strict=False)
            for j, text in enumerate(row) if text != ""}


@dataclass(frozen=True)
class _Form:
    name: str
    code: str
    estimate: str
    rows: list[tuple[int, str, str, str]]  # row, item, decision, confidence


def _read_form(path: Path, name: str, cfg: RoundConfig, items: Sequence[str],
               log: ProblemLog, limits: ReadLimits) -> _Form | None:
    try:
        data = path.read_bytes()
    except OSError as exc:
        log.error(name, f"cannot be opened ({exc.strerror or exc})")
        return None
    try:
        meta = _cells(xlsx_grid(data, name, ProblemLog(), META_SHEET, limits))
        form = _cells(xlsx_grid(data, name, log, FORM_SHEET, limits))
    except ReadError as exc:
        log.error(name, _NOT_A_FORM if "sheet" in exc.message and "is not in the workbook"
                  in exc.message else exc.message, **exc.where)
        return None

    def meta_value(key: str) -> str:
        return meta.get((META_ROWS[key], 2), "")

    if meta_value("form") != FORM_TAG:
        log.error(name, _NOT_A_FORM)
        return None
    if meta_value("round") != cfg.round.id:
        log.error(name, f"this form is for round {meta_value('round')!r}, not this round "
                  f"({cfg.round.id!r})", sheet=META_SHEET, value=meta_value("round"))
        return None
    if meta_value("items_sha256") != items_checksum(cfg.round.id, items):
        log.error(name, "this form was made for another item list than the key's (items were "
                  "added, removed or reordered since the forms were made): make the forms "
                  "again with `reportgen forms`", sheet=META_SHEET)
        return None
    code = meta_value("participant")
    if form.get(CODE_CELL, "") != code:
        log.error(name, f"the participant code on the form was changed (the form was made for "
                  f"{code!r})", sheet=FORM_SHEET, row=CODE_CELL[0], value=form.get(CODE_CELL, ""))
        return None
    listed = [form.get((FIRST_ITEM_ROW + n, 1), "") for n in range(len(items))]
    extra = sorted(row for (row, col) in form if col == 1 and row >= FIRST_ITEM_ROW + len(items))
    if listed != list(items) or extra:
        row = (extra[0] if listed == list(items) else
               FIRST_ITEM_ROW + next(n for n, (a, b) in enumerate(zip(listed, items, strict=True))
                                     if a != b))
        log.error(name, "the item list on the form was changed; return the form with the items "
                  "as they were listed", sheet=FORM_SHEET, row=row,
                  value=form.get((row, 1), ""), column="item")
        return None
    rows = [(FIRST_ITEM_ROW + n, item, form.get((FIRST_ITEM_ROW + n, 2), ""),
             form.get((FIRST_ITEM_ROW + n, 3), "")) for n, item in enumerate(items)]
    return _Form(name, code, form.get(ESTIMATE_CELL, ""), rows)


def _check_answers(form: _Form, cfg: RoundConfig, labels: Labels,
                   log: ProblemLog) -> list[tuple[int, str, str, str]]:
    """The answered rows of one form, each checked; the refused ones are logged with the form's
    file, row and column."""
    kept = []
    where = Table(file=form.name, sheet=FORM_SHEET, header_row=HEADER_ROW, columns=_COLUMNS,
                  rows=(), row_numbers=(), kinds=(), sha256="")
    for row, item, decision, confidence in form.rows:
        if decision.strip() == "" and confidence.strip() == "":
            continue  # not answered
        label = labels.match(decision, where, row, "decision")
        value, problem, allowed = checked_confidence(confidence, cfg)
        target = cfg.decision_classes.get(label) if label is not None else None
        if value is None and not (confidence.strip() == "" and target == ABSTAIN):
            log.error(form.name, problem, value=confidence, allowed=allowed, sheet=FORM_SHEET,
                      row=row, column="confidence")
            continue
        if label is not None:
            kept.append((row, item, label, confidence))
    return kept


def read_forms(folder: Path, pattern: str, cfg: RoundConfig, items: Sequence[str],
               log: ProblemLog, limits: ReadLimits) -> ReturnedForms | None:
    """Every returned form matching ``pattern`` inside the round folder, checked; ``None`` when
    none can be read (logged)."""
    paths = sorted(p for p in folder.glob(pattern)
                   if p.is_file() and p.resolve().is_relative_to(folder.resolve()))
    if not paths:
        log.error(pattern, "no returned forms match this pattern (named under [files] "
                  "responses in round.toml)")
        return None
    labels = Labels(sorted(cfg.decisions), cfg.scoring.normalise_labels, "decision label", log)
    forms: list[_Form] = []
    seen: dict[str, str] = {}
    sources = []
    for path in paths:
        name = path.relative_to(folder).as_posix()
        form = _read_form(path, name, cfg, items, log, limits)
        if form is None:
            continue
        sources.append((name, hashlib.sha256(path.read_bytes()).hexdigest()))
        if form.code in seen:
            log.error(name, f"a second form for participant {form.code!r} (the other is "
                      f"{seen[form.code]}); keep one", value=form.code)
            continue
        seen[form.code] = name
        forms.append(form)
    rows: list[tuple[str, ...]] = []
    numbers: list[int] = []
    for form in forms:
        for row, item, decision, confidence in _check_answers(form, cfg, labels, log):
            rows.append((form.code, item, decision, confidence))
            numbers.append(row)
    labels.report(pattern, "decision")
    estimates = _estimates(forms, log)
    table = Table(file=pattern, sheet=FORM_SHEET, header_row=HEADER_ROW, columns=_COLUMNS,
                  rows=tuple(rows), row_numbers=tuple(numbers), kinds=("ssss",) * len(rows),
                  sha256="")
    return ReturnedForms(table, estimates, tuple(sources))


def _estimates(forms: Sequence[_Form], log: ProblemLog) -> dict[str, float]:
    given = [f for f in forms if f.estimate.strip()]
    problem = fraction_problem((f.estimate for f in given), "estimate", 100)
    if problem is not None:
        log.error(given[0].name, problem, value=given[0].estimate, sheet=FORM_SHEET,
                  row=ESTIMATE_CELL[0], allowed="numbers 0 to 100 (percent of items right)")
        return {}
    out = {}
    for form in given:
        value = percent_value(form.estimate)[0]
        if value is None or not 0 <= value <= 100:
            log.error(form.name, "estimate is not a percentage", value=form.estimate,
                      sheet=FORM_SHEET, row=ESTIMATE_CELL[0],
                      allowed="numbers 0 to 100 (percent of items right)")
        else:
            out[form.code] = value / 100.0
    return out
