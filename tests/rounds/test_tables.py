"""The table reader (reportgen/rounds/tables.py): every input is made inside the test.

Workbooks that would kill the process if the guard failed (python-calamine aborts on a stray far
cell or a false shared-strings count) are read in a child process, so a regression fails one
test instead of the whole run.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import json
import struct
import subprocess
import sys
import zipfile
from collections.abc import Callable
from pathlib import Path

import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl.worksheet.worksheet import Worksheet

from reportgen.errors import Problem, ProblemLog
from reportgen.rounds.tables import ReadLimits, Table, find_table, read_table

NOT_READABLE = ("is not a readable .xlsx workbook (corrupt, or password-protected: save it "
                "again without a password)")


# --------------------------------------------------------------------------- helpers


def _read(path: Path, **kwargs: object) -> tuple[Table | None, ProblemLog]:
    log = ProblemLog()
    table = read_table(path, path.name, log, **kwargs)  # type: ignore[arg-type]
    return table, log


def _messages(log: ProblemLog) -> list[str]:
    return [str(p) for p in log.problems]


def _csv(tmp_path: Path, content: str | bytes, name: str = "t.csv") -> Path:
    path = tmp_path / name
    path.write_bytes(content.encode() if isinstance(content, str) else content)
    return path


def _book(tmp_path: Path, fill: Callable[[Worksheet], None], name: str = "t.xlsx",
          title: str = "Data") -> Path:
    wb = openpyxl.Workbook()
    ws = wb.active
    assert ws is not None
    ws.title = title
    fill(ws)
    path = tmp_path / name
    wb.save(path)
    return path


def _key(ws: Worksheet) -> None:
    ws.append(["item", "truth"])
    ws.append(["I1", "same"])


def _swap_member(path: Path, member: str, content: bytes) -> None:
    """Rewrite one part of a workbook (the zip is rebuilt around it)."""
    with zipfile.ZipFile(path) as old:
        parts = [(info.filename, old.read(info)) for info in old.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as new:
        for name, data in parts:
            new.writestr(name, content if name == member else data)
        if member not in {name for name, _ in parts}:
            new.writestr(member, content)


SHEET_NS = 'xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"'


def _read_in_child(path: Path) -> list[str]:
    """read_table in a child process; its problems, or a failure if the child died."""
    code = (
        "import json, sys; from pathlib import Path\n"
        "from reportgen.errors import ProblemLog\n"
        "from reportgen.rounds.tables import read_table\n"
        "log = ProblemLog(); read_table(Path(sys.argv[1]), 't.xlsx', log)\n"
        "print(json.dumps([str(p) for p in log.problems]))\n"
    )
    done = subprocess.run([sys.executable, "-c", code, str(path)], capture_output=True,
                          text=True, timeout=120, check=False)
    assert done.returncode == 0, f"reader died ({done.returncode}): {done.stderr[-2000:]}"
    result: list[str] = json.loads(done.stdout)
    return result


# --------------------------------------------------------------------------- find_table


def test_find_table_discovers_either_format_ignoring_case(tmp_path: Path) -> None:
    _csv(tmp_path, "item,truth\n", "Items.CSV")
    log = ProblemLog()
    assert find_table(tmp_path, "items", None, log, required=True) == tmp_path / "Items.CSV"
    assert find_table(tmp_path, "estimates", None, log, required=False) is None
    assert log.problems == []


def test_find_table_refuses_two_candidates(tmp_path: Path) -> None:
    _csv(tmp_path, "item,truth\n", "items.csv")
    _book(tmp_path, _key, "items.xlsx")
    log = ProblemLog()
    assert find_table(tmp_path, "items", None, log, required=True) is None
    assert _messages(log) == [
        'items: both items.csv and items.xlsx are in the round folder; remove one, or name the '
        'one to use as items = "…" under [files] in round.toml'
    ]


def test_find_table_missing_required_and_optional(tmp_path: Path) -> None:
    log = ProblemLog()
    assert find_table(tmp_path, "responses", None, log, required=True) is None
    assert find_table(tmp_path, "participants", None, log, required=False) is None
    assert _messages(log) == ["responses: no responses.csv or responses.xlsx in the round folder"]


@pytest.mark.parametrize(("name", "expected"), [
    ("items.xls", "items.xls: is an old-format Excel 97-2003 workbook, which reportgen does not "
                  "read: save it as .xlsx (Excel Workbook) or .csv"),
    ("items.ods", "items.ods: is an OpenDocument spreadsheet, which reportgen does not read: "
                  "save it as .xlsx (Excel Workbook) or .csv"),
    ("items.numbers", "items.numbers: is an Apple Numbers file, which reportgen does not read: "
                      "export it as .xlsx or .csv (File > Export To)"),
])
def test_find_table_names_other_spreadsheet_formats(tmp_path: Path, name: str,
                                                    expected: str) -> None:
    _csv(tmp_path, b"\xd0\xcf\x11\xe0", name)
    log = ProblemLog()
    assert find_table(tmp_path, "items", None, log, required=False) is None
    assert _messages(log) == [expected]
    log = ProblemLog()
    assert find_table(tmp_path, "items", name, log, required=True) is None
    assert _messages(log) == [expected]


def test_find_table_explicit_names(tmp_path: Path) -> None:
    (tmp_path / "data").mkdir()
    _csv(tmp_path / "data", "item,truth\n", "key.csv")
    outside = tmp_path.parent / "outside.csv"
    outside.write_text("item,truth\n")
    log = ProblemLog()
    assert find_table(tmp_path, "items", "data/key.csv", log, required=True) == (
        tmp_path / "data" / "key.csv")
    for name in ("../outside.csv", str(outside), "data/../../outside.csv"):
        assert find_table(tmp_path, "items", name, log, required=True) is None
    assert find_table(tmp_path, "items", "nothere.csv", log, required=True) is None
    assert find_table(tmp_path, "items", "data.csv", log, required=True) is None
    assert find_table(tmp_path, "items", "key.txt", log, required=True) is None
    messages = _messages(log)
    assert messages[0] == ("../outside.csv: is named under [files] in round.toml but lies "
                           "outside the round folder; put the file in the round folder and "
                           "give its name relative to it")
    assert len(messages) == 6
    assert messages[3] == ("nothere.csv: is named under [files] in round.toml but is not in the "
                           "round folder")
    assert messages[5] == ("key.txt: has the extension .txt; reportgen reads only .xlsx and .csv "
                           "files: save it as .xlsx (Excel Workbook) or .csv")


def test_find_table_refuses_a_symlink_out_of_the_folder(tmp_path: Path) -> None:
    target = tmp_path / "elsewhere.csv"
    target.write_text("item,truth\nI1,same\n")
    folder = tmp_path / "round"
    folder.mkdir()
    (folder / "items.csv").symlink_to(target)
    log = ProblemLog()
    assert find_table(folder, "items", "items.csv", log, required=True) is None
    assert "lies outside the round folder" in _messages(log)[0]


# --------------------------------------------------------------------------- csv


def test_csv_keeps_codes_and_values_as_written(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, " participant , item,decision\n0042,I1, same \n7,I2,\n"))
    assert log.problems == []
    assert table is not None
    assert table.columns == ("participant", "item", "decision")  # headers stripped
    assert table.rows == (("0042", "I1", " same "), ("7", "I2", ""))  # values not stripped
    assert table.kinds == ("sss", "ssz")
    assert table.row_numbers == (2, 3)
    assert table.header_row == 1
    assert table.sheet is None
    assert table.column("participant") == ("0042", "7")
    assert table.has("item") and not table.has("confidence")
    with pytest.raises(KeyError):
        table.column("confidence")
    data = (tmp_path / "t.csv").read_bytes()
    assert table.sha256 == hashlib.sha256(data).hexdigest()


@pytest.mark.parametrize("encoding", ["utf-8", "utf-8-sig", "utf-16"])
def test_csv_unicode_encodings(tmp_path: Path, encoding: str) -> None:
    text = "name,code\r\nJosé Müller,0042\r\nŁukasz,7\r\n"
    table, log = _read(_csv(tmp_path, text.encode(encoding)))
    assert log.problems == []
    assert table is not None
    assert table.columns == ("name", "code")  # no BOM left on the first header
    assert table.rows == (("José Müller", "0042"), ("Łukasz", "7"))


def test_csv_utf16_without_bom(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, "name\tcode\nJosé\t0042\n".encode("utf-16-le")))
    assert log.problems == []
    assert table is not None and table.rows == (("José", "0042"),)


def test_csv_windows_1252_is_read_with_a_warning(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, "name;code\nJosé;0042\n".encode("cp1252")))
    assert table is not None
    assert table.rows == (("José", "0042"),)
    assert _messages(log) == [
        't.csv: is not UTF-8 text, so it was read as Windows-1252 (Western European), the usual '
        'encoding of CSV files saved by Excel on Windows; if accented letters look wrong, save '
        'it as "CSV UTF-8" and run again; allowed: UTF-8'
    ]
    assert log.warnings == log.problems


def test_csv_bytes_undefined_in_windows_1252_fall_back_to_latin_1(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, b"name\nA\x81\xe9\n"))
    assert table is not None and table.rows == (("A\x81é",),)
    assert "read as Latin-1 (ISO-8859-1)" in _messages(log)[0]


@pytest.mark.parametrize(("text", "rows"), [
    ("participant;item;confidence\nP1;I1;0,5\nP2;I2;0,75\n",
     (("P1", "I1", "0,5"), ("P2", "I2", "0,75"))),
    ("participant\titem\nP1\tI, 1\n", (("P1", "I, 1"),)),
    ('participant;item\n"P;1";I1\nP2;I2\n',
     (("P;1", "I1"), ("P2", "I2"))),
    ("participant\nP1\nP2\n", (("P1",), ("P2",))),
])
def test_csv_delimiter_is_sniffed(tmp_path: Path, text: str,
                                  rows: tuple[tuple[str, ...], ...]) -> None:
    table, log = _read(_csv(tmp_path, text))
    assert log.problems == []
    assert table is not None and table.rows == rows


def test_csv_quoted_newline_keeps_line_numbers(tmp_path: Path) -> None:
    text = 'item,note\nI1,"two\nlines"\nI2,"three\n\nlines"\nI3,x\n'
    table, log = _read(_csv(tmp_path, text))
    assert log.problems == []
    assert table is not None
    assert table.rows == (("I1", "two\nlines"), ("I2", "three\n\nlines"), ("I3", "x"))
    assert table.row_numbers == (2, 4, 7)  # the line on which each record starts


def test_csv_header_below_blank_lines_and_blank_rows_skipped(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, "\n,,\nitem,truth\nI1,same\n , \nI2,different\n"))
    assert log.problems == []
    assert table is not None
    assert table.header_row == 3
    assert table.row_numbers == (4, 6)


def test_csv_ragged_rows(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, "item,truth\nI1,same,3\nI2\nI3,same,,\n"))
    assert table is not None
    assert table.rows == (("I1", "same"), ("I2", ""), ("I3", "same"))
    assert table.kinds == ("ss", "sz", "ss")
    assert _messages(log) == [
        "t.csv, row 2: row has 1 more value(s) than there are column headers; the extra values "
        "are not read (value '3'); allowed: 2 values, one per column"
    ]


def test_csv_many_ragged_rows_are_summarised(tmp_path: Path) -> None:
    text = "a,b\n" + "1,2,3\n" * 25
    _, log = _read(_csv(tmp_path, text))
    assert len(log.errors) == 21
    assert str(log.errors[-1]) == ("t.csv: 5 more rows have more values than there are column "
                                   "headers")


def test_csv_header_problems(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, "a,b,a,,,\n1,2,3,,x,\n"))
    assert table is not None
    assert table.columns == ("a", "b", "a", "(column 5)")  # empty column 4 and 6 dropped
    assert table.rows == (("1", "2", "3", "x"),)
    assert table.column("a") == ("1",)  # the first of two columns with one name
    assert _messages(log) == [
        "t.csv, row 1, column 'a': columns 1 and 3 both have the header 'a'; every column needs "
        "its own header (value 'a')",
        "t.csv, row 1, column '(column 5)': column 5 has values but no header; give it a header "
        "or delete it",
    ]


@pytest.mark.parametrize(("content", "expected"), [
    (b"", "t.csv: is empty: it has no header row and no data"),
    (b"\r\n ; \r\n", "t.csv: is empty: it has no header row and no data"),
    (b"item,truth\n", "t.csv, row 1: has a header row but no data rows"),
    (b'item,note\nI1,"never closed\nI2,x\n',
     't.csv, row 2: a value starting here opens a quotation mark (") that is never closed'),
    (b"a\x00b\n", "t.csv: contains NUL bytes, so it is not a text (CSV) file: save it from your "
                  "spreadsheet program as CSV UTF-8"),
    (b"PK\x03\x04rest", "t.csv: is an Excel workbook (or another zip file) saved under a .csv "
                        "name: rename it to .xlsx, or save it from Excel as CSV"),
    (b"\xef\xbb\xbfitem\n\xff\n", "t.csv, row 2: is marked as UTF-8 text but contains bytes "
                                  "that are not; save it again as CSV UTF-8"),
])
def test_csv_unreadable_or_empty(tmp_path: Path, content: bytes, expected: str) -> None:
    table, log = _read(_csv(tmp_path, content))
    assert _messages(log) == [expected]
    assert (table is None) == (content != b"item,truth\n")


def test_csv_bad_quoting_is_located(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, 'item,note\nI1,ok\nI2,"a"b\n'))
    assert table is None
    [problem] = log.problems
    assert problem.row == 3
    assert problem.message.startswith("the quotation marks do not pair up")


def test_csv_limits(tmp_path: Path) -> None:
    path = _csv(tmp_path, "a,b\n" + "1,2\n" * 5)
    assert _read(path, limits=ReadLimits(max_rows=5))[0] is not None
    table, log = _read(path, limits=ReadLimits(max_rows=4))
    assert table is None
    assert _messages(log) == ["t.csv: has 5 data rows, more than the 4 reportgen reads; "
                              "allowed: at most 4 rows"]
    table, log = _read(path, limits=ReadLimits(max_rows=1))
    assert _messages(log) == ["t.csv: has more than 3 lines; reportgen reads at most 1 data rows; "
                              "allowed: at most 1 rows"]
    _, log = _read(path, limits=ReadLimits(max_cells=10))
    assert _messages(log) == ["t.csv: has more than 10 cells, the most reportgen reads; allowed: "
                              "at most 10 cells"]
    _, log = _read(path, limits=ReadLimits(max_file_bytes=10))
    assert _messages(log) == ["t.csv: is 0.0 MiB, more than the 0.0 MiB reportgen reads from one "
                              "file; allowed: at most 10 bytes"]


def test_read_table_refuses_other_extensions(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, "a\n1\n", "t.ods"))
    assert table is None
    assert _messages(log) == ["t.ods: is an OpenDocument spreadsheet, which reportgen does not "
                              "read: save it as .xlsx (Excel Workbook) or .csv"]


# --------------------------------------------------------------------------- xlsx: values


def test_xlsx_cell_texts_and_kinds(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        ws.append(["code", "number", "ratio", "date", "stamp", "flag", "empty", "error"])
        ws.append(["0042", 42, 3.5, dt.date(2024, 5, 1), dt.datetime(2024, 5, 1, 13, 5), True,
                   None, "#N/A"])
        ws.append(["7", 1e20, 0.1, dt.datetime(2024, 5, 2), dt.time(8, 30), False, " same ",
                   "#DIV/0!"])

    table, log = _read(_book(tmp_path, fill))
    assert log.problems == []
    assert table is not None
    assert table.sheet == "Data"
    assert table.rows == (
        ("0042", "42", "3.5", "2024-05-01", "2024-05-01 13:05:00", "TRUE", "", "#N/A"),
        ("7", "1e+20", "0.1", "2024-05-02", "08:30:00", "FALSE", " same ", "#DIV/0!"),
    )
    assert table.kinds == ("snnddbze", "snnddbse")


def test_xlsx_header_lower_down_and_to_the_right(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        ws["C3"] = " item "
        ws["D3"] = "truth"
        ws["C4"] = "0042"
        ws["D4"] = "same"
        ws["C6"] = 17
        ws["D6"] = "different"
        ws["F4"] = "stray"

    table, log = _read(_book(tmp_path, fill))
    assert table is not None
    assert table.header_row == 3
    assert table.columns == ("item", "truth", "(column F)")
    assert table.rows == (("0042", "same", "stray"), ("17", "different", ""))
    assert table.row_numbers == (4, 6)
    assert _messages(log) == ["t.xlsx, sheet 'Data', row 3, column '(column F)': column F has "
                              "values but no header; give it a header or delete it"]


def test_xlsx_duplicate_headers_name_both_columns(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        ws.append(["item", "x", "item"])
        ws.append([1, 2, 3])

    table, log = _read(_book(tmp_path, fill))
    assert table is not None
    assert _messages(log) == ["t.xlsx, sheet 'Data', row 1, column 'item': columns A and C both "
                              "have the header 'item'; every column needs its own header "
                              "(value 'item')"]


def test_xlsx_formula_without_saved_result(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        ws.append(["item", "score"])
        ws.append(["I1", "=1+1"])  # openpyxl saves formulas without a cached value
        ws.append(["I2", 3])

    table, log = _read(_book(tmp_path, fill))
    assert table is not None
    assert table.rows == (("I1", ""), ("I2", "3"))
    assert _messages(log) == [
        "t.xlsx, sheet 'Data', row 2, column 'score': cell B2 has a formula but no saved result "
        "(the file was written by a program that does not calculate); open it in Excel or "
        "LibreOffice and save it again, or type the values in (value '=1+1')"
    ]


@pytest.mark.parametrize("prefix", ["", "x:"])
def test_xlsx_formulas_with_and_without_saved_results(tmp_path: Path, prefix: str) -> None:
    path = _book(tmp_path, _key)
    ns = SHEET_NS.replace("xmlns=", f"xmlns:{prefix[:-1]}=") if prefix else SHEET_NS
    cells = (
        '<row r="1"><c r="A1" t="inlineStr"><is><t>n</t></is></c>'
        '<c r="B1" t="inlineStr"><is><t>m</t></is></c></row>'
        '<row r="2"><c r="A2"><f>1+1</f><v>2</v></c><c r="B2" t="e"><f>1/0</f><v>#DIV/0!</v></c>'
        '</row><row r="3"><c r="A3"><f t="shared" ref="A3:A5" si="0">A2&amp;"x"</f><v>2x</v></c>'
        '</row><row r="4"><c r="A4"><f t="shared" si="0"/><v>3</v></c></row>'
        '<row r="5"><c r="A5"><f t="shared" si="0"/></c></row>'
    )
    xml = f'<worksheet {ns}><sheetData>{cells}</sheetData></worksheet>'
    if prefix:
        xml = xml.replace("</", "</x:").replace("<", "<x:").replace("<x:/x:", "</x:")
    _swap_member(path, "xl/worksheets/sheet1.xml", xml.encode())
    table, log = _read(path)
    assert table is not None
    assert table.rows == (("2", "#DIV/0!"), ("2x", ""), ("3", ""))  # row 5 reads as empty
    assert table.kinds == ("ne", "sz", "nz")
    assert _messages(log) == [
        "t.xlsx, sheet 'Data', row 5, column 'n': cell A5 has a formula but no saved result (the "
        "file was written by a program that does not calculate); open it in Excel or "
        "LibreOffice and save it again, or type the values in (value '=')"
    ]


def test_xlsx_merged_cells_outside_the_table_are_ignored(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        ws.append(["participant", "item"])
        ws.append(["P1", "I1"])
        ws.merge_cells("A10:B11")

    table, log = _read(_book(tmp_path, fill))
    assert table is not None and log.problems == []


def test_xlsx_merged_cells_message(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        ws.append(["participant", "item"])
        ws.append(["P1", "I1"])
        ws.append([None, "I2"])
        ws.merge_cells("A2:A3")

    table, log = _read(_book(tmp_path, fill))
    assert table is not None and table.rows == (("P1", "I1"), ("", "I2"))
    assert _messages(log) == [
        "t.xlsx, sheet 'Data', row 2, column 'participant': cells A2:A3 are merged; only A2 "
        "holds a value and the others read as empty: unmerge them and fill in every cell"
    ]
    assert log.warnings == log.problems


# --------------------------------------------------------------------------- xlsx: sheets


def _two_sheets(tmp_path: Path, hidden: bool) -> Path:
    wb = openpyxl.Workbook()
    first = wb.active
    assert first is not None
    first.title = "Key"
    _key(first)
    second = wb.create_sheet("Notes")
    second["B2"] = "draft"
    if hidden:
        second.sheet_state = "hidden"
    wb.create_sheet("Empty")
    path = tmp_path / "t.xlsx"
    wb.save(path)
    return path


def test_xlsx_hidden_sheet_with_data_warns(tmp_path: Path) -> None:
    table, log = _read(_two_sheets(tmp_path, hidden=True))
    assert table is not None and table.sheet == "Key"
    assert _messages(log) == ["t.xlsx, sheet 'Notes': this hidden sheet has data, which is not "
                              "read; if it is the table, name it under [files] sheet in "
                              "round.toml"]


def test_xlsx_several_sheets_with_data(tmp_path: Path) -> None:
    path = _two_sheets(tmp_path, hidden=False)
    table, log = _read(path)
    assert table is None
    assert _messages(log) == ["t.xlsx: has data on several sheets ('Key', 'Notes'); say which "
                              "one to read with sheet = \"…\" under [files] in round.toml; "
                              "allowed: 'Key', 'Notes'"]
    table, log = _read(path, sheet="Notes")
    assert log.problems == [Problem("t.xlsx", "has a header row but no data rows", sheet="Notes",
                                    row=2)]
    assert table is not None and table.columns == ("draft",)
    table, log = _read(path, sheet="Summary")
    assert table is None
    assert _messages(log) == ["t.xlsx: sheet 'Summary' (named under [files] in round.toml) is "
                              "not in the workbook (value 'Summary'); allowed: 'Key', 'Notes', "
                              "'Empty'"]


def test_xlsx_without_data(tmp_path: Path) -> None:
    table, log = _read(_book(tmp_path, lambda ws: None))
    assert table is None
    assert _messages(log) == ["t.xlsx: is empty: no visible sheet has data; allowed: 'Data'"]


# --------------------------------------------------------------------------- xlsx: not readable


def test_xlsx_corrupt_file(tmp_path: Path) -> None:
    table, log = _read(_csv(tmp_path, b"this is not a workbook", "t.xlsx"))
    assert table is None
    assert _messages(log) == [f"t.xlsx: {NOT_READABLE}"]


def test_xlsx_truncated_file(tmp_path: Path) -> None:
    path = _book(tmp_path, _key)
    path.write_bytes(path.read_bytes()[:-300])
    table, log = _read(path)
    assert table is None
    assert _messages(log) == [f"t.xlsx: {NOT_READABLE}"]


def test_xlsx_password_protected(tmp_path: Path) -> None:
    ole = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504)
    encrypted = ole + "EncryptedInfo".encode("utf-16-le") + "EncryptedPackage".encode("utf-16-le")
    table, log = _read(_csv(tmp_path, encrypted, "t.xlsx"))
    assert table is None
    assert _messages(log) == ["t.xlsx: is password-protected: open it in Excel, remove the "
                              "password (File > Info > Protect Workbook) and save it again"]
    _, log = _read(_csv(tmp_path, ole, "u.xlsx"))
    assert _messages(log) == ["u.xlsx: is an old-format Excel 97-2003 workbook with an .xlsx "
                              "name: open it in Excel and save it as .xlsx (Excel Workbook)"]


def test_xlsx_zip_that_is_not_a_workbook(tmp_path: Path) -> None:
    path = tmp_path / "t.xlsx"
    with zipfile.ZipFile(path, "w") as zf:
        zf.writestr("word/document.xml", "<w/>")
    table, log = _read(path)
    assert table is None
    assert _messages(log) == ["t.xlsx: is a zip file but not an Excel workbook: save the table "
                              "from your spreadsheet program as .xlsx (Excel Workbook)"]


def test_xlsx_zip_bomb_by_ratio(tmp_path: Path) -> None:
    path = _book(tmp_path, _key)
    _swap_member(path, "xl/media/padding.bin", bytes(4 << 20))  # 4 MiB of zeros: ~1000:1
    table, log = _read(path)
    assert table is None
    [message] = _messages(log)
    assert message.startswith("t.xlsx: is compressed ")
    assert message.endswith("times, more than the 100 times a real workbook reaches (a damaged "
                            "file, or a 'zip bomb'); allowed: at most 100:1")


def test_xlsx_unpacked_size_limit(tmp_path: Path) -> None:
    path = _book(tmp_path, _key)
    table, log = _read(path, limits=ReadLimits(max_uncompressed_bytes=1000))
    assert table is None
    [problem] = log.problems
    assert problem.message.startswith("would unpack to ")
    assert "more than the 0.0 MiB reportgen allows (a damaged file, or a 'zip bomb')" in (
        problem.message)
    assert problem.allowed == "at most 1,000 bytes unpacked"


def test_xlsx_file_size_limit(tmp_path: Path) -> None:
    table, log = _read(_book(tmp_path, _key), limits=ReadLimits(max_file_bytes=100))
    assert table is None
    assert log.errors[0].allowed == "at most 100 bytes"


def _patch_sizes(path: Path, member: str, size: int) -> None:
    """Make the zip headers claim ``size`` unpacked bytes for ``member`` (a lying workbook)."""
    data = bytearray(path.read_bytes())
    with zipfile.ZipFile(path) as zf:
        info = zf.getinfo(member)
    central = data.find(b"PK\x01\x02")
    while central != -1:
        name_length = struct.unpack_from("<H", data, central + 28)[0]
        if data[central + 46: central + 46 + name_length].decode() == member:
            struct.pack_into("<L", data, central + 24, size)
        central = data.find(b"PK\x01\x02", central + 4)
    struct.pack_into("<L", data, info.header_offset + 22, size)
    path.write_bytes(bytes(data))


def test_xlsx_part_larger_than_declared_is_refused(tmp_path: Path) -> None:
    path = _book(tmp_path, _key)
    _patch_sizes(path, "xl/worksheets/sheet1.xml", 100)
    table, log = _read(path)
    assert table is None
    assert _messages(log) == ["t.xlsx: is damaged (part xl/worksheets/sheet1.xml does not match "
                              "its recorded size or checksum): open it in Excel and save it "
                              "again"]


def test_xlsx_stray_far_cell_is_refused_before_calamine(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        _key(ws)
        ws["XFD1048576"] = "x"  # calamine would allocate 17 billion cells and abort

    assert _read_in_child(_book(tmp_path, fill)) == [
        "t.xlsx, sheet 'Data': has cells in use on 1,048,576 rows (A1:XFD1048576), more than "
        "the 200,000 reportgen reads (is there a stray value or formatted cell far below or right "
        "of the table?); allowed: at most 200,000 rows"
    ]


def test_xlsx_area_limit(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        _key(ws)
        ws["ZZ10000"] = "x"

    table, log = _read(_book(tmp_path, fill))
    assert table is None
    assert _messages(log) == [
        "t.xlsx, sheet 'Data': has cells in use across 10,000 rows x 702 columns (A1:ZZ10000), "
        "more than the 5,000,000 cells reportgen reads (is there a stray value or formatted cell "
        "far below or right of the table?); allowed: at most 5,000,000 cells"
    ]


def test_xlsx_cells_without_address_are_placed_like_calamine(tmp_path: Path) -> None:
    path = _book(tmp_path, _key)
    _swap_member(path, "xl/worksheets/sheet1.xml", (
        f'<worksheet {SHEET_NS}><sheetData>'
        '<row><c t="inlineStr"><is><t>item</t></is></c><c t="inlineStr"><is><t>n</t></is></c>'
        '</row><row><c t="inlineStr"><is><t>I1</t></is></c><c><v>3</v></c></row>'
        '<row r="5"><c t="inlineStr"><is><t>I2</t></is></c><c><v>4</v></c></row>'
        '</sheetData></worksheet>').encode())
    table, log = _read(path)
    assert log.problems == []
    assert table is not None
    assert table.rows == (("I1", "3"), ("I2", "4"))
    assert table.row_numbers == (2, 5)

    _swap_member(path, "xl/worksheets/sheet1.xml", (
        f'<worksheet {SHEET_NS}><sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>item</t>'
        '</is></c></row><row r="1048576"><c><v>1</v></c></row></sheetData></worksheet>'
    ).encode())
    assert _read_in_child(path) == [
        "t.xlsx, sheet 'Data': has cells in use on 1,048,576 rows (A1:A1048576), more than the "
        "200,000 reportgen reads (is there a stray value or formatted cell far below or right of "
        "the table?); allowed: at most 200,000 rows"
    ]


def test_xlsx_namespace_prefixed_cells(tmp_path: Path) -> None:
    path = _book(tmp_path, _key)
    ns = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
    _swap_member(path, "xl/worksheets/sheet1.xml", (
        f'<x:worksheet xmlns:x="{ns}"><x:sheetData>'
        '<x:row r="1"><x:c r="A1" t="inlineStr"><x:is><x:t>n</x:t></x:is></x:c></x:row>'
        '<x:row r="2"><x:c r="A2"><x:v>3</x:v></x:c></x:row>'
        '<x:row r="3"><x:c r="XFD1048576"><x:v>3</x:v></x:c></x:row>'
        '</x:sheetData></x:worksheet>').encode())
    assert "has cells in use on 1,048,576 rows" in _read_in_child(path)[0]


def test_xlsx_false_shared_string_count_is_refused(tmp_path: Path) -> None:
    path = _book(tmp_path, _key)
    _swap_member(path, "xl/sharedStrings.xml", (
        f'<sst {SHEET_NS} count="1" uniqueCount="4000000000"><si><t>x</t></si></sst>').encode())
    assert _read_in_child(path) == [
        "t.xlsx: is damaged (it claims 4,000,000,000 different texts but holds 1): open it in "
        "Excel and save it again"
    ]


def test_xlsx_row_limit(tmp_path: Path) -> None:
    def fill(ws: Worksheet) -> None:
        ws.append(["n"])
        for i in range(6):
            ws.append([i])

    path = _book(tmp_path, fill)
    assert _read(path, limits=ReadLimits(max_rows=6))[0] is not None
    table, log = _read(path, limits=ReadLimits(max_rows=5))
    assert table is None
    assert log.errors[0].allowed == "at most 5 rows"


# --------------------------------------------------------------------------- properties


@settings(max_examples=150, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(content=st.binary(max_size=2000), suffix=st.sampled_from([".csv", ".xlsx"]))
def test_any_bytes_give_a_table_or_logged_errors(tmp_path: Path, content: bytes,
                                                 suffix: str) -> None:
    path = tmp_path / f"any{suffix}"
    path.write_bytes(content)
    table, log = _read(path)
    if table is None:
        assert log.errors
    else:
        assert all(len(row) == len(table.columns) for row in table.rows)
        assert all(len(kinds) == len(table.columns) for kinds in table.kinds)


_WORKBOOK_BYTES: list[bytes] = []


def _small_workbook() -> bytes:
    if not _WORKBOOK_BYTES:
        wb = openpyxl.Workbook()
        ws = wb.active
        assert ws is not None
        ws.append(["item", "truth", "n"])
        ws.append(["0042", "same", 3.5])
        ws.append(["I2", "=B2", dt.date(2024, 1, 2)])
        buffer = io.BytesIO()
        wb.save(buffer)
        _WORKBOOK_BYTES.append(buffer.getvalue())
    return _WORKBOOK_BYTES[0]


@settings(max_examples=200, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(flips=st.lists(st.tuples(st.one_of(st.integers(min_value=0),  # anywhere, or in the
                                          st.integers(-200, -1)),     # zip's central directory
                                st.integers(1, 255)), min_size=1, max_size=4))
def test_damaged_workbooks_give_a_table_or_logged_errors(tmp_path: Path,
                                                         flips: list[tuple[int, int]]) -> None:
    data = bytearray(_small_workbook())
    for position, mask in flips:
        data[position % len(data)] ^= mask
    path = tmp_path / "damaged.xlsx"
    path.write_bytes(bytes(data))
    table, log = _read(path)
    assert table is not None or log.errors


_CELL_TEXT = st.text(st.characters(exclude_categories=["Cs"], exclude_characters="\x00"),
                     max_size=12)


@settings(max_examples=100, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.lists(_CELL_TEXT, min_size=3, max_size=3), max_size=8),
       delimiter=st.sampled_from([",", ";", "\t"]),
       encoding=st.sampled_from(["utf-8", "utf-8-sig", "utf-16"]))
def test_csv_round_trip(tmp_path: Path, rows: list[list[str]], delimiter: str,
                        encoding: str) -> None:
    import csv

    buffer = io.StringIO()
    writer = csv.writer(buffer, delimiter=delimiter)
    writer.writerow(["a", "b", "c"])
    writer.writerows(rows)
    path = tmp_path / "t.csv"
    path.write_bytes(buffer.getvalue().encode(encoding))
    table, log = _read(path)
    kept = [tuple(row) for row in rows if "".join(row).strip()]
    assert _messages(log) == ([] if kept else ["t.csv, row 1: has a header row but no data rows"])
    assert table is not None
    assert table.rows == tuple(kept)
    assert list(table.row_numbers) == sorted(set(table.row_numbers))
