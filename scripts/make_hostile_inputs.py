"""Generate every crafted round input of the hostile-input suite (tests/hostile).

Each case is a whole round folder: a tiny valid round with one thing broken the way outside files
break (spreadsheet exports, hand-edited workbooks, crafted zip and XML files, mistyped settings).
No binary file is committed: workbooks, OLE headers and zip bombs are built here, from code.

    python scripts/make_hostile_inputs.py OUTDIR            # every case, OUTDIR/<case>/
    python scripts/make_hostile_inputs.py OUTDIR --case xlsx_zip_bomb

``REFUSED`` cases must be refused (exit status 2, a located message, nothing written);
``ACCEPTED`` cases are awkward but valid and must be read without losing a character.
The expected messages live in the tests, not here.
"""

from __future__ import annotations

import argparse
import codecs
import datetime as dt
import io
import random
import shutil
import unicodedata
import zipfile
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import openpyxl

# --------------------------------------------------------------------------- the valid base round

ROUND_TOML = """\
[round]
id = "H-1"
scheme = "Hostile input scheme"
title = "Tiny round"
opened = 2026-01-05
closed = 2026-01-20
issued = 2026-02-01
key_statement = "Known from the capture sessions."

[provider]
name = "Test Provider"

[confidence]
kind = "ordinal"
min = 1
max = 5
probability_map = "linear"

[[criteria]]
id = "C1"
label = "No false positives"
metric = "false_positives"
at_most = 0

[[criteria]]
id = "C2"
label = "Accuracy at least 0.5"
metric = "accuracy"
at_least = 0.5
"""

ITEMS = ["0001", "0002", "0003", "0004", "0005", "0006"]
TRUTH = ["same", "same", "same", "different", "different", "different"]
QUALITY = ["good", "poor", "good", "good", "fair", "poor"]

# participant -> (decision, confidence) for each item, in the order of ITEMS
ANSWERS: dict[str, list[tuple[str, int]]] = {
    "0042": [("same", 5), ("same", 4), ("same", 3), ("different", 5), ("different", 4),
             ("different", 2)],
    "A7": [("same", 4), ("different", 2), ("same", 5), ("same", 2), ("different", 5),
           ("inconclusive", 3)],
    "B3": [("inconclusive", 2), ("same", 3), ("different", 1), ("different", 4),
           ("different", 3), ("same", 1)],
    "C9": [("same", 3), ("same", 5), ("same", 4), ("different", 3), ("same", 2),
           ("different", 5)],
}
PEOPLE = [("0042", "Ines Varga", "Lab North"), ("A7", "Tomas Reyl", "Lab North"),
          ("B3", "Odile Marsh", "Lab South"), ("C9", "Piet Salo", "Lab East")]

Cell = Any  # str | int | float | bool | date | datetime | None, as openpyxl writes it
Rows = list[list[Cell]]


def items_rows() -> Rows:
    return [["item", "truth", "quality"], *map(list, zip(ITEMS, TRUTH, QUALITY, strict=True))]


def responses_rows() -> Rows:
    """Header row 1; 0042 on rows 2-7, A7 on 8-13, B3 on 14-19, C9 on 20-25."""
    rows: Rows = [["participant", "item", "decision", "confidence"]]
    for code, answers in ANSWERS.items():
        rows += [[code, item, d, c] for item, (d, c) in zip(ITEMS, answers, strict=True)]
    return rows


def participants_rows() -> Rows:
    return [["participant", "name", "organisation"], *map(list, PEOPLE)]


def csv_text(rows: Rows, delimiter: str = ",") -> str:
    return "".join(delimiter.join(str(c) for c in row) + "\n" for row in rows)


