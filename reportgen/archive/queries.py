"""Reading the archive: one participant's rounds, previous rounds for certificates, codes and
aliases, round versions."""

from __future__ import annotations

import datetime as dt
import difflib
import json
import sqlite3
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from reportgen.archive.schema import reader
from reportgen.errors import InputError
from reportgen.results.model import IssuedDocument, Metric, PreviousRound

# ---------------------------------------------------------------------------------------------
# What queries return


@dataclass(frozen=True)
class ArchivedRound:
    """One participant's record of one round, as archived (the round's current version).

    ``record`` is the participant's full results.json object; ``rating_noise``/``rating_signal``
    the meta-d′ rating table (conclusive answers, "sure different" … "sure same") on different-
    and same-source items; ``levels`` the round's confidence levels. ``accuracy_x_star`` and
    ``accuracy_s_star`` are the group's robust mean and standard deviation of accuracy (ISO 13528
    Algorithm A) at record time, ``None`` with ``robust_note`` when the group could not give them.
    """

    round_id: str
    version: int
    code: str
    scheme: str
    title: str
    status: str
    opened: dt.date
    closed: dt.date
    issued: dt.date
    record: Mapping[str, Any]
    counts: Mapping[str, int]
    rating_noise: tuple[int, ...]
    rating_signal: tuple[int, ...]
    levels: tuple[float, ...]
    n_participants: int
    n_items: int
    accuracy_x_star: float | None
    accuracy_s_star: float | None
    robust_note: str | None
    few_errors: int
    provider: Mapping[str, Any]
    key_sha256: str
    config_sha256: str
    inputs_sha256: str

    def metric(self, name: str) -> Metric:
        """The named metric rebuilt from the record (value, 95 % interval, note)."""
        low, high = self.record.get(f"{name}_ci") or (None, None)
        return Metric(self.record.get(name), low, high, self.record.get(f"{name}_note"))


# ---------------------------------------------------------------------------------------------
# Codes: aliases, renames and merges


def load_aliases(conn: sqlite3.Connection) -> dict[str, str]:
    return dict(conn.execute("SELECT old_code, new_code FROM code_aliases").fetchall())


def resolve_code(aliases: Mapping[str, str], code: str) -> str:
    seen = {code}
    while code in aliases:
        code = aliases[code]
        if code in seen:  # cannot happen: rename_code refuses cycles
            break
        seen.add(code)
    return code


def recorded_codes(conn: sqlite3.Connection) -> set[str]:
    return {r[0] for r in conn.execute("SELECT DISTINCT code FROM participant_results")}


def code_members(conn: sqlite3.Connection, aliases: Mapping[str, str], canonical: str) -> list[str]:
    """Every code that stands for the examiner whose current code is ``canonical``."""
    candidates = recorded_codes(conn) | set(aliases) | {canonical}
    return sorted(c for c in candidates if resolve_code(aliases, c) == canonical)


_LOOKALIKE = str.maketrans({"O": "0", "I": "1", "L": "1", " ": None, "-": None, "_": None})


def similar_codes(code: str, known: Iterable[str], n: int = 5) -> list[str]:
    """Up to ``n`` known codes most like ``code``; case, spacing and the look-alikes O/0 and I/L/1
    are ignored first, so a mistyped ``E01O7`` finds ``E0107``."""
    def key(c: str) -> str:
        return c.upper().translate(_LOOKALIKE)

    scored = []
    for candidate in set(known):
        score = max(difflib.SequenceMatcher(None, code, candidate).ratio(),
                    difflib.SequenceMatcher(None, key(code), key(candidate)).ratio())
        if score >= 0.5:
            scored.append((-score, candidate))
    return [c for _, c in sorted(scored)[:n]]


def unknown_code(path: Path, code: str, known: Iterable[str]) -> InputError:
    similar = similar_codes(code, known)
    hint = f"; similar codes: {', '.join(similar)}" if similar else ""
    return InputError.single(str(path), f"participant code {code!r} is not in the archive{hint}",
                             value=code)


