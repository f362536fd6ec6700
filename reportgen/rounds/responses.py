"""Read the responses table (long or wide layout) into the decision and confidence matrices."""

from __future__ import annotations

import math
import unicodedata
from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from reportgen.errors import ProblemLog
from reportgen.rounds.checks import (
    Labels,
    did_you_mean,
    location,
    non_text_codes,
    require_columns,
    row_ranges,
    zero_twins,
)
from reportgen.rounds.model import ABSTAINED, MISSING, SAID_NEGATIVE, SAID_POSITIVE
from reportgen.rounds.percent import fraction_problem, percent_value
from reportgen.rounds.schema import ABSTAIN, RoundConfig
from reportgen.rounds.strength import strength_confidence, strength_sourced
from reportgen.rounds.tables import Table

__all__ = ["Answer", "check_codes", "fill_matrices", "long_answers", "no_responses",
           "wide_answers"]

_RESPONSES_LOST = "so the responses cannot be read"


@dataclass(frozen=True)
class Answer:
    """One response row in canonical (long) form, with where it came from."""

    participant: str
    item: str
    decision: str
    confidence: str
    row: int
    columns: tuple[str, str, str, str]  # participant, item, decision, confidence column names


def long_answers(table: Table, cfg: RoundConfig, log: ProblemLog) -> list[Answer]:
    col = cfg.columns_for("responses")
    by_strength = strength_sourced(table, cfg, log)  # no confidence column: strength stands in
    keys = ("participant", "item", "decision") + (() if by_strength else ("confidence",))
    names = tuple(getattr(col, key) for key in keys)
    if not require_columns(table, names, log, keys=keys, table_key="responses",
                           consequence=_RESPONSES_LOST):
        return []
    skip = (non_text_codes(table, col.participant, "participant code", log)
            | non_text_codes(table, col.item, "item id", log))
    columns = [table.column(n) for n in names] + [("",) * len(table.rows)] * by_strength
    names += (col.confidence,) * by_strength
    return [
        Answer(p, i, d, c, row, names)
        for p, i, d, c, row in zip(*columns, table.row_numbers, strict=True)
        if row not in skip
    ]


def wide_answers(table: Table, cfg: RoundConfig, items: Sequence[str],
                  log: ProblemLog) -> list[Answer]:
    col = cfg.columns_for("responses")
    if not require_columns(table, (col.participant,), log, keys=("participant",),
                           table_key="responses", consequence=_RESPONSES_LOST):
        return []
    known = set(items)
    pairs: list[tuple[str, str, str]] = []
    for item in items:
        dcol = cfg.wide.decision.replace("{item}", item)
        ccol = cfg.wide.confidence.replace("{item}", item)
        if table.has(dcol) != table.has(ccol):
            missing = ccol if table.has(dcol) else dcol
            log.error(table.file, f"column {missing!r} is missing (its partner for item "
                      f"{item!r} is present)", sheet=table.sheet, row=table.header_row)
        if table.has(dcol) and table.has(ccol):
            pairs.append((item, dcol, ccol))
    used = {col.participant} | {c for _, d, cc in pairs for c in (d, cc)}
    for name in table.columns:
        if name not in used:
            stray = _wide_item_of(name, cfg)
            if stray is not None and stray not in known:
                log.error(table.file, "response column for an item that is not in the key",
                          value=stray, sheet=table.sheet, row=table.header_row, column=name)
    codes = table.column(col.participant)
    skip = non_text_codes(table, col.participant, "participant code", log)
    answers = []
    for item, dcol, ccol in pairs:
        for p, d, c, row in zip(codes, table.column(dcol), table.column(ccol), table.row_numbers,
                                strict=True):
            if (d == "" and c == "") or row in skip:
                continue  # not answered: reported as a missing item later
            answers.append(Answer(p, item, d, c, row, (col.participant, dcol, dcol, ccol)))
    return answers


def _wide_item_of(column: str, cfg: RoundConfig) -> str | None:
    for pattern in (cfg.wide.decision, cfg.wide.confidence):
        head, _, tail = pattern.partition("{item}")
        if column.startswith(head) and column.endswith(tail) and len(column) > len(head + tail):
            return column[len(head): len(column) - len(tail)]
    return None


def _parse_confidence(text: str, cfg: RoundConfig) -> tuple[float | None, str | None]:
    """The confidence as a number, or None with what is wrong with it."""
    scale = cfg.confidence
    allowed = (f"whole numbers {scale.min:g} to {scale.max:g}" if scale.kind == "ordinal"
               else f"numbers {scale.min:g} to {scale.max:g} (percent)")
    if scale.kind == "probability":
        value = percent_value(text)[0]
        return (value, None) if value is not None and scale.min <= value <= scale.max else (
            None, allowed)
    try:
        value = float(text)
    except ValueError:
        return None, allowed
    if not math.isfinite(value) or not scale.min <= value <= scale.max:
        return None, allowed
    if scale.kind == "ordinal" and value != int(value):
        return None, allowed
    return value, None


