"""Refused cases: broken csv files and workbooks (encodings, quoting, crafted zip and XML)."""

from __future__ import annotations

import codecs
import datetime as dt
import random
from pathlib import Path
from typing import Any

from scripts.hostile.base_round import (
    ITEMS,
    TRUTH,
    base,
    csv_text,
    items_rows,
    replace_line,
    responses_csv,
    responses_rows,
    swap,
    toml_table,
)
from scripts.hostile.registry import refused
from scripts.hostile.workbooks import (
    BILLION_LAUGHS,
    EXTERNAL_ENTITY,
    SHEET,
    edit_part,
    make_zip,
    ole_file,
    responses_xlsx,
    without_declaration,
    workbook,
    zip_parts,
)

# csv ----------------------------------------------------------------------------------------


@refused
def csv_nul_bytes(f: Path) -> None:
    base(f, responses__csv=responses_csv(replace_line("A7,0001", "A7\x00,0001")).encode())


@refused
def csv_bom_but_not_utf8(f: Path) -> None:
    text = responses_csv(replace_line("B3,0002,same", "B3,0002,sáme"))
    base(f, responses__csv=codecs.BOM_UTF8 + text.encode("latin-1"))


@refused
def csv_empty(f: Path) -> None:
    base(f, responses__csv="\n \n")


@refused
def csv_header_only(f: Path) -> None:
    base(f, responses__csv="participant,item,decision,confidence\n")


@refused
def csv_unclosed_quote(f: Path) -> None:
    base(f, responses__csv=responses_csv(replace_line("B3,0003,", '"B3,0003,')))


@refused
def csv_ragged_extra_value(f: Path) -> None:
    base(f, responses__csv=responses_csv(replace_line("C9,0004,different,3",
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
        body = without_declaration(xml).replace(b"<t>A7</t>", b"<t>&lol9;</t>", 1)
        return BILLION_LAUGHS + body
    base(f, responses__csv=None, responses__xlsx=edit_part(responses_xlsx(), SHEET, attack))


@refused
def xlsx_external_entity(f: Path) -> None:
    def attack(xml: bytes) -> bytes:
        return EXTERNAL_ENTITY + without_declaration(xml)
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

