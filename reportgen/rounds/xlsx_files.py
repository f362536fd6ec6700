"""Read one sheet of an .xlsx workbook into a :class:`~reportgen.rounds.table_types.Grid` of texts.

The workbook is guarded first (``xlsx_guard``); then the sheet is chosen, formulas without a saved
result and error values are found in its XML (calamine reads both as empty), and calamine reads
the values, which become texts with their kinds.
"""

from __future__ import annotations

import datetime as dt
import decimal
import html
import io
import re
import zipfile
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from itertools import zip_longest
from typing import Any
from xml.sax import SAXException
from xml.sax.handler import ContentHandler

import python_calamine
from defusedxml.expatreader import DefusedExpatParser  # type: ignore[import-untyped]

from reportgen.errors import ProblemLog
from reportgen.rounds.table_types import MAX_REPORTS, Grid, ReadError, ReadLimits, Table
from reportgen.rounds.xlsx_guard import (
    ERROR_TYPE,
    NOT_READABLE,
    Markup,
    Scan,
    Sheet,
    column_letters,
    column_number,
    inflate,
    markup_for,
    open_zip,
    scan_xml,
    verify_parts,
    widen,
    workbook_parts,
    workbook_sheets,
)
from reportgen.rounds.xlsx_styles import percent_cells, percent_styles

__all__ = ["xlsx_grid"]


# --------------------------------------------------------------------------- xlsx: sheet choice


def _choose(sheets: list[Sheet], wanted: str | None, file: str, log: ProblemLog) -> Sheet:
    tables = [s for s in sheets if s.member is not None]
    listing = ", ".join(repr(s.name) for s in tables) or "none"
    if wanted is not None:
        chosen = next((s for s in sheets if s.name == wanted), None)
        if chosen is None or chosen.member is None:
            what = "a chart, not a table" if chosen else "not in the workbook"
            raise ReadError(f"sheet {wanted!r} (named under [files] in round.toml) is {what}",
                             value=wanted, allowed=listing)
        return chosen
    with_data = [s for s in tables if s.visible and s.scan.has_values]
    hidden = [s for s in tables if not s.visible and s.scan.has_values]
    if len(with_data) > 1:
        names = ", ".join(repr(s.name) for s in with_data)
        raise ReadError(f"has data on several sheets ({names}); say which one to read with "
                         f"sheet = \"…\" under [files] in round.toml", allowed=names)
    for s in hidden:
        log.warn(file, "this hidden sheet has data, which is not read; if it is the table, "
                 "name it under [files] sheet in round.toml", sheet=s.name)
    if not with_data:
        note = " (only hidden sheets have data)" if hidden else ""
        raise ReadError(f"is empty: no visible sheet has data{note}", allowed=listing)
    return with_data[0]


def _check_size(sheet: Sheet, limits: ReadLimits) -> None:
    """Refuse a sheet whose used area is too large, before calamine allocates all of it."""
    scan = sheet.scan
    if scan.rows is None or scan.columns is None:
        return
    height = scan.rows[1] - scan.rows[0] + 1
    width = scan.columns[1] - scan.columns[0] + 1
    span = (f"{column_letters(scan.columns[0])}{scan.rows[0]}:"
            f"{column_letters(scan.columns[1])}{scan.rows[1]}")
    stray = " (is there a stray value or formatted cell far below or right of the table?)"
    if height > limits.max_rows + 1:
        raise ReadError(f"has cells in use on {height:,} rows ({span}), more than the "
                         f"{limits.max_rows:,} reportgen reads{stray}", sheet=sheet.name,
                         allowed=f"at most {limits.max_rows:,} rows{limits.hint('max_rows')}")
    if height * width > limits.max_cells:
        raise ReadError(f"has cells in use across {height:,} rows x {width:,} columns ({span}), "
                         f"more than the {limits.max_cells:,} cells reportgen reads{stray}",
                         sheet=sheet.name,
                         allowed=f"at most {limits.max_cells:,} cells{limits.hint('max_cells')}")


# --------------------------------------------------------------------------- xlsx: formulas, errors


@dataclass
class _CellNotes:
    """From a full parse of one sheet: formulas without a saved result, and error values."""

    formulas: dict[tuple[int, int], str] = field(default_factory=dict)
    errors: dict[tuple[int, int], str] = field(default_factory=dict)
    percent: set[tuple[int, int]] = field(default_factory=set)


_REF = re.compile(r"([A-Z]{1,3})([0-9]{1,7})")


