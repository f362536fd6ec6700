"""Read one input table (``.csv`` or ``.xlsx``) into a :class:`Table` of texts.

This is the lowest layer of reading a round: it knows nothing of items or participants. It finds a
table in the round folder (:func:`find_table`), reads it (:func:`read_table`) and logs every problem
into the :class:`~reportgen.errors.ProblemLog` with file, sheet, row, column and value. It never
raises for bad input and never decides what a value means; ``rounds.load`` does that.

What a reader may rely on:

- Every cell is text, ``''`` when empty; codes stay text (``0042`` stays ``0042``). Values are not
  stripped; header texts are. ``Table.kinds`` says what each cell was in the file.
- The header is the first row that is not empty; fully empty rows are skipped; ``row_numbers`` are
  true to the file (the row a spreadsheet shows, or for csv the line on which the record starts).

Workbooks are untrusted zip files, and python-calamine kills the whole process (no exception) on a
zip bomb, on a stray value far away (it allocates every cell of the used area) and on a
shared-strings count that lies. So :func:`read_table` checks the bytes before calamine sees them:
sizes and compression ratio, every part inflated once with its size and checksum verified, each
sheet's used area measured, and the shared-strings count compared with its content.
"""

from __future__ import annotations

import codecs
import csv
import datetime as dt
import hashlib
import html
import io
import re
import struct
import zipfile
import zlib
from collections import Counter
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from itertools import islice, zip_longest
from operator import itemgetter
from pathlib import Path, PurePosixPath
from typing import Any
from xml.sax import SAXException
from xml.sax.handler import ContentHandler

import python_calamine
from defusedxml.ElementTree import ParseError, fromstring  # type: ignore[import-untyped]
from defusedxml.expatreader import DefusedExpatParser  # type: ignore[import-untyped]

from reportgen.errors import ProblemLog

__all__ = ["ReadLimits", "Table", "find_table", "read_table"]


# --------------------------------------------------------------------------- public API


@dataclass(frozen=True)
class ReadLimits:
    """The most reportgen reads from one table file; anything larger is refused with a message.

    A round sets them in the ``[limits]`` table of round.toml (``rounds.schema.Limits``); every
    refusal names the key that would raise the limit.
    """

    max_rows: int = 200_000
    max_cells: int = 5_000_000
    max_uncompressed_bytes: int = 512 * 1024 * 1024
    max_compression_ratio: float = 100.0
    max_file_bytes: int = 256 * 1024 * 1024
    setting: str = ""
    """Where a provider changes the limits, with ``{key}`` for the limit's key (e.g. ``"[limits]
    {key} in round.toml"``); named in every refusal. Empty: not named."""

    def hint(self, key: str) -> str:
        return f" (set by {self.setting.format(key=key)})" if self.setting else ""


@dataclass(frozen=True)
class Table:
    """A table as read, every cell as text.

    ``row_numbers[i]`` is the 1-based row of ``rows[i]`` as the provider finds it: the spreadsheet
    row for xlsx; for csv the physical line on which the record starts (the same as the record
    number unless a quoted value spans lines). ``kinds[i][j]`` is one character per cell:
    ``s`` text, ``n`` number, ``d`` date/time, ``b`` TRUE/FALSE, ``z`` empty, ``e`` error value
    such as ``#N/A`` (whose text is the cell value). Csv cells are only ever ``s`` or ``z``.
    """

    file: str
    sheet: str | None
    header_row: int
    columns: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    row_numbers: tuple[int, ...]
    kinds: tuple[str, ...]
    sha256: str

    def column(self, name: str) -> tuple[str, ...]:
        """Every value of column ``name``, in row order. ``KeyError`` if there is no such column."""
        return self._by_name[name]

    def has(self, name: str) -> bool:
        return name in self._by_name

    @cached_property
    def _by_name(self) -> dict[str, tuple[str, ...]]:
        by_column = list(zip(*self.rows, strict=True)) if self.rows else [()] * len(self.columns)
        mapping: dict[str, tuple[str, ...]] = {}
        for name, values in zip(self.columns, by_column, strict=True):
            mapping.setdefault(name, tuple(values))  # a duplicate header keeps the first column
        return mapping


_SAVE_AS = "save it as .xlsx (Excel Workbook) or .csv"
_WRONG_FORMAT = {
    ".xls": f"is an old-format Excel 97-2003 workbook, which reportgen does not read: {_SAVE_AS}",
    ".xlsm": f"is a macro-enabled workbook, which reportgen does not read: {_SAVE_AS}",
    ".xlsb": f"is a binary Excel workbook, which reportgen does not read: {_SAVE_AS}",
    ".ods": f"is an OpenDocument spreadsheet, which reportgen does not read: {_SAVE_AS}",
    ".numbers": "is an Apple Numbers file, which reportgen does not read: export it as .xlsx "
    "or .csv (File > Export To)",
}
_READABLE = (".csv", ".xlsx")


def find_table(folder: Path, stem: str, explicit: str | None, log: ProblemLog, *,
               required: bool) -> Path | None:
    """Find table ``stem`` in the round folder; log why not and return ``None`` if it cannot.

    ``explicit`` is the file name from round.toml ``[files]`` (relative to the folder). Without it,
    ``stem.csv`` or ``stem.xlsx`` is looked for (letter case ignored); both present is an error, and
    so is neither when ``required``. A file in another spreadsheet format is named with a
    plain-language request to save it as .xlsx or .csv.
    """
    if explicit is not None:
        return _explicit_table(folder, explicit, log)
    try:
        files = sorted(p for p in folder.iterdir() if p.is_file())
    except OSError as exc:
        log.error(str(folder), f"the round folder cannot be read ({exc.strerror})")
        return None
    found = [p for p in files if p.name.lower() in {f"{stem}{ext}" for ext in _READABLE}]
    if len(found) > 1:
        log.error(stem, f"both {' and '.join(p.name for p in found)} are in the round folder; "
                  f"remove one, or name the one to use as {stem} = \"…\" under [files] in "
                  "round.toml")
        return None
    if found:
        return found[0]
    wrong = [p for p in files if p.name.lower() in {f"{stem}{ext}" for ext in _WRONG_FORMAT}]
    for path in wrong:
        log.error(path.name, _WRONG_FORMAT[path.suffix.lower()])
    if required and not wrong:
        log.error(stem, f"no {stem}.csv or {stem}.xlsx in the round folder")
    return None


