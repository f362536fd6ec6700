"""Response forms (issue 11): generated, filled in programmatically, read back, and scored exactly
as the same answers given as a long csv; forms from another round or with a changed item list are
refused; the form reader is fuzzed like the other readers."""

from __future__ import annotations

import io
import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reportgen.cli import main
from reportgen.pipeline import score_folder
from reportgen.render.results_json import results_json
from tests.conftest import _ANSWERS, ROUND_TOML

MakeRound = Callable[..., Path]
RETURNED = '[files]\nresponses = "returned/*.xlsx"\n\n'
_ESTIMATES = {"0042": 90, "A7": 60, "B3": None, "C9": 75}


def _forms(folder: Path, tmp: Path) -> Path:
    out = tmp / "forms"
    assert main(["forms", str(folder), "-o", str(out)]) == 0
    return out


def _fill(form: Path, code: str, edit: Callable[[Any], None] | None = None) -> bytes:
    book = openpyxl.load_workbook(form)
    sheet = book["Responses"]
    for n, (decision, confidence) in enumerate(_ANSWERS[code]):
        sheet.cell(6 + n, 2, decision)
        sheet.cell(6 + n, 3, confidence)
    if _ESTIMATES[code] is not None:
        sheet["B3"] = _ESTIMATES[code]
    if edit is not None:
        edit(book)
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def _returned(make_round: MakeRound, tmp_path: Path, name: str = "forms",
              edit: Callable[[Any], None] | None = None) -> Path:
    blank = make_round(folder=f"{name}-blank")
    forms = _forms(blank, tmp_path / f"{name}-out")
    folder = make_round(folder=name, responses__csv=None,
                        round__toml=ROUND_TOML.replace("[confidence]", RETURNED + "[confidence]"))
    (folder / "returned").mkdir()
    for code in _ANSWERS:
        data = _fill(forms / f"{code}.xlsx", code, edit if code == "A7" else None)
        (folder / "returned" / f"{code}.xlsx").write_bytes(data)
    return folder


def _comparable(folder: Path) -> dict[str, Any]:
    record = json.loads(results_json(score_folder(folder)))
    record["round"].pop("inputs")
    record["round"].pop("warnings")
    return record  # type: ignore[no-any-return]


def test_forms_round_trip_scores_like_the_long_csv(make_round: MakeRound,
                                                   tmp_path: Path) -> None:
    returned = _returned(make_round, tmp_path)
    estimates = "participant,estimate\n" + "".join(
        f"{code},{value}\n" for code, value in _ESTIMATES.items() if value is not None)
    reference = make_round(folder="csv", estimates__csv=estimates)
    from_forms, from_csv = _comparable(returned), _comparable(reference)
    from_forms["round"].pop("files", None)
    from_csv["round"].pop("files", None)
    assert from_forms == from_csv


def test_forms_are_locked_validated_and_reproducible(make_round: MakeRound,
                                                     tmp_path: Path) -> None:
    folder = make_round()
    first, second = _forms(folder, tmp_path / "a"), _forms(folder, tmp_path / "b")
    names = sorted(p.name for p in first.iterdir() if p.suffix == ".xlsx")
    assert names == ["0042.xlsx", "A7.xlsx", "B3.xlsx", "C9.xlsx"]
    assert (first / "A7.xlsx").read_bytes() == (second / "A7.xlsx").read_bytes()
    book = openpyxl.load_workbook(first / "A7.xlsx")
    sheet = book["Responses"]
    assert sheet.protection.sheet and book["reportgen"].sheet_state == "hidden"
    assert sheet["B1"].value == "A7" and sheet["B1"].protection.locked
    assert not sheet["B6"].protection.locked and not sheet["B3"].protection.locked
    rules = {str(v.sqref): (v.type, v.formula1, v.formula2)
             for v in sheet.data_validations.dataValidation}
    assert rules == {"B6:B11": ("list", "'reportgen'!$D$1:$D$3", None),
                     "C6:C11": ("whole", "1", "5"), "B3": ("decimal", "0", "100")}


def _errors(folder: Path, capsys: pytest.CaptureFixture[str]) -> list[str]:
    assert main(["check", str(folder)]) == 2
    return [line.strip() for line in capsys.readouterr().err.splitlines()
            if line.strip().startswith("error:")]


