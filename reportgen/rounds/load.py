"""Read a round folder into a validated :class:`Round`.

Every problem is collected with its file, sheet, row, column and value; the round is refused once,
with all of them (:class:`~reportgen.errors.InputError`). Nothing is silently dropped or coerced.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

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
from reportgen.rounds.config import ROUND_FILE, load_config
from reportgen.rounds.duplicates import keep_latest
from reportgen.rounds.forms import ReturnedForms, is_form_pattern, read_forms
from reportgen.rounds.model import Identity, Round, SourceFile
from reportgen.rounds.percent import fraction_problem, percent_value
from reportgen.rounds.responses import (
    check_codes,
    fill_matrices,
    long_answers,
    no_responses,
    wide_answers,
)
from reportgen.rounds.schema import RoundConfig
from reportgen.rounds.tables import ReadLimits, Table, find_table, read_table


def _read(folder: Path, stem: str, cfg: RoundConfig, log: ProblemLog,
          *, required: bool, limits: ReadLimits) -> Table | None:
    path = find_table(folder, stem, cfg.files.name(stem), log, required=required)
    if path is None:
        return None
    return read_table(path, path.name, log, sheet=cfg.files.sheet_of(stem), limits=limits)


def _items(table: Table, cfg: RoundConfig, log: ProblemLog) -> tuple[
        list[str], list[str], dict[str, tuple[str, ...]]] | None:
    """The key's item ids, truth labels and other columns; ``None`` when a required column is
    missing (then no response is checked against the key: one error, not one per row)."""
    col = cfg.columns_for("items")
    if not require_columns(table, (col.item, col.truth), log, keys=("item", "truth"),
                           table_key="items",
                           consequence="so the key cannot be read and no response is checked"):
        return None
    labels = Labels(cfg.classes.labels, cfg.scoring.normalise_labels, "truth class", log)
    non_text_codes(table, col.item, "item id", log)
    items: list[str] = []
    truths: list[str] = []
    seen: dict[str, int] = {}
    keep_rows: list[int] = []
    ids, truth_col = table.column(col.item), table.column(col.truth)
    for idx, (item, truth, row) in enumerate(zip(ids, truth_col, table.row_numbers, strict=True)):
        if item.strip() == "":
            log.error(table.file, "item id is blank", **location(table, row, col.item))
            continue
        if item in seen:
            log.error(table.file, f"item {item!r} appears twice in the key (first at row "
                      f"{seen[item]})", value=item, **location(table, row, col.item))
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


def _breakdown_columns(cfg: RoundConfig, attributes: dict[str, tuple[str, ...]], file: str,
                       log: ProblemLog) -> None:
    """Every column named by ``[attributes] breakdown`` must be an extra column of the key."""
    for name in cfg.attributes.breakdown:
        if name not in attributes:
            log.error(ROUND_FILE, f"[attributes] breakdown names a column that is not in the "
                      f"items file {file}", value=name, column="attributes.breakdown",
                      allowed=", ".join(sorted(attributes)) or "no extra column in the items "
                      "file: add the column or leave the name out")


def _identities(table: Table, cfg: RoundConfig, codes: set[str],
                log: ProblemLog) -> dict[str, Identity] | None:
    """Names by code; ``None`` when the code column is missing (reported once, with how many
    participants it leaves unmatched)."""
    col = cfg.columns_for("participants")
    if not require_columns(table, (col.participant,), log, keys=("participant",),
                           table_key="participants",
                           consequence=f"so none of the {len(codes)} participants who responded "
                           "can be matched to a name (no other error of this file is listed)"):
        return None
    non_text_codes(table, col.participant, "participant code", log)
    names = table.column(col.name) if table.has(col.name) else ("",) * len(table.rows)
    orgs = (table.column(col.organisation) if table.has(col.organisation)
            else ("",) * len(table.rows))
    emails = table.column(col.email) if table.has(col.email) else ("",) * len(table.rows)
    out: dict[str, Identity] = {}
    for code, name, org, email, row in zip(table.column(col.participant), names, orgs, emails,
                                           table.row_numbers, strict=True):
        if code.strip() == "":
            log.error(table.file, "participant code is blank",
                      **location(table, row, col.participant))
        elif code in out:
            log.error(table.file, "participant listed twice", value=code,
                      **location(table, row, col.participant))
        else:
            out[code] = Identity(name=name.strip(), organisation=org.strip(),
                                 email=email.strip())
    for code in sorted(set(out) - codes):
        log.warn(table.file, "participant listed but gave no responses", value=code,
                 sheet=table.sheet, column=col.participant)
    return out


def _estimates(table: Table, cfg: RoundConfig, codes: set[str], responses_file: str,
               log: ProblemLog) -> dict[str, float]:
    col = cfg.columns_for("estimates")
    if not require_columns(table, (col.participant, col.estimate), log,
                           keys=("participant", "estimate"), table_key="estimates",
                           consequence="so no self-estimate is read"):
        return {}
    twins = zero_twins(codes)
    skip = non_text_codes(table, col.participant, "participant code", log)
    whens = table.column(col.when) if table.has(col.when) else ("after",) * len(table.rows)
    fractions = fraction_problem(table.column(col.estimate), "estimate", 100)
    if fractions is not None:
        at = next(n for n, text in enumerate(table.column(col.estimate)) if text.strip())
        log.error(table.file, fractions, value=table.column(col.estimate)[at],
                  allowed="numbers 0 to 100 (percent of items right)",
                  **location(table, table.row_numbers[at], col.estimate))
        return {}
    required = cfg.scoring.estimates_required
    parsed: dict[tuple[str, str], float] = {}
    for code, text, when, row in zip(table.column(col.participant), table.column(col.estimate),
                                     whens, table.row_numbers, strict=True):
        when = when.strip() or "after"
        if when not in ("before", "after"):
            log.error(table.file, "'when' must be before or after", value=when,
                      **location(table, row, col.when))
            continue
        if row in skip:
            continue
        if code not in codes:
            log.error(table.file, "estimate for a participant with no responses"
                      + did_you_mean(code, twins, table.file, responses_file), value=code,
                      **location(table, row, col.participant))
            continue
        if text.strip() == "" and not required:
            continue  # a blank estimate is missing
        value = percent_value(text)[0]
        if value is None or not 0 <= value <= 100:
            log.error(table.file, "estimate is not a percentage", value=text,
                      allowed="numbers 0 to 100 (percent of items right)",
                      **location(table, row, col.estimate))
            continue
        if (code, when) in parsed:
            log.error(table.file, f"second {when!r} estimate for the same participant",
                      value=code, **location(table, row, col.participant))
            continue
        parsed[(code, when)] = value / 100.0
    chosen: dict[str, float] = {}
    for (code, when), value in sorted(parsed.items()):
        if when == "after" or code not in chosen:
            chosen[code] = value
    if required:
        for code in sorted(codes - set(chosen)):
            log.error(table.file, "participant has no self-estimate", value=code,
                      sheet=table.sheet, column=col.participant,
                      allowed="an estimate for every participant ([scoring] estimates_required "
                      "= true)")
    return chosen


def load_round(folder: Path, known_metrics: frozenset[str],
               limits: ReadLimits | None = None) -> Round:
    """Read and validate every file of a round folder (docs/design.md §2)."""
    cfg = load_config(folder, known_metrics)
    limits = limits or _read_limits(cfg)
    log = ProblemLog()
    t_items = _read(folder, "items", cfg, log, required=True, limits=limits)
    key = _items(t_items, cfg, log) if t_items is not None else None
    items, truths, attributes = key or ([], [], {})
    if key is not None and t_items is not None:
        _breakdown_columns(cfg, attributes, t_items.file, log)
    forms = None
    if is_form_pattern(cfg.files.name("responses")):  # returned response forms
        forms = _forms(folder, cfg, items if key is not None else None, log, limits)
        t_resp = forms.table if forms is not None else None
    else:
        t_resp = _read(folder, "responses", cfg, log, required=True, limits=limits)
    t_people = _read(folder, "participants", cfg, log, required=False, limits=limits)
    t_est = _read(folder, "estimates", cfg, log, required=False, limits=limits)
    if t_est is None and cfg.scoring.estimates_required and not cfg.files.name("estimates"):
        log.error("estimates", "no estimates.csv or estimates.xlsx in the round folder",
                  allowed="an estimates file ([scoring] estimates_required = true)")
    if t_items is None or t_resp is None:
        if t_resp is not None and (cfg.files.layout == "long" or forms is not None):
            # The key could not be read: still report what is wrong in the answers themselves
            # (labels, confidence values, codes), so that one problem does not hide the others.
            # Item ids and coverage cannot be judged without the key: those checks run against
            # the answers' own items, and only errors of the answers themselves are kept.
            answers = long_answers(t_resp, cfg, log)
            check_codes(answers, t_resp, log)
            own = ProblemLog()
            lenient = cfg.model_copy(update={"scoring": cfg.scoring.model_copy(
                update={"allow_missing": True})})
            fill_matrices(answers, t_resp, lenient, sorted({a.item for a in answers}), own)
            log.extend(p for p in own.errors if "not in the key" not in p.message)
        log.raise_if_errors()
        raise AssertionError("unreachable: a required table failed without a logged problem")

    if cfg.files.layout == "long" or forms is not None:
        answers = long_answers(t_resp, cfg, log)
    else:
        answers = wide_answers(t_resp, cfg, items, log)
    answers = keep_latest(answers, t_resp, cfg, log)
    check_codes(answers, t_resp, log)
    if key is not None:
        matrices = fill_matrices(answers, t_resp, cfg, items, log, key_file=t_items.file)
    else:
        matrices = fill_matrices([], t_resp, cfg, items, log)
    if not matrices.participants and not log.errors:
        no_responses(t_resp, cfg, items, log)
    codes = set(matrices.participants)
    responded = bool(codes)  # else every code check of the other files would be a knock-on
    identities = (_identities(t_people, cfg, codes, log)
                  if t_people is not None and responded else None)
    if identities is not None and t_people is not None:
        twins = zero_twins(identities)
        for code in sorted(codes - set(identities)):
            log.error(t_resp.file, f"participant code is not in the participants file "
                      f"{t_people.file}" + did_you_mean(code, twins, t_resp.file, t_people.file),
                      value=code, sheet=t_resp.sheet, row=matrices.first_row[code],
                      column=cfg.columns_for("responses").participant)
    estimates = (_estimates(t_est, cfg, codes, t_resp.file, log)
                 if t_est is not None and responded else None)
    if estimates is None and forms is not None and forms.estimates:
        estimates = forms.estimates
    log.raise_if_errors()

    positive = cfg.classes.positive
    tables = [t for t in (t_items, t_people, t_est) if t is not None]
    tables += [t_resp] if forms is None else []
    sources = tuple(sorted([SourceFile(ROUND_FILE, _sha256(folder / ROUND_FILE))]
                           + [SourceFile(t.file, t.sha256) for t in tables]
                           + [SourceFile(*form) for form in (forms.sources if forms else ())],
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
        strength_is_confidence=matrices.by_strength,
        identities=identities,
        estimates=estimates,
        warnings=tuple(log.warnings),
    )


@dataclass(frozen=True)
class FormRound:
    """What response forms are made from: the settings, the key's item ids in order and the
    participant codes of the participants file."""

    config: RoundConfig
    items: tuple[str, ...]
    codes: tuple[str, ...]


def load_form_round(folder: Path, known_metrics: frozenset[str]) -> FormRound:
    """round.toml, the key and the participants file (required: it lists who gets a form)."""
    cfg = load_config(folder, known_metrics)
    limits = _read_limits(cfg)
    log = ProblemLog()
    t_items = _read(folder, "items", cfg, log, required=True, limits=limits)
    key = _items(t_items, cfg, log) if t_items is not None else None
    t_people = _read(folder, "participants", cfg, log, required=False, limits=limits)
    if t_people is None and not log.errors:
        log.error("participants", "no participants.csv or participants.xlsx in the round "
                  "folder: response forms are made for the codes it lists")
    roster = ProblemLog()
    identities = _identities(t_people, cfg, set(), roster) if t_people is not None else None
    log.extend(roster.errors)
    log.raise_if_errors()
    assert key is not None and identities is not None
    return FormRound(cfg, tuple(key[0]), tuple(sorted(identities)))


def _forms(folder: Path, cfg: RoundConfig, items: list[str] | None, log: ProblemLog,
           limits: ReadLimits) -> ReturnedForms | None:
    """The returned forms named by ``[files] responses``; not read when the key could not be
    (a form is checked against the key's item list)."""
    pattern = cfg.files.name("responses") or ""
    if items is None:
        return None
    if cfg.files.layout != "long" or cfg.files.duplicates != "error":
        log.error(ROUND_FILE, "returned response forms are read as they are: leave [files] "
                  "layout and duplicates at their defaults", column="files")
    return read_forms(folder, pattern, cfg, items, log, limits)


def _read_limits(cfg: RoundConfig) -> ReadLimits:
    """[limits] of round.toml as the reader's limits."""
    mib = 1 << 20
    return ReadLimits(max_rows=cfg.limits.max_rows, max_cells=cfg.limits.max_cells,
                      setting="[limits] {key} in round.toml",
                      max_uncompressed_bytes=cfg.limits.max_unpacked_mib * mib,
                      max_compression_ratio=cfg.limits.max_compression_ratio,
                      max_file_bytes=cfg.limits.max_file_mib * mib)


def _sha256(path: Path) -> str:
    import hashlib

    return hashlib.sha256(path.read_bytes()).hexdigest()