def base(folder: Path, **files: str | bytes | None) -> None:
    """Write the valid base round into ``folder``; ``files`` replace (``None``: remove) files,
    named with ``__`` for ``.`` (``responses__csv``)."""
    folder.mkdir(parents=True, exist_ok=True)
    contents: dict[str, str | bytes | None] = {
        "round.toml": ROUND_TOML,
        "items.csv": csv_text(items_rows()),
        "responses.csv": csv_text(responses_rows()),
        "participants.csv": csv_text(participants_rows()),
    }
    contents.update({k.replace("__", "."): v for k, v in files.items()})
    for name, content in contents.items():
        if content is None:
            continue
        data = content.encode("utf-8") if isinstance(content, str) else content
        (folder / name).write_bytes(data)


def replace_once(text: str, old: str, new: str) -> str:
    """``text`` with the first ``old`` replaced by ``new`` (``old`` must be there)."""
    if old not in text:
        raise ValueError(f"{old!r} is not in the text")
    return text.replace(old, new, 1)


def toml(old: str, new: str) -> str:
    """round.toml with ``old`` replaced by ``new``."""
    return replace_once(ROUND_TOML, old, new)


def toml_table(table: str) -> str:
    """round.toml with a table (or keys) added before [confidence]."""
    return toml("[confidence]", f"{table}\n\n[confidence]")


def swap(rows: Rows, row: int, column: int, value: Cell) -> Rows:
    """A copy of ``rows`` with one cell changed (``row`` as the spreadsheet numbers it)."""
    out = [list(r) for r in rows]
    out[row - 1][column] = value
    return out


# --------------------------------------------------------------------------- workbook helpers

_WHEN = dt.datetime(2026, 2, 1, 12, 0, 0)


def workbook(*sheets: tuple[str, Rows], hidden: Sequence[str] = (),
             edit: Callable[[Any], None] | None = None) -> bytes:
    """An .xlsx with the given sheets (title, rows); ``hidden`` sheets are hidden; ``edit`` may
    change the openpyxl workbook before it is saved."""
    wb = openpyxl.Workbook()
    first = wb.active
    for n, (title, rows) in enumerate(sheets):
        ws = first if n == 0 and first is not None else wb.create_sheet()
        ws.title = title
        for row in rows:
            ws.append(row)
        if title in hidden:
            ws.sheet_state = "hidden"
    if edit is not None:
        edit(wb)
    wb.properties.created = wb.properties.modified = _WHEN
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()


def zip_parts(data: bytes) -> dict[str, bytes]:
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        return {info.filename: archive.read(info) for info in archive.infolist()}


def make_zip(parts: dict[str, bytes], stored: Sequence[str] = ()) -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, content in parts.items():
            info = zipfile.ZipInfo(name, date_time=(2026, 2, 1, 12, 0, 0))
            info.compress_type = zipfile.ZIP_STORED if name in stored else zipfile.ZIP_DEFLATED
            archive.writestr(info, content)
    return buf.getvalue()


def edit_part(data: bytes, member: str, change: Callable[[bytes], bytes]) -> bytes:
    parts = zip_parts(data)
    parts[member] = change(parts[member])
    return make_zip(parts)


SHEET = "xl/worksheets/sheet1.xml"
BILLION_LAUGHS = (
    b'<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">'
    + b"".join(b'<!ENTITY lol%d "%s">' % (n, b"".join([b"&lol%d;" % (n - 1) if n > 1
                                                       else b"&lol;"] * 10))
               for n in range(1, 10))
    + b"]>\n"
)
EXTERNAL_ENTITY = b'<?xml version="1.0"?>\n<!DOCTYPE x [<!ENTITY xxe SYSTEM "file:///etc/passwd">]>\n'


def _without_declaration(xml: bytes) -> bytes:
    return xml[xml.index(b"?>") + 2:].lstrip() if xml.startswith(b"<?xml") else xml


def responses_xlsx(rows: Rows | None = None) -> bytes:
    return workbook(("Responses", rows if rows is not None else responses_rows()))


def ole_file(encrypted: bool) -> bytes:
    """The first bytes of an OLE compound file: an Excel 97-2003 workbook, or (with the
    ``EncryptedPackage`` stream name) a password-protected .xlsx, which Excel stores as OLE."""
    header = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504)
    stream = "EncryptedPackage" if encrypted else "Workbook"
    return header + stream.encode("utf-16-le") + bytes(512)


