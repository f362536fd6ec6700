"""``[files] duplicates = "latest"``: keep each participant's latest submission.

A submission is the rows of one participant that carry one date and time in the responses'
``submitted`` column (as an online form exports them). The rows of every earlier submission are
dropped, and each drop is reported as a warning naming the rows; a timestamp that cannot be
read refuses the round (reportgen never guesses which submission was the latest).
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Sequence

from reportgen.errors import ProblemLog
from reportgen.rounds.checks import location, require_columns, row_ranges
from reportgen.rounds.responses import Answer
from reportgen.rounds.schema import RoundConfig
from reportgen.rounds.tables import Table

__all__ = ["keep_latest", "submission_time"]


def submission_time(text: str) -> dt.datetime | None:
    """An ISO 8601 date and time (``2026-03-04 14:30``, ``2026-03-04T14:30:00``) or date; the
    forms a spreadsheet date cell is read as. Other forms (``04/03/2026``) are ambiguous."""
    try:
        stamp = dt.datetime.fromisoformat(text.strip())
    except ValueError:
        return None
    return stamp.replace(tzinfo=None) if stamp.tzinfo is None else stamp.astimezone(
        dt.UTC).replace(tzinfo=None)


def keep_latest(answers: Sequence[Answer], table: Table, cfg: RoundConfig,
                log: ProblemLog) -> list[Answer]:
    """The answers of each participant's latest submission (all of them when the setting is
    off, or when a timestamp is missing or unreadable: that is then an error)."""
    if cfg.files.duplicates != "latest" or not answers:
        return list(answers)
    column = cfg.columns_for("responses").submitted
    if not require_columns(table, (column,), log, keys=("submitted",), table_key="responses",
                           consequence="[files] duplicates = \"latest\" needs each "
                           "submission's date and time to find the latest"):
        return list(answers)
    stamps = dict(zip(table.row_numbers, table.column(column), strict=True))
    times: dict[int, dt.datetime] = {}
    unreadable: dict[str, list[int]] = defaultdict(list)
    for row in sorted({a.row for a in answers}):
        stamp = submission_time(stamps[row])
        if stamp is None:
            unreadable[stamps[row]].append(row)
        else:
            times[row] = stamp
    for text, rows in sorted(unreadable.items(), key=lambda pair: pair[1][0]):
        where = f" (rows {row_ranges(rows)})" if len(rows) > 1 else ""
        log.error(table.file, f"submission time is not a date and time{where}", value=text,
                  allowed="a date and time written year first, such as 2026-03-04 14:30, "
                  "or a date cell", **location(table, rows[0], column))
    if unreadable:  # refused: keep one answer per item, so repeats are not reported too
        first: dict[tuple[str, str], Answer] = {}
        for a in answers:
            first.setdefault((a.participant, a.item), a)
        return list(first.values())
    latest: dict[str, dt.datetime] = {}
    for a in answers:
        latest[a.participant] = max(latest.get(a.participant, times[a.row]), times[a.row])
    dropped: dict[str, set[int]] = defaultdict(set)
    kept: dict[str, set[int]] = defaultdict(set)
    for a in answers:
        (kept if times[a.row] == latest[a.participant] else dropped)[a.participant].add(a.row)
    for code, gone in sorted(dropped.items()):
        log.warn(table.file, f"participant {code!r} sent more than one submission: kept the "
                 f"latest ({latest[code].isoformat(sep=' ')}, rows "
                 f"{row_ranges(kept[code])}) and dropped rows {row_ranges(gone)}", value=code,
                 **location(table, min(gone), cfg.columns_for("responses").participant))
    return [a for a in answers if times[a.row] == latest[a.participant]]