def read_table(path: Path, display_name: str, log: ProblemLog, *, sheet: str | None = None,
               limits: ReadLimits = ReadLimits()) -> Table | None:
    """Read a .csv or .xlsx file into a :class:`Table`, logging every problem found.

    Returns ``None`` (after logging why) when the file cannot be read at all; otherwise a Table,
    possibly with logged errors such as ragged rows or duplicate headers (a table with a header
    but no data rows is returned, with an error). ``sheet`` picks the xlsx sheet; without it the
    only visible sheet with data is read. ``display_name`` is how messages name the file.
    """
    suffix = path.suffix.lower()
    if suffix not in _READABLE:
        log.error(display_name, _wrong_format_message(suffix))
        return None
    try:
        data = _read_bytes(path, limits)
        digest = hashlib.sha256(data).hexdigest()
        if suffix == ".csv":
            grid = _csv_grid(data, display_name, log, limits)
        else:
            grid = _xlsx_grid(data, display_name, log, sheet, limits)
        return _build_table(grid, digest, log, limits)
    except _ReadError as exc:
        log.error(display_name, exc.message, **exc.where)
        return None


# --------------------------------------------------------------------------- shared machinery


_MAX_REPORTS = 20  # located reports of one kind per file; the rest are counted in one message


class _ReadError(Exception):
    """The file cannot be read at all. Internal: :func:`read_table` logs it and returns None."""

    def __init__(self, message: str, **where: str | int | None) -> None:
        super().__init__(message)
        self.message = message
        self.where = where


def _wrong_format_message(suffix: str) -> str:
    if suffix in _WRONG_FORMAT:
        return _WRONG_FORMAT[suffix]
    shown = f"the extension {suffix}" if suffix else "no extension"
    return f"has {shown}; reportgen reads only .xlsx and .csv files: {_SAVE_AS}"


def _explicit_table(folder: Path, explicit: str, log: ProblemLog) -> Path | None:
    named = "is named under [files] in round.toml but"
    candidate = folder / explicit
    if PurePosixPath(explicit.replace("\\", "/")).is_absolute() or not _inside(folder, candidate):
        log.error(explicit, f"{named} lies outside the round folder; put the file in the round "
                  "folder and give its name relative to it")
        return None
    suffix = candidate.suffix.lower()
    if suffix not in _READABLE:
        log.error(explicit, _wrong_format_message(suffix))
        return None
    try:
        is_file, is_dir = candidate.is_file(), candidate.is_dir()
    except (OSError, ValueError) as exc:  # a name too long for the file system, say
        log.error(explicit, f"{named} cannot be opened ({getattr(exc, 'strerror', None) or exc})")
        return None
    if not is_file:
        what = "is a folder, not a file" if is_dir else "is not in the round folder"
        log.error(explicit, f"{named} {what}")
        return None
    return candidate


def _inside(folder: Path, candidate: Path) -> bool:
    try:
        return candidate.resolve().is_relative_to(folder.resolve())
    except (OSError, RuntimeError, ValueError):  # a symlink loop, a NUL in the name
        return False


def _read_bytes(path: Path, limits: ReadLimits) -> bytes:
    try:
        size = path.stat().st_size
        if size > limits.max_file_bytes:
            raise _ReadError(
                f"is {_mib(size)}, more than the {_mib(limits.max_file_bytes)} reportgen reads "
                "from one file",
                allowed=f"at most {limits.max_file_bytes:,} bytes{limits.hint('max_file_mib')}")
        return path.read_bytes()
    except OSError as exc:
        raise _ReadError(f"cannot be opened ({exc.strerror or exc})") from exc


def _mib(n: int | float) -> str:
    return f"{n / 2**20:,.1f} MiB" if n < 2**30 else f"{n / 2**30:,.1f} GiB"


@dataclass
class _Grid:
    """A file's rows as found, before the header is chosen.

    ``numbers[i]`` is the row number of ``rows[i]``; ``kinds`` is ``None`` for a text file (every
    cell is then ``s`` or ``z``). ``first_column`` is the 1-based column of the first cell;
    ``label`` names a column for messages (``5`` in csv, ``E`` in a sheet); ``ragged`` says rows
    may differ in length (csv). ``after`` reports problems that need the finished table.
    """

    file: str
    sheet: str | None
    rows: list[Sequence[str]]
    numbers: Sequence[int]
    kinds: list[str] | None = None
    first_column: int = 1
    label: Callable[[int], str] = str
    ragged: bool = False
    after: Callable[[Table, dict[int, str], ProblemLog], None] | None = None


def _build_table(grid: _Grid, digest: str, log: ProblemLog, limits: ReadLimits) -> Table:
    """Choose the header, even out and name the columns, and freeze the rows."""
    filled = [i for i, row in enumerate(grid.rows) if any(row) and not "".join(row).isspace()]
    if not filled:
        raise _ReadError("is empty: it has no header row and no data", sheet=grid.sheet)
    if len(filled) - 1 > limits.max_rows:
        raise _ReadError(f"has {len(filled) - 1:,} data rows, more than the {limits.max_rows:,} "
                         "reportgen reads", sheet=grid.sheet,
                         allowed=f"at most {limits.max_rows:,} rows{limits.hint('max_rows')}")
    header, header_row = grid.rows[filled[0]], grid.numbers[filled[0]]
    data = [grid.rows[i] for i in filled[1:]]
    _refuse_title_row(grid, header, header_row, data)
    numbers = tuple(grid.numbers[i] for i in filled[1:])
    width = len(header)
    if grid.ragged:
        data = _even_rows(grid, data, numbers, width, log)
    kinds = ([grid.kinds[i] for i in filled[1:]] if grid.kinds is not None
             else _text_kinds(data, width))
    keep, columns = _name_columns(grid, header, header_row, data, log)
    if len(keep) < width:
        pick = _picker(keep)
        data = [pick(row) for row in data]
        kinds = ["".join(pick(k)) for k in kinds]
    table = Table(file=grid.file, sheet=grid.sheet, header_row=header_row, columns=columns,
                  rows=tuple(map(tuple, data)), row_numbers=numbers, kinds=tuple(kinds),
                  sha256=digest)
    if not data:
        log.error(grid.file, "has a header row but no data rows", sheet=grid.sheet, row=header_row)
    if grid.after is not None:
        places = {grid.first_column + j: name for j, name in zip(keep, columns, strict=True)}
        grid.after(table, places, log)
    return table


