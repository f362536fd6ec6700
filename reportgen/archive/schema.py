"""The archive's SQLite schema, its migrations, and the connections every reader and writer
opens (busy timeout, one ``BEGIN IMMEDIATE`` transaction per write). See docs/archive.md."""

from __future__ import annotations

import contextlib
import sqlite3
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from reportgen.errors import InputError, OutputError

APPLICATION = "reportgen-archive"
APPLICATION_ID = 0x52475054
"""SQLite's application_id of a reportgen archive ("RGPT"), so ``file`` and other tools can tell
the file from other SQLite databases; ``user_version`` holds the schema version."""
BUSY_TIMEOUT_S = 60.0
"""How long a writer waits for another process's transaction before giving up."""


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
    Migration(3, "every issued document: its report id, content fingerprint and amendment", (
        """CREATE TABLE documents (
            round_id TEXT NOT NULL, version INTEGER NOT NULL,
            code TEXT NOT NULL,  -- the participant's code; '' for the group appendix
            report_id TEXT NOT NULL, content_sha256 TEXT NOT NULL, issued TEXT NOT NULL,
            replaces TEXT, replaced_issued TEXT, reason TEXT,
            PRIMARY KEY (round_id, version, code),
            FOREIGN KEY (round_id, version) REFERENCES round_versions (round_id, version))""",
        "CREATE INDEX documents_report_id ON documents (report_id)",
        *(f"""CREATE TRIGGER documents_no_{verb} BEFORE {verb.upper()} ON documents
              BEGIN SELECT RAISE(ABORT, 'the archive is append-only'); END"""
          for verb in ("update", "delete")),
    )),
)

SCHEMA_VERSION = MIGRATIONS[-1].version


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
def transaction(conn: sqlite3.Connection, mode: str = "IMMEDIATE") -> Iterator[None]:
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
    app_id = conn.execute("PRAGMA application_id").fetchone()[0]
    if meta.get("application") != APPLICATION or app_id not in (0, APPLICATION_ID):
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
    _stamp_header(conn, current)
    return current


def _stamp_header(conn: sqlite3.Connection, version: int) -> None:
    """Write the application id and the schema version into the SQLite header (an archive made
    before they were set gets them on its next write)."""
    if conn.execute("PRAGMA application_id").fetchone()[0] != APPLICATION_ID:
        conn.execute(f"PRAGMA application_id = {APPLICATION_ID:d}")
    if conn.execute("PRAGMA user_version").fetchone()[0] != version:
        conn.execute(f"PRAGMA user_version = {int(version):d}")


def migrate(path: Path, *, target: int = SCHEMA_VERSION) -> int:
    """Create the archive if needed and bring its schema to ``target`` (default: the newest).

    Returns the schema version. Every write and query calls this implicitly; call it yourself to
    upgrade a copy, or with a lower ``target`` to build an old-layout file in a test.
    """
    with _connect(Path(path), create=True) as conn, transaction(conn):
        return _upgrade(conn, Path(path), target)


@contextlib.contextmanager
def writer(path: Path) -> Iterator[sqlite3.Connection]:
    """A connection inside one write transaction on an up-to-date schema."""
    with _connect(path, create=True) as conn, transaction(conn):
        _upgrade(conn, path, SCHEMA_VERSION)
        yield conn


@contextlib.contextmanager
def reader(path: Path) -> Iterator[sqlite3.Connection]:
    """A connection inside one read transaction (a consistent snapshot); upgrades an old schema
    first, which needs write access once."""
    with _connect(path, create=False) as conn:
        if _schema_version(conn, path) != SCHEMA_VERSION:
            with transaction(conn):
                _upgrade(conn, path, SCHEMA_VERSION)
        with transaction(conn, "DEFERRED"):
            yield conn
