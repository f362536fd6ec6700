"""Submissions as they really arrive (issue 11): percent cells, duplicate submissions, one
mapping per file, blank self-estimates. Every refusal is checked word for word."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from reportgen.cli import main
from reportgen.pipeline import load
from tests.conftest import ITEMS, PARTICIPANTS, ROUND_TOML, responses_csv

MakeRound = Callable[..., Path]

ESTIMATES = "participant,estimate\n0042,80\nA7,70 %\nB3,65%\nC9,\n"


def _errors(folder: Path, capsys: pytest.CaptureFixture[str]) -> list[str]:
    assert main(["check", str(folder)]) == 2
    return [line.strip() for line in capsys.readouterr().err.splitlines()
            if line.strip().startswith("error:")]


def _xlsx(path: Path, sheets: dict[str, list[list[Any]]],
          formats: dict[str, str] | None = None) -> None:
    book = openpyxl.Workbook()
    book.remove(book.active)
    for name, rows in sheets.items():
        sheet = book.create_sheet(name)
        for row in rows:
            sheet.append(row)
        for ref, code in (formats or {}).items():
            sheet[ref].number_format = code
    book.save(path)


def _toml(extra: str) -> str:
    return ROUND_TOML.replace("[confidence]", extra + "\n\n[confidence]")


# --------------------------------------------------------------------------- percent cells


def test_percent_formatted_estimates_are_percentages(make_round: MakeRound) -> None:
    folder = make_round()
    _xlsx(folder / "estimates.xlsx",
          {"Estimates": [["participant", "estimate"], ["0042", 0.8], ["A7", 0.755], ["B3", 55],
                         ["C9", 0.07]]},
          {"B2": "0%", "B3": "0.0%", "B5": "0 %"})
    assert load(folder).estimates == {"0042": 0.8, "A7": 0.755, "B3": 0.55, "C9": 0.07}


def test_percent_signs_and_blank_estimates(make_round: MakeRound) -> None:
    rnd = load(make_round(estimates__csv=ESTIMATES))
    assert rnd.estimates == {"0042": 0.8, "A7": 0.7, "B3": 0.65}  # C9 blank: missing


def test_blank_estimate_refused_when_required(make_round: MakeRound,
                                              capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(estimates__csv=ESTIMATES,
                        round__toml=_toml("[scoring]\nestimates_required = true"))
    assert _errors(folder, capsys) == [
        "error: estimates.csv, row 5, column 'estimate': estimate is not a percentage (value "
        "''); allowed: numbers 0 to 100 (percent of items right)",
        "error: estimates.csv, column 'participant': participant has no self-estimate (value "
        "'C9'); allowed: an estimate for every participant ([scoring] estimates_required = "
        "true)",
    ]


def test_fractions_without_percent_format_are_refused(make_round: MakeRound,
                                                      capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(estimates__csv="participant,estimate\n0042,0.8\nA7,0.75\n")
    assert _errors(folder, capsys) == [
        "error: estimates.csv, row 2, column 'estimate': every estimate is a number between 0 "
        "and 1, but estimates are percentages (up to 100): reportgen will not guess whether 0.8 "
        "means 0.8 % or 80 %; write 80 or 80 %, or format the cells as Percentage in the "
        "spreadsheet (value '0.8'); allowed: numbers 0 to 100 (percent of items right)",
    ]


_PROBABILITY = ROUND_TOML.replace('kind = "ordinal"\nmin = 1\nmax = 5\nprobability_map = "linear"',
                                  'kind = "probability"\nmin = 50\nmax = 100')


def _probability_rows() -> list[list[Any]]:
    rows: list[list[Any]] = [["participant", "item", "decision", "confidence"]]
    for line in responses_csv().splitlines()[1:]:
        code, item, decision, level = line.split(",")
        rows.append([code, item, decision, (int(level) * 10 + 50) / 100])
    return rows


def test_probability_confidence_as_fractions_is_refused(
        make_round: MakeRound, capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(round__toml=_PROBABILITY, responses__csv=None)
    _xlsx(folder / "responses.xlsx", {"Responses": _probability_rows()})
    assert _errors(folder, capsys) == [
        "error: responses.xlsx, sheet 'Responses', row 2, column 'confidence': every confidence "
        "is a number between 0 and 1, but confidences are percentages (up to 100): reportgen "
        "will not guess whether 0.8 means 0.8 % or 80 %; write 80 or 80 %, or format the cells "
        "as Percentage in the spreadsheet (value '1'); allowed: numbers 50 to 100 (percent)",
    ]


def test_probability_confidence_in_percent_cells_is_read(make_round: MakeRound) -> None:
    folder = make_round(round__toml=_PROBABILITY, responses__csv=None)
    rows = _probability_rows()
    _xlsx(folder / "responses.xlsx", {"Responses": rows},
          {f"D{n}": "0%" for n in range(2, len(rows) + 1)})
    rnd = load(folder)
    assert rnd.confidence[0].tolist() == [100.0, 90.0, 80.0, 100.0, 90.0, 70.0]


# --------------------------------------------------------------------------- duplicates

_SECOND = "".join(f"B3,I{n},same,{n % 5 + 1}\n" for n in range(1, 7))


def test_duplicate_submission_is_one_error(make_round: MakeRound,
                                           capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(responses__csv=responses_csv() + _SECOND)
    assert _errors(folder, capsys) == [
        "error: responses.csv, row 26, column 'participant': participant 'B3' answered 6 "
        "item(s) more than once: rows 26-31 repeat the answers of rows 14-19; delete the rows "
        "that should not count, or set [files] duplicates = \"latest\" in round.toml to keep "
        "each participant's latest submission (by its 'submitted' column) (value 'B3')",
    ]


def _stamped(second: str, first_stamp: str = "2026-01-10 09:00") -> str:
    lines = responses_csv().splitlines()
    out = [lines[0] + ",submitted"] + [f"{line},{first_stamp}" for line in lines[1:]]
    return "\n".join(out) + "\n" + "".join(f"{r},{second}\n" for r in _SECOND.splitlines())


def test_latest_submission_is_kept(make_round: MakeRound) -> None:
    folder = make_round(round__toml=_toml('[files]\nduplicates = "latest"'),
                        responses__csv=_stamped("2026-01-12T17:30"))
    rnd = load(folder)
    assert rnd.raw_decision[2].tolist() == ["same"] * 6
    assert [w.message for w in rnd.warnings] == [
        "participant 'B3' sent more than one submission: kept the latest (2026-01-12 17:30:00, "
        "rows 26-31) and dropped rows 14-19"]
    assert rnd.warnings[0].row == 14


def test_unreadable_submission_time_is_refused(make_round: MakeRound,
                                               capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(round__toml=_toml('[files]\nduplicates = "latest"'),
                        responses__csv=_stamped("12/01/2026 17:30"))
    assert _errors(folder, capsys) == [
        "error: responses.csv, row 26, column 'submitted': submission time is not a date and "
        "time (rows 26-31) (value '12/01/2026 17:30'); allowed: a date and time written year "
        "first, such as 2026-03-04 14:30, or a date cell"]


# --------------------------------------------------------------------------- one mapping per file


def test_each_file_has_its_own_sheet_and_columns(make_round: MakeRound) -> None:
    toml = _toml('[files.items]\nname = "key.xlsx"\nsheet = "Key"\n\n'
                 '[files.participants.columns]\nparticipant = "Examiner ID"')
    folder = make_round(round__toml=toml, items__csv=None,
                        participants__csv=PARTICIPANTS.replace("participant,", "Examiner ID,"))
    key = [line.split(",") for line in ITEMS.splitlines()]
    _xlsx(folder / "key.xlsx", {"Key": key, "Notes": [["prepared by", "the coordinator"]]})
    rnd = load(folder)
    assert rnd.items == ("I1", "I2", "I3", "I4", "I5", "I6")
    assert rnd.identity("0042").name == "Ines Varga"


def test_wrong_header_is_one_error(make_round: MakeRound,
                                   capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(participants__csv=PARTICIPANTS.replace("participant,", "Examiner ID,"))
    assert _errors(folder, capsys) == [
        "error: participants.csv, row 1: required column 'participant' is missing, so none of "
        "the 4 participants who responded can be matched to a name (no other error of this "
        "file is listed); if it has another header, name that header in round.toml: "
        "[files.participants.columns] participant = \"…\"; allowed: columns present: Examiner "
        "ID, name, organisation",
    ]


def test_did_you_mean_names_the_file_to_correct(make_round: MakeRound,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(participants__csv=PARTICIPANTS.replace("0042,", "42,"))
    assert _errors(folder, capsys) == [
        "error: responses.csv, row 2, column 'participant': participant code is not in the "
        "participants file participants.csv; participants.csv has '42', probably this code "
        "with its leading zeros dropped by a spreadsheet program: correct participants.csv "
        "(format the column as Text and type the code again) (value '0042')",
    ]
    folder = make_round(folder="other", estimates__csv="participant,estimate\n42,80\n")
    assert _errors(folder, capsys) == [
        "error: estimates.csv, row 2, column 'participant': estimate for a participant with no "
        "responses; did you mean '0042' (as in responses.csv)? A spreadsheet program may have "
        "dropped the leading zeros in estimates.csv: correct estimates.csv (format the column "
        "as Text and type the code again) (value '42')",
    ]


def test_per_file_columns_are_checked(make_round: MakeRound,
                                      capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(round__toml=_toml('[files.items.columns]\nparticipant = "who"'))
    assert _errors(folder, capsys) == [
        "error: round.toml, column 'files': files.items.columns: 'participant' is not a column "
        "of the items table (allowed: item, truth)",
    ]


# --------------------------------------------------------------------------- fuzzing the readers


def _read_xlsx(data: bytes) -> tuple[Any, list[str]]:
    import tempfile

    from reportgen.errors import ProblemLog
    from reportgen.rounds.tables import read_table

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "t.xlsx"
        path.write_bytes(data)
        log = ProblemLog()
        table = read_table(path, "t.xlsx", log)
    return table, [str(e) for e in log.errors]


_FORMATS = st.sampled_from(["General", "0%", "0.0%", "0.00 %", '0"%"', "0\\%", "[Red]0",
                            "0.0", '"pct" 0%', "#,##0"])


@settings(max_examples=40, deadline=None)
@given(cells=st.lists(st.tuples(st.floats(-1e6, 1e6, allow_nan=False), _FORMATS),
                      min_size=1, max_size=8))
def test_fuzzed_percent_cells_read_as_shown(cells: list[tuple[float, str]]) -> None:
    import io
    from decimal import Decimal

    from reportgen.rounds.xlsx_styles import is_percent_format

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["participant", "estimate"])
    for n, (value, code) in enumerate(cells, start=2):
        sheet.append([f"P{n}", value])
        sheet[f"B{n}"].number_format = code
    buffer = io.BytesIO()
    book.save(buffer)
    table, errors = _read_xlsx(buffer.getvalue())
    assert not errors
    for (value, code), text, kinds in zip(cells, table.column("estimate"), table.kinds,
                                          strict=True):
        if is_percent_format(code):
            assert kinds[1] == "p" and text.endswith("%")
            assert Decimal(text[:-1]) == Decimal(repr(value)) * 100 or float(text[:-1]) == (
                pytest.approx(value * 100))
        else:
            assert kinds[1] == "n" and not text.endswith("%")


@settings(max_examples=60, deadline=None)
@given(data=st.data())
def test_fuzzed_styles_part_never_breaks_the_reader(data: st.DataObject) -> None:
    import io
    import zipfile

    book = openpyxl.Workbook()
    book.active.append(["participant", "estimate"])
    book.active.append(["P1", 0.8])
    book.active["B2"].number_format = "0%"
    buffer = io.BytesIO()
    book.save(buffer)
    source = zipfile.ZipFile(io.BytesIO(buffer.getvalue()))
    styles = bytearray(source.read("xl/styles.xml"))
    for _ in range(data.draw(st.integers(1, 6))):
        at = data.draw(st.integers(0, len(styles) - 1))
        styles[at:at + 1] = data.draw(st.binary(min_size=0, max_size=3))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        for info in source.infolist():
            body = bytes(styles) if info.filename == "xl/styles.xml" else source.read(info)
            target.writestr(info.filename, body)
    table, _ = _read_xlsx(out.getvalue())
    if table is not None:
        assert table.column("estimate")[0] in ("80%", "0.8")


@given(text=st.text(max_size=12))
def test_fuzzed_percent_texts(text: str) -> None:
    from reportgen.rounds.percent import percent_value
    from reportgen.rounds.xlsx_styles import is_percent_format

    value, explicit = percent_value(text)
    assert explicit == text.strip().endswith("%")
    assert value is None or value == value  # finite or None, never NaN
    is_percent_format(text)