def _shown_code(code: str) -> str:
    """A code as quoted in a message; with its escapes too when it is not plain ASCII, so codes
    that look the same but are written differently (é as one or two characters) can be told
    apart."""
    return repr(code) if code.isascii() else f"{code!r} (written {code!a})"


def _fold_code(code: str) -> str:
    return unicodedata.normalize("NFKC", code).strip().casefold()


def check_codes(answers: Sequence[Answer], table: Table, log: ProblemLog) -> None:
    """Participant codes must be non-blank and must not differ only by case/space/Unicode form."""
    first_row: dict[str, int] = {}
    for a in answers:
        if a.participant.strip() == "":
            log.error(table.file, "participant code is blank",
                      **location(table, a.row, a.columns[0]))
        else:
            first_row.setdefault(a.participant, a.row)
    by_fold: dict[str, list[str]] = defaultdict(list)
    for code in sorted(first_row):
        by_fold[_fold_code(code)].append(code)
    groups = [("case, spaces or Unicode form", codes) for codes in by_fold.values()]
    groups += [("leading zeros (a spreadsheet program may have dropped them: format the column "
                "as Text)", codes) for codes in zero_twins(first_row).values()]
    for how, codes in groups:
        if len(codes) > 1:
            shown = "; ".join(f"{_shown_code(c)} (first at row {first_row[c]})" for c in codes)
            log.error(table.file, f"participant codes differ only by {how} and would be read "
                      f"as different people: {shown}",
                      sheet=table.sheet, row=first_row[codes[1]], value=codes[1],
                      column=answers[0].columns[0])


def no_responses(table: Table, cfg: RoundConfig, items: Sequence[str], log: ProblemLog) -> None:
    """A responses table from which no answer was read (a wide sheet whose columns do not
    follow the [wide] patterns): refused, never scored as a round without participants."""
    if cfg.files.layout == "wide" and items:
        example = (cfg.wide.decision.replace("{item}", items[0]),
                   cfg.wide.confidence.replace("{item}", items[0]))
        log.error(table.file, "no response columns found: a wide sheet needs a decision and a "
                  "confidence column for each item of the key, named by the [wide] patterns in "
                  f"round.toml (for item {items[0]!r}: {example[0]!r} and {example[1]!r})",
                  sheet=table.sheet, row=table.header_row,
                  allowed="columns present: " + ", ".join(table.columns))
    else:
        log.error(table.file, "no responses were read", sheet=table.sheet)


@dataclass(frozen=True)
class _Matrices:
    participants: tuple[str, ...]
    decision: np.ndarray
    confidence: np.ndarray
    raw: np.ndarray
    first_row: dict[str, int]
    by_strength: bool = False  # the confidence is the conclusions' strength


def fill_matrices(answers: Sequence[Answer], table: Table, cfg: RoundConfig,
                   items: Sequence[str], log: ProblemLog, key_file: str = "the key") -> _Matrices:
    """The matrices of the answers, logging every answer that cannot be scored. ``key_file``
    names the items file in "did you mean" messages."""
    item_index = {item: i for i, item in enumerate(items)}
    twins = zero_twins(items)
    decisions = Labels(sorted(cfg.decisions), cfg.scoring.normalise_labels, "decision label",
                        log)
    code_of = {ABSTAIN: ABSTAINED, cfg.classes.positive: SAID_POSITIVE,
               cfg.classes.negative: SAID_NEGATIVE}
    first_row: dict[str, int] = {}
    for a in answers:
        if a.participant.strip():
            first_row.setdefault(a.participant, a.row)
    participants = tuple(sorted(first_row))
    p_index = {p: n for n, p in enumerate(participants)}
    shape = (len(participants), len(items))
    decision = np.full(shape, MISSING, dtype=np.int8)
    confidence = np.full(shape, np.nan)
    raw = np.full(shape, "", dtype=object)
    seen: dict[tuple[str, str], int] = {}
    repeats: dict[str, list[tuple[int, int]]] = defaultdict(list)
    fractions = _fraction_check(answers, table, cfg, log)
    by_strength = cfg.files.layout == "long" and strength_sourced(table, cfg)
    for a in answers:
        _, icol, dcol, ccol = a.columns
        if a.participant.strip() == "":
            continue
        i = item_index.get(a.item)
        if i is None:
            if cfg.files.layout == "long":
                log.error(table.file, "response to an item that is not in the key"
                          + did_you_mean(a.item, twins, table.file, key_file),
                          value=a.item, allowed="the item ids of the key",
                          **location(table, a.row, icol))
            continue
        key = (a.participant, a.item)
        if key in seen:
            repeats[a.participant].append((a.row, seen[key]))
            continue
        seen[key] = a.row
        label = decisions.match(a.decision, table, a.row, dcol)
        target = cfg.decision_classes.get(label) if label is not None else None
        conf, allowed = (_parse_confidence(a.confidence, cfg) if not by_strength
                         else (strength_confidence(cfg, label), None))
        blank_ok = (a.confidence.strip() == "" and target == ABSTAIN) or by_strength
        if conf is None and not blank_ok and not fractions:
            log.error(table.file, _confidence_problem(a.confidence, cfg), value=a.confidence,
                      allowed=allowed, **location(table, a.row, ccol))
            continue
        if target is None:
            continue
        p = p_index[a.participant]
        decision[p, i] = code_of[target]
        confidence[p, i] = np.nan if conf is None else conf
        raw[p, i] = label
    decisions.report(table.file,
                     answers[0].columns[2] if answers else cfg.columns_for("responses").decision)
    _report_repeats(repeats, table, cfg, log)
    _check_coverage(decision, participants, items, first_row, table, cfg, log)
    return _Matrices(participants, decision, confidence, raw.astype(str), first_row,
                     by_strength)


