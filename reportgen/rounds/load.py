"""Read a round folder into a validated :class:`Round`.

Every problem is collected with its file, sheet, row, column and value; the round is refused once,
with all of them (:class:`~reportgen.errors.InputError`). Nothing is silently dropped or coerced.
"""

from __future__ import annotations

import math
import unicodedata
from collections import defaultdict
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from reportgen.errors import ProblemLog
from reportgen.rounds.config import ROUND_FILE, load_config
from reportgen.rounds.model import (
    ABSTAINED,
    MISSING,
    SAID_NEGATIVE,
    SAID_POSITIVE,
    Identity,
    Round,
    SourceFile,
)
from reportgen.rounds.schema import ABSTAIN, RoundConfig
from reportgen.rounds.tables import ReadLimits, Table, find_table, read_table


@dataclass(frozen=True)
class _Answer:
    """One response row in canonical (long) form, with where it came from."""

    participant: str
    item: str
    decision: str
    confidence: str
    row: int
    columns: tuple[str, str, str, str]  # participant, item, decision, confidence column names


def _where(table: Table, row: int, column: str | None = None) -> dict[str, str | int | None]:
    return {"sheet": table.sheet, "row": row, "column": column}


def _require_columns(table: Table, names: Sequence[str], log: ProblemLog) -> bool:
    ok = True
    for name in names:
        if not table.has(name):
            log.error(
                table.file,
                f"required column {name!r} is missing",
                sheet=table.sheet,
                row=table.header_row,
                allowed="columns present: " + ", ".join(table.columns),
            )
            ok = False
    return ok


class _Labels:
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
                       **_where(table, row, column))
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


def _read(folder: Path, stem: str, explicit: str | None, cfg: RoundConfig, log: ProblemLog,
          *, required: bool, limits: ReadLimits) -> Table | None:
    path = find_table(folder, stem, explicit, log, required=required)
    if path is None:
        return None
    return read_table(path, path.name, log, sheet=cfg.files.sheet, limits=limits)


def _items(table: Table, cfg: RoundConfig, log: ProblemLog) -> tuple[
        list[str], list[str], dict[str, tuple[str, ...]]]:
    col = cfg.columns
    if not _require_columns(table, (col.item, col.truth), log):
        return [], [], {}
    labels = _Labels(cfg.classes.labels, cfg.scoring.normalise_labels, "truth class", log)
    _non_text_codes(table, col.item, "item id", log)
    items: list[str] = []
    truths: list[str] = []
    seen: dict[str, int] = {}
    keep_rows: list[int] = []
    ids, truth_col = table.column(col.item), table.column(col.truth)
    for idx, (item, truth, row) in enumerate(zip(ids, truth_col, table.row_numbers, strict=True)):
        if item.strip() == "":
            log.error(table.file, "item id is blank", **_where(table, row, col.item))
            continue
        if item in seen:
            log.error(table.file, f"item {item!r} appears twice in the key (first at row "
                      f"{seen[item]})", value=item, **_where(table, row, col.item))
            continue
        seen[item] = row
        matched = labels.match(truth, table, row, col.truth)
        # An item with a bad truth label stays in the key (the round is refused anyway), so its
        # responses are not also reported as answers to an unknown item.
        items.append(item)
        truths.append(matched or "")
        keep_rows.append(idx)
    labels.report(table.file, col.truth)
    attributes = {
        name: tuple(table.column(name)[i] for i in keep_rows)
        for name in table.columns
        if name not in (col.item, col.truth)
    }
    if items and len(set(truths)) < 2:
        log.warn(table.file, "every item in the key has the same truth class "
                 f"({truths[0]!r}): d′, criterion, ROC area and meta-d′ are not defined",
                 sheet=table.sheet)
    return items, truths, attributes


