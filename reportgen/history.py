"""The archive: every issued round, and every participant's full record, in one SQLite file.

The archive lets a provider follow one examiner across rounds and years (trend report, pooled
insight, the "previous rounds" block of a certificate). It is append-only: a round is stored once
per distinct set of inputs; issuing it again with the same inputs changes nothing, and a corrected
re-issue (``replace=True``) adds a new *version* while keeping every earlier one. The newest version
of a round is its current one. Renaming or merging participant codes is an explicit, recorded
operation (:func:`rename_code`); later queries follow the alias.

Writes run in one ``BEGIN IMMEDIATE`` transaction with a busy timeout, so two processes recording
at the same time wait for each other instead of corrupting the file. The schema is versioned (table
``meta``, key ``schema_version``) and upgraded in place by :data:`MIGRATIONS`, applied in order.
No wall-clock time is stored: the order of events is the sequence number of ``operations``.
See docs/archive.md for the schema and how to operate the file.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import difflib
import hashlib
import json
import math
import sqlite3
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import numpy as np

from reportgen import __version__
from reportgen.errors import InputError, OutputError
from reportgen.metrics.robust import algorithm_a
from reportgen.render.html import PreviousRound
from reportgen.render.results_json import participant_json, round_json
from reportgen.results import Metric, ParticipantResult, RoundResults

APPLICATION = "reportgen-archive"
BUSY_TIMEOUT_S = 60.0
"""How long a writer waits for another process's transaction before giving up."""

MIN_ROBUST_N = 3  # as the round's z criteria: fewer estimable accuracies give no x*, s*

RecordOutcome = Literal["added", "unchanged", "replaced"]


# ---------------------------------------------------------------------------------------------
# Schema and migrations


@dataclass(frozen=True)
class Migration:
    """One step of the schema: applied once, in order, inside the transaction that needs it."""

    version: int
    description: str
    statements: tuple[str, ...]


_APPEND_ONLY = ("round_versions", "participant_results", "operations", "code_aliases")

MIGRATIONS: tuple[Migration, ...] = (
    Migration(1, "rounds with versions, participant records, the operations log", (
        "CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
        """CREATE TABLE round_versions (
            round_id TEXT NOT NULL, version INTEGER NOT NULL,
            scheme TEXT NOT NULL, title TEXT NOT NULL, status TEXT NOT NULL,
            opened TEXT NOT NULL, closed TEXT NOT NULL, issued TEXT NOT NULL,
            key_sha256 TEXT NOT NULL, config_sha256 TEXT NOT NULL, inputs_sha256 TEXT NOT NULL,
            sources TEXT NOT NULL, round_json TEXT NOT NULL, levels TEXT NOT NULL,
            n_participants INTEGER NOT NULL, n_items INTEGER NOT NULL,
            accuracy_x_star REAL, accuracy_s_star REAL, robust_note TEXT,
            software TEXT NOT NULL,
            PRIMARY KEY (round_id, version))""",
        """CREATE TABLE participant_results (
            round_id TEXT NOT NULL, version INTEGER NOT NULL, code TEXT NOT NULL,
            record TEXT NOT NULL, counts TEXT NOT NULL,
            rating_noise TEXT NOT NULL, rating_signal TEXT NOT NULL,
            PRIMARY KEY (round_id, version, code),
            FOREIGN KEY (round_id, version) REFERENCES round_versions (round_id, version))""",
        """CREATE TABLE operations (
            seq INTEGER PRIMARY KEY AUTOINCREMENT, kind TEXT NOT NULL,
            round_id TEXT, version INTEGER, detail TEXT NOT NULL)""",
    )),
    Migration(2, "code aliases (rename/merge), a code index, append-only guards", (
        """CREATE TABLE code_aliases (
            old_code TEXT PRIMARY KEY, new_code TEXT NOT NULL, effective TEXT NOT NULL,
            note TEXT NOT NULL, operation INTEGER NOT NULL REFERENCES operations (seq))""",
        "CREATE INDEX participant_results_code ON participant_results (code)",
        *(f"""CREATE TRIGGER {table}_no_{verb} BEFORE {verb.upper()} ON {table}
              BEGIN SELECT RAISE(ABORT, 'the archive is append-only'); END"""
          for table in _APPEND_ONLY for verb in ("update", "delete")),
    )),
)

