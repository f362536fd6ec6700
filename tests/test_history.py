"""The archive (reportgen.archive): round trip, idempotence, versions, concurrency, schema
migration, renames and the queries the certificate and the trend report use.

The archive of the three sample rounds is built once (scored with bootstrap=0 for speed); tests
that write copy it first.
"""

from __future__ import annotations

import datetime as dt
import functools
import hashlib
import json
import multiprocessing
import shutil
import sqlite3
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from reportgen import archive as history
from reportgen.errors import InputError
from reportgen.metrics.insight import type2_auroc
from reportgen.metrics.metad import fit_meta_d
from reportgen.metrics.sdt import sdt_loglinear
from reportgen.pipeline import score_folder
from reportgen.render.results_json import participant_json
from reportgen.resources import sample_rounds_dir
from reportgen.results.model import PreviousRound, RoundResults
from reportgen.settings import ReportSettings, Settings
from tests.conftest import PARTICIPANTS, ROUND_TOML, responses_csv

MakeRound = Callable[..., Path]
FAST = Settings(report=ReportSettings(bootstrap=0))
SAMPLE_ROUNDS = ("fic-2024", "fic-2025", "fic-2026")


@functools.lru_cache(maxsize=1)
def sample_results() -> tuple[RoundResults, ...]:
    """The three sample rounds, scored once per test session."""
    return tuple(score_folder(sample_rounds_dir() / name, FAST) for name in SAMPLE_ROUNDS)


def record_all(path: Path, results: tuple[RoundResults, ...]) -> list[str]:
    return [history.record_round(path, r, inputs_sha256=history.inputs_digest(r),
                                 config_sha256="settings-1") for r in results]