def _quick_notes(chunks: Iterable[bytes], markup: Markup) -> _CellNotes:
    """Formulas without a result and error values of a sheet whose cells are all written the
    usual way (``<c r="B7" ...>``): only the cells around a ``<f>`` or ``t="e"`` are looked at."""
    notes = _CellNotes()

    def scan(piece: bytes) -> None:
        hits = sorted({m.start() for m in markup.formula_tag.finditer(piece)}
                      | {m.start() for m in ERROR_TYPE.finditer(piece)})
        seen = -1
        for hit in hits:
            start = piece.rfind(markup.cell, 0, hit)
            if start < 0 or start == seen:
                continue
            seen = start
            stop = piece.find(markup.cell_end, start)
            _note_cell_bytes(piece[start: stop if stop >= 0 else len(piece)], notes, markup)

    scan_xml(chunks, scan, end=markup.row_end)
    return notes


def _note_cell_bytes(cell: bytes, notes: _CellNotes, markup: Markup) -> None:
    ref = markup.ref.match(cell)
    if ref is None:
        return
    place = (int(ref.group(2)), column_number(ref.group(1)))
    tag_end = cell.find(b">") + 1
    tag, body = cell[:tag_end], (b"" if cell[:tag_end].endswith(b"/>") else cell[tag_end:])
    value = markup.value.search(body)
    text = _xml_text(value.group(1)) if value else ""
    if ERROR_TYPE.search(tag) and text:
        notes.errors[place] = text
    elif markup.formula_tag.search(body) and not text.strip():
        formula = markup.formula.search(body)
        notes.formulas[place] = _xml_text(formula.group(1)) if formula else ""


def _xml_text(raw: bytes) -> str:
    return html.unescape(raw.decode("utf-8", errors="replace"))


class _SheetHandler(ContentHandler):
    """Places cells the way calamine does: an address places its cell; a cell without one goes
    right of the previous cell; a row without ``r`` follows the previous row. Tags are matched
    by local name, as calamine matches them."""

    def __init__(self, percent_styles: frozenset[int] = frozenset()) -> None:
        super().__init__()
        self.notes, self.scan = _CellNotes(), Scan()
        self.percent_styles = percent_styles
        self.percent = False
        self.row, self.col = 1, 0
        self.cell: tuple[int, int] | None = None
        self.error = False
        self.children: set[str] = set()
        self.texts: dict[str, list[str]] = {}
        self.inside: str | None = None

    def startElement(self, name: str, attrs: Any) -> None:  # noqa: N802 (SAX API)
        local = name.rpartition(":")[2]
        if local == "row" and attrs.get("r") is not None:
            self.row = int(attrs.get("r"))
        elif local == "c":
            address = attrs.get("r")
            ref = _REF.fullmatch(address or "")
            if address is not None and ref is None:
                raise ValueError(f"cell address {address!r}")
            self.cell = (int(ref.group(2)), column_number(ref.group(1))) if ref else (
                self.row, self.col + 1)
            self.col = self.cell[1]
            self.error = attrs.get("t") == "e"
            style = attrs.get("s")
            self.percent = (style is not None and style.isdigit()
                            and int(style) in self.percent_styles)
            self.children, self.texts = set(), {}
        elif self.cell is not None:
            self.children.add(local)
            self.inside = local if local in ("v", "f") else None

    def characters(self, content: str) -> None:
        if self.cell is not None and self.inside is not None:
            self.texts.setdefault(self.inside, []).append(content)

    def endElement(self, name: str) -> None:  # noqa: N802 (SAX API)
        local = name.rpartition(":")[2]
        if local in ("v", "f"):
            self.inside = None
        elif local == "c" and self.cell is not None:
            self._close_cell(self.cell)
            self.cell = None
        elif local == "row":
            self.row, self.col = self.row + 1, 0

    def _close_cell(self, place: tuple[int, int]) -> None:
        if self.children:
            self.scan.has_values = True
            self.scan.rows = widen(self.scan.rows, place[0], place[0])
            self.scan.columns = widen(self.scan.columns, place[1], place[1])
        value = "".join(self.texts.get("v", []))
        if self.percent and value:
            self.notes.percent.add(place)
        if self.error and value:
            self.notes.errors[place] = value
        elif "f" in self.children and not value.strip():
            self.notes.formulas[place] = "".join(self.texts.get("f", []))


