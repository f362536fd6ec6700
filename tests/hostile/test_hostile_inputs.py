"""Hostile and broken round folders (issue 5): each is refused with its exact located message,
exit status 2 and an untouched OUT; awkward but valid ones are read without losing a character.

Every input is generated at test time by scripts/hostile/ (no binary blobs). OUT
is a complete earlier output plus a sentinel file; after each refusal every byte under the
test's folder (OUT, and OUT's parent: no staging folder, no lock) must be as it was.
"""

from __future__ import annotations

import io
import shutil
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import openpyxl
import pytest

from reportgen.cli import main
from reportgen.errors import ProblemLog
from reportgen.pipeline import load
from reportgen.rounds.tables import read_table
from scripts.hostile import (
    ACCEPTED,
    BILLION_LAUGHS,
    EXTERNAL_ENTITY,
    NAMES,
    REFUSED,
    SHEET,
    base,
    edit_part,
    responses_xlsx,
)

# The exact problem line the provider sees (after "error: "); {folder} is the round folder.
EXPECTED: dict[str, str] = {
    'blank_decision': (
        "responses.csv, row 21, column 'decision': decision label is blank (value ''); "
        'allowed: different, inconclusive, same'
    ),
    'codes_differ_by_unicode_form': (
        "responses.csv, row 20, column 'participant': participant codes differ only by case, "
        "spaces or Unicode form and would be read as different people: 'Jose\u0301' (written "
        "'Jose\\u0301') (first at row 25); 'Jos\xe9' (written 'Jos\\xe9') (first at row 20) "
        "(value 'Jos\xe9')"
    ),
    'confidence_with_decimal_comma': (
        "responses.csv, row 11, column 'confidence': confidence is not a whole number (the "
        "scale is ordinal) (value '2,5'); allowed: whole numbers 1 to 5"
    ),
    'csv_bom_but_not_utf8': (
        'responses.csv, row 15: is marked as UTF-8 text but contains bytes that are not; save '
        'it again as CSV UTF-8'
    ),
    'csv_cell_limit': (
        'responses.csv: has more than 40 cells, the most reportgen reads; allowed: at most 40 '
        'cells (set by [limits] max_cells in round.toml)'
    ),
    'csv_duplicate_header': (
        "items.csv, row 1, column 'item': columns 1 and 3 both have the header 'item'; every "
        "column needs its own header (value 'item')"
    ),
    'csv_empty': (
        'responses.csv: is empty: it has no header row and no data'
    ),
    'csv_header_only': (
        'responses.csv, row 1: has a header row but no data rows'
    ),
    'csv_is_a_workbook': (
        'responses.csv: is an Excel workbook (or another zip file) saved under a .csv name: '
        'rename it to .xlsx, or save it from Excel as CSV'
    ),
    'csv_nul_bytes': (
        'responses.csv: contains NUL bytes, so it is not a text (CSV) file: save it from your '
        'spreadsheet program as CSV UTF-8'
    ),
    'csv_ragged_extra_value': (
        'responses.csv, row 23: row has 1 more value(s) than there are column headers; the '
        "extra values are not read (value 'sure'); allowed: 4 values, one per column"
    ),
    'csv_row_limit': (
        'responses.csv: has more than 21 lines; reportgen reads at most 10 data rows; allowed: '
        'at most 10 rows (set by [limits] max_rows in round.toml)'
    ),
    'csv_title_line_above_header': (
        'responses.csv, row 1: the first row that is not empty holds a single value, above '
        'rows of 4 values: if it is a title, delete it (and any other rows above the column '
        "headers), so that the headers are the first row (value 'Responses exported "
        "2026-01-21')"
    ),
    'csv_unclosed_quote': (
        'responses.csv, row 16: a value starting here opens a quotation mark (") that is never '
        'closed'
    ),
    'csv_values_without_header': (
        "items.csv, row 1, column '(column 3)': column 3 has values but no header; give it a "
        'header or delete it'
    ),
    'decision_with_trailing_space': (
        "responses.csv, row 15, column 'decision': decision label differs from the declared "
        "label 'same' only by case or spaces; correct it, or set [scoring] normalise_labels = "
        "true in round.toml (value 'same '); allowed: different, inconclusive, same"
    ),
    'estimate_lost_leading_zeros': (
        "estimates.csv, row 2, column 'participant': estimate for a participant with no "
        "responses; did you mean '0042' (as in responses.csv)? A spreadsheet program may have "
        'dropped the leading zeros in estimates.csv: correct estimates.csv (format the column '
        "as Text and type the code again) (value '42')"
    ),
    'item_lost_leading_zeros': (
        "responses.csv, row 16, column 'item': response to an item that is not in the key; did "
        "you mean '0003' (as in items.csv)? A spreadsheet program may have dropped the leading "
        'zeros in responses.csv: correct responses.csv (format the column as Text and type the '
        "code again) (value '3'); allowed: the item ids of the key"
    ),
    'missing_responses': (
        'responses: no responses.csv or responses.xlsx in the round folder'
    ),
    'participant_codes_differ_by_leading_zeros': (
        "responses.csv, row 7, column 'participant': participant codes differ only by leading "
        'zeros (a spreadsheet program may have dropped them: format the column as Text) and '
        "would be read as different people: '0042' (first at row 2); '42' (first at row 7) "
        "(value '42')"
    ),
    'participant_listed_twice': (
        "participants.csv, row 6, column 'participant': participant listed twice (value 'B3')"
    ),
    'participant_missing_from_participants_file': (
        "responses.csv, row 20, column 'participant': participant code is not in the "
        "participants file participants.csv (value 'C9')"
    ),
    'participant_number_lost_leading_zeros': (
        "responses.xlsx, sheet 'Responses', row 2, column 'participant': participant code is "
        "not in the participants file participants.csv; did you mean '0042' (as in "
        'participants.csv)? A spreadsheet program may have dropped the leading zeros in '
        'responses.xlsx: correct responses.xlsx (format the column as Text and type the code '
        "again) (value '42')"
    ),
    'responses_both_csv_and_xlsx': (
        'responses: both responses.csv and responses.xlsx are in the round folder; remove one, '
        'or name the one to use as responses = "…" under [files] in round.toml'
    ),
    'responses_numbers': (
        'responses.numbers: is an Apple Numbers file, which reportgen does not read: export it '
        'as .xlsx or .csv (File > Export To)'
    ),
    'responses_ods': (
        'responses.ods: is an OpenDocument spreadsheet, which reportgen does not read: save it '
        'as .xlsx (Excel Workbook) or .csv'
    ),
    'responses_xls': (
        'responses.xls: is an old-format Excel 97-2003 workbook, which reportgen does not '
        'read: save it as .xlsx (Excel Workbook) or .csv'
    ),
    'toml_accent_not_a_colour': (
        "round.toml, column 'provider.accent': accent must be a colour like #5f6b73 (value "
        "'red')"
    ),
    'toml_blank_decision_label': (
        "round.toml, column 'decisions': a decision label is blank: a blank cell would be read "
        'as it'
    ),
    'toml_class_without_decision': (
        "round.toml, column 'decisions': no decision label maps to class 'different'"
    ),
    'toml_columns_shared': (
        "round.toml, column 'columns': decision and confidence both name the column "
        "'confidence' of the responses table; each needs its own column"
    ),
    'toml_criterion_contradictory_bounds': (
        "round.toml, column 'criteria.1': at_least is above at_most: no result could meet it"
    ),
    'toml_criterion_duplicate_ids': (
        "round.toml, column 'criteria': criterion ids must be unique; repeated: C1"
    ),
    'toml_criterion_unknown_metric': (
        "round.toml, column 'criteria.1.metric': criterion 'C2' names an unknown metric (value "
        "'acuracy'); allowed: accuracy, answered, answered_accuracy, auc, brier, "
        'brier_reliability, brier_resolution, brier_uncertainty, complete, conf_gap, correct, '
        'correct_different, correct_same, criterion, d_prime, decisive_accuracy, ece, '
        'error_rate, errors, errors_at_strength_1, errors_at_strength_10, errors_at_strength_2,'
        ' errors_at_strength_3, errors_at_strength_4, errors_at_strength_5, '
        'errors_at_strength_6, errors_at_strength_7, errors_at_strength_8, '
        'errors_at_strength_9, expected_conf_gap, expected_type2_auroc, false_alarm_rate, '
        'false_negative_rate, false_negatives, false_positive_rate, false_positives, gamma, '
        'hit_rate, in_group, inconclusive, inconclusive_different, inconclusive_rate, '
        'inconclusive_same, items, m_ratio, mean_confidence_correct, '
        'mean_confidence_inconclusive, mean_confidence_wrong, meta_d, missing, '
        'missing_different, missing_same, n_answered, n_different, n_items, n_same, '
        'overconfidence, strongest_errors, type2_auroc'
    ),
    'toml_dates_out_of_order': (
        "round.toml, column 'round': dates must satisfy opened <= closed <= issued"
    ),
    'toml_decision_labels_differ_by_case': (
        "round.toml, column 'decisions': decision labels 'Same' and 'same' differ only by case "
        'or spaces; give each a distinct label'
    ),
    'toml_decision_to_undeclared_class': (
        "round.toml, column 'decisions': decision 'maybe' maps to 'perhaps', which is neither "
        "a declared class (same, different) nor 'inconclusive'"
    ),
    'toml_file_name_too_long': (
        "i" * 300 + ".csv: is named under [files] in round.toml but cannot be opened (File "
        "name too long)"
    ),
    'toml_file_name_with_nul': (
        "round.toml, column 'files.items': the name contains a control character (such as a "
        "NUL or a line break) (value 'items\\x00.csv')"
    ),
    'toml_file_outside_folder': (
        '../items.csv: is named under [files] in round.toml but lies outside the round folder; '
        'put the file in the round folder and give its name relative to it'
    ),
    'toml_limits_out_of_range': (
        "round.toml, column 'limits.max_rows': Input should be greater than or equal to 1 "
        "(value '0')"
    ),
    'toml_logo_missing': (
        "round.toml, column 'provider.logo': the provider logo file is not in the round folder "
        "(value 'logo.png')"
    ),
    'toml_logo_outside_folder': (
        "round.toml, column 'provider.logo': the provider logo must be a .png, .jpg, .svg or "
        ".gif file inside the round folder (value '../logo.png')"
    ),
    'toml_missing': (
        'round.toml: no round.toml in the round folder {folder}'
    ),
    'toml_missing_round_table': (
        "round.toml, column 'round': required key is missing"
    ),
    'toml_negative_seed': (
        "round.toml, column 'scoring.seed': Input should be greater than or equal to 0 (value "
        "'-1')"
    ),
    'toml_nested_too_deeply': (
        'round.toml: TOML syntax error: arrays or tables are nested too deeply to be round '
        'settings'
    ),
    'toml_not_utf8': (
        'round.toml: is not UTF-8 text (line 4); save it as UTF-8'
    ),
    'toml_positive_not_a_class': (
        "round.toml, column 'classes': positive class 'match' is not one of labels ('same', "
        "'different')"
    ),
    'toml_probability_scale_beyond_percent': (
        "round.toml, column 'confidence': a probability scale is in percent: 0 <= min < max <= "
        '100'
    ),
    'toml_scale_infinite': (
        "round.toml, column 'confidence.max': Input should be a finite number (value 'inf')"
    ),
    'toml_scale_min_above_max': (
        "round.toml, column 'confidence': min (5) must be below max (1)"
    ),
    'toml_scale_min_equals_max': (
        "round.toml, column 'confidence': min (1) must be below max (1)"
    ),
    'toml_syntax_duplicate_key': (
        'round.toml: TOML syntax error at line 3, character 11: Cannot overwrite a value'
    ),
    'toml_syntax_unclosed_string': (
        "round.toml: TOML syntax error at line 4, character 20: Illegal character '\\n'"
    ),
    'toml_too_large': (
        "round.toml: is larger than 1,024 KiB, so it is not a round's settings file"
    ),
    'toml_unknown_key': (
        "round.toml, column 'confidence.colour': unknown key (misspelt, or not supported) "
        "(value '3')"
    ),
    'toml_wide_columns_not_found': (
        'responses.csv, row 1: no response columns found: a wide sheet needs a decision and a '
        'confidence column for each item of the key, named by the [wide] patterns in '
        "round.toml (for item '0001': '0001_{x}' and '0001_confidence'); allowed: columns "
        'present: participant, item, decision, confidence'
    ),
    'toml_wrong_type': (
        "round.toml, column 'confidence.min': Input should be a valid number, unable to parse "
        "string as a number (value 'one')"
    ),
    'truth_label_in_capitals': (
        "items.csv, row 6, column 'truth': truth class differs from the declared label "
        "'different' only by case or spaces; correct it, or set [scoring] normalise_labels = "
        "true in round.toml (value 'DIFFERENT'); allowed: same, different"
    ),
    'xlsx_billion_laughs': (
        "responses.xlsx, sheet 'Responses': contains a document type declaration (<!DOCTYPE "
        '…>) in its part xl/worksheets/sheet1.xml, which spreadsheet programs never write and '
        'which can carry an XML entity attack: open it in Excel and save it again'
    ),
    'xlsx_corrupt': (
        'responses.xlsx: is not a readable .xlsx workbook (corrupt, or password-protected: '
        'save it again without a password)'
    ),
    'xlsx_date_as_item_id': (
        "items.xlsx, sheet 'Key', row 4, column 'item': item id is a date or time in the "
        'spreadsheet, not text: the spreadsheet program probably turned the code into a date; '
        "format the column as Text, type the codes again and save (value '2026-03-01')"
    ),
    'xlsx_date_as_participant_code': (
        "responses.xlsx, sheet 'Responses', row 8, column 'participant': participant code is a "
        'date or time in the spreadsheet, not text: the spreadsheet program probably turned '
        'the code into a date; format the column as Text, type the codes again and save (value '
        "'2026-01-07')"
    ),
    'xlsx_error_value_as_code': (
        "responses.xlsx, sheet 'Responses', row 15, column 'participant': participant code is "
        'a spreadsheet error value, not text; format the column as Text, type the codes again '
        "and save (value '#N/A')"
    ),
    'xlsx_external_entity': (
        'responses.xlsx: contains a document type declaration (<!DOCTYPE …>) in its part '
        'xl/workbook.xml, which spreadsheet programs never write and which can carry an XML '
        'entity attack: open it in Excel and save it again'
    ),
    'xlsx_false_shared_strings_count': (
        'responses.xlsx: is damaged (it claims 2,000,000,000 different texts but holds 1): '
        'open it in Excel and save it again'
    ),
    'xlsx_file_size_limit': (
        'responses.xlsx: is 1.5 MiB, more than the 1.0 MiB reportgen reads from one file; '
        'allowed: at most 1,048,576 bytes (set by [limits] max_file_mib in round.toml)'
    ),
    'xlsx_formula_without_saved_value': (
        "responses.xlsx, sheet 'Responses', row 10, column 'confidence': cell D10 has a "
        'formula but no saved result (the file was written by a program that does not '
        'calculate); open it in Excel or LibreOffice and save it again, or type the values in '
        "(value '=2+2')"
    ),
    'xlsx_is_opendocument': (
        'responses.xlsx: is an OpenDocument spreadsheet with an .xlsx name: open it and save '
        'it as .xlsx (Excel Workbook)'
    ),
    'xlsx_long_number_as_code': (
        "responses.xlsx, sheet 'Responses', row 20, column 'participant': participant code is "
        'a number with a fraction or an exponent in the spreadsheet; spreadsheets keep only 15 '
        'digits of a number, so a long code typed as a number is changed: format the column as '
        "Text, type the codes again and save (value '1.234567890123457e+18')"
    ),
    'xlsx_merged_cells': (
        "responses.xlsx, sheet 'Responses', row 9, column 'decision': decision label is blank "
        "(value ''); allowed: different, inconclusive, same"
    ),
    'xlsx_named_sheet_missing': (
        "responses.xlsx: sheet 'Answers' (named under [files] in round.toml) is not in the "
        "workbook (value 'Answers'); allowed: 'Responses'"
    ),
    'xlsx_no_sheet_with_data': (
        "responses.xlsx: is empty: no visible sheet has data; allowed: 'Responses'"
    ),
    'xlsx_old_format_renamed': (
        'responses.xlsx: is an old-format Excel 97-2003 workbook with an .xlsx name: open it '
        'in Excel and save it as .xlsx (Excel Workbook)'
    ),
    'xlsx_only_a_hidden_sheet_has_data': (
        'responses.xlsx: is empty: no visible sheet has data (only hidden sheets have data); '
        "allowed: 'Cover', 'Responses'"
    ),
    'xlsx_password_protected': (
        'responses.xlsx: is password-protected: open it in Excel, remove the password (File > '
        'Info > Protect Workbook) and save it again'
    ),
    'xlsx_plain_zip': (
        'responses.xlsx: is a zip file but not an Excel workbook: save the table from your '
        'spreadsheet program as .xlsx (Excel Workbook)'
    ),
    'xlsx_row_limit': (
        "responses.xlsx, sheet 'Responses': has cells in use on 25 rows (A1:D25), more than "
        'the 10 reportgen reads (is there a stray value or formatted cell far below or right '
        'of the table?); allowed: at most 10 rows (set by [limits] max_rows in round.toml)'
    ),
    'xlsx_several_sheets_with_data': (
        "responses.xlsx: has data on several sheets ('Responses', 'Copy'); say which one to "
        'read with sheet = "…" under [files] in round.toml; allowed: \'Responses\', \'Copy\''
    ),
    'xlsx_stray_far_cell': (
        "responses.xlsx, sheet 'Responses': has cells in use on 1,048,576 rows "
        '(A1:XFD1048576), more than the 200,000 reportgen reads (is there a stray value or '
        'formatted cell far below or right of the table?); allowed: at most 200,000 rows (set '
        'by [limits] max_rows in round.toml)'
    ),
    'xlsx_true_false_as_item': (
        "responses.xlsx, sheet 'Responses', row 16, column 'item': item id is TRUE/FALSE in "
        'the spreadsheet, not text; format the column as Text, type the codes again and save '
        "(value 'TRUE')"
    ),
    'xlsx_truncated': (
        'responses.xlsx: is not a readable .xlsx workbook (corrupt, or password-protected: '
        'save it again without a password)'
    ),
    'xlsx_unpacked_size_limit': (
        'responses.xlsx: would unpack to 1.5 MiB, more than the 1.0 MiB reportgen allows (a '
        "damaged file, or a 'zip bomb'); allowed: at most 1,048,576 bytes unpacked (set by "
        '[limits] max_unpacked_mib in round.toml)'
    ),
    'xlsx_zip_bomb': (
        'responses.xlsx: is compressed 924 times, more than the 100 times a real workbook '
        "reaches (a damaged file, or a 'zip bomb'); allowed: at most 100:1 (set by [limits] "
        'max_compression_ratio in round.toml)'
    ),
}