@pytest.fixture(scope="module")
def sample_archive(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("archive") / "archive.sqlite"
    assert record_all(path, sample_results()) == ["added"] * 3
    return path


@pytest.fixture
def archive_copy(sample_archive: Path, tmp_path: Path) -> Path:
    copy = tmp_path / "copy.sqlite"
    shutil.copyfile(sample_archive, copy)
    return copy


def sha256_file(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def tiny_round(make_round: MakeRound, folder: str, round_id: str = "T-1", *,
               replace: tuple[str, str] | None = None) -> Path:
    """The tiny round of tests/conftest.py under ``round_id``, with one text replaced in the
    responses and participants files."""
    responses, people = responses_csv(), PARTICIPANTS
    if replace is not None:
        responses, people = (text.replace(*replace) for text in (responses, people))
    return make_round(folder, round__toml=ROUND_TOML.replace('id = "T-1"', f'id = "{round_id}"'),
                      responses__csv=responses, participants__csv=people)


# ---------------------------------------------------------------------------------------------
# Round trip


def test_round_trip_records_equal_results_json(sample_archive: Path) -> None:
    newest = sample_results()[-1]
    for p in newest.participants[:25]:
        archived = [a for a in history.participant_history(sample_archive, p.code)
                    if a.round_id == "FIC-2026"]
        assert len(archived) == 1
        a = archived[0]
        # Stored through JSON: equal to the results.json object of this participant.
        assert a.record == json.loads(json.dumps(participant_json(newest, p)))
        assert a.rating_noise == p.rating_noise and a.rating_signal == p.rating_signal
        assert dict(a.counts) == dict(p.counts)
        assert a.metric("accuracy").value == pytest.approx(p.metrics["accuracy"].value,
                                                           rel=1e-11)


def test_metrics_recomputed_from_stored_tables_equal_stored_ones(sample_archive: Path) -> None:
    """meta-d′ refitted on the archived rating table (Maniscalco & Lau 2012, as scoring does it),
    d′ from the archived counts (Hautus 1995 log-linear rule) and the type-2 ROC area from the
    table (Fleming & Lau 2014) equal the archived values (stored at 12 significant digits)."""
    checked = 0
    for code in history.codes(sample_archive)[:40]:
        for a in history.participant_history(sample_archive, code):
            fit = fit_meta_d(a.rating_noise, a.rating_signal)
            stored = a.metric("meta_d").value
            if stored is None:
                assert fit.meta_d is None
            else:
                assert fit.meta_d == pytest.approx(stored, rel=1e-9, abs=1e-9)
                checked += 1
            c = a.counts
            sdt = sdt_loglinear(c["correct_same"], c["correct_same"] + c["false_negatives"],
                                c["false_positives"], c["correct_different"] + c["false_positives"])
            assert float(sdt.d_prime) == pytest.approx(a.metric("d_prime").value, rel=1e-10)
            k = len(a.rating_noise) // 2
            noise, signal = np.array(a.rating_noise), np.array(a.rating_signal)
            right = noise[:k][::-1] + signal[k:]
            wrong = signal[:k][::-1] + noise[k:]
            area = float(type2_auroc(right, wrong))
            stored_area = a.metric("type2_auroc").value
            assert (stored_area is None) == (not np.isfinite(area))
            if stored_area is not None:
                assert area == pytest.approx(stored_area, rel=1e-10)
    assert checked > 50


def test_round_block_and_group_robust_values_are_stored(sample_archive: Path) -> None:
    by_id = {r.round.config.round.id: r for r in sample_results()}
    for a in history.participant_history(sample_archive, "0012"):
        results = by_id[a.round_id]
        x_star, s_star = results.group.robust["accuracy"]  # the rounds' z criterion, C3
        assert a.accuracy_x_star == pytest.approx(x_star, rel=1e-12)
        assert a.accuracy_s_star == pytest.approx(s_star, rel=1e-12)
        assert a.issued == results.round.config.round.issued
        assert a.key_sha256 == next(s.sha256 for s in results.round.sources
                                    if s.name == "items.csv")
        assert a.levels == (1.0, 2.0, 3.0, 4.0, 5.0)
        assert a.n_participants == results.round.n_participants


# ---------------------------------------------------------------------------------------------
# Idempotence and versions


def test_same_inputs_again_change_nothing(archive_copy: Path) -> None:
    before = sha256_file(archive_copy)
    assert record_all(archive_copy, sample_results()) == ["unchanged"] * 3
    assert sha256_file(archive_copy) == before


def test_different_inputs_are_refused_then_replace_keeps_history(
        make_round: MakeRound, tmp_path: Path) -> None:
    path = tmp_path / "a.sqlite"
    first = score_folder(tiny_round(make_round, "v1"), FAST)
    second = score_folder(tiny_round(make_round, "v2",
                                     replace=("0042,I6,different,2", "0042,I6,same,2")), FAST)
    h1, h2 = history.inputs_digest(first), history.inputs_digest(second)
    assert h1 != h2
    assert history.check_record(path, first, inputs_sha256=h1, config_sha256="c") == "added"
    assert not path.exists()  # checking writes nothing
    assert history.record_round(path, first, inputs_sha256=h1, config_sha256="c") == "added"
    assert history.check_record(path, first, inputs_sha256=h1, config_sha256="c") == "unchanged"
    with pytest.raises(InputError):  # the check refuses as the write would, before any output
        history.check_record(path, second, inputs_sha256=h2, config_sha256="c")
    assert history.check_record(path, second, inputs_sha256=h2, config_sha256="c",
                                replace=True) == "replaced"

    with pytest.raises(InputError, match="problem") as err:
        history.record_round(path, second, inputs_sha256=h2, config_sha256="c")
    assert "--replace" in err.value.problems[0].message
    assert [v.version for v in history.round_versions(path)] == [1]

    assert history.record_round(path, second, inputs_sha256=h2, config_sha256="c",
                                replace=True) == "replaced"
    assert history.record_round(path, second, inputs_sha256=h2, config_sha256="c",
                                replace=True) == "unchanged"
    versions = history.round_versions(path, "T-1")
    assert [(v.version, v.inputs_sha256, v.current) for v in versions] == [
        (1, h1, False), (2, h2, True)]
    # The current version is the one queries see; the earlier one is still stored.
    (now,) = history.participant_history(path, "0042")
    assert now.version == 2 and now.counts["false_positives"] == 1
    with sqlite3.connect(path) as conn:
        kept = conn.execute("SELECT record FROM participant_results WHERE round_id = 'T-1' "
                            "AND version = 1 AND code = '0042'").fetchone()
        assert json.loads(kept[0])["false_positives"] == 0
        kinds = [r[0] for r in conn.execute("SELECT kind FROM operations ORDER BY seq")]
        assert kinds == ["record", "replace"]


def test_a_changed_setting_also_counts_as_different(archive_copy: Path) -> None:
    newest = sample_results()[-1]
    with pytest.raises(InputError):
        history.record_round(archive_copy, newest, inputs_sha256=history.inputs_digest(newest),
                             config_sha256="settings-2")


@pytest.mark.parametrize("statement", [
    "UPDATE participant_results SET record = '{}'",
    "DELETE FROM round_versions",
    "DELETE FROM operations",
])
def test_the_archive_is_append_only(archive_copy: Path, statement: str) -> None:
    with sqlite3.connect(archive_copy) as conn, pytest.raises(sqlite3.IntegrityError,
                                                              match="append-only"):
        conn.execute(statement)


# ---------------------------------------------------------------------------------------------
# Two writers at once


def _writer(archive: str, folders: list[str]) -> None:
    for folder in folders:
        results = score_folder(Path(folder), FAST)
        history.record_round(Path(archive), results,
                             inputs_sha256=history.inputs_digest(results), config_sha256="c")


def test_two_processes_writing_at_once_both_land(make_round: MakeRound,
                                                 tmp_path: Path) -> None:
    archive = tmp_path / "shared.sqlite"
    groups = [[str(tiny_round(make_round, f"{w}{i}", f"T-{w}{i}")) for i in range(4)]
              for w in "AB"]
    ctx = multiprocessing.get_context("spawn")
    workers = [ctx.Process(target=_writer, args=(str(archive), g)) for g in groups]
    for w in workers:
        w.start()
    for w in workers:
        w.join(timeout=120)
        assert w.exitcode == 0
    ids = sorted({v.round_id for v in history.round_versions(archive)})
    assert ids == sorted(f"T-{w}{i}" for w in "AB" for i in range(4))
    assert len(history.participant_history(archive, "0042")) == 8
    with sqlite3.connect(archive) as conn:
        assert conn.execute("PRAGMA integrity_check").fetchone() == ("ok",)


def _scored_then_record(archive: str, folder: str, ready: Any) -> None:
    results = score_folder(Path(folder), FAST)
    ready.set()
    history.record_round(Path(archive), results, inputs_sha256="w", config_sha256="c")


def test_a_writer_waits_for_another_transaction_instead_of_failing(
        make_round: MakeRound, tmp_path: Path) -> None:
    archive = tmp_path / "busy.sqlite"
    history.migrate(archive)
    folder = str(tiny_round(make_round, "w", "T-W"))
    blocker = sqlite3.connect(archive, isolation_level=None)
    blocker.execute("BEGIN IMMEDIATE")  # another process's write transaction, held open
    ctx = multiprocessing.get_context("spawn")
    ready = ctx.Event()
    writer = ctx.Process(target=_scored_then_record, args=(str(archive), folder, ready))
    writer.start()
    assert ready.wait(timeout=60)
    writer.join(timeout=1.5)
    assert writer.is_alive()  # still waiting for the lock, not failed
    blocker.execute("COMMIT")
    blocker.close()
    writer.join(timeout=60)
    assert writer.exitcode == 0
    assert [v.round_id for v in history.round_versions(archive)] == ["T-W"]


# ---------------------------------------------------------------------------------------------
# Schema versions and migration


def test_a_new_or_empty_file_gets_the_current_schema(tmp_path: Path) -> None:
    empty = tmp_path / "empty.sqlite"
    empty.touch()  # v0: no tables at all
    assert history.migrate(empty) == history.SCHEMA_VERSION
    with sqlite3.connect(empty) as conn:
        meta = dict(conn.execute("SELECT key, value FROM meta").fetchall())
    assert meta == {"application": history.APPLICATION,
                    "schema_version": str(history.SCHEMA_VERSION)}


def test_a_version_1_archive_is_migrated_and_keeps_its_data(sample_archive: Path,
                                                            tmp_path: Path) -> None:
    old = tmp_path / "v1.sqlite"
    assert history.migrate(old, target=1) == 1
    with sqlite3.connect(old) as conn:
        tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master")}
        assert "code_aliases" not in tables
        conn.execute("ATTACH DATABASE ? AS src", (str(sample_archive),))
        for table in ("round_versions", "participant_results", "operations"):
            conn.execute(f"INSERT INTO {table} SELECT * FROM src.{table}")
    expected = history.participant_history(sample_archive, "E0107")

    assert history.participant_history(old, "E0107") == expected  # migrates on the way
    with sqlite3.connect(old) as conn:
        version = conn.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
        assert version == (str(history.SCHEMA_VERSION),)
    assert history.rename_code(old, "E0107", "E9107", note="test",
                               effective=dt.date(2027, 1, 1)) == "added"


def test_a_newer_schema_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "future.sqlite"
    history.migrate(path)
    with sqlite3.connect(path) as conn:
        conn.execute("UPDATE meta SET value = '99' WHERE key = 'schema_version'")
    with pytest.raises(InputError) as err:
        history.codes(path)
    assert "newer" in err.value.problems[0].message


def test_other_files_are_not_taken_for_an_archive(tmp_path: Path) -> None:
    foreign = tmp_path / "other.sqlite"
    with sqlite3.connect(foreign) as conn:
        conn.execute("CREATE TABLE things (x)")
    text = tmp_path / "notes.sqlite"
    text.write_text("this is not a database at all, just some text " * 50)
    for path in (foreign, text):
        with pytest.raises(InputError, match="problem") as err:
            history.codes(path)
        assert "archive" in err.value.problems[0].message
    with pytest.raises(InputError) as missing:
        history.codes(tmp_path / "nowhere.sqlite")
    assert missing.value.problems[0].message == "archive not found"


# ---------------------------------------------------------------------------------------------
# Queries


def test_history_is_sorted_by_issue_date_and_late_joiners_are_fine(sample_archive: Path) -> None:
    full = history.participant_history(sample_archive, "0012")
    assert [a.round_id for a in full] == ["FIC-2024", "FIC-2025", "FIC-2026"]
    assert [a.issued for a in full] == sorted(a.issued for a in full)
    joined_2025 = history.participant_history(sample_archive, "E0404")
    assert [a.round_id for a in joined_2025] == ["FIC-2025", "FIC-2026"]
    skipped = history.participant_history(sample_archive, "E0162")
    assert [a.round_id for a in skipped] == ["FIC-2024", "FIC-2026"]
    once = history.participant_history(sample_archive, "E0472")
    assert [a.round_id for a in once] == ["FIC-2026"]


def test_codes_are_every_participant_of_every_round(sample_archive: Path) -> None:
    everyone = set().union(*(r.round.participants for r in sample_results()))
    assert history.codes(sample_archive) == sorted(everyone)
    assert "0028" in everyone  # numeric codes with leading zeros stay text


def test_unknown_code_names_similar_ones(sample_archive: Path) -> None:
    with pytest.raises(InputError) as err:
        history.participant_history(sample_archive, "E01O7")
    message = err.value.problems[0].message
    assert "'E01O7' is not in the archive" in message
    assert "E0107" in message


def test_previous_rounds_for_the_certificate(sample_archive: Path) -> None:
    issued_2026 = sample_results()[-1].round.config.round.issued
    previous = history.previous_rounds(sample_archive, "0012", issued_2026)
    assert [p.round_id for p in previous] == ["FIC-2024", "FIC-2025"]
    assert all(isinstance(p, PreviousRound) for p in previous)
    archived = history.participant_history(sample_archive, "0012")[0]
    assert previous[0].accuracy == archived.metric("accuracy")
    assert previous[0].type2_auroc == archived.metric("type2_auroc")
    assert previous[0].overall == archived.record["overall"]
    assert history.previous_rounds(sample_archive, "E0472", issued_2026) == []
    assert history.previous_rounds(sample_archive, "NOBODY", issued_2026) == []
    assert history.previous_rounds(sample_archive.with_name("none.sqlite"), "0012",
                                   issued_2026) == []
    both = history.previous_rounds_for(sample_archive, ["0012", "E0404"], issued_2026)
    assert [p.round_id for p in both["E0404"]] == ["FIC-2025"]


# ---------------------------------------------------------------------------------------------
# Renames and merges


def test_rename_is_recorded_and_followed(archive_copy: Path) -> None:
    before = history.participant_history(archive_copy, "0012")
    day = dt.date(2026, 6, 1)
    assert history.rename_code(archive_copy, "0012", "E0012", note="new numbering scheme",
                               effective=day) == "added"
    assert history.rename_code(archive_copy, "0012", "E0012", note="again",
                               effective=day) == "unchanged"
    after_new = history.participant_history(archive_copy, "E0012")
    after_old = history.participant_history(archive_copy, "0012")
    assert after_new == after_old == before
    assert "E0012" in history.codes(archive_copy)
    assert "0012" not in history.codes(archive_copy)
    assert history.current_code(archive_copy, "0012") == "E0012"
    assert history.renames(archive_copy, "E0012") == [
        history.Rename("0012", "E0012", day, "new numbering scheme")]
    with sqlite3.connect(archive_copy) as conn:
        op = conn.execute("SELECT kind, detail FROM operations ORDER BY seq DESC").fetchone()
    assert op[0] == "rename" and json.loads(op[1])["note"] == "new numbering scheme"


def test_merging_codes_of_disjoint_rounds(archive_copy: Path) -> None:
    """E0077 took only FIC-2024, E0472 only FIC-2026: one examiner registered twice."""
    history.rename_code(archive_copy, "E0077", "E0472", note="duplicate registration",
                        effective=dt.date(2026, 1, 1))
    merged = history.participant_history(archive_copy, "E0472")
    assert [(a.round_id, a.code) for a in merged] == [("FIC-2024", "E0077"),
                                                      ("FIC-2026", "E0472")]


def test_renames_that_cannot_be_right_are_refused(archive_copy: Path) -> None:
    day = dt.date(2026, 6, 1)
    cases = [
        ("0012", "0028", "both took part"),  # same rounds: two different examiners
        ("0012", "0012", "two different codes"),
        ("ZZZZ", "E9999", "not in the archive"),
    ]
    for old, new, expected in cases:
        with pytest.raises(InputError) as err:
            history.rename_code(archive_copy, old, new, note="x", effective=day)
        assert expected in err.value.problems[0].message
    with pytest.raises(InputError, match="problem"):
        history.rename_code(archive_copy, "0012", "E0012", note=" ", effective=day)
    history.rename_code(archive_copy, "0012", "E0012", note="x", effective=day)
    with pytest.raises(InputError) as loop:
        history.rename_code(archive_copy, "E0012", "0012", note="x", effective=day)
    assert "loop" in loop.value.problems[0].message
    with pytest.raises(InputError) as twice:
        history.rename_code(archive_copy, "0012", "E1012", note="x", effective=day)
    assert "already renamed" in twice.value.problems[0].message


def test_a_round_with_both_codes_of_one_examiner_is_refused(make_round: MakeRound,
                                                            tmp_path: Path) -> None:
    path = tmp_path / "a.sqlite"
    first = score_folder(tiny_round(make_round, "r1", "T-1"), FAST)
    history.record_round(path, first, inputs_sha256="1", config_sha256="c")
    history.rename_code(path, "A7", "Z7", note="x", effective=dt.date(2026, 3, 1))
    later = score_folder(tiny_round(make_round, "r2", "T-2", replace=("0042,", "Z7,")), FAST)
    with pytest.raises(InputError) as err:  # A7 and Z7 both in T-2: the same examiner twice
        history.record_round(path, later, inputs_sha256="2", config_sha256="c")
    assert "recorded rename" in err.value.problems[0].message