def _parse_sheet(archive: zipfile.ZipFile, sheet: Sheet,
                 percent_styles: frozenset[int]) -> _CellNotes:
    """Parse the whole sheet (defusedxml SAX), for sheets whose cells are not all written the
    usual way; also measures the used area exactly, replacing the quick scan's estimate.
    About 5 s for 200,000 rows x 7 columns; ordinary workbooks never need it."""
    assert sheet.member is not None
    handler = _SheetHandler(percent_styles)
    parser = DefusedExpatParser(forbid_dtd=True)
    parser.setContentHandler(handler)
    try:
        with archive.open(sheet.member) as stream:
            parser.parse(stream)
    except (SAXException, ValueError, zipfile.BadZipFile, NotImplementedError,
            RuntimeError) as exc:  # defusedxml's refusals are ValueErrors
        raise ReadError(NOT_READABLE, sheet=sheet.name) from exc
    sheet.scan = handler.scan
    return handler.notes


# --------------------------------------------------------------------------- xlsx: read


def xlsx_grid(data: bytes, file: str, log: ProblemLog, wanted: str | None,
               limits: ReadLimits) -> Grid:
    """Guard the workbook (steps 1-4), then read the chosen sheet with calamine (step 5)."""
    with open_zip(data, limits) as archive:  # 1. declared sizes and compression ratio
        sheets = workbook_sheets(workbook_parts(archive, data))  # 2. which sheets, in which parts
        verify_parts(archive, data, sheets, limits)  # 3. every part unpacked, sheets measured
        sheet = _choose(sheets, wanted, file, log)
        if sheet.member not in archive.namelist():
            raise ReadError(NOT_READABLE, sheet=sheet.name)
        notes = _CellNotes()
        styles = percent_styles(archive, data)
        if sheet.scan.odd:
            notes = _parse_sheet(archive, sheet, styles)
        elif sheet.scan.marked:
            notes = _quick_notes(inflate(data, archive.getinfo(sheet.member)),
                                 sheet.scan.markup or markup_for(b""))
        if styles and not sheet.scan.odd:
            notes.percent = percent_cells(inflate(data, archive.getinfo(sheet.member)),
                                          sheet.scan.markup or markup_for(b""), styles)
    _check_size(sheet, limits)  # 4. the area calamine will allocate
    values, origin, merged = _calamine_values(data, sheet.name, [s.name for s in sheets])
    rows, kinds = _sheet_texts(values)
    numbers = range(origin[0] + 1, origin[0] + 1 + len(rows))
    _mark_errors(rows, kinds, notes, origin)
    _mark_percent(rows, kinds, notes, origin)
    return Grid(file=file, sheet=sheet.name, rows=rows, numbers=numbers, kinds=kinds,
                 first_column=origin[1] + 1, label=column_letters,
                 after=lambda table, names, log: _report_cells(table, names, log, notes, merged))


_CellValue = Any  # str | float | int | bool | date | datetime | time | timedelta (calamine)
_Ranges = list[tuple[tuple[int, int], tuple[int, int]]]


def _calamine_values(data: bytes, name: str, names: list[str]) -> tuple[
        list[list[_CellValue]], tuple[int, int], _Ranges]:
    """One sheet's values from calamine, the 0-based (row, column) of the first, and merges.

    ``names`` are the sheets as the guard saw them; if calamine sees others, the guard measured
    the wrong parts, and the workbook is refused rather than risked.
    """
    try:
        with python_calamine.CalamineWorkbook.from_filelike(io.BytesIO(data)) as book:
            if book.sheet_names != names:
                raise ReadError(NOT_READABLE, sheet=name)
            sheet = book.get_sheet_by_name(name)
            values = sheet.to_python(skip_empty_area=True)
            origin = sheet.start or (0, 0)
            merged = sheet.merged_cell_ranges or []
    except ReadError:
        raise
    except python_calamine.PasswordError as exc:
        raise ReadError(NOT_READABLE) from exc
    except Exception as exc:  # calamine raises assorted errors on damaged workbooks
        raise ReadError(f"{NOT_READABLE}; the reader said: {exc}", sheet=name) from exc
    except BaseException as exc:  # a Rust panic (pyo3 PanicException) is a BaseException
        if type(exc).__name__ != "PanicException":
            raise
        raise ReadError(NOT_READABLE, sheet=name) from None
    return values, origin, merged


def _sheet_texts(values: list[list[_CellValue]]) -> tuple[list[Sequence[str]], list[str]]:
    """Cell values to texts and kinds, a column at a time (most columns hold one type)."""
    text_columns: list[Sequence[str]] = []
    kind_columns: list[Sequence[str]] = []
    for column in zip_longest(*values, fillvalue=""):
        types = set(map(type, column))
        if types == {str}:
            text_columns.append(column)
            kind_columns.append("s" * len(column) if all(column)
                                else ["s" if value else "z" for value in column])
        elif types <= {str, float}:  # a column of numbers under a text header
            text_columns.append([value if value.__class__ is str else _number_text(value)
                                 for value in column])
            kind_columns.append(["n" if value.__class__ is float else "s" if value else "z"
                                 for value in column])
        else:
            texts, kinds = zip(*map(_cell_text, column), strict=True)
            text_columns.append(texts)
            kind_columns.append(kinds)
    rows: list[Sequence[str]] = list(zip(*text_columns, strict=True))
    return rows, list(map("".join, zip(*kind_columns, strict=True)))