SCHEMA_VERSION = MIGRATIONS[-1].version


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
# Connections and transactions


@contextlib.contextmanager
def _connect(path: Path, *, create: bool) -> Iterator[sqlite3.Connection]:
    if not create and not path.is_file():
        raise InputError.single(str(path), "archive not found")
    try:
        conn = sqlite3.connect(path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
    except sqlite3.Error as exc:
        raise OutputError(f"cannot open the archive {path}: {exc}") from exc
    try:
        conn.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        conn.execute("PRAGMA foreign_keys = ON")
        yield conn
    except sqlite3.DatabaseError as exc:
        if "not a database" in str(exc) or "malformed" in str(exc):
            raise InputError.single(str(path), f"not a usable archive: {exc}") from exc
        raise OutputError(f"archive {path}: {exc}") from exc
    finally:
        conn.close()


@contextlib.contextmanager
def _transaction(conn: sqlite3.Connection, mode: str = "IMMEDIATE") -> Iterator[None]:
    """BEGIN IMMEDIATE takes the write lock at once (waiting up to the busy timeout), so the
    checks made inside the transaction still hold when it writes."""
    conn.execute(f"BEGIN {mode}")
    try:
        yield
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    conn.execute("COMMIT")


def _schema_version(conn: sqlite3.Connection, path: Path) -> int:
    tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
    if "meta" not in tables:
        if tables - {"sqlite_sequence"}:
            raise InputError.single(str(path), "not a reportgen archive (the file holds other "
                                    "tables and no schema version)")
        return 0
    meta = dict(conn.execute("SELECT key, value FROM meta").fetchall())
    if meta.get("application") != APPLICATION:
        raise InputError.single(str(path), "not a reportgen archive", value=meta.get("application"))
    return int(meta["schema_version"])


def _upgrade(conn: sqlite3.Connection, path: Path, target: int) -> int:
    """Apply the migrations above the file's version up to ``target``; call inside a
    write transaction. Returns the version the file ends at."""
    current = _schema_version(conn, path)
    if current > SCHEMA_VERSION:
        raise InputError.single(str(path), f"the archive has schema version {current}, newer than "
                                f"this reportgen knows ({SCHEMA_VERSION}): use a newer reportgen")
    for step in MIGRATIONS:
        if current < step.version <= target:
            for statement in step.statements:
                conn.execute(statement)
            conn.execute("INSERT OR REPLACE INTO meta VALUES ('application', ?)", (APPLICATION,))
            conn.execute("INSERT OR REPLACE INTO meta VALUES ('schema_version', ?)",
                         (str(step.version),))
            current = step.version
    return current


def migrate(path: Path, *, target: int = SCHEMA_VERSION) -> int:
    """Create the archive if needed and bring its schema to ``target`` (default: the newest).

    Returns the schema version. Every write and query calls this implicitly; call it yourself to
    upgrade a copy, or with a lower ``target`` to build an old-layout file in a test.
    """
    with _connect(Path(path), create=True) as conn, _transaction(conn):
        return _upgrade(conn, Path(path), target)


@contextlib.contextmanager
def _writer(path: Path) -> Iterator[sqlite3.Connection]:
    """A connection inside one write transaction on an up-to-date schema."""
    with _connect(path, create=True) as conn, _transaction(conn):
        _upgrade(conn, path, SCHEMA_VERSION)
        yield conn


@contextlib.contextmanager
def _reader(path: Path) -> Iterator[sqlite3.Connection]:
    """A connection inside one read transaction (a consistent snapshot); upgrades an old schema
    first, which needs write access once."""
    with _connect(path, create=False) as conn:
        if _schema_version(conn, path) != SCHEMA_VERSION:
            with _transaction(conn):
                _upgrade(conn, path, SCHEMA_VERSION)
        with _transaction(conn, "DEFERRED"):
            yield conn


# ---------------------------------------------------------------------------------------------
# Recording a round


def _dumps(value: Any) -> str:
    return json.dumps(value, sort_keys=True, ensure_ascii=False, allow_nan=False,
                      separators=(",", ":"))


def inputs_digest(results: RoundResults) -> str:
    """SHA-256 over the names and SHA-256 of every input file of the round (sorted by name).

    A convenient ``inputs_sha256`` for :func:`record_round` when the caller has no manifest hash.
    """
    lines = "".join(f"{s.name}\x1f{s.sha256}\n" for s in sorted(results.round.sources,
                                                                key=lambda s: s.name))
    return hashlib.sha256(lines.encode("utf-8")).hexdigest()


def key_digest(results: RoundResults) -> str:
    """SHA-256 of the answer key: the items file as read (or, should the round name it in a way
    not found among the sources, of the item ids with their truth class)."""
    named = results.round.config.files.items
    for source in results.round.sources:
        if source.name == named or (named is None and Path(source.name).stem == "items"):
            return source.sha256
    key = "".join(f"{item}\x1f{int(t)}\n" for item, t in
                  zip(results.round.items, results.round.truth, strict=True))
    return hashlib.sha256(key.encode("utf-8")).hexdigest()


def robust_accuracy(results: RoundResults) -> tuple[float | None, float | None, str | None]:
    """The group's x* and s* of accuracy by ISO 13528 Algorithm A, or ``None`` with the reason."""
    values = np.array([v for p in results.participants
                       if (v := p.metrics["accuracy"].value) is not None and math.isfinite(v)])
    if values.size < MIN_ROBUST_N:
        return None, None, f"fewer than {MIN_ROBUST_N} estimable results in the group"
    est = algorithm_a(values)
    if not float(est.sd) > 0:
        return float(est.mean), None, "the group's robust standard deviation is 0"
    return float(est.mean), float(est.sd), None


def _round_row(results: RoundResults, inputs_sha256: str, config_sha256: str) -> dict[str, Any]:
    info = results.round.config.round
    x_star, s_star, note = robust_accuracy(results)
    return {
        "round_id": info.id, "scheme": info.scheme, "title": info.title, "status": info.status,
        "opened": info.opened.isoformat(), "closed": info.closed.isoformat(),
        "issued": info.issued.isoformat(), "key_sha256": key_digest(results),
        "config_sha256": config_sha256, "inputs_sha256": inputs_sha256,
        "sources": _dumps([{"name": s.name, "sha256": s.sha256} for s in results.round.sources]),
        "round_json": _dumps(round_json(results)),
        "levels": _dumps([lv.level for lv in results.group.levels]),
        "n_participants": results.round.n_participants, "n_items": results.round.n_items,
        "accuracy_x_star": x_star, "accuracy_s_star": s_star, "robust_note": note,
        "software": f"reportgen {__version__}",
    }


def _participant_row(results: RoundResults, p: ParticipantResult) -> dict[str, Any]:
    return {
        "code": p.code,
        "record": _dumps(participant_json(results, p)),
        "counts": _dumps(dict(p.counts)),
        "rating_noise": _dumps(list(p.rating_noise)),
        "rating_signal": _dumps(list(p.rating_signal)),
    }


def _insert(conn: sqlite3.Connection, table: str, row: Mapping[str, Any]) -> None:
    columns = ", ".join(row)
    marks = ", ".join(f":{name}" for name in row)
    conn.execute(f"INSERT INTO {table} ({columns}) VALUES ({marks})", dict(row))


def _log(conn: sqlite3.Connection, kind: str, detail: Mapping[str, Any],
         round_id: str | None = None, version: int | None = None) -> int:
    cur = conn.execute("INSERT INTO operations (kind, round_id, version, detail) "
                       "VALUES (?, ?, ?, ?)", (kind, round_id, version, _dumps(detail)))
    return int(cur.lastrowid or 0)


def _decide(conn: sqlite3.Connection, path: Path, round_id: str, codes: Sequence[str],
            inputs_sha256: str, config_sha256: str, replace: bool) -> tuple[RecordOutcome, int]:
    """What recording would do (and the version it would write); raises what it would raise."""
    current = conn.execute(
        "SELECT version, inputs_sha256, config_sha256 FROM round_versions WHERE round_id = ? "
        "ORDER BY version DESC LIMIT 1", (round_id,)).fetchone()
    if current is not None and tuple(current[1:]) == (inputs_sha256, config_sha256):
        return "unchanged", int(current[0])
    if current is not None and not replace:
        raise InputError.single(
            str(path), f"round {round_id} is already in the archive (version {current[0]}) "
            "with different inputs or settings; to keep the earlier version and make this "
            "one current, issue again with --replace", value=round_id)
    _check_aliases(conn, path, round_id, codes)
    return ("added", 1) if current is None else ("replaced", int(current[0]) + 1)


def check_record(path: Path, results: RoundResults, *, inputs_sha256: str, config_sha256: str,
                 replace: bool = False) -> RecordOutcome:
    """What :func:`record_round` would return, without writing: raises the same
    :class:`InputError`, so a command can stop before it writes any output. No archive yet:
    ``"added"``."""
    path = Path(path)
    if not path.is_file():
        return "added"
    round_id = results.round.config.round.id
    with _reader(path) as conn:
        outcome, _ = _decide(conn, path, round_id, results.round.participants, inputs_sha256,
                             config_sha256, replace)
    return outcome


def record_round(path: Path, results: RoundResults, *, inputs_sha256: str, config_sha256: str,
                 replace: bool = False) -> RecordOutcome:
    """Store a scored round and every participant's full record in the archive at ``path``.

    Same round id with the same ``inputs_sha256`` and ``config_sha256`` as its current version:
    ``"unchanged"``, nothing is written. Different hashes: :class:`InputError` unless ``replace``,
    which adds a new version (``"replaced"``) and keeps the earlier ones. A new round: ``"added"``.
    The archive is created (and its schema upgraded) as needed, all in one transaction.
    """
    path = Path(path)
    round_row = _round_row(results, inputs_sha256, config_sha256)  # compute before the lock
    rows = [_participant_row(results, p) for p in results.participants]
    round_id = round_row["round_id"]
    with _writer(path) as conn:
        outcome, version = _decide(conn, path, round_id, [r["code"] for r in rows],
                                   inputs_sha256, config_sha256, replace)
        if outcome == "unchanged":
            return outcome
        _insert(conn, "round_versions", {**round_row, "version": version})
        for row in rows:
            _insert(conn, "participant_results", {**row, "round_id": round_id,
                                                  "version": version})
        _log(conn, "record" if outcome == "added" else "replace",
             {"inputs_sha256": inputs_sha256, "config_sha256": config_sha256,
              "participants": len(rows), "software": round_row["software"]}, round_id, version)
    return outcome


def _check_aliases(conn: sqlite3.Connection, path: Path, round_id: str,
                   codes: Sequence[str]) -> None:
    """Refuse a round in which two codes stand for one examiner after a recorded rename."""
    aliases = _aliases(conn)
    seen: dict[str, str] = {}
    for code in codes:
        canonical = _resolve(aliases, code)
        if canonical in seen:
            raise InputError.single(
                str(path), f"round {round_id} has both {seen[canonical]!r} and {code!r}, which a "
                f"recorded rename makes the same examiner ({canonical!r})", value=code)
        seen[canonical] = code


# ---------------------------------------------------------------------------------------------
# Codes: aliases, renames and merges


def _aliases(conn: sqlite3.Connection) -> dict[str, str]:
    return dict(conn.execute("SELECT old_code, new_code FROM code_aliases").fetchall())


def _resolve(aliases: Mapping[str, str], code: str) -> str:
    seen = {code}
    while code in aliases:
        code = aliases[code]
        if code in seen:  # cannot happen: rename_code refuses cycles
            break
        seen.add(code)
    return code


def _recorded_codes(conn: sqlite3.Connection) -> set[str]:
    return {r[0] for r in conn.execute("SELECT DISTINCT code FROM participant_results")}


def _members(conn: sqlite3.Connection, aliases: Mapping[str, str], canonical: str) -> list[str]:
    """Every code that stands for the examiner whose current code is ``canonical``."""
    candidates = _recorded_codes(conn) | set(aliases) | {canonical}
    return sorted(c for c in candidates if _resolve(aliases, c) == canonical)


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


def _unknown(path: Path, code: str, known: Iterable[str]) -> InputError:
    similar = similar_codes(code, known)
    hint = f"; similar codes: {', '.join(similar)}" if similar else ""
    return InputError.single(str(path), f"participant code {code!r} is not in the archive{hint}",
                             value=code)


def _rounds_of(conn: sqlite3.Connection, codes: Sequence[str]) -> set[str]:
    marks = ", ".join("?" * len(codes))
    return {r[0] for r in conn.execute(
        f"SELECT DISTINCT round_id FROM participant_results WHERE code IN ({marks})", codes)}


def rename_code(path: Path, old: str, new: str, *, note: str,
                effective: dt.date) -> Literal["added", "unchanged"]:
    """Record that the examiner known as ``old`` is known as ``new`` from ``effective`` on.

    Later queries for either code return the rounds recorded under both. If ``new`` already has
    records this merges two codes; it is refused when both took part in the same round. The
    operation is logged with ``note`` and cannot be undone by deleting it (the archive is
    append-only). Recording the same rename again: ``"unchanged"``.
    """
    path = Path(path)
    if old == new:
        raise InputError.single(str(path), "a rename needs two different codes", value=old)
    if not note.strip():
        raise InputError.single(str(path), "a rename needs a note saying why", value=old)
    with _writer(path) as conn:
        aliases = _aliases(conn)
        if old in aliases:
            if aliases[old] == new:
                return "unchanged"
            raise InputError.single(str(path), f"code {old!r} was already renamed to "
                                    f"{aliases[old]!r}", value=old)
        recorded = _recorded_codes(conn)
        if old not in recorded and old not in set(aliases.values()):
            raise _unknown(path, old, recorded | set(aliases))
        if _resolve(aliases, new) == old:
            raise InputError.single(str(path), f"renaming {old!r} to {new!r} would make a loop "
                                    "of renames", value=new)
        both = (_rounds_of(conn, _members(conn, aliases, old))
                & _rounds_of(conn, _members(conn, aliases, _resolve(aliases, new))))
        if both:
            raise InputError.single(str(path), f"{old!r} and {new!r} both took part in "
                                    f"{', '.join(sorted(both))}: they cannot be one examiner",
                                    value=new)
        seq = _log(conn, "rename", {"old": old, "new": new, "effective": effective.isoformat(),
                                    "note": note})
        _insert(conn, "code_aliases", {"old_code": old, "new_code": new,
                                       "effective": effective.isoformat(), "note": note,
                                       "operation": seq})
    return "added"


@dataclass(frozen=True)
class Rename:
    """A recorded rename, for reports that must say under which codes the rounds were taken."""

    old: str
    new: str
    effective: dt.date
    note: str


def renames(path: Path, code: str) -> list[Rename]:
    """The renames that concern the examiner ``code`` stands for, in the order recorded."""
    with _reader(Path(path)) as conn:
        aliases = _aliases(conn)
        members = set(_members(conn, aliases, _resolve(aliases, code)))
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
    with _reader(path) as conn:
        aliases = _aliases(conn)
        members = _members(conn, aliases, _resolve(aliases, code))
        history = _history(conn, members)
        if not history:
            raise _unknown(path, code, _recorded_codes(conn) | set(aliases))
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
    with _reader(path) as conn:
        aliases = _aliases(conn)
        for code in wanted:
            history = _history(conn, _members(conn, aliases, _resolve(aliases, code)))
            out[code] = [
                PreviousRound(round_id=a.round_id, issued=a.issued, accuracy=a.metric("accuracy"),
                              type2_auroc=a.metric("type2_auroc"),
                              overall=str(a.record.get("overall", "")))
                for a in history if a.issued < before
            ]
    return out


def current_code(path: Path, code: str) -> str:
    """The code the examiner behind ``code`` goes by now (``code`` itself unless renamed)."""
    with _reader(Path(path)) as conn:
        return _resolve(_aliases(conn), code)


def codes(path: Path) -> list[str]:
    """Current participant codes in the archive (renamed codes appear under their new code)."""
    with _reader(Path(path)) as conn:
        aliases = _aliases(conn)
        return sorted({_resolve(aliases, c) for c in _recorded_codes(conn)})


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
    with _reader(Path(path)) as conn:
        rows = conn.execute(sql + " ORDER BY issued, round_id, version", params).fetchall()
    return [RoundVersion(r, int(v), dt.date.fromisoformat(i), ih, ch, kh, bool(cur))
            for r, v, i, ih, ch, kh, cur in rows]