def rounds_of(conn: sqlite3.Connection, codes: Sequence[str]) -> set[str]:
    marks = ", ".join("?" * len(codes))
    return {r[0] for r in conn.execute(
        f"SELECT DISTINCT round_id FROM participant_results WHERE code IN ({marks})", codes)}


@dataclass(frozen=True)
class Rename:
    """A recorded rename, for reports that must say under which codes the rounds were taken."""

    old: str
    new: str
    effective: dt.date
    note: str


def renames(path: Path, code: str) -> list[Rename]:
    """The renames that concern the examiner ``code`` stands for, in the order recorded."""
    with reader(Path(path)) as conn:
        aliases = load_aliases(conn)
        members = set(code_members(conn, aliases, resolve_code(aliases, code)))
        rows = conn.execute("SELECT old_code, new_code, effective, note FROM code_aliases "
                            "ORDER BY operation").fetchall()
    return [Rename(o, n, dt.date.fromisoformat(e), note) for o, n, e, note in rows
            if o in members]


# ---------------------------------------------------------------------------------------------
# Queries

_HISTORY_SQL = """
SELECT p.round_id, p.version, p.code, p.record, p.counts, p.rating_noise, p.rating_signal,
       r.scheme, r.title, r.status, r.opened, r.closed, r.issued, r.levels, r.n_participants,
       r.n_items, r.accuracy_x_star, r.accuracy_s_star, r.robust_note, r.round_json,
       r.key_sha256, r.config_sha256, r.inputs_sha256
FROM participant_results AS p
JOIN round_versions AS r ON r.round_id = p.round_id AND r.version = p.version
WHERE p.code IN ({marks})
  AND p.version = (SELECT MAX(version) FROM round_versions AS v WHERE v.round_id = p.round_id)
"""


def _archived(row: Sequence[Any]) -> ArchivedRound:
    (round_id, version, code, record, counts, noise, signal, scheme, title, status, opened,
     closed, issued, levels, n_part, n_items, x_star, s_star, robust_note, rjson,
     key_sha, config_sha, inputs_sha) = row
    info = json.loads(rjson)
    return ArchivedRound(
        round_id=round_id, version=int(version), code=code, scheme=scheme, title=title,
        status=status, opened=dt.date.fromisoformat(opened),
        closed=dt.date.fromisoformat(closed), issued=dt.date.fromisoformat(issued),
        record=json.loads(record), counts=json.loads(counts),
        rating_noise=tuple(json.loads(noise)), rating_signal=tuple(json.loads(signal)),
        levels=tuple(float(x) for x in json.loads(levels)), n_participants=int(n_part),
        n_items=int(n_items), accuracy_x_star=x_star, accuracy_s_star=s_star,
        robust_note=robust_note, few_errors=int(info.get("scoring", {}).get("few_errors", 0)),
        provider=info.get("provider", {}), key_sha256=key_sha, config_sha256=config_sha,
        inputs_sha256=inputs_sha,
    )


def _history(conn: sqlite3.Connection, codes: Sequence[str]) -> list[ArchivedRound]:
    rows = conn.execute(_HISTORY_SQL.format(marks=", ".join("?" * len(codes))), codes)
    return sorted((_archived(r) for r in rows), key=lambda a: (a.issued, a.round_id))


def participant_history(path: Path, code: str) -> list[ArchivedRound]:
    """Every archived round of the examiner ``code`` stands for (following renames), current
    versions only, sorted by issue date. Unknown code: :class:`InputError` naming similar ones."""
    path = Path(path)
    with reader(path) as conn:
        aliases = load_aliases(conn)
        members = code_members(conn, aliases, resolve_code(aliases, code))
        history = _history(conn, members)
        if not history:
            raise unknown_code(path, code, recorded_codes(conn) | set(aliases))
    return history


def previous_rounds(path: Path, code: str, before: dt.date) -> list[PreviousRound]:
    """The examiner's archived rounds issued before ``before``, oldest first, for the
    certificate's "your previous rounds" block. No archive or an unknown code: an empty list."""
    return previous_rounds_for(path, [code], before).get(code, [])