def _refuse_title_row(grid: _Grid, header: Sequence[str], header_row: int,
                      data: list[Sequence[str]]) -> None:
    """A lone value above rows of several values is a title, not a header: refuse it with one
    message, rather than one for every row or column it leaves without a header."""
    values = [text for text in header if text.strip()]
    below = [sum(1 for text in row if text.strip()) for row in data[:3]]
    if len(values) == 1 and below and min(below) > 1:
        raise _ReadError(f"the first row that is not empty holds a single value, above rows of "
                         f"{max(below)} values: if it is a title, delete it (and any other rows "
                         "above the column headers), so that the headers are the first row",
                         sheet=grid.sheet, row=header_row, value=values[0])


def _picker(keep: list[int]) -> Callable[[Sequence[str]], tuple[str, ...]]:
    if len(keep) == 1:
        only = keep[0]
        return lambda row: (row[only],)
    return itemgetter(*keep)


def _text_kinds(data: list[Sequence[str]], width: int) -> list[str]:
    full = "s" * width
    return [full if all(row) else "".join(["s" if text else "z" for text in row])
            for row in data]


def _even_rows(grid: _Grid, data: list[Sequence[str]], numbers: Sequence[int], width: int,
               log: ProblemLog) -> list[Sequence[str]]:
    """Pad short csv rows with '' and cut long ones, reporting cut values that are not empty."""
    uneven = [i for i, row in enumerate(data) if len(row) != width]
    if not uneven:
        return data
    even = list(data)
    reported = 0
    for i in uneven:
        row = data[i]
        extra = [text for text in row[width:] if text.strip()]
        if extra:
            reported += 1
            if reported <= _MAX_REPORTS:
                log.error(grid.file, f"row has {len(row) - width} more value(s) than there are "
                          "column headers; the extra values are not read", row=numbers[i],
                          value="; ".join(extra), allowed=f"{width} values, one per column")
        even[i] = [*row[:width], *([""] * (width - len(row)))]
    if reported > _MAX_REPORTS:
        log.error(grid.file, f"{reported - _MAX_REPORTS:,} more rows have more values than there "
                  "are column headers")
    return even


def _name_columns(grid: _Grid, header: Sequence[str], header_row: int,
                  data: list[Sequence[str]], log: ProblemLog) -> tuple[list[int], tuple[str, ...]]:
    """Which columns to keep (an unnamed column without values is dropped) and their names."""
    keep: list[int] = []
    names: list[str] = []
    first_seen: dict[str, int] = {}
    where = {"sheet": grid.sheet, "row": header_row}
    for j, raw in enumerate(header):
        label = grid.label(grid.first_column + j)
        name = raw.replace("\ufeff", "").strip()
        if not name:
            if not any(row[j].strip() for row in data):
                continue
            name = f"(column {label})"
            log.error(grid.file, f"column {label} has values but no header; give it a header "
                      "or delete it", column=name, **where)
        elif name in first_seen:
            log.error(grid.file, f"columns {grid.label(grid.first_column + first_seen[name])} "
                      f"and {label} both have the header {name!r}; every column needs its own "
                      "header", column=name, value=name, **where)
        else:
            first_seen[name] = j
        keep.append(j)
        names.append(name)
    return keep, tuple(names)


# --------------------------------------------------------------------------- csv


_NOT_TEXT_SIGNATURES = {
    b"PK\x03\x04": "is an Excel workbook (or another zip file) saved under a .csv name: rename it "
    "to .xlsx, or save it from Excel as CSV",
    b"\xd0\xcf\x11\xe0": "is an Excel 97-2003 workbook saved under a .csv name: save it from "
    "Excel as CSV or as .xlsx",
}
_DELIMITERS = (",", ";", "\t")


def _csv_grid(data: bytes, file: str, log: ProblemLog, limits: ReadLimits) -> _Grid:
    for signature, message in _NOT_TEXT_SIGNATURES.items():
        if data.startswith(signature):
            raise _ReadError(message)
    text = _decode(data, file, log)
    dialect = _Dialect(_sniff_delimiter(text))
    cap = 2 * limits.max_rows + 2  # a guard on memory: blank lines count here, not later
    reader = csv.reader(io.StringIO(text, newline=""), dialect)
    try:
        rows: list[Sequence[str]] = list(islice(reader, cap))
        numbers: Sequence[int] = range(1, len(rows) + 1)
        one_line_each = reader.line_num == len(rows)
    except csv.Error:
        one_line_each = False
    if not one_line_each:  # a quoted value spans lines, or the quoting is broken
        rows, numbers = _csv_rows_by_line(text, dialect, cap)
    if len(rows) >= cap:
        raise _ReadError(f"has more than {cap - 1:,} lines; reportgen reads at most "
                         f"{limits.max_rows:,} data rows",
                         allowed=f"at most {limits.max_rows:,} rows{limits.hint('max_rows')}")
    if sum(map(len, rows)) > limits.max_cells:
        raise _ReadError(f"has more than {limits.max_cells:,} cells, the most reportgen reads",
                         allowed=f"at most {limits.max_cells:,} cells{limits.hint('max_cells')}")
    return _Grid(file=file, sheet=None, rows=rows, numbers=numbers, ragged=True)


