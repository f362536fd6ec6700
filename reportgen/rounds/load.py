"""Read a round folder into a validated :class:`Round`.

Every problem is collected with its file, sheet, row, column and value; the round is refused once,
with all of them (:class:`~reportgen.errors.InputError`). Nothing is silently dropped or coerced.
"""

from __future__ import annotations

import math
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
from reportgen.rounds.model import Identity, Round, SourceFile
from reportgen.rounds.responses import (
    check_codes,
    fill_matrices,
    long_answers,
    no_responses,
    wide_answers,
)
from reportgen.rounds.schema import RoundConfig
from reportgen.rounds.tables import ReadLimits, Table, find_table, read_table


def _read(folder: Path, stem: str, explicit: str | None, cfg: RoundConfig, log: ProblemLog,
          *, required: bool, limits: ReadLimits) -> Table | None:
    path = find_table(folder, stem, explicit, log, required=required)
    if path is None:
        return None
    return read_table(path, path.name, log, sheet=cfg.files.sheet, limits=limits)


def _items(table: Table, cfg: RoundConfig, log: ProblemLog) -> tuple[
        list[str], list[str], dict[str, tuple[str, ...]]]:
    col = cfg.columns
    if not require_columns(table, (col.item, col.truth), log):
        return [], [], {}
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


def _identities(table: Table, cfg: RoundConfig, codes: set[str],
                log: ProblemLog) -> dict[str, Identity]:
    col = cfg.columns
    if not require_columns(table, (col.participant,), log):
        return {}
    non_text_codes(table, col.participant, "participant code", log)
    names = table.column(col.name) if table.has(col.name) else ("",) * len(table.rows)
    orgs = (table.column(col.organisation) if table.has(col.organisation)
            else ("",) * len(table.rows))
    out: dict[str, Identity] = {}
    for code, name, org, row in zip(table.column(col.participant), names, orgs,
                                    table.row_numbers, strict=True):
        if code.strip() == "":
            log.error(table.file, "participant code is blank",
                      **location(table, row, col.participant))
        elif code in out:
            log.error(table.file, "participant listed twice", value=code,
                      **location(table, row, col.participant))
        else:
            out[code] = Identity(name=name.strip(), organisation=org.strip())
    for code in sorted(set(out) - codes):
        log.warn(table.file, "participant listed but gave no responses", value=code,
                 sheet=table.sheet, column=col.participant)
    return out


def _estimates(table: Table, cfg: RoundConfig, codes: set[str],
               log: ProblemLog) -> dict[str, float]:
    col = cfg.columns
    if not require_columns(table, (col.participant, col.estimate), log):
        return {}
    twins = zero_twins(codes)
    skip = non_text_codes(table, col.participant, "participant code", log)
    whens = table.column(col.when) if table.has(col.when) else ("after",) * len(table.rows)
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
                      + did_you_mean(code, twins), value=code,
                      **location(table, row, col.participant))
            continue
        try:
            value = float(text.strip().rstrip("%"))
        except ValueError:
            value = math.nan
        if not 0 <= value <= 100:
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
    return chosen


def load_round(folder: Path, known_metrics: frozenset[str],
               limits: ReadLimits | None = None) -> Round:
    """Read and validate every file of a round folder (docs/design.md §2)."""
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
        answers = long_answers(t_resp, cfg, log)
    else:
        answers = wide_answers(t_resp, cfg, items, log)
    check_codes(answers, t_resp, log)
    matrices = fill_matrices(answers, t_resp, cfg, items, log)
    if not matrices.participants and not log.errors:
        no_responses(t_resp, cfg, items, log)
    codes = set(matrices.participants)
    identities = _identities(t_people, cfg, codes, log) if t_people is not None else None
    if identities is not None:
        twins = zero_twins(identities)
        for code in sorted(codes - set(identities)):
            log.error(t_resp.file, "participant code is not in the participants file "
                      f"{t_people.file if t_people else ''}" + did_you_mean(code, twins),
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


def _sha256(path: Path) -> str:
    import hashlib

    return hashlib.sha256(path.read_bytes()).hexdigest()