# A guard regression on these would make python-calamine abort the whole process: run them in a
# child, so a regression fails one test instead of the suite.
IN_A_CHILD = {"xlsx_stray_far_cell", "xlsx_false_shared_strings_count"}


def test_every_generated_case_has_an_expected_message() -> None:
    assert sorted(EXPECTED) == sorted(REFUSED)
    assert len(REFUSED) >= 40


@pytest.fixture(scope="module")
def previous_out(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A complete output of the valid base round, plus a sentinel file of the provider's."""
    root = tmp_path_factory.mktemp("previous")
    base(root / "round")
    out = root / "out"
    assert main(["score", str(root / "round"), "-o", str(out), "--quiet"]) == 0
    (out / "sentinel.txt").write_text("left by an earlier run\n", encoding="utf-8")
    return out


def _snapshot(root: Path, skip: str) -> dict[str, bytes | None]:
    return {p.relative_to(root).as_posix(): p.read_bytes() if p.is_file() else None
            for p in sorted(root.rglob("*")) if p.relative_to(root).parts[0] != skip}


def _run_in_child(argv: list[str]) -> tuple[int, str]:
    code = "import sys; from reportgen.cli import main; sys.exit(main(sys.argv[1:]))"
    done = subprocess.run([sys.executable, "-c", code, *argv], capture_output=True, text=True,
                          timeout=120, check=False)
    return done.returncode, done.stderr


@pytest.mark.parametrize("case", sorted(REFUSED))
def test_refused_with_located_message_and_out_untouched(
        case: str, previous_out: Path, tmp_path: Path,
        capsys: pytest.CaptureFixture[str]) -> None:
    folder = tmp_path / "round"
    REFUSED[case](folder)
    out = tmp_path / "out"
    shutil.copytree(previous_out, out)
    before = _snapshot(tmp_path, skip="round")
    argv = ["score", str(folder), "-o", str(out), "--quiet"]
    if case in IN_A_CHILD:
        status, err = _run_in_child(argv)
    else:
        status, err = main(argv), capsys.readouterr().err
    assert status == 2, err
    expected = "error: " + EXPECTED[case].replace("{folder}", str(folder))
    assert expected in [line.strip() for line in err.splitlines()], err
    assert "Nothing was written." in err
    assert "Traceback" not in err
    assert _snapshot(tmp_path, skip="round") == before


WITH_ACCENTED_NAMES = {"accept_csv_utf8_with_bom", "accept_csv_utf16_with_bom",
                       "accept_csv_utf16_without_bom", "accept_csv_latin1",
                       "accept_csv_semicolons_and_crlf", "accept_csv_quoted_newline_and_delimiter"}


@pytest.mark.parametrize("case", sorted(ACCEPTED))
def test_awkward_but_valid_input_is_read_exactly(case: str, tmp_path: Path,
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    folder = tmp_path / "round"
    ACCEPTED[case](folder)
    assert main(["check", str(folder)]) == 0, capsys.readouterr().err
    rnd = load(folder)
    assert rnd.participants == ("0042", "A7", "B3", "C9")
    assert rnd.n_items == 6
    if case in WITH_ACCENTED_NAMES:
        for code, name in NAMES.items():
            assert rnd.identity(code).name == name  # accents come through unmangled


def test_latin1_is_read_with_a_warning(tmp_path: Path) -> None:
    ACCEPTED["accept_csv_latin1"](tmp_path / "round")
    rnd = load(tmp_path / "round")
    assert rnd.identity("B3").name == "Renée Ødegård"
    assert [str(w) for w in rnd.warnings] == [
        "participants.csv: is not UTF-8 text, so it was read as Windows-1252 (Western European), "
        "the usual encoding of CSV files saved by Excel on Windows; if accented letters look "
        "wrong, save it as \"CSV UTF-8\" and run again; allowed: UTF-8"]


def test_quoted_newline_and_delimiter_survive(tmp_path: Path) -> None:
    ACCEPTED["accept_csv_quoted_newline_and_delimiter"](tmp_path / "round")
    assert load(tmp_path / "round").identity("B3").organisation == "Lab South,\nBuilding 2"


def test_normalised_label_is_reported(tmp_path: Path) -> None:
    ACCEPTED["accept_normalised_labels"](tmp_path / "round")
    rnd = load(tmp_path / "round")
    assert [str(w) for w in rnd.warnings] == [
        "responses.csv, row 15, column 'decision': decision label 'Same ' read as 'same' "
        "(allowed by normalise_labels) in 1 row(s)"]
    assert rnd.raw_decision[rnd.participants.index("B3"), 1] == "same"


# --------------------------------------------------------------------------- XML attacks


def test_openpyxl_parses_through_defusedxml() -> None:
    """openpyxl uses defusedxml when it is installed: a billion-laughs sheet is refused at once,
    not expanded (ENGINEERING.md, Spreadsheets)."""
    from openpyxl.xml import DEFUSEDXML

    assert DEFUSEDXML is True
    data = edit_part(responses_xlsx(), SHEET, lambda xml: BILLION_LAUGHS + xml.replace(
        b"<t>A7</t>", b"<t>&lol9;</t>", 1))
    start = time.monotonic()
    with pytest.raises(ValueError, match="Unable to read workbook") as raised:
        openpyxl.load_workbook(io.BytesIO(data))
    assert type(raised.value.__cause__).__module__.startswith("defusedxml")
    assert time.monotonic() - start < 5


@pytest.mark.parametrize("member", ["[Content_Types].xml", "_rels/.rels", "docProps/core.xml",
                                    "xl/workbook.xml", "xl/_rels/workbook.xml.rels",
                                    "xl/styles.xml", SHEET])
@pytest.mark.parametrize("attack", ["billion laughs", "external entity"])
def test_a_dtd_in_any_part_is_refused(tmp_path: Path, member: str, attack: str) -> None:
    prolog = BILLION_LAUGHS if attack == "billion laughs" else EXTERNAL_ENTITY

    def inject(xml: bytes) -> bytes:
        return prolog + (xml[xml.index(b"?>") + 2:] if xml.startswith(b"<?xml") else xml)

    path = tmp_path / "responses.xlsx"
    path.write_bytes(edit_part(responses_xlsx(), member, inject))
    log = ProblemLog()
    assert read_table(path, path.name, log) is None
    sheet = "sheet 'Responses', " if member == SHEET else ""
    assert [str(p) for p in log.problems] == [
        f"responses.xlsx{', ' + sheet[:-2] if sheet else ''}: contains a document type "
        f"declaration (<!DOCTYPE …>) in its part {member}, which spreadsheet programs never "
        "write and which can carry an XML entity attack: open it in Excel and save it again"]


def test_generated_workbooks_are_real_workbooks() -> None:
    """The base workbook the cases start from is read by openpyxl as written (a sanity check of
    the generator, so a case fails for its own reason)."""
    book = openpyxl.load_workbook(io.BytesIO(responses_xlsx()))
    assert book.sheetnames == ["Responses"]
    with zipfile.ZipFile(io.BytesIO(responses_xlsx())) as archive:
        assert SHEET in archive.namelist()