def test_form_of_another_round_is_refused(make_round: MakeRound, tmp_path: Path,
                                          capsys: pytest.CaptureFixture[str]) -> None:
    folder = _returned(make_round, tmp_path)
    toml = (folder / "round.toml").read_text("utf-8").replace('id = "T-1"', 'id = "T-2"')
    (folder / "round.toml").write_text(toml, "utf-8")
    assert _errors(folder, capsys)[0] == (
        "error: returned/0042.xlsx, sheet 'reportgen': this form is for round 'T-1', not this "
        "round ('T-2') (value 'T-1')")


def test_changed_item_list_is_refused(make_round: MakeRound, tmp_path: Path,
                                      capsys: pytest.CaptureFixture[str]) -> None:
    def swap(book: Any) -> None:
        sheet = book["Responses"]
        sheet["A7"], sheet["A8"] = "I3", "I2"

    folder = _returned(make_round, tmp_path, edit=swap)
    assert _errors(folder, capsys) == [
        "error: returned/A7.xlsx, sheet 'Responses', row 7, column 'item': the item list on the "
        "form was changed; return the form with the items as they were listed (value 'I3')"]


def test_bad_answers_on_a_form_are_located(make_round: MakeRound, tmp_path: Path,
                                           capsys: pytest.CaptureFixture[str]) -> None:
    def typo(book: Any) -> None:
        sheet = book["Responses"]
        sheet["B7"], sheet["C9"] = "identical", 9

    folder = _returned(make_round, tmp_path, edit=typo)
    assert _errors(folder, capsys) == [
        "error: returned/A7.xlsx, sheet 'Responses', row 7, column 'decision': undeclared "
        "decision label (value 'identical'); allowed: different, inconclusive, same",
        "error: returned/A7.xlsx, sheet 'Responses', row 9, column 'confidence': confidence is "
        "outside the scale (value '9'); allowed: whole numbers 1 to 5",
    ]


@settings(max_examples=25, deadline=None, suppress_health_check=[
    HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(data=st.data())
def test_fuzzed_forms_are_read_or_refused(make_round: MakeRound, tmp_path_factory: Any,
                                          data: st.DataObject) -> None:
    """Whatever a returned form holds (any value in any cell, damaged bytes), check ends with 0
    or 2, never an internal error."""
    tmp = tmp_path_factory.mktemp("fuzz")
    folder = tmp / "round"
    template = _fuzz_template(make_round, tmp_path_factory)
    folder.mkdir()
    for name in ("round.toml", "items.csv", "participants.csv"):
        (folder / name).write_bytes((template / name).read_bytes())
    (folder / "returned").mkdir()
    book = openpyxl.load_workbook(template / "returned" / "A7.xlsx")
    cells = st.sampled_from(["Responses", "reportgen"])
    for _ in range(data.draw(st.integers(0, 6))):
        sheet = book[data.draw(cells)]
        row, column = data.draw(st.integers(1, 14)), data.draw(st.integers(1, 5))
        sheet.cell(row, column, data.draw(st.one_of(
            st.none(), st.text(st.characters(blacklist_categories=("Cc", "Cs")), max_size=8),
            st.integers(-5, 200),
            st.floats(allow_nan=False, allow_infinity=False))))
    buffer = io.BytesIO()
    book.save(buffer)
    raw = bytearray(buffer.getvalue())
    if data.draw(st.booleans()):
        at = data.draw(st.integers(0, len(raw) - 1))
        raw[at] = data.draw(st.integers(0, 255))
    (folder / "returned" / "A7.xlsx").write_bytes(bytes(raw))
    assert main(["check", str(folder)]) in (0, 2)


_TEMPLATE: dict[str, Path] = {}


def _fuzz_template(make_round: MakeRound, factory: Any) -> Path:
    if "round" not in _TEMPLATE:
        tmp = factory.mktemp("template")
        blank = make_round(folder="template-blank")
        forms = _forms(blank, tmp)
        folder = tmp / "round"
        folder.mkdir()
        (folder / "round.toml").write_text(
            ROUND_TOML.replace("[confidence]", RETURNED + "[confidence]"), "utf-8")
        for name in ("items.csv", "participants.csv"):
            (folder / name).write_bytes((blank / name).read_bytes())
        (folder / "returned").mkdir()
        (folder / "returned" / "A7.xlsx").write_bytes(_fill(forms / "A7.xlsx", "A7"))
        _TEMPLATE["round"] = folder
    return _TEMPLATE["round"]