# --------------------------------------------------------------------------- the cases

Build = Callable[[Path], None]
REFUSED: dict[str, Build] = {}
ACCEPTED: dict[str, Build] = {}


def refused(build: Build) -> Build:
    REFUSED[build.__name__] = build
    return build


def accepted(build: Build) -> Build:
    ACCEPTED[build.__name__] = build
    return build


# round.toml ---------------------------------------------------------------------------------

@refused
def toml_missing(f: Path) -> None:
    base(f, round__toml=None)


@refused
def toml_syntax_unclosed_string(f: Path) -> None:
    base(f, round__toml=toml('title = "Tiny round"', 'title = "Tiny round'))


@refused
def toml_syntax_duplicate_key(f: Path) -> None:
    base(f, round__toml=toml('id = "H-1"', 'id = "H-1"\nid = "H-2"'))


@refused
def toml_not_utf8(f: Path) -> None:
    base(f, round__toml=toml("Tiny round", "Petit résumé").encode("latin-1"))


@refused
def toml_too_large(f: Path) -> None:
    base(f, round__toml=ROUND_TOML + ("# padding\n" * 110_000))


@refused
def toml_nested_too_deeply(f: Path) -> None:
    base(f, round__toml=ROUND_TOML + "x = " + "[" * 50_000 + "]" * 50_000 + "\n")


@refused
def toml_wrong_type(f: Path) -> None:
    base(f, round__toml=toml("min = 1", 'min = "one"'))


@refused
def toml_unknown_key(f: Path) -> None:
    base(f, round__toml=toml("max = 5", "max = 5\ncolour = 3"))


@refused
def toml_missing_round_table(f: Path) -> None:
    start, end = ROUND_TOML.index("[round]"), ROUND_TOML.index("[provider]")
    base(f, round__toml=ROUND_TOML[:start] + ROUND_TOML[end:])


@refused
def toml_dates_out_of_order(f: Path) -> None:
    base(f, round__toml=toml("closed = 2026-01-20", "closed = 2025-12-20"))


@refused
def toml_decision_to_undeclared_class(f: Path) -> None:
    base(f, round__toml=toml_table('[decisions]\nsame = "same"\ndifferent = "different"\n'
                                   'inconclusive = "inconclusive"\nmaybe = "perhaps"'))


@refused
def toml_class_without_decision(f: Path) -> None:
    base(f, round__toml=toml_table('[decisions]\nsame = "same"\ninconclusive = "inconclusive"'))


@refused
def toml_blank_decision_label(f: Path) -> None:
    base(f, round__toml=toml_table('[decisions]\nsame = "same"\ndifferent = "different"\n'
                                   '"" = "inconclusive"'))


@refused
def toml_decision_labels_differ_by_case(f: Path) -> None:
    base(f, round__toml=toml_table('[decisions]\nsame = "same"\nSame = "different"\n'
                                   'different = "different"'))


@refused
def toml_positive_not_a_class(f: Path) -> None:
    base(f, round__toml=toml_table('[classes]\nlabels = ["same", "different"]\n'
                                   'positive = "match"'))


@refused
def toml_criterion_unknown_metric(f: Path) -> None:
    base(f, round__toml=toml('metric = "accuracy"', 'metric = "acuracy"'))


@refused
def toml_criterion_contradictory_bounds(f: Path) -> None:
    base(f, round__toml=toml("at_least = 0.5", "at_least = 0.9\nat_most = 0.5"))


@refused
def toml_criterion_duplicate_ids(f: Path) -> None:
    base(f, round__toml=toml('id = "C2"', 'id = "C1"'))


@refused
def toml_scale_min_equals_max(f: Path) -> None:
    base(f, round__toml=toml("max = 5", "max = 1"))


@refused
def toml_scale_min_above_max(f: Path) -> None:
    base(f, round__toml=toml("min = 1\nmax = 5", "min = 5\nmax = 1"))