def _mark_errors(rows: list[Sequence[str]], kinds: list[str], notes: _CellNotes,
                 origin: tuple[int, int]) -> None:
    """calamine reads an error value (#N/A) as empty; put back its text, of kind ``e``."""
    for (row, col), text in notes.errors.items():
        i, j = row - 1 - origin[0], col - 1 - origin[1]
        if 0 <= i < len(rows) and 0 <= j < len(rows[i]):
            rows[i] = (*rows[i][:j], text, *rows[i][j + 1:])
            kinds[i] = f"{kinds[i][:j]}e{kinds[i][j + 1:]}"


def _mark_percent(rows: list[Sequence[str]], kinds: list[str], notes: _CellNotes,
                  origin: tuple[int, int]) -> None:
    """A number shown as a percentage reads as it is shown: 0.8 formatted ``0%`` is ``80%``,
    of kind ``p``."""
    for row, col in notes.percent:
        i, j = row - 1 - origin[0], col - 1 - origin[1]
        if 0 <= i < len(rows) and 0 <= j < len(rows[i]) and kinds[i][j] == "n":
            rows[i] = (*rows[i][:j], percent_text(rows[i][j]), *rows[i][j + 1:])
            kinds[i] = f"{kinds[i][:j]}p{kinds[i][j + 1:]}"


def percent_text(number: str) -> str:
    """``'0.8'`` -> ``'80%'``: a stored fraction as the percentage a spreadsheet shows, exactly
    (decimal arithmetic, so 0.07 is 7%, not 7.000000000000001%)."""
    try:
        value = decimal.Decimal(number) * 100
    except decimal.InvalidOperation:
        return number
    return f"{value.normalize():f}%"


def _number_text(value: float) -> str:
    """42.0 -> '42'; otherwise the shortest text that reads back as the same number."""
    if value.is_integer() and abs(value) < 1e15:
        return str(int(value))
    return repr(value)


def _cell_text(value: _CellValue) -> tuple[str, str]:
    kind = type(value)
    if kind is str:
        return value, ("s" if value else "z")
    if kind is float:
        return _number_text(value), "n"
    if kind is bool:
        return ("TRUE" if value else "FALSE"), "b"
    if kind is int:
        return str(value), "n"
    if kind is dt.datetime:
        stamp: dt.datetime = value
        if stamp.time() == dt.time(0):
            return stamp.date().isoformat(), "d"
        return stamp.isoformat(sep=" ", timespec="seconds"), "d"
    if kind is dt.date or kind is dt.time:
        return value.isoformat(), "d"
    if kind is dt.timedelta:
        return str(value), "d"
    return str(value), "s"


def _report_cells(table: Table, names: dict[int, str], log: ProblemLog, notes: _CellNotes,
                  merged: _Ranges) -> None:
    """Formulas with no saved result (anywhere on the sheet: a row of them reads as empty and
    would vanish) and merged cells that touch the table.

    ``names`` maps a sheet column number (1-based) to the header of that column.
    """
    last_row = table.row_numbers[-1] if table.row_numbers else table.header_row
    formulas = sorted((row, col, text) for (row, col), text in notes.formulas.items())
    for row, col, formula in formulas[:MAX_REPORTS]:
        log.error(table.file, f"cell {column_letters(col)}{row} has a formula but no saved "
                  "result (the file was written by a program that does not calculate); open "
                  "it in Excel or LibreOffice and save it again, or type the values in",
                  sheet=table.sheet, row=row, column=names.get(col), value=f"={formula}")
    if len(formulas) > MAX_REPORTS:
        log.error(table.file, f"{len(formulas) - MAX_REPORTS:,} more cells have a formula "
                  "but no saved result", sheet=table.sheet)
    for (r0, c0), (r1, c1) in sorted(merged):
        if r1 + 1 < table.header_row or r0 + 1 > last_row:
            continue
        top_left = f"{column_letters(c0 + 1)}{r0 + 1}"
        log.warn(table.file, f"cells {top_left}:{column_letters(c1 + 1)}{r1 + 1} are merged; "
                 f"only {top_left} holds a value and the others read as empty: unmerge them and "
                 "fill in every cell", sheet=table.sheet, row=r0 + 1, column=names.get(c0 + 1))