def previous_rounds_for(path: Path, participant_codes: Iterable[str],
                        before: dt.date) -> dict[str, list[PreviousRound]]:
    """:func:`previous_rounds` for many codes in one read (a whole round's certificates)."""
    path = Path(path)
    wanted = list(participant_codes)
    if not path.is_file():
        return {code: [] for code in wanted}
    out: dict[str, list[PreviousRound]] = {}
    with reader(path) as conn:
        aliases = load_aliases(conn)
        for code in wanted:
            history = _history(conn, code_members(conn, aliases, resolve_code(aliases, code)))
            out[code] = [
                PreviousRound(round_id=a.round_id, issued=a.issued, accuracy=a.metric("accuracy"),
                              type2_auroc=a.metric("type2_auroc"),
                              overall=str(a.record.get("overall", "")))
                for a in history if a.issued < before
            ]
    return out


def current_code(path: Path, code: str) -> str:
    """The code the examiner behind ``code`` goes by now (``code`` itself unless renamed)."""
    with reader(Path(path)) as conn:
        return resolve_code(load_aliases(conn), code)


def codes(path: Path) -> list[str]:
    """Current participant codes in the archive (renamed codes appear under their new code)."""
    with reader(Path(path)) as conn:
        aliases = load_aliases(conn)
        return sorted({resolve_code(aliases, c) for c in recorded_codes(conn)})


@dataclass(frozen=True)
class RoundVersion:
    """One stored version of a round (for audits: what was recorded, and which is current)."""

    round_id: str
    version: int
    issued: dt.date
    inputs_sha256: str
    config_sha256: str
    key_sha256: str
    current: bool


def round_versions(path: Path, round_id: str | None = None) -> list[RoundVersion]:
    """Every stored version of every round (or of ``round_id``), oldest first."""
    sql = ("SELECT round_id, version, issued, inputs_sha256, config_sha256, key_sha256, "
           "version = (SELECT MAX(version) FROM round_versions AS v "
           "WHERE v.round_id = r.round_id) FROM round_versions AS r")
    params: tuple[str, ...] = ()
    if round_id is not None:
        sql, params = sql + " WHERE round_id = ?", (round_id,)
    with reader(Path(path)) as conn:
        rows = conn.execute(sql + " ORDER BY issued, round_id, version", params).fetchall()
    return [RoundVersion(r, int(v), dt.date.fromisoformat(i), ih, ch, kh, bool(cur))
            for r, v, i, ih, ch, kh, cur in rows]


def _has_documents(conn: sqlite3.Connection) -> bool:
    """Archives older than schema version 3 (opened read-only) have no documents table."""
    return conn.execute("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = "
                        "'documents'").fetchone() is not None


def current_documents(path: Path, round_id: str) -> dict[str, IssuedDocument]:
    """The documents of the current (newest) version of ``round_id``, by participant code (``""``
    for the appendix); empty when the round is not archived or was archived before documents
    were recorded (schema version 3)."""
    if not path.is_file():
        return {}
    with reader(path) as conn:
        if not _has_documents(conn):
            return {}
        rows = conn.execute(
            "SELECT code, report_id, content_sha256, issued, replaces, replaced_issued, reason "
            "FROM documents WHERE round_id = ? AND version = (SELECT MAX(version) FROM "
            "round_versions WHERE round_id = ?) ORDER BY code", (round_id, round_id)).fetchall()
    return {row[0]: IssuedDocument(
        code=row[0], report_id=row[1], content_sha256=row[2],
        issued=dt.date.fromisoformat(row[3]), replaces=row[4],
        replaced_issued=dt.date.fromisoformat(row[5]) if row[5] else None, reason=row[6])
        for row in rows}


def report_ids(path: Path) -> dict[str, str]:
    """Every report id ever issued, with the fingerprint of its content."""
    if not path.is_file():
        return {}
    with reader(path) as conn:
        if not _has_documents(conn):
            return {}
        return dict(conn.execute("SELECT report_id, content_sha256 FROM documents "
                                 "ORDER BY report_id").fetchall())
