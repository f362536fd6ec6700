"""Property-based fuzzing of everything a round folder can hold (issue 5).

Whatever round.toml, csv or xlsx a provider is sent, ``reportgen check`` ends with exit status 0
(a valid round) or 2 (located input errors): never 3, never a traceback. The byte-level fuzzing
of the table reader lives in tests/rounds/test_tables.py; here whole folders go through the CLI.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import tempfile
from collections.abc import Callable, Iterator
from contextlib import contextmanager, redirect_stderr, redirect_stdout
from pathlib import Path
from typing import Any

import openpyxl
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reportgen.cli import main
from reportgen.errors import ProblemLog
from reportgen.rounds.tables import read_table
from scripts.hostile import ROUND_TOML, base

EXAMPLE_TOML = (Path(__file__).parents[2] / "docs" / "example-round.toml").read_text("utf-8")


def _fuzz(examples: int) -> settings:
    return settings(max_examples=examples, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


@contextmanager
def _folder() -> Iterator[Path]:
    with tempfile.TemporaryDirectory(prefix="reportgen-fuzz-") as tmp:
        yield Path(tmp) / "round"


def _check(folder: Path) -> tuple[int, str]:
    """``reportgen check`` in-process: the exit status and everything it printed."""
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        status = main(["check", str(folder)])
    return status, out.getvalue() + err.getvalue()


def _assert_clean_outcome(folder: Path) -> int:
    status, printed = _check(folder)
    assert status in (0, 2), printed
    assert "internal error" not in printed and "Traceback" not in printed, printed
    return status


# --------------------------------------------------------------------------- round.toml

_TOML_VALUES = st.sampled_from([
    '""', '" "', '"same"', '"different"', '"inconclusive"', '"probability"', '"ordinal"',
    '"linear"', '"wide"', '"long"', '"{item}"', '"{item}_{x}"', '"{0}"', '"../x.csv"',
    '"items.xlsx"', '"\\u0000"', '"#12345g"', '"#5f6b73"', '"accuracy"', '"bound"', '"z"',
    "0", "1", "-1", "5", "100", "101", "0.5", "-0.0", "1e308", "inf", "-inf", "nan",
    "99999999999999999999999999", "true", "false", "2026-01-01", "2026-01-01T10:00:00",
    "10:00:00", "[]", '["same"]', '["same", "same"]', '["same", "different", "other"]',
    "[1, 2]", "[[1], [2]]", "{}", '{a = 1}', '{ same = "same" }',
])


@st.composite
def _mutated_toml(draw: st.DrawFn) -> str:
    """A known-good round.toml with a few lines changed, dropped, repeated or cut."""
    lines = draw(st.sampled_from([ROUND_TOML, EXAMPLE_TOML])).splitlines()
    for _ in range(draw(st.integers(1, 4))):
        if not lines:
            break
        i = draw(st.integers(0, len(lines) - 1))
        how = draw(st.sampled_from(["value", "value", "drop", "repeat", "swap", "chars", "cut"]))
        if how == "value" and "=" in lines[i]:
            lines[i] = lines[i].split("=", 1)[0] + "= " + draw(_TOML_VALUES)
        elif how == "drop":
            del lines[i]
        elif how == "repeat":
            lines.insert(i, lines[i])
        elif how == "swap":
            j = draw(st.integers(0, len(lines) - 1))
            lines[i], lines[j] = lines[j], lines[i]
        elif how == "chars":
            at = draw(st.integers(0, len(lines[i])))
            lines[i] = lines[i][:at] + draw(st.text(max_size=3)) + lines[i][at:]
        elif how == "cut":
            lines = lines[:i]
    return "\n".join(lines) + "\n"


@_fuzz(300)
@given(text=_mutated_toml())
def test_mutated_round_toml_is_valid_or_refused(text: str) -> None:
    with _folder() as folder:
        base(folder, round__toml=text.encode("utf-8", "surrogatepass"))
        _assert_clean_outcome(folder)


# Every table and key of round.toml (docs/round-format.md), with values that are plausible for
# the key (so generated rounds get past the types and into the cross-checks), and a table and a
# key that do not exist.
_NAMES = ['"participant"', '"item"', '"truth"', '"decision"', '"confidence"', '"name"']
_PLAUSIBLE: dict[str, dict[str, list[str]]] = {
    "round": {"id": ['"H-1"'], "scheme": ['"S"'], "title": ['"T"'],
              "opened": ["2026-01-05"], "closed": ["2026-01-20", "2026-01-01"],
              "issued": ["2026-02-01"], "status": ['"final"', '"preliminary"'],
              "coordinator": ['"C"'], "key_statement": ['"K"'], "description": ['"D"']},
    "provider": {"name": ['"P"'], "address": ['"A"'], "contact": ['"c@x"'],
                 "logo": ['"logo.png"', '"items.csv"'], "accent": ['"#5f6b73"'],
                 "authorised_by": ['{ name = "N", role = "R" }', '{ name = "N" }']},
    "classes": {"labels": ['["same", "different"]', '["different", "same"]', '["a", "b"]'],
                "positive": ['"same"', '"different"', '"a"']},
    "decisions": {"same": ['"same"'], "different": ['"different"'],
                  "inconclusive": ['"inconclusive"'], "maybe": ['"same"', '"inconclusive"']},
    "confidence": {"kind": ['"ordinal"', '"probability"'], "min": ["0", "1", "50"],
                   "max": ["5", "100", "20"], "probability_map": ['"none"', '"linear"'],
                   "map_low": ["0.5", "0", "1"]},
    "scoring": {"interval": ['"wilson"', '"clopper-pearson"'],
                "inconclusive_is_error": ["true", "false"], "allow_missing": ["true", "false"],
                "normalise_labels": ["true", "false"], "few_errors": ["0", "11"],
                "seed": ["0", "7"]},
    "files": {"items": ['"items.csv"', '"items.xlsx"'], "responses": ['"responses.csv"'],
              "participants": ['"participants.csv"', '"round.toml.csv"'],
              "estimates": ['"estimates.csv"'], "layout": ['"long"', '"wide"'],
              "sheet": ['"Sheet"']},
    "columns": dict.fromkeys(("participant", "item", "truth", "decision", "confidence", "name",
                              "organisation", "estimate", "when"), _NAMES),
    "wide": {"decision": ['"{item}_decision"', '"d {item}"'],
             "confidence": ['"{item}_confidence"', '"{item}_decision"']},
    "limits": {"max_rows": ["1", "10", "200000"], "max_cells": ["10", "5000000"],
               "max_file_mib": ["1", "256"], "max_unpacked_mib": ["1", "512"],
               "max_compression_ratio": ["2", "100"]},
    "criteria": {"id": ['"C1"', '"C2"'], "label": ['"L"'],
                 "metric": ['"accuracy"', '"d_prime"', '"meta_d"', '"false_positives"'],
                 "kind": ['"bound"', '"z"'], "at_least": ["0.5", "1"], "at_most": ["0.9", "0"],
                 "worse": ['"low"', '"high"']},
    "colour": {"x": ['"y"']},
}


@st.composite
def _generated_toml(draw: st.DrawFn) -> str:
    """A round.toml built table by table and key by key: [round] and [provider] usually
    complete, other tables now and then; each value plausible for its key, or any value."""
    parts = []
    for table, keys in _PLAUSIBLE.items():
        complete = table in ("round", "provider", "criteria")
        chance = 19 if complete else 9 if table == "colour" else 2
        if (draw(st.integers(0, chance)) > 0) != complete:
            continue
        for _ in range(draw(st.integers(1, 3)) if table == "criteria" else 1):
            header = f"[[{table}]]" if table == "criteria" else f"[{table}]"
            chosen = (list(keys) if complete and draw(st.integers(0, 9)) > 0 else
                      draw(st.lists(st.sampled_from(list(keys)), unique=True)))
            body = []
            for key in chosen:
                plausible = draw(st.integers(0, 29)) > 0
                value = draw(st.sampled_from(keys[key]) if plausible else _TOML_VALUES)
                body.append(f"{json.dumps(key)} = {value}")
            parts.append("\n".join([header, *body]))
    return "\n\n".join(parts) + "\n"


@_fuzz(200)
@given(text=_generated_toml())
def test_generated_round_toml_is_valid_or_refused(text: str) -> None:
    with _folder() as folder:
        base(folder, round__toml=text)
        _assert_clean_outcome(folder)


# --------------------------------------------------------------------------- csv tables

_CODES = ["0042", "42", "A7", "a7", " A7", "A7 ", "B3", "C9", "", "Jose\u0301", "José", "=1+1",
          "<b>x</b>", "../x", "2026-01-07"]
_ITEMS = ["0001", "0002", "0003", "3", "0004", "0005", "0006", "0007", "", "2026-03-01"]
_DECISIONS = ["same", "different", "inconclusive", "Same", "same ", "", "identical", "#N/A"]
_CONFIDENCES = ["1", "3", "5", "0", "6", "2,5", "2.0", "", "nan", "inf", "1e309", "-0", "high"]


@st.composite
def _responses_rows(draw: st.DrawFn) -> list[list[str]]:
    header = draw(st.sampled_from([["participant", "item", "decision", "confidence"],
                                   ["participant", "item", "decision"],
                                   ["participant", "item", "decision", "confidence", "x"]]))
    rows = [header]
    for _ in range(draw(st.integers(0, 30))):
        row = [draw(st.sampled_from(_CODES)), draw(st.sampled_from(_ITEMS)),
               draw(st.sampled_from(_DECISIONS)), draw(st.sampled_from(_CONFIDENCES))]
        rows.append(row[: draw(st.integers(2, 5))])
    return rows


def _csv_bytes(rows: list[list[str]], delimiter: str, encoding: str) -> bytes:
    buffer = io.StringIO()
    csv.writer(buffer, delimiter=delimiter, lineterminator="\r\n").writerows(rows)
    return buffer.getvalue().encode(encoding, errors="replace")


@_fuzz(200)
@given(rows=_responses_rows(), delimiter=st.sampled_from([",", ";", "\t"]),
       encoding=st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "utf-16-le", "cp1252",
                                 "latin-1"]),
       participants=st.booleans(), estimates=st.sampled_from(["", "42,80\n", "A7,x\n",
                                                              "B3,50\nB3,60\n"]))
def test_fuzzed_csv_tables_are_valid_or_refused(rows: list[list[str]], delimiter: str,
                                                encoding: str, participants: bool,
                                                estimates: str) -> None:
    with _folder() as folder:
        base(folder, responses__csv=_csv_bytes(rows, delimiter, encoding), participants__csv=None,
             estimates__csv=("participant,estimate\n" + estimates) if estimates else None)
        if participants:
            (folder / "participants.csv").write_bytes(_csv_bytes(
                [["participant", "name", "organisation"],
                 *[[c, f"Name {n}", "Org"] for n, c in enumerate(_CODES)]], delimiter, encoding))
        _assert_clean_outcome(folder)


# --------------------------------------------------------------------------- xlsx tables

_CELL = st.one_of(
    st.sampled_from(_CODES + _ITEMS + _DECISIONS + _CONFIDENCES),
    st.integers(-10, 10**20), st.floats(allow_nan=False, allow_infinity=False),
    st.booleans(), st.none(),
    st.dates(dt.date(1900, 3, 1), dt.date(2100, 1, 1)),
    st.datetimes(dt.datetime(1900, 3, 1), dt.datetime(2100, 1, 1)),
    st.times(),
    st.sampled_from(["=1/0", "=A1", "=SUM(D2:D9)", "#N/A", "#DIV/0!"]),
    st.text(st.characters(exclude_categories=["Cs", "Cc"]), max_size=8),
)


def _workbook_bytes(rows: list[list[Any]], edit: Callable[[Any], None] | None = None) -> bytes:
    wb = openpyxl.Workbook()
    ws = wb.active
    for row in rows:
        ws.append(row)
    if edit is not None:
        edit(ws)
    buffer = io.BytesIO()
    wb.save(buffer)
    return buffer.getvalue()


@st.composite
def _sheet_rows(draw: st.DrawFn) -> list[list[Any]]:
    header: list[Any] = ["participant", "item", "decision", "confidence"]
    if draw(st.booleans()):
        header[draw(st.integers(0, 3))] = draw(_CELL)
    rows = [[None] * draw(st.integers(0, 2)) + header]
    for _ in range(draw(st.integers(0, 12))):
        rows.append([draw(_CELL) for _ in range(draw(st.integers(0, 5)))])
    return rows


@_fuzz(100)
@given(rows=_sheet_rows(), merge=st.booleans(), hide=st.booleans())
def test_fuzzed_workbooks_are_valid_or_refused(rows: list[list[Any]], merge: bool,
                                               hide: bool) -> None:
    def edit(ws: Any) -> None:
        if merge:
            ws.merge_cells("B2:C3")
        if hide:  # the table on a hidden sheet, an empty visible cover sheet in front
            ws.sheet_state = "hidden"
            ws.parent.create_sheet("Cover", 0)

    data = _workbook_bytes(rows, edit)
    with _folder() as folder:
        base(folder, responses__csv=None, responses__xlsx=data)
        _assert_clean_outcome(folder)
        log = ProblemLog()
        table = read_table(folder / "responses.xlsx", "responses.xlsx", log)
        assert table is not None or log.errors
        if table is not None:
            assert all(len(row) == len(table.columns) for row in table.rows)
