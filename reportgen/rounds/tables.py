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

The readers of each format are ``csv_files`` and ``xlsx_files`` (with ``xlsx_guard``, the checks
made before calamine); the types they share are in ``table_types``.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Sequence
from operator import itemgetter
from pathlib import Path, PurePosixPath

from reportgen.errors import ProblemLog
from reportgen.rounds.csv_files import csv_grid
from reportgen.rounds.table_types import MAX_REPORTS, Grid, ReadError, ReadLimits, Table, mib
from reportgen.rounds.xlsx_files import xlsx_grid

__all__ = ["ReadLimits", "Table", "find_table", "read_table"]


# --------------------------------------------------------------------------- public API


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
               limits: ReadLimits = ReadLimits()) -> Table | None:  # noqa: B008 (frozen)
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
            grid = csv_grid(data, display_name, log, limits)
        else:
            grid = xlsx_grid(data, display_name, log, sheet, limits)
        return _build_table(grid, digest, log, limits)
    except ReadError as exc:
        log.error(display_name, exc.message, **exc.where)
        return None


# --------------------------------------------------------------------------- shared machinery


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
            raise ReadError(
                f"is {mib(size)}, more than the {mib(limits.max_file_bytes)} reportgen reads "
                "from one file",
                allowed=f"at most {limits.max_file_bytes:,} bytes{limits.hint('max_file_mib')}")
        return path.read_bytes()
    except OSError as exc:
        raise ReadError(f"cannot be opened ({exc.strerror or exc})") from exc


def _build_table(grid: Grid, digest: str, log: ProblemLog, limits: ReadLimits) -> Table:
    """Choose the header, even out and name the columns, and freeze the rows."""
    filled = [i for i, row in enumerate(grid.rows) if any(row) and not "".join(row).isspace()]
    if not filled:
        raise ReadError("is empty: it has no header row and no data", sheet=grid.sheet)
    if len(filled) - 1 > limits.max_rows:
        raise ReadError(f"has {len(filled) - 1:,} data rows, more than the {limits.max_rows:,} "
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


def _refuse_title_row(grid: Grid, header: Sequence[str], header_row: int,
                      data: list[Sequence[str]]) -> None:
    """A lone value above rows of several values is a title, not a header: refuse it with one
    message, rather than one for every row or column it leaves without a header."""
    values = [text for text in header if text.strip()]
    below = [sum(1 for text in row if text.strip()) for row in data[:3]]
    if len(values) == 1 and below and min(below) > 1:
        raise ReadError(f"the first row that is not empty holds a single value, above rows of "
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


def _even_rows(grid: Grid, data: list[Sequence[str]], numbers: Sequence[int], width: int,
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
            if reported <= MAX_REPORTS:
                log.error(grid.file, f"row has {len(row) - width} more value(s) than there are "
                          "column headers; the extra values are not read", row=numbers[i],
                          value="; ".join(extra), allowed=f"{width} values, one per column")
        even[i] = [*row[:width], *([""] * (width - len(row)))]
    if reported > MAX_REPORTS:
        log.error(grid.file, f"{reported - MAX_REPORTS:,} more rows have more values than there "
                  "are column headers")
    return even


def _name_columns(grid: Grid, header: Sequence[str], header_row: int,
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