def _long_answers(table: Table, cfg: RoundConfig, log: ProblemLog) -> list[_Answer]:
    col = cfg.columns
    names = (col.participant, col.item, col.decision, col.confidence)
    if not _require_columns(table, names, log):
        return []
    skip = (_non_text_codes(table, col.participant, "participant code", log)
            | _non_text_codes(table, col.item, "item id", log))
    columns = [table.column(n) for n in names]
    return [
        _Answer(p, i, d, c, row, names)
        for p, i, d, c, row in zip(*columns, table.row_numbers, strict=True)
        if row not in skip
    ]


def _wide_answers(table: Table, cfg: RoundConfig, items: Sequence[str],
                  log: ProblemLog) -> list[_Answer]:
    col = cfg.columns
    if not _require_columns(table, (col.participant,), log):
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
    skip = _non_text_codes(table, col.participant, "participant code", log)
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


_NOT_TEXT = {
    "d": "a date or time in the spreadsheet, not text: the spreadsheet program probably turned "
         "the code into a date",
    "b": "TRUE/FALSE in the spreadsheet, not text",
    "e": "a spreadsheet error value, not text",
}
_FIX_TEXT = "format the column as Text, type the codes again and save"


def _non_text_codes(table: Table, name: str, what: str, log: ProblemLog) -> set[int]:
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
        log.error(table.file, problem, value=text, **_where(table, row, name))
        bad.add(row)
    return bad


def _zero_twins(values: Iterable[str]) -> dict[str, list[str]]:
    """Digit-only codes by their value without leading zeros (``'0042'`` and ``'42'`` -> '42')."""
    twins: dict[str, list[str]] = defaultdict(list)
    for value in sorted(set(values)):
        if value.isascii() and value.isdigit():
            twins[value.lstrip("0") or "0"].append(value)
    return twins


def _did_you_mean(value: str, twins: dict[str, list[str]]) -> str:
    """``"; did you mean '0042'? ..."`` when ``value`` matches a known code but for leading
    zeros (a spreadsheet drops them from a code it reads as a number); else ``""``. Never a
    guess: the value is still refused."""
    if not (value.isascii() and value.isdigit()):
        return ""
    candidates = [c for c in twins.get(value.lstrip("0") or "0", []) if c != value]
    if not candidates:
        return ""
    shown = " or ".join(repr(c) for c in candidates)
    return (f"; did you mean {shown}? A spreadsheet program may have dropped the leading zeros: "
            "format the column as Text")


def _shown_code(code: str) -> str:
    """A code as quoted in a message; with its escapes too when it is not plain ASCII, so codes
    that look the same but are written differently (é as one or two characters) can be told
    apart."""
    return repr(code) if code.isascii() else f"{code!r} (written {code!a})"


def _fold_code(code: str) -> str:
    return unicodedata.normalize("NFKC", code).strip().casefold()


def _check_codes(answers: Sequence[_Answer], table: Table, log: ProblemLog) -> None:
    """Participant codes must be non-blank and must not differ only by case/space/Unicode form."""
    first_row: dict[str, int] = {}
    for a in answers:
        if a.participant.strip() == "":
            log.error(table.file, "participant code is blank",
                      **_where(table, a.row, a.columns[0]))
        else:
            first_row.setdefault(a.participant, a.row)
    by_fold: dict[str, list[str]] = defaultdict(list)
    for code in sorted(first_row):
        by_fold[_fold_code(code)].append(code)
    groups = [("case, spaces or Unicode form", codes) for codes in by_fold.values()]
    groups += [("leading zeros (a spreadsheet program may have dropped them: format the column "
                "as Text)", codes) for codes in _zero_twins(first_row).values()]
    for how, codes in groups:
        if len(codes) > 1:
            shown = "; ".join(f"{_shown_code(c)} (first at row {first_row[c]})" for c in codes)
            log.error(table.file, f"participant codes differ only by {how} and would be read "
                      f"as different people: {shown}",
                      sheet=table.sheet, row=first_row[codes[1]], value=codes[1],
                      column=answers[0].columns[0])