class _Dialect(csv.Dialect):
    """Spreadsheet csv: double-quoted values with "" for a quote, and nothing else tolerated."""

    def __init__(self, delimiter: str) -> None:
        self.delimiter = delimiter
        self.quotechar = '"'
        self.doublequote = True
        self.skipinitialspace = False
        self.lineterminator = "\r\n"
        self.quoting = csv.QUOTE_MINIMAL
        self.strict = True
        super().__init__()


def _csv_rows_by_line(text: str, dialect: csv.Dialect,
                      cap: int) -> tuple[list[Sequence[str]], list[int]]:
    """Rows with the line on which each starts; slower, for files where a record spans lines."""
    reader = csv.reader(io.StringIO(text, newline=""), dialect)
    rows: list[Sequence[str]] = []
    numbers: list[int] = []
    line = 0
    try:
        for row in islice(reader, cap):
            rows.append(row)
            numbers.append(line + 1)
            line = reader.line_num
    except csv.Error as exc:
        raise _ReadError(_csv_error_message(exc), row=line + 1) from exc
    return rows, numbers


def _csv_error_message(exc: csv.Error) -> str:
    detail = str(exc)
    if "field limit" in detail:
        return (f"a value starting here is longer than {csv.field_size_limit():,} characters; "
                "usually a quotation mark (\") that is never closed")
    if "end of data" in detail:
        return "a value starting here opens a quotation mark (\") that is never closed"
    return ("the quotation marks do not pair up: a value that starts with \" must end with \" "
            f"just before the next separator or line end ({detail})")


def _decode(data: bytes, file: str, log: ProblemLog) -> str:
    """Decode csv bytes: BOM-marked UTF-8/16/32, else UTF-8, else Windows-1252 with a warning."""
    for bom, encoding in ((codecs.BOM_UTF32_LE, "utf-32"), (codecs.BOM_UTF32_BE, "utf-32"),
                          (codecs.BOM_UTF8, "utf-8-sig"), (codecs.BOM_UTF16_LE, "utf-16"),
                          (codecs.BOM_UTF16_BE, "utf-16")):
        if data.startswith(bom):
            return _strict_decode(data, encoding)
    if b"\x00" in data:
        utf16 = _bomless_utf16(data)
        if utf16 is None:
            raise _ReadError("contains NUL bytes, so it is not a text (CSV) file: save it "
                             "from your spreadsheet program as CSV UTF-8")
        return _strict_decode(data, utf16)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        pass
    try:
        text, label = data.decode("cp1252"), "Windows-1252 (Western European)"
    except UnicodeDecodeError:
        text, label = data.decode("latin-1"), "Latin-1 (ISO-8859-1)"
    log.warn(file, f"is not UTF-8 text, so it was read as {label}, the usual encoding of CSV "
             "files saved by Excel on Windows; if accented letters look wrong, save it as "
             "\"CSV UTF-8\" and run again", allowed="UTF-8")
    return text


