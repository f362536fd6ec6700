"""Building workbooks, zip archives and OLE headers from code (no binary file is committed)."""

from __future__ import annotations

import datetime as dt
import io
import zipfile
from collections.abc import Callable, Sequence
from typing import Any

import openpyxl

from scripts.hostile.base_round import Rows, responses_rows

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


def without_declaration(xml: bytes) -> bytes:
    return xml[xml.index(b"?>") + 2:].lstrip() if xml.startswith(b"<?xml") else xml


def responses_xlsx(rows: Rows | None = None) -> bytes:
    return workbook(("Responses", rows if rows is not None else responses_rows()))


def ole_file(encrypted: bool) -> bytes:
    """The first bytes of an OLE compound file: an Excel 97-2003 workbook, or (with the
    ``EncryptedPackage`` stream name) a password-protected .xlsx, which Excel stores as OLE."""
    header = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504)
    stream = "EncryptedPackage" if encrypted else "Workbook"
    return header + stream.encode("utf-16-le") + bytes(512)