@refused
def toml_scale_infinite(f: Path) -> None:
    base(f, round__toml=toml("max = 5", "max = inf"))


@refused
def toml_probability_scale_beyond_percent(f: Path) -> None:
    base(f, round__toml=toml('kind = "ordinal"\nmin = 1\nmax = 5\nprobability_map = "linear"',
                             'kind = "probability"\nmin = 50\nmax = 150'))


@refused
def toml_negative_seed(f: Path) -> None:
    base(f, round__toml=toml_table("[scoring]\nseed = -1"))


@refused
def toml_accent_not_a_colour(f: Path) -> None:
    base(f, round__toml=toml('name = "Test Provider"', 'name = "Test Provider"\naccent = "red"'))


@refused
def toml_columns_shared(f: Path) -> None:
    base(f, round__toml=toml_table('[columns]\ndecision = "confidence"'))


@refused
def toml_limits_out_of_range(f: Path) -> None:
    base(f, round__toml=toml_table("[limits]\nmax_rows = 0"))


@refused
def toml_file_outside_folder(f: Path) -> None:
    base(f, round__toml=toml_table('[files]\nitems = "../items.csv"'))


@refused
def toml_file_name_with_nul(f: Path) -> None:
    base(f, round__toml=toml_table('[files]\nitems = "items\\u0000.csv"'))


@refused
def toml_file_name_too_long(f: Path) -> None:
    base(f, round__toml=toml_table(f'[files]\nitems = "{"i" * 300}.csv"'))


@refused
def toml_logo_outside_folder(f: Path) -> None:
    base(f, round__toml=toml('name = "Test Provider"',
                             'name = "Test Provider"\nlogo = "../logo.png"'))


@refused
def toml_logo_missing(f: Path) -> None:
    base(f, round__toml=toml('name = "Test Provider"', 'name = "Test Provider"\nlogo = "logo.png"'))


@refused
def toml_wide_columns_not_found(f: Path) -> None:
    base(f, round__toml=toml_table('[files]\nlayout = "wide"\n\n[wide]\n'
                                   'decision = "{item}_{x}"'))


# which file, which format ---------------------------------------------------------------------

@refused
def missing_responses(f: Path) -> None:
    base(f, responses__csv=None)


@refused
def responses_both_csv_and_xlsx(f: Path) -> None:
    base(f, responses__xlsx=responses_xlsx())


@refused
def responses_xls(f: Path) -> None:
    base(f, responses__csv=None, responses__xls=ole_file(encrypted=False))


@refused
def responses_ods(f: Path) -> None:
    base(f, responses__csv=None, responses__ods=b"PK\x03\x04 not read")


@refused
def responses_numbers(f: Path) -> None:
    base(f, responses__csv=None, responses__numbers=b"PK\x03\x04 not read")


@refused
def csv_is_a_workbook(f: Path) -> None:
    base(f, responses__csv=responses_xlsx())


# csv ----------------------------------------------------------------------------------------

def _responses_csv(change: Callable[[str], str]) -> str:
    return change(csv_text(responses_rows()))


def _replace_line(old: str, new: str) -> Callable[[str], str]:
    def change(text: str) -> str:
        return replace_once(text, old, new)
    return change


@refused
def csv_nul_bytes(f: Path) -> None:
    base(f, responses__csv=_responses_csv(_replace_line("A7,0001", "A7\x00,0001")).encode())


@refused
def csv_bom_but_not_utf8(f: Path) -> None:
    text = _responses_csv(_replace_line("B3,0002,same", "B3,0002,sáme"))
    base(f, responses__csv=codecs.BOM_UTF8 + text.encode("latin-1"))


@refused
def csv_empty(f: Path) -> None:
    base(f, responses__csv="\n \n")


@refused
def csv_header_only(f: Path) -> None:
    base(f, responses__csv="participant,item,decision,confidence\n")


@refused
def csv_unclosed_quote(f: Path) -> None:
    base(f, responses__csv=_responses_csv(_replace_line("B3,0003,", '"B3,0003,')))


