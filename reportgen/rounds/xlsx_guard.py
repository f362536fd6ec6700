"""The checks of a workbook's bytes made before python-calamine sees them.

Workbooks are untrusted zip files, and python-calamine kills the whole process (no exception) on a
zip bomb, on a stray value far away (it allocates every cell of the used area) and on a
shared-strings count that lies. So the bytes are checked first: sizes and compression ratio, every
part inflated once with its size and checksum verified, each sheet's used area measured, and the
shared-strings count compared with its content. ``xlsx_files`` compares the used area of the
chosen sheet with the limits, then reads it.
"""

from __future__ import annotations

import html
import io
import re
import struct
import zipfile
import zlib
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from functools import lru_cache

from defusedxml.ElementTree import ParseError, fromstring  # type: ignore[import-untyped]

from reportgen.rounds.table_types import ReadError, ReadLimits, mib

__all__ = [
    "ERROR_TYPE",
    "NOT_READABLE",
    "Markup",
    "Scan",
    "Sheet",
    "column_letters",
    "column_number",
    "inflate",
    "markup_for",
    "open_zip",
    "scan_xml",
    "verify_parts",
    "widen",
    "workbook_parts",
    "workbook_sheets",
]


# --------------------------------------------------------------------------- xlsx: guard


NOT_READABLE = ("is not a readable .xlsx workbook (corrupt, or password-protected: save it "
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
ERROR_TYPE = re.compile(rb"\st\s*=\s*[\"']e[\"']")


@dataclass(frozen=True)
class Markup:
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
def markup_for(prefix: bytes) -> Markup:
    p = re.escape(prefix)
    return Markup(
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
class Scan:
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
    markup: Markup | None = None

    def add(self, chunk: bytes) -> None:
        if self.markup is None:
            root = _SHEET_ROOT.search(chunk)
            self.markup = markup_for(root.group(1) + b":" if root and root.group(1) else b"")
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
            self.rows = widen(self.rows, min(numbers), max(numbers))
            columns = [column_number(c) for c in set(markup.column.findall(chunk))]
            self.columns = widen(self.columns, min(columns), max(columns))


def widen(span: tuple[int, int] | None, low: int, high: int) -> tuple[int, int]:
    return (low, high) if span is None else (min(span[0], low), max(span[1], high))


def column_number(letters: bytes | str) -> int:
    number = 0
    for ch in letters.decode() if isinstance(letters, bytes) else letters:
        number = number * 26 + ord(ch) - 64
    return number


def column_letters(number: int) -> str:
    letters = ""
    while number > 0:
        number, rest = divmod(number - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


@dataclass
class Sheet:
    name: str
    visible: bool
    member: str | None  # None: a chart or dialog sheet, not a table
    scan: Scan = field(default_factory=Scan)


def open_zip(data: bytes, limits: ReadLimits) -> zipfile.ZipFile:
    """Open the workbook's zip and check its declared sizes, before anything is inflated."""
    if data.startswith(_OLE):
        if _ENCRYPTED_STREAM in data:
            raise ReadError("is password-protected: open it in Excel, remove the password "
                             "(File > Info > Protect Workbook) and save it again")
        raise ReadError("is an old-format Excel 97-2003 workbook with an .xlsx name: open it "
                         "in Excel and save it as .xlsx (Excel Workbook)")
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        infos = archive.infolist()
    except (zipfile.BadZipFile, zipfile.LargeZipFile, OSError, ValueError, EOFError,
            NotImplementedError) as exc:  # zipfile's refusals of damaged archives
        raise ReadError(NOT_READABLE) from exc
    total = sum(info.file_size for info in infos)
    packed = sum(info.compress_size for info in infos)
    if total > limits.max_uncompressed_bytes:
        raise ReadError(
            f"would unpack to {mib(total)}, more than the {mib(limits.max_uncompressed_bytes)} "
            "reportgen allows (a damaged file, or a 'zip bomb')",
            allowed=f"at most {limits.max_uncompressed_bytes:,} bytes unpacked"
            f"{limits.hint('max_unpacked_mib')}")
    for info in [*infos, None]:
        size, small = (total, packed) if info is None else (info.file_size, info.compress_size)
        ratio = size / max(small, 1)
        if size > _CHUNK and ratio > limits.max_compression_ratio:
            raise ReadError(
                f"is compressed {ratio:,.0f} times, more than the "
                f"{limits.max_compression_ratio:,.0f} times a real workbook reaches (a damaged "
                "file, or a 'zip bomb')", allowed=f"at most {limits.max_compression_ratio:,.0f}:1"
                f"{limits.hint('max_compression_ratio')}")
    return archive


def inflate(data: bytes, info: zipfile.ZipInfo) -> Iterator[bytes]:
    """Yield the unpacked bytes of one member, checking its recorded size and checksum.

    python-calamine unpacks members with its own zip reader; this pass makes sure no member
    unpacks to more than the size that was checked, whatever its headers claim.
    """
    header = data[info.header_offset: info.header_offset + _LOCAL_HEADER.size]
    if len(header) != _LOCAL_HEADER.size or header[:4] != b"PK\x03\x04":
        raise ReadError(NOT_READABLE)
    fields = _LOCAL_HEADER.unpack(header)
    start = info.header_offset + _LOCAL_HEADER.size + fields[-2] + fields[-1]
    packed = memoryview(data)[start: start + info.compress_size]
    if info.flag_bits & 1 or len(packed) != info.compress_size:
        raise ReadError(NOT_READABLE)
    damaged = ReadError(f"is damaged (part {info.filename} does not match its recorded size "
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
        raise ReadError(NOT_READABLE)
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
        raise ReadError(NOT_READABLE) from exc


def workbook_parts(archive: zipfile.ZipFile, data: bytes) -> dict[str, bytes]:
    """workbook.xml and its relationships, checked for size before they are read."""
    names = set(archive.namelist())
    if _WORKBOOK not in names:
        if "mimetype" in names and b"opendocument.spreadsheet" in data[:200]:
            raise ReadError("is an OpenDocument spreadsheet with an .xlsx name: open it and "
                             "save it as .xlsx (Excel Workbook)")
        raise ReadError("is a zip file but not an Excel workbook: save the table from your "
                         "spreadsheet program as .xlsx (Excel Workbook)")
    parts: dict[str, bytes] = {}
    for name in (_WORKBOOK, _WORKBOOK_RELS):
        if name not in names:
            raise ReadError(NOT_READABLE)
        info = archive.getinfo(name)
        if info.file_size > _OWN_XML_MAX:
            raise ReadError(NOT_READABLE)
        parts[name] = b"".join(_without_dtd(inflate(data, info), name, None))
    return parts


def _local(tag: str) -> str:
    return tag.rpartition("}")[2]


def workbook_sheets(parts: dict[str, bytes]) -> list[Sheet]:
    """The sheets in workbook order, with the zip member calamine reads for each.

    The member is found exactly as calamine finds it (calamine 0.3x, ``xlsx/mod.rs``), so the
    part that is measured is the part calamine will read.
    """
    try:
        rels = fromstring(parts[_WORKBOOK_RELS], forbid_dtd=True)
        book = fromstring(parts[_WORKBOOK], forbid_dtd=True)
    except (ParseError, ValueError) as exc:  # defusedxml's refusals are ValueErrors
        raise ReadError(NOT_READABLE) from exc
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
        sheets.append(Sheet(name=element.get("name", ""),
                             visible=element.get("state", "visible") == "visible",
                             member=member if is_table else None))
    return sheets


def verify_parts(archive: zipfile.ZipFile, data: bytes, sheets: list[Sheet],
            limits: ReadLimits) -> None:
    """Unpack every member once (size and checksum checked); scan the sheets, and look in every
    other part for a shared-strings count (whatever the part is called)."""
    by_member = {s.member: s for s in sheets if s.member is not None}
    for info in archive.infolist():
        sheet = by_member.get(info.filename)
        chunks = _without_dtd(inflate(data, info), info.filename, sheet)
        if sheet is not None:
            scan_xml(chunks, sheet.scan.add)
        else:
            _check_shared_strings(chunks, limits)


_DTD = b"<!DOCTYPE"


def _without_dtd(chunks: Iterable[bytes], part: str, sheet: Sheet | None) -> Iterator[bytes]:
    """Pass the chunks on, refusing a part with a document type declaration: spreadsheet
    programs never write one, and it is how entity-expansion ("billion laughs") and external-
    entity attacks are carried. (calamine does not expand entities and openpyxl reads through
    defusedxml, so this turns a refusal deep in a reader into a plain message.)"""
    tail = b""
    for chunk in chunks:
        if _DTD in tail + chunk[: len(_DTD)] or _DTD in chunk:
            raise ReadError(f"contains a document type declaration (<!DOCTYPE …>) in its part "
                             f"{part}, which spreadsheet programs never write and which can "
                             "carry an XML entity attack: open it in Excel and save it again",
                             sheet=sheet.name if sheet is not None else None)
        tail = chunk[-len(_DTD):]
        yield chunk


def scan_xml(chunks: Iterable[bytes], scan: Callable[[bytes], None], end: bytes = b">") -> None:
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

    scan_xml(chunks, scan)
    if declared is not None and declared > max(held, limits.max_cells):
        raise ReadError(f"is damaged (it claims {declared:,} different texts but holds "
                         f"{held:,}): open it in Excel and save it again")
