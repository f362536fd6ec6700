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

import datetime as dt
import hashlib
import json
import math
import sqlite3
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any, Literal

import numpy as np

from reportgen import __version__
from reportgen.archive.queries import (
    code_members,
    load_aliases,
    recorded_codes,
    resolve_code,
    rounds_of,
    unknown_code,
)
from reportgen.archive.schema import reader, writer
from reportgen.errors import InputError, OutputError
from reportgen.metrics.robust import MIN_GROUP, algorithm_a
from reportgen.results import reasons
from reportgen.results.model import (
    Amendment,
    IssuedDocument,
    ParticipantResult,
    RoundResults,
)
from reportgen.results.records import participant_json, round_json

RecordOutcome = Literal["added", "unchanged", "replaced"]


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
    if values.size < MIN_GROUP:
        return None, None, reasons.FEW_IN_GROUP
    est = algorithm_a(values)
    if not float(est.sd) > 0:
        return float(est.mean), None, reasons.ROBUST_SD_ZERO
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
    with reader(path) as conn:
        outcome, _ = _decide(conn, path, round_id, results.round.participants, inputs_sha256,
                             config_sha256, replace)
    return outcome


def record_round(path: Path, results: RoundResults, *, inputs_sha256: str, config_sha256: str,
                 replace: bool = False, documents: Sequence[IssuedDocument] = (),
                 amendment: Amendment | None = None) -> RecordOutcome:
    """Store a scored round and every participant's full record in the archive at ``path``.

    Same round id with the same ``inputs_sha256`` and ``config_sha256`` as its current version:
    ``"unchanged"``, nothing is written. Different hashes: :class:`InputError` unless ``replace``,
    which adds a new version (``"replaced"``) and keeps the earlier ones. A new round: ``"added"``.
    The archive is created (and its schema upgraded) as needed, all in one transaction.
    ``documents`` are the certificates and appendix issued for this version (none for `record`);
    an unchanged round that has none recorded yet gets them.
    """
    path = Path(path)
    round_row = _round_row(results, inputs_sha256, config_sha256)  # compute before the lock
    rows = [_participant_row(results, p) for p in results.participants]
    round_id = round_row["round_id"]
    with writer(path) as conn:
        outcome, version = _decide(conn, path, round_id, [r["code"] for r in rows],
                                   inputs_sha256, config_sha256, replace)
        if outcome == "unchanged":
            _insert_documents(conn, path, round_id, version, documents, only_if_none=True)
            return outcome
        _insert(conn, "round_versions", {**round_row, "version": version})
        for row in rows:
            _insert(conn, "participant_results", {**row, "round_id": round_id,
                                                  "version": version})
        _insert_documents(conn, path, round_id, version, documents)
        detail: dict[str, Any] = {"inputs_sha256": inputs_sha256,
                                  "config_sha256": config_sha256, "participants": len(rows),
                                  "software": round_row["software"]}
        if amendment is not None:
            detail.update(reason=amendment.reason, amended_on=amendment.amended_on.isoformat())
        _log(conn, "record" if outcome == "added" else "replace", detail, round_id, version)
    return outcome


def _insert_documents(conn: sqlite3.Connection, path: Path, round_id: str, version: int,
                      documents: Sequence[IssuedDocument], only_if_none: bool = False) -> None:
    """Record the issued documents of a version. A report id stands for one content forever:
    the same id with another fingerprint is refused (it would mean two different reports under
    one id)."""
    if not documents:
        return
    if only_if_none and conn.execute(
            "SELECT 1 FROM documents WHERE round_id = ? AND version = ? LIMIT 1",
            (round_id, version)).fetchone() is not None:
        return
    for doc in documents:
        clash = conn.execute("SELECT content_sha256 FROM documents WHERE report_id = ? AND "
                             "content_sha256 != ? LIMIT 1",
                             (doc.report_id, doc.content_sha256)).fetchone()
        if clash is not None:
            raise OutputError(f"archive {path}: report id {doc.report_id} was already issued "
                              "with other content; an amended report needs a new id")
        _insert(conn, "documents", {
            "round_id": round_id, "version": version, "code": doc.code,
            "report_id": doc.report_id, "content_sha256": doc.content_sha256,
            "issued": doc.issued.isoformat(), "replaces": doc.replaces,
            "replaced_issued": (doc.replaced_issued.isoformat()
                                if doc.replaced_issued is not None else None),
            "reason": doc.reason})


def _check_aliases(conn: sqlite3.Connection, path: Path, round_id: str,
                   codes: Sequence[str]) -> None:
    """Refuse a round in which two codes stand for one examiner after a recorded rename."""
    aliases = load_aliases(conn)
    seen: dict[str, str] = {}
    for code in codes:
        canonical = resolve_code(aliases, code)
        if canonical in seen:
            raise InputError.single(
                str(path), f"round {round_id} has both {seen[canonical]!r} and {code!r}, which a "
                f"recorded rename makes the same examiner ({canonical!r})", value=code)
        seen[canonical] = code


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
    with writer(path) as conn:
        aliases = load_aliases(conn)
        if old in aliases:
            if aliases[old] == new:
                return "unchanged"
            raise InputError.single(str(path), f"code {old!r} was already renamed to "
                                    f"{aliases[old]!r}", value=old)
        recorded = recorded_codes(conn)
        if old not in recorded and old not in set(aliases.values()):
            raise unknown_code(path, old, recorded | set(aliases))
        if resolve_code(aliases, new) == old:
            raise InputError.single(str(path), f"renaming {old!r} to {new!r} would make a loop "
                                    "of renames", value=new)
        both = (rounds_of(conn, code_members(conn, aliases, old))
                & rounds_of(conn, code_members(conn, aliases, resolve_code(aliases, new))))
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
