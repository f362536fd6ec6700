"""The types the table readers share: the :class:`Table` a reader returns, the :class:`ReadLimits`
it keeps to, and the :class:`Grid` (or :class:`ReadError`) with which the csv and xlsx readers hand
a file back to :func:`reportgen.rounds.tables.read_table`.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import cached_property

from reportgen.errors import ProblemLog

__all__ = ["MAX_REPORTS", "Grid", "ReadError", "ReadLimits", "Table", "mib"]


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
    ``s`` text, ``n`` number, ``p`` number formatted as a percentage (whose text is the
    percentage shown: 0.8 formatted ``0%`` is ``80%``), ``d`` date/time, ``b`` TRUE/FALSE, ``z``
    empty, ``e`` error value such as ``#N/A`` (whose text is the cell value). Csv cells are only
    ever ``s`` or ``z``.
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


MAX_REPORTS = 20  # located reports of one kind per file; the rest are counted in one message


class ReadError(Exception):
    """The file cannot be read at all. Internal: :func:`read_table` logs it and returns None."""

    def __init__(self, message: str, **where: str | int | None) -> None:
        super().__init__(message)
        self.message = message
        self.where = where


def mib(n: int | float) -> str:
    return f"{n / 2**20:,.1f} MiB" if n < 2**30 else f"{n / 2**30:,.1f} GiB"


@dataclass
class Grid:
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