@refused
def csv_ragged_extra_value(f: Path) -> None:
    base(f, responses__csv=_responses_csv(_replace_line("C9,0004,different,3",
                                                        "C9,0004,different,3,sure")))


@refused
def csv_duplicate_header(f: Path) -> None:
    base(f, items__csv=csv_text([["item", "truth", "item"],
                                 *[[i, t, i] for i, t in zip(ITEMS, TRUTH, strict=True)]]))


@refused
def csv_values_without_header(f: Path) -> None:
    base(f, items__csv=csv_text([["item", "truth", ""],
                                 *[[i, t, "x"] for i, t in zip(ITEMS, TRUTH, strict=True)]]))


@refused
def csv_title_line_above_header(f: Path) -> None:
    base(f, responses__csv="Responses exported 2026-01-21\n" + csv_text(responses_rows()))


@refused
def csv_row_limit(f: Path) -> None:
    base(f, round__toml=toml_table("[limits]\nmax_rows = 10"))


@refused
def csv_cell_limit(f: Path) -> None:
    base(f, round__toml=toml_table("[limits]\nmax_cells = 40"))


# xlsx ---------------------------------------------------------------------------------------

@refused
def xlsx_password_protected(f: Path) -> None:
    base(f, responses__csv=None, responses__xlsx=ole_file(encrypted=True))


@refused
def xlsx_old_format_renamed(f: Path) -> None:
    base(f, responses__csv=None, responses__xlsx=ole_file(encrypted=False))


@refused
def xlsx_corrupt(f: Path) -> None:
    noise = random.Random(5).randbytes(3000)
    base(f, responses__csv=None, responses__xlsx=b"PK\x03\x04" + noise)


