"""Which cells of a sheet are formatted as a percentage.

python-calamine returns a cell's value but not its number format, so a cell that shows ``80 %``
arrives as ``0.8``. The formats are in ``xl/styles.xml``: each cell's ``s`` attribute picks an
entry of ``cellXfs``, whose ``numFmtId`` is a built-in format (9 ``0%`` and 10 ``0.00%``) or one
of the workbook's own ``numFmt`` codes. A code is a percentage when it holds a ``%`` that is not
quoted text, an escaped character or inside ``[...]``.

The styles part is checked like every other part (``xlsx_guard.verify_parts``) before it is
parsed here; a workbook without one has no percent cells.
"""

from __future__ import annotations

import re
import zipfile
from collections.abc import Iterable

from defusedxml.ElementTree import ParseError, fromstring  # type: ignore[import-untyped]

from reportgen.rounds.xlsx_guard import Markup, column_number, inflate, scan_xml

__all__ = ["is_percent_format", "percent_cells", "percent_styles"]

_STYLES = "xl/styles.xml"
_STYLES_MAX = 16 << 20
_BUILT_IN_PERCENT = frozenset({9, 10})


def is_percent_format(code: str) -> bool:
    """A number format code that multiplies by 100 and shows ``%`` (``0%``, ``0.0 %``, ...)."""
    quoted = bracket = escaped = False
    for ch in code:
        if escaped:
            escaped = False
        elif ch == "\\":
            escaped = True
        elif ch == '"':
            quoted = not quoted
        elif quoted:
            continue
        elif ch == "[":
            bracket = True
        elif ch == "]":
            bracket = False
        elif ch == "%" and not bracket:
            return True
    return False


def _local(tag: str) -> str:
    return tag.rpartition("}")[2]


def percent_styles(archive: zipfile.ZipFile, data: bytes) -> frozenset[int]:
    """The indexes of ``cellXfs`` whose number format is a percentage (empty when unreadable:
    the values are then read as they are stored, and the 0-to-1 check still applies)."""
    if _STYLES not in archive.namelist():
        return frozenset()
    info = archive.getinfo(_STYLES)
    if info.file_size > _STYLES_MAX:
        return frozenset()
    try:
        root = fromstring(b"".join(inflate(data, info)), forbid_dtd=True)
    except (ParseError, ValueError):
        return frozenset()
    custom: set[int] = set()
    for element in root.iter():
        if _local(element.tag) == "numFmt" and is_percent_format(element.get("formatCode", "")):
            custom.add(_number(element.get("numFmtId")))
    percent = _BUILT_IN_PERCENT | custom
    xfs = next((e for e in root.iter() if _local(e.tag) == "cellXfs"), None)
    if xfs is None:
        return frozenset()
    entries = [e for e in xfs if _local(e.tag) == "xf"]
    return frozenset(n for n, xf in enumerate(entries)
                     if _number(xf.get("numFmtId")) in percent)


def _number(text: str | None) -> int:
    return int(text) if text is not None and text.strip().isdigit() else -1


def percent_cells(chunks: Iterable[bytes], markup: Markup,
                  styles: frozenset[int]) -> set[tuple[int, int]]:
    """The (row, column), 1-based, of the cells written ``<c r="B7" ... s="N">`` with a percent
    style N. Only for sheets whose cells are all written the usual way (``Scan.odd`` is false);
    the full parse of odd sheets records styles itself."""
    found: set[tuple[int, int]] = set()
    if not styles:
        return found

    numbers = b"|".join(str(n).encode() for n in sorted(styles))
    pattern = re.compile(re.escape(markup.cell) + rb'([A-Z]{1,3})([0-9]{1,7})"[^>]*?\ss\s*=\s*'
                         rb'["\'](?:' + numbers + rb')["\']')

    def scan(piece: bytes) -> None:
        for match in pattern.finditer(piece):
            found.add((int(match.group(2)), column_number(match.group(1))))

    scan_xml(chunks, scan, end=markup.row_end)
    return found
