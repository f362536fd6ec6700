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
    zero_twins,
)
from reportgen.rounds.model import ABSTAINED, MISSING, SAID_NEGATIVE, SAID_POSITIVE
from reportgen.rounds.schema import ABSTAIN, RoundConfig
from reportgen.rounds.tables import Table

__all__ = ["check_codes", "fill_matrices", "long_answers", "no_responses", "wide_answers"]


@dataclass(frozen=True)
class _Answer:
    """One response row in canonical (long) form, with where it came from."""

    participant: str
    item: str
    decision: str
    confidence: str
    row: int
    columns: tuple[str, str, str, str]  # participant, item, decision, confidence column names


def long_answers(table: Table, cfg: RoundConfig, log: ProblemLog) -> list[_Answer]:
    col = cfg.columns
    names = (col.participant, col.item, col.decision, col.confidence)
    if not require_columns(table, names, log):
        return []
    skip = (non_text_codes(table, col.participant, "participant code", log)
            | non_text_codes(table, col.item, "item id", log))
    columns = [table.column(n) for n in names]
    return [
        _Answer(p, i, d, c, row, names)
        for p, i, d, c, row in zip(*columns, table.row_numbers, strict=True)
        if row not in skip
    ]


def wide_answers(table: Table, cfg: RoundConfig, items: Sequence[str],
                  log: ProblemLog) -> list[_Answer]:
    col = cfg.columns
    if not require_columns(table, (col.participant,), log):
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
            answers.append(_Answer(p, item, d, c, row, (col.participant, dcol, dcol, ccol)))
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
    try:
        value = float(text.strip().replace(",", ".") if scale.kind == "probability" else text)
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


def check_codes(answers: Sequence[_Answer], table: Table, log: ProblemLog) -> None:
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


def fill_matrices(answers: Sequence[_Answer], table: Table, cfg: RoundConfig,
                   items: Sequence[str], log: ProblemLog) -> _Matrices:
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
    for a in answers:
        _, icol, dcol, ccol = a.columns
        if a.participant.strip() == "":
            continue
        i = item_index.get(a.item)
        if i is None:
            if cfg.files.layout == "long":
                log.error(table.file, "response to an item that is not in the key"
                          + did_you_mean(a.item, twins),
                          value=a.item, allowed="the item ids of the key",
                          **location(table, a.row, icol))
            continue
        key = (a.participant, a.item)
        if key in seen:
            log.error(table.file, f"second response of participant {a.participant!r} to item "
                      f"{a.item!r} (first at row {seen[key]})", value=a.item,
                      **location(table, a.row, icol))
            continue
        seen[key] = a.row
        label = decisions.match(a.decision, table, a.row, dcol)
        target = cfg.decisions.get(label) if label is not None else None
        conf, allowed = _parse_confidence(a.confidence, cfg)
        blank_ok = a.confidence.strip() == "" and target == ABSTAIN
        if conf is None and not blank_ok:
            log.error(table.file, _confidence_problem(a.confidence, cfg), value=a.confidence,
                      allowed=allowed, **location(table, a.row, ccol))
            continue
        if target is None:
            continue
        p = p_index[a.participant]
        decision[p, i] = code_of[target]
        confidence[p, i] = np.nan if conf is None else conf
        raw[p, i] = label
    decisions.report(table.file, answers[0].columns[2] if answers else cfg.columns.decision)
    _check_coverage(decision, participants, items, first_row, table, cfg, log)
    return _Matrices(participants, decision, confidence, raw.astype(str), first_row)


def _confidence_problem(text: str, cfg: RoundConfig) -> str:
    """What is wrong with a confidence that :func:`_parse_confidence` refused."""
    if text.strip() == "":
        return "confidence is blank"
    try:
        value = float(text.replace(",", "."))
    except ValueError:
        return "confidence is not a number"
    scale = cfg.confidence
    if (scale.kind == "ordinal" and math.isfinite(value) and scale.min <= value <= scale.max
            and value != int(value)):
        return "confidence is not a whole number (the scale is ordinal)"
    return "confidence is outside the scale"


def _check_coverage(decision: np.ndarray, participants: Sequence[str], items: Sequence[str],
                    first_row: dict[str, int], table: Table, cfg: RoundConfig,
                    log: ProblemLog) -> None:
    """Key items nobody answered; participants who skipped items."""
    if log.errors or decision.size == 0:
        return
    missing = decision == MISSING
    for i in np.flatnonzero(missing.all(axis=0)).tolist():
        log.error(table.file, "item of the key that no participant answered", value=items[i],
                  sheet=table.sheet, column=cfg.columns.item,
                  allowed="remove it from the key, or add the responses")
    partial = missing & ~missing.all(axis=0)
    for p in np.flatnonzero(partial.any(axis=1)).tolist():
        skipped = [items[i] for i in np.flatnonzero(partial[p]).tolist()]
        shown = ", ".join(skipped[:10]) + (f" and {len(skipped) - 10} more" if len(skipped) > 10
                                            else "")
        message = f"participant has no response to {len(skipped)} item(s): {shown}"
        where = {"sheet": table.sheet, "row": first_row[participants[p]],
                 "column": cfg.columns.participant}
        if cfg.scoring.allow_missing:
            log.warn(table.file, message + " (scored as missing)", value=participants[p],
                     **where)
        else:
            log.error(table.file, message, value=participants[p],
                      allowed="every item answered, or [scoring] allow_missing = true", **where)
