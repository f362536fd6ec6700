"""Read a csv file into a :class:`~reportgen.rounds.table_types.Grid` of texts.

The bytes are decoded (BOM-marked UTF-8/16/32, else UTF-8, else Windows-1252 with a warning), the
delimiter is picked from the first records, and records are split strictly, each with the line on
which it starts.
"""

from __future__ import annotations

import codecs
import csv
import io
from collections import Counter
from collections.abc import Sequence
from itertools import islice

from reportgen.errors import ProblemLog
from reportgen.rounds.table_types import Grid, ReadError, ReadLimits

__all__ = ["csv_grid"]


_NOT_TEXT_SIGNATURES = {
    b"PK\x03\x04": "is an Excel workbook (or another zip file) saved under a .csv name: rename it "
    "to .xlsx, or save it from Excel as CSV",
    b"\xd0\xcf\x11\xe0": "is an Excel 97-2003 workbook saved under a .csv name: save it from "
    "Excel as CSV or as .xlsx",
}
_DELIMITERS = (",", ";", "\t")


def csv_grid(data: bytes, file: str, log: ProblemLog, limits: ReadLimits) -> Grid:
    for signature, message in _NOT_TEXT_SIGNATURES.items():
        if data.startswith(signature):
            raise ReadError(message)
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
        raise ReadError(f"has more than {cap - 1:,} lines; reportgen reads at most "
                         f"{limits.max_rows:,} data rows",
                         allowed=f"at most {limits.max_rows:,} rows{limits.hint('max_rows')}")
    if sum(map(len, rows)) > limits.max_cells:
        raise ReadError(f"has more than {limits.max_cells:,} cells, the most reportgen reads",
                         allowed=f"at most {limits.max_cells:,} cells{limits.hint('max_cells')}")
    return Grid(file=file, sheet=None, rows=rows, numbers=numbers, ragged=True)


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
        raise ReadError(_csv_error_message(exc), row=line + 1) from exc
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
            raise ReadError("contains NUL bytes, so it is not a text (CSV) file: save it "
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
        raise ReadError(f"is marked as {encoding.upper()} text but contains bytes that are "
                         "not; save it again as CSV UTF-8", row=line) from exc
    if "\x00" in text:
        raise ReadError("contains NUL characters, so it is not a text (CSV) file: save it from "
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