def _identities(table: Table, cfg: RoundConfig, codes: set[str],
                log: ProblemLog) -> dict[str, Identity]:
    col = cfg.columns
    if not _require_columns(table, (col.participant,), log):
        return {}
    _non_text_codes(table, col.participant, "participant code", log)
    names = table.column(col.name) if table.has(col.name) else ("",) * len(table.rows)
    orgs = (table.column(col.organisation) if table.has(col.organisation)
            else ("",) * len(table.rows))
    out: dict[str, Identity] = {}
    for code, name, org, row in zip(table.column(col.participant), names, orgs,
                                    table.row_numbers, strict=True):
        if code.strip() == "":
            log.error(table.file, "participant code is blank",
                      **_where(table, row, col.participant))
        elif code in out:
            log.error(table.file, "participant listed twice", value=code,
                      **_where(table, row, col.participant))
        else:
            out[code] = Identity(name=name.strip(), organisation=org.strip())
    for code in sorted(set(out) - codes):
        log.warn(table.file, "participant listed but gave no responses", value=code,
                 sheet=table.sheet, column=col.participant)
    return out


def _estimates(table: Table, cfg: RoundConfig, codes: set[str],
               log: ProblemLog) -> dict[str, float]:
    col = cfg.columns
    if not _require_columns(table, (col.participant, col.estimate), log):
        return {}
    twins = _zero_twins(codes)
    skip = _non_text_codes(table, col.participant, "participant code", log)
    whens = table.column(col.when) if table.has(col.when) else ("after",) * len(table.rows)
    parsed: dict[tuple[str, str], float] = {}
    for code, text, when, row in zip(table.column(col.participant), table.column(col.estimate),
                                     whens, table.row_numbers, strict=True):
        when = when.strip() or "after"
        if when not in ("before", "after"):
            log.error(table.file, "'when' must be before or after", value=when,
                      **_where(table, row, col.when))
            continue
        if row in skip:
            continue
        if code not in codes:
            log.error(table.file, "estimate for a participant with no responses"
                      + _did_you_mean(code, twins), value=code,
                      **_where(table, row, col.participant))
            continue
        try:
            value = float(text.strip().rstrip("%"))
        except ValueError:
            value = math.nan
        if not 0 <= value <= 100:
            log.error(table.file, "estimate is not a percentage", value=text,
                      allowed="numbers 0 to 100 (percent of items right)",
                      **_where(table, row, col.estimate))
            continue
        if (code, when) in parsed:
            log.error(table.file, f"second {when!r} estimate for the same participant",
                      value=code, **_where(table, row, col.participant))
            continue
        parsed[(code, when)] = value / 100.0
    chosen: dict[str, float] = {}
    for (code, when), value in sorted(parsed.items()):
        if when == "after" or code not in chosen:
            chosen[code] = value
    return chosen