def _bomless_utf16(data: bytes) -> str | None:
    """UTF-16 without a byte-order mark: NUL in every other byte of mostly-ASCII text."""
    head = data[:4096]
    half = max(len(head) // 2, 1)
    if head[1::2].count(0) > 0.9 * half and head[0::2].count(0) < 0.1 * half:
        return "utf-16-le"
    if head[0::2].count(0) > 0.9 * half and head[1::2].count(0) < 0.1 * half:
        return "utf-16-be"
    return None


def _strict_decode(data: bytes, encoding: str) -> str:
    if encoding == "utf-8-sig":
        data, encoding = data[len(codecs.BOM_UTF8):], "utf-8"
    try:
        text = data.decode(encoding)
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1 if encoding == "utf-8" else None
        raise _ReadError(f"is marked as {encoding.upper()} text but contains bytes that are "
                         "not; save it again as CSV UTF-8", row=line) from exc
    if "\x00" in text:
        raise _ReadError("contains NUL characters, so it is not a text (CSV) file: save it from "
                         "your spreadsheet program as CSV UTF-8")
    return text


def _sniff_delimiter(text: str) -> str:
    """Pick ',', ';' or tab: the one that splits most of the first records into equally many
    values (more than one), then the one giving more values.

    Reading records, not lines, means quoted values ("a, b", or a value spanning lines) do not
    mislead, nor do decimal commas in a ';' file. One column reads as comma-separated.
    """
    sample = text[:65536]
    best, best_score = ",", (0, 0)
    for delimiter in _DELIMITERS:
        reader = csv.reader(io.StringIO(sample, newline=""), delimiter=delimiter)
        try:
            widths = Counter(len(row) for row in islice(reader, 100) if any(row))
        except csv.Error:
            continue
        score = max(((count, width) for width, count in widths.items() if width > 1),
                    default=(0, 0))
        if score > best_score:
            best, best_score = delimiter, score
    return best


# --------------------------------------------------------------------------- xlsx: guard


_NOT_READABLE = ("is not a readable .xlsx workbook (corrupt, or password-protected: save it "
                 "again without a password)")
_OLE = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_ENCRYPTED_STREAM = "EncryptedPackage".encode("utf-16-le")
_LOCAL_HEADER = struct.Struct("<4s2B4HL2L2H")
_CHUNK = 1 << 20
_OWN_XML_MAX = 16 << 20  # workbook.xml and its relationships, which reportgen parses itself
_WORKBOOK = "xl/workbook.xml"  # the paths calamine reads, whatever [Content_Types] says
_WORKBOOK_RELS = "xl/_rels/workbook.xml.rels"

_UNIQUE_COUNT = re.compile(rb"\buniqueCount\s*=\s*[\"']([^\"']{0,64})[\"']")
_SHEET_ROOT = re.compile(rb'<(?:([^\s<>/:"\']+):)?worksheet[\s>]')
_MARKERS = (b"f>", b't="e"', b"t='e'")  # a formula (<f>…</f>) or an error value; may misfire
_ERROR_TYPE = re.compile(rb"\st\s*=\s*[\"']e[\"']")


@dataclass(frozen=True)
class _Markup:
    """Byte patterns for the cells of a sheet whose tags carry ``prefix`` (``b""`` or ``b"x:"``).

    The quick scan trusts only cells written the way spreadsheet programs write them,
    ``<c r="B7" ...>``; a cell tag written otherwise (another attribute first, no address,
    another prefix) makes the sheet "odd", and it is parsed in full instead.
    """

    cell: bytes  # <c r="
    tag: bytes  # <c
    odd: re.Pattern[bytes]  # a tag of this prefix not starting <c r="A1"
    foreign: re.Pattern[bytes]  # a cell tag with another prefix, or none
    foreign_hint: bytes | None  # present in any chunk `foreign` can match; None: always look
    row: re.Pattern[bytes]
    column: re.Pattern[bytes]
    ref: re.Pattern[bytes]
    formula_tag: re.Pattern[bytes]
    value: re.Pattern[bytes]
    formula: re.Pattern[bytes]
    cell_end: bytes
    row_end: bytes


@lru_cache(maxsize=8)
def _markup(prefix: bytes) -> _Markup:
    p = re.escape(prefix)
    return _Markup(
        cell=b"<" + prefix + b'c r="',
        tag=b"<" + prefix + b"c",
        odd=re.compile(rb"<" + p + rb'c(?! r="[A-Z]{1,3}[0-9]{1,7}")[\s/>]'),
        foreign=re.compile(rb"<(?!" + p + rb'c[\s/>])(?:[^\s<>/:"\']+:)?c[\s/>]'),
        foreign_hint=None if prefix else b":c",
        row=re.compile(rb"<" + p + rb'c r="[A-Z]{1,3}([0-9]{1,7})"'),
        column=re.compile(rb"<" + p + rb'c r="([A-Z]{1,3})[0-9]{1,7}"'),
        ref=re.compile(rb"<" + p + rb'c r="([A-Z]{1,3})([0-9]{1,7})"'),
        formula_tag=re.compile(rb"<" + p + rb"f[\s>/]"),
        value=re.compile(rb"<" + p + rb"v(?:\s[^>]*)?>([^<]*)</" + p + rb"v>"),
        formula=re.compile(rb"<" + p + rb"f(?:\s[^>]*)?>([^<]*)</" + p + rb"f>"),
        cell_end=b"</" + prefix + b"c>",
        row_end=b"</" + prefix + b"row>",
    )


@dataclass
class _Scan:
    """What a byte scan of one sheet's XML found, cheaply (a 200,000-row sheet in about 1 s).

    ``has_values`` says a value element (``<v>``, ``<is>``) occurs; ``rows`` and ``columns`` are
    the span (1-based, inclusive) of the cells, which calamine allocates in full. ``odd`` means
    cells not written the usual way were seen, so the span is not known from the scan;
    ``marked`` means a formula or an error value may be present. ``markup`` holds the patterns
    for the tag prefix found on the sheet's root element.
    """

    has_values: bool = False
    rows: tuple[int, int] | None = None
    columns: tuple[int, int] | None = None
    odd: bool = False
    marked: bool = False
    markup: _Markup | None = None

    def add(self, chunk: bytes) -> None:
        if self.markup is None:
            root = _SHEET_ROOT.search(chunk)
            self.markup = _markup(root.group(1) + b":" if root and root.group(1) else b"")
        markup = self.markup
        if not self.has_values:
            self.has_values = any(tag in chunk for tag in (b"<v", b"<is", b":v", b":is"))
        if not self.marked:
            self.marked = any(marker in chunk for marker in _MARKERS)
        rows = markup.row.findall(chunk)
        if not self.odd:
            canonical = chunk.count(markup.cell)
            self.odd = (
                canonical != len(rows)
                or (chunk.count(markup.tag) != canonical and markup.odd.search(chunk) is not None)
                or ((markup.foreign_hint is None or markup.foreign_hint in chunk)
                    and markup.foreign.search(chunk) is not None)
            )
        if rows:
            numbers = list(map(int, set(rows)))
            self.rows = _widen(self.rows, min(numbers), max(numbers))
            columns = [_column_number(c) for c in set(markup.column.findall(chunk))]
            self.columns = _widen(self.columns, min(columns), max(columns))


def _widen(span: tuple[int, int] | None, low: int, high: int) -> tuple[int, int]:
    return (low, high) if span is None else (min(span[0], low), max(span[1], high))


def _column_number(letters: bytes | str) -> int:
    number = 0
    for ch in letters.decode() if isinstance(letters, bytes) else letters:
        number = number * 26 + ord(ch) - 64
    return number


def _column_letters(number: int) -> str:
    letters = ""
    while number > 0:
        number, rest = divmod(number - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


@dataclass
class _Sheet:
    name: str
    visible: bool
    member: str | None  # None: a chart or dialog sheet, not a table
    scan: _Scan = field(default_factory=_Scan)


def _open_zip(data: bytes, limits: ReadLimits) -> zipfile.ZipFile:
    """Open the workbook's zip and check its declared sizes, before anything is inflated."""
    if data.startswith(_OLE):
        if _ENCRYPTED_STREAM in data:
            raise _ReadError("is password-protected: open it in Excel, remove the password "
                             "(File > Info > Protect Workbook) and save it again")
        raise _ReadError("is an old-format Excel 97-2003 workbook with an .xlsx name: open it "
                         "in Excel and save it as .xlsx (Excel Workbook)")
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        infos = archive.infolist()
    except (zipfile.BadZipFile, zipfile.LargeZipFile, OSError, ValueError, EOFError,
            NotImplementedError) as exc:  # zipfile's refusals of damaged archives
        raise _ReadError(_NOT_READABLE) from exc
    total = sum(info.file_size for info in infos)
    packed = sum(info.compress_size for info in infos)
    if total > limits.max_uncompressed_bytes:
        raise _ReadError(
            f"would unpack to {_mib(total)}, more than the {_mib(limits.max_uncompressed_bytes)} "
            "reportgen allows (a damaged file, or a 'zip bomb')",
            allowed=f"at most {limits.max_uncompressed_bytes:,} bytes unpacked"
            f"{limits.hint('max_unpacked_mib')}")
    for info in [*infos, None]:
        size, small = (total, packed) if info is None else (info.file_size, info.compress_size)
        ratio = size / max(small, 1)
        if size > _CHUNK and ratio > limits.max_compression_ratio:
            raise _ReadError(
                f"is compressed {ratio:,.0f} times, more than the "
                f"{limits.max_compression_ratio:,.0f} times a real workbook reaches (a damaged "
                "file, or a 'zip bomb')", allowed=f"at most {limits.max_compression_ratio:,.0f}:1"
                f"{limits.hint('max_compression_ratio')}")
    return archive


def _inflate(data: bytes, info: zipfile.ZipInfo) -> Iterator[bytes]:
    """Yield the unpacked bytes of one member, checking its recorded size and checksum.

    python-calamine unpacks members with its own zip reader; this pass makes sure no member
    unpacks to more than the size that was checked, whatever its headers claim.
    """
    header = data[info.header_offset: info.header_offset + _LOCAL_HEADER.size]
    if len(header) != _LOCAL_HEADER.size or header[:4] != b"PK\x03\x04":
        raise _ReadError(_NOT_READABLE)
    fields = _LOCAL_HEADER.unpack(header)
    start = info.header_offset + _LOCAL_HEADER.size + fields[-2] + fields[-1]
    packed = memoryview(data)[start: start + info.compress_size]
    if info.flag_bits & 1 or len(packed) != info.compress_size:
        raise _ReadError(_NOT_READABLE)
    damaged = _ReadError(f"is damaged (part {info.filename} does not match its recorded size "
                         "or checksum): open it in Excel and save it again")
    total, crc = 0, 0
    for out in _unpacked(packed, info.compress_type, info.file_size):
        total += len(out)
        if total > info.file_size:
            raise damaged
        crc = zlib.crc32(out, crc)
        yield out
    if total != info.file_size or crc != info.CRC:
        raise damaged


def _unpacked(packed: memoryview, method: int, limit: int) -> Iterator[bytes]:
    if method == zipfile.ZIP_STORED:
        for i in range(0, len(packed), _CHUNK):
            yield bytes(packed[i: i + _CHUNK])
        return
    if method != zipfile.ZIP_DEFLATED:
        raise _ReadError(_NOT_READABLE)
    inflater = zlib.decompressobj(-zlib.MAX_WBITS)
    produced = 0
    try:
        for i in range(0, len(packed), _CHUNK):
            pending: bytes | memoryview = packed[i: i + _CHUNK]
            while pending and not inflater.eof and produced <= limit:
                out = inflater.decompress(pending, _CHUNK)
                pending = inflater.unconsumed_tail
                produced += len(out)
                yield out
        if produced <= limit:
            yield inflater.flush()
    except zlib.error as exc:
        raise _ReadError(_NOT_READABLE) from exc


def _parts(archive: zipfile.ZipFile, data: bytes) -> dict[str, bytes]:
    """workbook.xml and its relationships, checked for size before they are read."""
    names = set(archive.namelist())
    if _WORKBOOK not in names:
        if "mimetype" in names and b"opendocument.spreadsheet" in data[:200]:
            raise _ReadError("is an OpenDocument spreadsheet with an .xlsx name: open it and "
                             "save it as .xlsx (Excel Workbook)")
        raise _ReadError("is a zip file but not an Excel workbook: save the table from your "
                         "spreadsheet program as .xlsx (Excel Workbook)")
    parts: dict[str, bytes] = {}
    for name in (_WORKBOOK, _WORKBOOK_RELS):
        if name not in names:
            raise _ReadError(_NOT_READABLE)
        info = archive.getinfo(name)
        if info.file_size > _OWN_XML_MAX:
            raise _ReadError(_NOT_READABLE)
        parts[name] = b"".join(_without_dtd(_inflate(data, info), name, None))
    return parts


def _local(tag: str) -> str:
    return tag.rpartition("}")[2]


def _sheets(parts: dict[str, bytes]) -> list[_Sheet]:
    """The sheets in workbook order, with the zip member calamine reads for each.

    The member is found exactly as calamine finds it (calamine 0.3x, ``xlsx/mod.rs``), so the
    part that is measured is the part calamine will read.
    """
    try:
        rels = fromstring(parts[_WORKBOOK_RELS], forbid_dtd=True)
        book = fromstring(parts[_WORKBOOK], forbid_dtd=True)
    except (ParseError, ValueError) as exc:  # defusedxml's refusals are ValueErrors
        raise _ReadError(_NOT_READABLE) from exc
    targets = {rel.get("Id"): rel.get("Target", "") for rel in rels.iter()
               if _local(rel.tag) == "Relationship"}
    sheets = []
    for element in book.iter():
        if _local(element.tag) != "sheet":
            continue
        rid = next((v for k, v in element.attrib.items() if _local(k) == "id"), None)
        target = targets.get(rid, "")
        member = target[1:] if target.startswith("/xl/") else (
            target if target.startswith("xl/") else f"xl/{target}")
        is_table = member.split("/")[1:2] == ["worksheets"]
        sheets.append(_Sheet(name=element.get("name", ""),
                             visible=element.get("state", "visible") == "visible",
                             member=member if is_table else None))
    return sheets


def _verify(archive: zipfile.ZipFile, data: bytes, sheets: list[_Sheet],
            limits: ReadLimits) -> None:
    """Unpack every member once (size and checksum checked); scan the sheets, and look in every
    other part for a shared-strings count (whatever the part is called)."""
    by_member = {s.member: s for s in sheets if s.member is not None}
    for info in archive.infolist():
        sheet = by_member.get(info.filename)
        chunks = _without_dtd(_inflate(data, info), info.filename, sheet)
        if sheet is not None:
            _scan_xml(chunks, sheet.scan.add)
        else:
            _check_shared_strings(chunks, limits)


_DTD = b"<!DOCTYPE"


def _without_dtd(chunks: Iterable[bytes], part: str, sheet: _Sheet | None) -> Iterator[bytes]:
    """Pass the chunks on, refusing a part with a document type declaration: spreadsheet
    programs never write one, and it is how entity-expansion ("billion laughs") and external-
    entity attacks are carried. (calamine does not expand entities and openpyxl reads through
    defusedxml, so this turns a refusal deep in a reader into a plain message.)"""
    tail = b""
    for chunk in chunks:
        if _DTD in tail + chunk[: len(_DTD)] or _DTD in chunk:
            raise _ReadError(f"contains a document type declaration (<!DOCTYPE …>) in its part "
                             f"{part}, which spreadsheet programs never write and which can "
                             "carry an XML entity attack: open it in Excel and save it again",
                             sheet=sheet.name if sheet is not None else None)
        tail = chunk[-len(_DTD):]
        yield chunk


def _scan_xml(chunks: Iterable[bytes], scan: Callable[[bytes], None], end: bytes = b">") -> None:
    """Feed ``scan`` pieces of XML that each stop just after an ``end`` (so no tag, or with
    ``end=b"</row>"`` no row, is cut in two). Nothing is dropped, however long a piece gets."""
    pending: list[bytes] = []
    for out in chunks:
        cut = out.rfind(end)
        if cut < 0:
            pending.append(out)
            continue
        cut += len(end)
        pending.append(out[:cut])
        scan(b"".join(pending))
        pending = [out[cut:]]
    rest = b"".join(pending)
    if rest:
        scan(rest)


def _check_shared_strings(chunks: Iterable[bytes], limits: ReadLimits) -> None:
    """calamine reserves memory for the declared count of texts; a false count kills the process.

    A count above ``limits.max_cells`` must match the texts present (counted loosely: a file with
    that many texts is refused by the cell limit anyway).
    """
    declared: int | None = None
    held = 0

    def scan(piece: bytes) -> None:
        nonlocal declared, held
        held += sum(piece.count(tag) for tag in (b"<si>", b"<si ", b":si>", b":si "))
        if declared is None and b"uniqueCount" in piece:
            match = _UNIQUE_COUNT.search(piece)
            if match:
                number = html.unescape(match.group(1).decode("latin-1")).strip().lstrip("+")
                declared = int(number) if number.isdigit() else None

    _scan_xml(chunks, scan)
    if declared is not None and declared > max(held, limits.max_cells):
        raise _ReadError(f"is damaged (it claims {declared:,} different texts but holds "
                         f"{held:,}): open it in Excel and save it again")


# --------------------------------------------------------------------------- xlsx: sheet choice


def _choose(sheets: list[_Sheet], wanted: str | None, file: str, log: ProblemLog) -> _Sheet:
    tables = [s for s in sheets if s.member is not None]
    listing = ", ".join(repr(s.name) for s in tables) or "none"
    if wanted is not None:
        chosen = next((s for s in sheets if s.name == wanted), None)
        if chosen is None or chosen.member is None:
            what = "a chart, not a table" if chosen else "not in the workbook"
            raise _ReadError(f"sheet {wanted!r} (named under [files] in round.toml) is {what}",
                             value=wanted, allowed=listing)
        return chosen
    with_data = [s for s in tables if s.visible and s.scan.has_values]
    hidden = [s for s in tables if not s.visible and s.scan.has_values]
    if len(with_data) > 1:
        names = ", ".join(repr(s.name) for s in with_data)
        raise _ReadError(f"has data on several sheets ({names}); say which one to read with "
                         f"sheet = \"…\" under [files] in round.toml", allowed=names)
    for s in hidden:
        log.warn(file, "this hidden sheet has data, which is not read; if it is the table, "
                 "name it under [files] sheet in round.toml", sheet=s.name)
    if not with_data:
        note = " (only hidden sheets have data)" if hidden else ""
        raise _ReadError(f"is empty: no visible sheet has data{note}", allowed=listing)
    return with_data[0]


def _check_size(sheet: _Sheet, limits: ReadLimits) -> None:
    """Refuse a sheet whose used area is too large, before calamine allocates all of it."""
    scan = sheet.scan
    if scan.rows is None or scan.columns is None:
        return
    height = scan.rows[1] - scan.rows[0] + 1
    width = scan.columns[1] - scan.columns[0] + 1
    span = (f"{_column_letters(scan.columns[0])}{scan.rows[0]}:"
            f"{_column_letters(scan.columns[1])}{scan.rows[1]}")
    stray = " (is there a stray value or formatted cell far below or right of the table?)"
    if height > limits.max_rows + 1:
        raise _ReadError(f"has cells in use on {height:,} rows ({span}), more than the "
                         f"{limits.max_rows:,} reportgen reads{stray}", sheet=sheet.name,
                         allowed=f"at most {limits.max_rows:,} rows{limits.hint('max_rows')}")
    if height * width > limits.max_cells:
        raise _ReadError(f"has cells in use across {height:,} rows x {width:,} columns ({span}), "
                         f"more than the {limits.max_cells:,} cells reportgen reads{stray}",
                         sheet=sheet.name,
                         allowed=f"at most {limits.max_cells:,} cells{limits.hint('max_cells')}")


# --------------------------------------------------------------------------- xlsx: formulas, errors


@dataclass
class _CellNotes:
    """From a full parse of one sheet: formulas without a saved result, and error values."""

    formulas: dict[tuple[int, int], str] = field(default_factory=dict)
    errors: dict[tuple[int, int], str] = field(default_factory=dict)


_REF = re.compile(r"([A-Z]{1,3})([0-9]{1,7})")


def _quick_notes(chunks: Iterable[bytes], markup: _Markup) -> _CellNotes:
    """Formulas without a result and error values of a sheet whose cells are all written the
    usual way (``<c r="B7" ...>``): only the cells around a ``<f>`` or ``t="e"`` are looked at."""
    notes = _CellNotes()

    def scan(piece: bytes) -> None:
        hits = sorted({m.start() for m in markup.formula_tag.finditer(piece)}
                      | {m.start() for m in _ERROR_TYPE.finditer(piece)})
        seen = -1
        for hit in hits:
            start = piece.rfind(markup.cell, 0, hit)
            if start < 0 or start == seen:
                continue
            seen = start
            stop = piece.find(markup.cell_end, start)
            _note_cell_bytes(piece[start: stop if stop >= 0 else len(piece)], notes, markup)

    _scan_xml(chunks, scan, end=markup.row_end)
    return notes


def _note_cell_bytes(cell: bytes, notes: _CellNotes, markup: _Markup) -> None:
    ref = markup.ref.match(cell)
    if ref is None:
        return
    place = (int(ref.group(2)), _column_number(ref.group(1)))
    tag_end = cell.find(b">") + 1
    tag, body = cell[:tag_end], (b"" if cell[:tag_end].endswith(b"/>") else cell[tag_end:])
    value = markup.value.search(body)
    text = _xml_text(value.group(1)) if value else ""
    if _ERROR_TYPE.search(tag) and text:
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

    def __init__(self) -> None:
        super().__init__()
        self.notes, self.scan = _CellNotes(), _Scan()
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
            self.cell = (int(ref.group(2)), _column_number(ref.group(1))) if ref else (
                self.row, self.col + 1)
            self.col = self.cell[1]
            self.error = attrs.get("t") == "e"
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
            self.scan.rows = _widen(self.scan.rows, place[0], place[0])
            self.scan.columns = _widen(self.scan.columns, place[1], place[1])
        value = "".join(self.texts.get("v", []))
        if self.error and value:
            self.notes.errors[place] = value
        elif "f" in self.children and not value.strip():
            self.notes.formulas[place] = "".join(self.texts.get("f", []))


def _parse_sheet(archive: zipfile.ZipFile, sheet: _Sheet) -> _CellNotes:
    """Parse the whole sheet (defusedxml SAX), for sheets whose cells are not all written the
    usual way; also measures the used area exactly, replacing the quick scan's estimate.
    About 5 s for 200,000 rows x 7 columns; ordinary workbooks never need it."""
    assert sheet.member is not None
    handler = _SheetHandler()
    parser = DefusedExpatParser(forbid_dtd=True)
    parser.setContentHandler(handler)
    try:
        with archive.open(sheet.member) as stream:
            parser.parse(stream)
    except (SAXException, ValueError, zipfile.BadZipFile, NotImplementedError,
            RuntimeError) as exc:  # defusedxml's refusals are ValueErrors
        raise _ReadError(_NOT_READABLE, sheet=sheet.name) from exc
    sheet.scan = handler.scan
    return handler.notes


# --------------------------------------------------------------------------- xlsx: read


def _xlsx_grid(data: bytes, file: str, log: ProblemLog, wanted: str | None,
               limits: ReadLimits) -> _Grid:
    """Guard the workbook (steps 1-4), then read the chosen sheet with calamine (step 5)."""
    with _open_zip(data, limits) as archive:  # 1. declared sizes and compression ratio
        sheets = _sheets(_parts(archive, data))  # 2. which sheets, in which parts
        _verify(archive, data, sheets, limits)  # 3. every part unpacked, sheets measured
        sheet = _choose(sheets, wanted, file, log)
        if sheet.member not in archive.namelist():
            raise _ReadError(_NOT_READABLE, sheet=sheet.name)
        notes = _CellNotes()
        if sheet.scan.odd:
            notes = _parse_sheet(archive, sheet)
        elif sheet.scan.marked:
            notes = _quick_notes(_inflate(data, archive.getinfo(sheet.member)),
                                 sheet.scan.markup or _markup(b""))
    _check_size(sheet, limits)  # 4. the area calamine will allocate
    values, origin, merged = _calamine_values(data, sheet.name, [s.name for s in sheets])
    rows, kinds = _sheet_texts(values)
    numbers = range(origin[0] + 1, origin[0] + 1 + len(rows))
    _mark_errors(rows, kinds, notes, origin)
    return _Grid(file=file, sheet=sheet.name, rows=rows, numbers=numbers, kinds=kinds,
                 first_column=origin[1] + 1, label=_column_letters,
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
                raise _ReadError(_NOT_READABLE, sheet=name)
            sheet = book.get_sheet_by_name(name)
            values = sheet.to_python(skip_empty_area=True)
            origin = sheet.start or (0, 0)
            merged = sheet.merged_cell_ranges or []
    except _ReadError:
        raise
    except python_calamine.PasswordError as exc:
        raise _ReadError(_NOT_READABLE) from exc
    except Exception as exc:  # calamine raises assorted errors on damaged workbooks
        raise _ReadError(f"{_NOT_READABLE}; the reader said: {exc}", sheet=name) from exc
    except BaseException as exc:  # a Rust panic (pyo3 PanicException) is a BaseException
        if type(exc).__name__ != "PanicException":
            raise
        raise _ReadError(_NOT_READABLE, sheet=name) from None
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
    for row, col, formula in formulas[:_MAX_REPORTS]:
        log.error(table.file, f"cell {_column_letters(col)}{row} has a formula but no saved "
                  "result (the file was written by a program that does not calculate); open "
                  "it in Excel or LibreOffice and save it again, or type the values in",
                  sheet=table.sheet, row=row, column=names.get(col), value=f"={formula}")
    if len(formulas) > _MAX_REPORTS:
        log.error(table.file, f"{len(formulas) - _MAX_REPORTS:,} more cells have a formula "
                  "but no saved result", sheet=table.sheet)
    for (r0, c0), (r1, c1) in sorted(merged):
        if r1 + 1 < table.header_row or r0 + 1 > last_row:
            continue
        top_left = f"{_column_letters(c0 + 1)}{r0 + 1}"
        log.warn(table.file, f"cells {top_left}:{_column_letters(c1 + 1)}{r1 + 1} are merged; "
                 f"only {top_left} holds a value and the others read as empty: unmerge them and "
                 "fill in every cell", sheet=table.sheet, row=r0 + 1, column=names.get(c0 + 1))
