"""The archive's SQLite header names the application and the schema version (issue 13)."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest

from reportgen.archive import schema
from reportgen.errors import InputError


def _header(path: Path) -> tuple[int, int]:
    with sqlite3.connect(path) as conn:
        app = conn.execute("PRAGMA application_id").fetchone()[0]
        version = conn.execute("PRAGMA user_version").fetchone()[0]
    return app, version


def test_a_new_archive_carries_the_application_id_and_schema_version(tmp_path: Path) -> None:
    path = tmp_path / "archive.sqlite"
    assert schema.migrate(path) == schema.SCHEMA_VERSION
    assert _header(path) == (schema.APPLICATION_ID, schema.SCHEMA_VERSION)
    assert schema.APPLICATION_ID.to_bytes(4, "big") == b"RGPT"


def test_user_version_follows_each_migration(tmp_path: Path) -> None:
    path = tmp_path / "archive.sqlite"
    schema.migrate(path, target=1)
    assert _header(path) == (schema.APPLICATION_ID, 1)
    schema.migrate(path)
    assert _header(path) == (schema.APPLICATION_ID, schema.SCHEMA_VERSION)


def test_an_archive_made_before_the_header_gets_it_on_its_next_write(tmp_path: Path) -> None:
    path = tmp_path / "archive.sqlite"
    schema.migrate(path)
    with sqlite3.connect(path) as conn:
        conn.execute("PRAGMA application_id = 0")
        conn.execute("PRAGMA user_version = 0")
    with schema.writer(path):
        pass
    assert _header(path) == (schema.APPLICATION_ID, schema.SCHEMA_VERSION)


def test_another_applications_database_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "archive.sqlite"
    schema.migrate(path)
    with sqlite3.connect(path) as conn:
        conn.execute("PRAGMA application_id = 1234")
    with pytest.raises(InputError) as caught, schema.reader(path):
        pass
    assert "not a reportgen archive" in str(caught.value.problems[0])