def load_round(folder: Path, known_metrics: frozenset[str],
               limits: ReadLimits | None = None) -> Round:
    """Read and validate every file of a round folder (DESIGN §2)."""
    cfg = load_config(folder, known_metrics)
    limits = limits or _read_limits(cfg)
    log = ProblemLog()
    files = cfg.files
    t_items = _read(folder, "items", files.items, cfg, log, required=True, limits=limits)
    t_resp = _read(folder, "responses", files.responses, cfg, log, required=True, limits=limits)
    t_people = _read(folder, "participants", files.participants, cfg, log, required=False,
                     limits=limits)
    t_est = _read(folder, "estimates", files.estimates, cfg, log, required=False, limits=limits)
    if t_items is None or t_resp is None:
        log.raise_if_errors()
        raise AssertionError("unreachable: a required table failed without a logged problem")

    items, truths, attributes = _items(t_items, cfg, log)
    if cfg.files.layout == "long":
        answers = _long_answers(t_resp, cfg, log)
    else:
        answers = _wide_answers(t_resp, cfg, items, log)
    _check_codes(answers, t_resp, log)
    matrices = _fill_matrices(answers, t_resp, cfg, items, log)
    if not matrices.participants and not log.errors:
        _no_responses(t_resp, cfg, items, log)
    codes = set(matrices.participants)
    identities = _identities(t_people, cfg, codes, log) if t_people is not None else None
    if identities is not None:
        twins = _zero_twins(identities)
        for code in sorted(codes - set(identities)):
            log.error(t_resp.file, "participant code is not in the participants file "
                      f"{t_people.file if t_people else ''}" + _did_you_mean(code, twins),
                      value=code, sheet=t_resp.sheet, row=matrices.first_row[code],
                      column=cfg.columns.participant)
    estimates = _estimates(t_est, cfg, codes, log) if t_est is not None else None
    log.raise_if_errors()

    positive = cfg.classes.positive
    tables = [t for t in (t_items, t_resp, t_people, t_est) if t is not None]
    sources = tuple(sorted([SourceFile(ROUND_FILE, _sha256(folder / ROUND_FILE))]
                           + [SourceFile(t.file, t.sha256) for t in tables],
                           key=lambda s: s.name))
    return Round(
        config=cfg,
        folder=folder,
        sources=sources,
        items=tuple(items),
        truth=np.array([t == positive for t in truths], dtype=np.int8),
        item_attributes=attributes,
        participants=matrices.participants,
        decision=matrices.decision,
        confidence=matrices.confidence,
        raw_decision=matrices.raw,
        identities=identities,
        estimates=estimates,
        warnings=tuple(log.warnings),
    )


def _read_limits(cfg: RoundConfig) -> ReadLimits:
    """[limits] of round.toml as the reader's limits."""
    mib = 1 << 20
    return ReadLimits(max_rows=cfg.limits.max_rows, max_cells=cfg.limits.max_cells,
                      setting="[limits] {key} in round.toml",
                      max_uncompressed_bytes=cfg.limits.max_unpacked_mib * mib,
                      max_compression_ratio=cfg.limits.max_compression_ratio,
                      max_file_bytes=cfg.limits.max_file_mib * mib)


def _no_responses(table: Table, cfg: RoundConfig, items: Sequence[str], log: ProblemLog) -> None:
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


def _sha256(path: Path) -> str:
    import hashlib

    return hashlib.sha256(path.read_bytes()).hexdigest()


@dataclass(frozen=True)
class _Matrices:
    participants: tuple[str, ...]
    decision: np.ndarray
    confidence: np.ndarray
    raw: np.ndarray
    first_row: dict[str, int]


def _fill_matrices(answers: Sequence[_Answer], table: Table, cfg: RoundConfig,
                   items: Sequence[str], log: ProblemLog) -> _Matrices:
    item_index = {item: i for i, item in enumerate(items)}
    twins = _zero_twins(items)
    decisions = _Labels(sorted(cfg.decisions), cfg.scoring.normalise_labels, "decision label",
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
                          + _did_you_mean(a.item, twins),
                          value=a.item, allowed="the item ids of the key",
                          **_where(table, a.row, icol))
            continue
        key = (a.participant, a.item)
        if key in seen:
            log.error(table.file, f"second response of participant {a.participant!r} to item "
                      f"{a.item!r} (first at row {seen[key]})", value=a.item,
                      **_where(table, a.row, icol))
            continue
        seen[key] = a.row
        label = decisions.match(a.decision, table, a.row, dcol)
        target = cfg.decisions.get(label) if label is not None else None
        conf, allowed = _parse_confidence(a.confidence, cfg)
        blank_ok = a.confidence.strip() == "" and target == ABSTAIN
        if conf is None and not blank_ok:
            log.error(table.file, _confidence_problem(a.confidence, cfg), value=a.confidence,
                      allowed=allowed, **_where(table, a.row, ccol))
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