@refused
def xlsx_truncated(f: Path) -> None:
    data = responses_xlsx()
    base(f, responses__csv=None, responses__xlsx=data[: len(data) // 2])


@refused
def xlsx_is_opendocument(f: Path) -> None:
    ods = make_zip({"mimetype": b"application/vnd.oasis.opendocument.spreadsheet",
                    "content.xml": b"<office:document-content/>"}, stored=["mimetype"])
    base(f, responses__csv=None, responses__xlsx=ods)


@refused
def xlsx_plain_zip(f: Path) -> None:
    base(f, responses__csv=None, responses__xlsx=make_zip({"readme.txt": b"hello"}))


@refused
def xlsx_zip_bomb(f: Path) -> None:
    def pad(xml: bytes) -> bytes:  # 8 MiB of spaces inflate from about 8 KiB
        return xml.replace(b"<sheetData>", b"<sheetData>" + b" " * (8 << 20), 1)
    base(f, responses__csv=None, responses__xlsx=edit_part(responses_xlsx(), SHEET, pad))


def _padded_xlsx() -> bytes:
    """The responses workbook with 1.5 MiB of incompressible bytes in an extra part."""
    parts = zip_parts(responses_xlsx())
    parts["xl/media/image1.bin"] = random.Random(7).randbytes(3 << 19)
    return make_zip(parts, stored=["xl/media/image1.bin"])


@refused
def xlsx_unpacked_size_limit(f: Path) -> None:
    base(f, round__toml=toml_table("[limits]\nmax_unpacked_mib = 1\nmax_file_mib = 2"),
         responses__csv=None, responses__xlsx=_padded_xlsx())


@refused
def xlsx_file_size_limit(f: Path) -> None:
    base(f, round__toml=toml_table("[limits]\nmax_file_mib = 1"),
         responses__csv=None, responses__xlsx=_padded_xlsx())


@refused
def xlsx_row_limit(f: Path) -> None:
    base(f, round__toml=toml_table("[limits]\nmax_rows = 10"),
         responses__csv=None, responses__xlsx=responses_xlsx())


@refused
def xlsx_stray_far_cell(f: Path) -> None:
    """One value at XFD1048576: calamine would allocate 17 billion cells and abort."""
    def far(wb: Any) -> None:
        wb.active["XFD1048576"] = "x"
    base(f, responses__csv=None,
         responses__xlsx=workbook(("Responses", responses_rows()), edit=far))


@refused
def xlsx_false_shared_strings_count(f: Path) -> None:
    """A shared-strings part claiming 2 billion texts: calamine would reserve memory for all."""
    parts = zip_parts(responses_xlsx())
    parts["xl/sharedStrings.xml"] = (
        b'<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
        b'count="2000000000" uniqueCount="2000000000"><si><t>x</t></si></sst>')
    base(f, responses__csv=None, responses__xlsx=make_zip(parts))


@refused
def xlsx_billion_laughs(f: Path) -> None:
    def attack(xml: bytes) -> bytes:
        body = _without_declaration(xml).replace(b"<t>A7</t>", b"<t>&lol9;</t>", 1)
        return BILLION_LAUGHS + body
    base(f, responses__csv=None, responses__xlsx=edit_part(responses_xlsx(), SHEET, attack))


@refused
def xlsx_external_entity(f: Path) -> None:
    def attack(xml: bytes) -> bytes:
        return EXTERNAL_ENTITY + _without_declaration(xml)
    base(f, responses__csv=None,
         responses__xlsx=edit_part(responses_xlsx(), "xl/workbook.xml", attack))


@refused
def xlsx_no_sheet_with_data(f: Path) -> None:
    base(f, responses__csv=None, responses__xlsx=workbook(("Responses", [])))


@refused
def xlsx_only_a_hidden_sheet_has_data(f: Path) -> None:
    base(f, responses__csv=None, responses__xlsx=workbook(
        ("Cover", []), ("Responses", responses_rows()), hidden=["Responses"]))


@refused
def xlsx_several_sheets_with_data(f: Path) -> None:
    base(f, responses__csv=None, responses__xlsx=workbook(
        ("Responses", responses_rows()), ("Copy", responses_rows())))


@refused
def xlsx_named_sheet_missing(f: Path) -> None:
    base(f, round__toml=toml_table('[files]\nsheet = "Answers"'),
         responses__csv=None, responses__xlsx=responses_xlsx())


@refused
def xlsx_merged_cells(f: Path) -> None:
    def merge(wb: Any) -> None:
        wb.active.merge_cells("C8:C9")  # A7's first two decisions, merged
    base(f, responses__csv=None,
         responses__xlsx=workbook(("Responses", responses_rows()), edit=merge))


@refused
def xlsx_formula_without_saved_value(f: Path) -> None:
    rows = swap(responses_rows(), 10, 3, "=2+2")
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


@refused
def xlsx_date_as_participant_code(f: Path) -> None:
    rows = responses_rows()
    for row in range(8, 14):  # A7 typed as "7/1", which the spreadsheet made a date
        rows = swap(rows, row, 0, dt.datetime(2026, 1, 7))
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


@refused
def xlsx_date_as_item_id(f: Path) -> None:
    rows = swap(items_rows(), 4, 0, dt.datetime(2026, 3, 1))
    base(f, items__csv=None, items__xlsx=workbook(("Key", rows)))


@refused
def xlsx_long_number_as_code(f: Path) -> None:
    rows = responses_rows()
    for row in range(20, 26):  # C9 re-typed as a 19-digit number: Excel keeps 15 digits
        rows = swap(rows, row, 0, 1234567890123456789)
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


@refused
def xlsx_error_value_as_code(f: Path) -> None:
    rows = swap(responses_rows(), 15, 0, "#N/A")  # a lookup that failed
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


@refused
def xlsx_true_false_as_item(f: Path) -> None:
    rows = swap(responses_rows(), 16, 1, True)
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


# codes and labels ---------------------------------------------------------------------------

@refused
def item_lost_leading_zeros(f: Path) -> None:
    base(f, responses__csv=_responses_csv(_replace_line("B3,0003,", "B3,3,")))


@refused
def participant_number_lost_leading_zeros(f: Path) -> None:
    rows = responses_rows()
    for row in range(2, 8):  # 0042 typed into a number cell: 42
        rows = swap(rows, row, 0, 42)
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


@refused
def participant_codes_differ_by_leading_zeros(f: Path) -> None:
    base(f, responses__csv=_responses_csv(_replace_line("0042,0006,", "42,0006,")))


@refused
def estimate_lost_leading_zeros(f: Path) -> None:
    base(f, estimates__csv="participant,estimate\n42,80\nA7,60\n")


@refused
def codes_differ_by_unicode_form(f: Path) -> None:
    nfc, nfd = "José", unicodedata.normalize("NFD", "José")
    text = csv_text(responses_rows()).replace("C9,", nfc + ",")
    text = replace_once(text, f"{nfc},0006", f"{nfd},0006")
    people = csv_text(participants_rows()).replace("C9,", nfc + ",")
    base(f, responses__csv=text, participants__csv=people)


@refused
def decision_with_trailing_space(f: Path) -> None:
    base(f, responses__csv=_responses_csv(_replace_line("B3,0002,same,", "B3,0002,same ,")))


@refused
def truth_label_in_capitals(f: Path) -> None:
    base(f, items__csv=replace_once(csv_text(items_rows()), "0005,different", "0005,DIFFERENT"))


@refused
def blank_decision(f: Path) -> None:
    base(f, responses__csv=_responses_csv(_replace_line("C9,0002,same,5", "C9,0002,,5")))


@refused
def confidence_with_decimal_comma(f: Path) -> None:
    base(f, responses__csv=_responses_csv(_replace_line("A7,0004,same,2", 'A7,0004,same,"2,5"')))


@refused
def participant_listed_twice(f: Path) -> None:
    base(f, participants__csv=csv_text(participants_rows()) + "B3,Odile Marsh,Lab West\n")


@refused
def participant_missing_from_participants_file(f: Path) -> None:
    base(f, participants__csv=csv_text(participants_rows()[:-1]))


# accepted: awkward but valid ------------------------------------------------------------------

NAMES = {"A7": "José Müller", "B3": "Renée Ødegård"}


def _people_text(delimiter: str = ",") -> str:
    rows = participants_rows()
    for row in rows:
        row[1] = NAMES.get(row[0], row[1])
    return csv_text(rows, delimiter)


@accepted
def accept_csv_utf8_with_bom(f: Path) -> None:
    base(f, participants__csv=codecs.BOM_UTF8 + _people_text().encode("utf-8"))


@accepted
def accept_csv_utf16_with_bom(f: Path) -> None:
    base(f, participants__csv=_people_text().encode("utf-16"))


@accepted
def accept_csv_utf16_without_bom(f: Path) -> None:
    base(f, participants__csv=_people_text().encode("utf-16-le"))


@accepted
def accept_csv_latin1(f: Path) -> None:
    base(f, participants__csv=_people_text().encode("latin-1"))


@accepted
def accept_csv_semicolons_and_crlf(f: Path) -> None:
    base(f, participants__csv=_people_text(";").replace("\n", "\r\n"),
         responses__csv=csv_text(responses_rows(), ";"))


@accepted
def accept_csv_tabs(f: Path) -> None:
    base(f, responses__csv=csv_text(responses_rows(), "\t"))


@accepted
def accept_csv_quoted_newline_and_delimiter(f: Path) -> None:
    text = _people_text().replace("Lab South", '"Lab South,\nBuilding 2"')
    base(f, participants__csv=text)


@accepted
def accept_csv_short_rows_padded(f: Path) -> None:
    rows = [row[:2] if row[0] == "C9" else row for row in participants_rows()]
    base(f, participants__csv=csv_text(rows))


@accepted
def accept_normalised_labels(f: Path) -> None:
    text = _responses_csv(_replace_line("B3,0002,same,", "B3,0002,Same ,"))
    base(f, round__toml=toml_table("[scoring]\nnormalise_labels = true"), responses__csv=text)


@accepted
def accept_xlsx_header_below_a_gap(f: Path) -> None:
    rows: Rows = [[], [], *[[None, *row] for row in responses_rows()]]
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


@accepted
def accept_xlsx_numeric_items_and_hidden_notes(f: Path) -> None:
    rows: Rows = [["participant", "item", "decision", "confidence"]]
    rows += [[code, int(item), d, c] for code, answers in ANSWERS.items()
             for item, (d, c) in zip(ITEMS, answers, strict=True)]
    key: Rows = [["item", "truth"], *[[int(i), t] for i, t in zip(ITEMS, TRUTH, strict=True)]]
    base(f, items__csv=None, items__xlsx=workbook(("Key", key)),
         responses__csv=None,
         responses__xlsx=workbook(("Responses", rows), ("Notes", [["x"]]), hidden=["Notes"]))


# a valid round whose text is hostile to what is written from it ------------------------------

# code, name, organisation: markup for the HTML, formulas for the workbook, path parts and
# reserved device names for file names, a 300-character code, and two codes whose file names
# would collide on a case-insensitive file system.
HOSTILE_PEOPLE = [
    ("0042", "<script>alert(1)</script>", "Lab <b>North</b> & Sons"),
    ("../x", "=cmd|' /C calc'!A0", "+1"),
    ("a/b", "-2", "@x"),
    ("CON", "@SUM(A1:A9)", "Lab South"),
    ("Z" * 300, "Long Code", "Lab East"),
    ("a b", "Stem Clash", "Lab East"),
    ("A_B", "Other Clash", "Lab West"),
    ("=1+2", "Formula Code", "Lab West"),
    ("\tTAB", "Tab Code", "Lab West"),
    ("\rCR", "Return Code", "Lab West"),
]
# item attributes are kept exactly as written (names are stripped of surrounding spaces)
HOSTILE_ATTRIBUTES = ["\tTAB", "\rCR", "=1+2", "+1", "-2", "@x"]


def _quoted(value: str) -> str:
    return '"' + value.replace('"', '""') + '"'


def hostile_text_round(folder: Path) -> None:
    """The base round with the codes, names and organisations of ``HOSTILE_PEOPLE`` and the
    item attributes of ``HOSTILE_ATTRIBUTES``; every participant answers like 0042 or A7."""
    codes = [code for code, _, _ in HOSTILE_PEOPLE]
    responses = [["participant", "item", "decision", "confidence"]]
    for n, code in enumerate(codes):
        answers = ANSWERS["0042"] if n % 2 == 0 else ANSWERS["A7"]
        responses += [[_quoted(code), item, d, str(c)]
                      for item, (d, c) in zip(ITEMS, answers, strict=True)]
    people = [["participant", "name", "organisation"],
              *[[_quoted(c), _quoted(n), _quoted(o)] for c, n, o in HOSTILE_PEOPLE]]
    items = [["item", "truth", "quality"],
             *[[i, t, _quoted(q)] for i, t, q in zip(ITEMS, TRUTH, HOSTILE_ATTRIBUTES,
                                                     strict=True)]]
    base(folder, responses__csv=csv_text(responses), participants__csv=csv_text(people),
         items__csv=csv_text(items))


# --------------------------------------------------------------------------- command line


def build(target: Path, names: Sequence[str] | None = None) -> list[Path]:
    """Write the cases (all, or ``names``) into ``target/<case>/``; return their folders."""
    cases = {**REFUSED, **ACCEPTED, "hostile_text_round": hostile_text_round}
    folders = []
    for name in names or sorted(cases):
        folder = target / name
        shutil.rmtree(folder, ignore_errors=True)
        cases[name](folder)
        folders.append(folder)
    return folders


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("target", type=Path, help="folder to write the cases into")
    parser.add_argument("--case", action="append",
                        choices=sorted({**REFUSED, **ACCEPTED, "hostile_text_round": None}),
                        help="write only this case (repeatable)")
    args = parser.parse_args(argv)
    folders = build(args.target, args.case)
    print(f"wrote {len(folders)} round folders to {args.target}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