def _fraction_check(answers: Sequence[Answer], table: Table, cfg: RoundConfig,
                    log: ProblemLog) -> bool:
    """On a probability scale, refuse (once) confidences that are all between 0 and 1."""
    scale = cfg.confidence
    if scale.kind != "probability" or not answers:
        return False
    problem = fraction_problem((a.confidence for a in answers), "confidence", scale.max)
    if problem is None:
        return False
    first = next(a for a in answers if a.confidence.strip())
    log.error(table.file, problem, value=first.confidence,
              allowed=f"numbers {scale.min:g} to {scale.max:g} (percent)",
              **location(table, first.row, first.columns[3]))
    return True


def _report_repeats(repeats: dict[str, list[tuple[int, int]]], table: Table, cfg: RoundConfig,
                    log: ProblemLog) -> None:
    """One error per participant with repeated answers, naming every repeated row."""
    col = cfg.columns_for("responses")
    for code, pairs in sorted(repeats.items()):
        rows = [row for row, _ in pairs]
        firsts = sorted({first for _, first in pairs})
        verb = "repeats" if len(rows) == 1 else "repeat"
        log.error(table.file, f"participant {code!r} answered {len(pairs)} item(s) more than "
                  f"once: {_rows(rows)} {verb} the answers of {_rows(firsts)}; delete the rows "
                  "that should not count, or set [files] duplicates = \"latest\" in round.toml "
                  f"to keep each participant's latest submission (by its {col.submitted!r} "
                  "column)", value=code, **location(table, min(rows), col.participant))


def _rows(rows: Sequence[int]) -> str:
    return ("row " if len(rows) == 1 else "rows ") + row_ranges(rows)


def _confidence_problem(text: str, cfg: RoundConfig) -> str:
    """What is wrong with a confidence that :func:`_parse_confidence` refused."""
    if text.strip() == "":
        return "confidence is blank"
    scale = cfg.confidence
    number = (percent_value(text)[0] if scale.kind == "probability"
              else _float(text.replace(",", ".")))
    if number is None:
        return "confidence is not a number"
    value = number
    if (scale.kind == "ordinal" and math.isfinite(value) and scale.min <= value <= scale.max
            and value != int(value)):
        return "confidence is not a whole number (the scale is ordinal)"
    return "confidence is outside the scale"


def _float(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def _check_coverage(decision: np.ndarray, participants: Sequence[str], items: Sequence[str],
                    first_row: dict[str, int], table: Table, cfg: RoundConfig,
                    log: ProblemLog) -> None:
    """Key items nobody answered; participants who skipped items."""
    if log.errors or decision.size == 0:
        return
    missing = decision == MISSING
    for i in np.flatnonzero(missing.all(axis=0)).tolist():
        log.error(table.file, "item of the key that no participant answered", value=items[i],
                  sheet=table.sheet, column=cfg.columns_for("responses").item,
                  allowed="remove it from the key, or add the responses")
    partial = missing & ~missing.all(axis=0)
    for p in np.flatnonzero(partial.any(axis=1)).tolist():
        skipped = [items[i] for i in np.flatnonzero(partial[p]).tolist()]
        shown = ", ".join(skipped[:10]) + (f" and {len(skipped) - 10} more" if len(skipped) > 10
                                            else "")
        message = f"participant has no response to {len(skipped)} item(s): {shown}"
        where = {"sheet": table.sheet, "row": first_row[participants[p]],
                 "column": cfg.columns_for("responses").participant}
        if cfg.scoring.allow_missing:
            log.warn(table.file, message + " (scored as missing)", value=participants[p],
                     **where)
        else:
            log.error(table.file, message, value=participants[p],
                      allowed="every item answered, or [scoring] allow_missing = true", **where)


def checked_confidence(text: str, cfg: RoundConfig) -> tuple[float | None, str, str]:
    """The confidence as a number (``None`` when refused), what is wrong with it and what is
    allowed: for readers of other layouts, such as the response forms."""
    value, allowed = _parse_confidence(text, cfg)
    if value is not None:
        return value, "", ""
    return None, _confidence_problem(text, cfg), allowed or ""
