"""A minimal, deterministic xlsx writer: one sheet, inline strings, no wall clock."""

from __future__ import annotations

import datetime as dt
import io
import math
import zipfile

import numpy as np
import numpy.typing as npt
import pandas as pd

_NS_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_NS_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_NS_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
_XML_HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
_CT = "application/vnd.openxmlformats-"


def _xml_text(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _column_letter(index: int) -> str:
    """0 -> A, 25 -> Z, 26 -> AA."""
    letters = ""
    index += 1
    while index:
        index, rem = divmod(index - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


def _xlsx_cells(values: npt.NDArray[np.object_], column: str, first_row: int) -> list[str]:
    """``<c>`` elements of one column; strings are inline and formatted as text (``@``)."""
    out = []
    for row, value in enumerate(values.tolist(), start=first_row):
        ref = f"{column}{row}"
        if isinstance(value, str):
            space = ' xml:space="preserve"' if value != value.strip() else ""
            out.append(f'<c r="{ref}" s="1" t="inlineStr"><is><t{space}>{_xml_text(value)}'
                       "</t></is></c>")
        elif value is None or (isinstance(value, float) and math.isnan(value)):
            out.append("")
        elif isinstance(value, bool):
            out.append(f'<c r="{ref}" t="b"><v>{int(value)}</v></c>')
        elif isinstance(value, int | float):
            out.append(f'<c r="{ref}"><v>{value!r}</v></c>')
        else:
            raise TypeError(f"cannot write {type(value).__name__} to a workbook cell")
    return out


def xlsx_bytes(table: pd.DataFrame, when: dt.date, sheet: str = "responses") -> bytes:
    """A minimal, deterministic xlsx workbook of one sheet, written directly (no wall clock).

    The document properties ``created`` and ``modified`` and every zip entry's timestamp are the
    given date; strings are inline strings with the text number format, so codes keep their
    leading zeros; integers are numbers.
    """
    n_rows, n_cols = table.shape
    letters = [_column_letter(j) for j in range(n_cols)]
    header = [f"{_column_letter(j)}1" for j in range(n_cols)]
    columns = []
    for j, name in enumerate(table.columns):
        values = table[name].to_numpy(dtype=object)
        cells = _xlsx_cells(values, letters[j], 2)
        columns.append(cells)
    head = "".join(f'<c r="{ref}" s="1" t="inlineStr"><is><t>{_xml_text(str(name))}</t></is></c>'
                   for ref, name in zip(header, table.columns, strict=True))
    rows = [f'<row r="1">{head}</row>']
    rows.extend(f'<row r="{k + 2}">{"".join(cells)}</row>'
                for k, cells in enumerate(zip(*columns, strict=True)))
    last = f"{letters[-1]}{n_rows + 1}" if n_cols else "A1"
    sheet_xml = (f'{_XML_HEAD}<worksheet xmlns="{_NS_MAIN}"><dimension ref="A1:{last}"/>'
                 f'<sheetData>{"".join(rows)}</sheetData></worksheet>')
    stamp = f"{when.isoformat()}T00:00:00Z"
    # creator and application stay "reportgen.simulate" (the simulator's former home), so the
    # committed sample workbook stays byte-identical.
    parts = {
        "[Content_Types].xml": (
            f'{_XML_HEAD}<Types xmlns="http://schemas.openxmlformats.org/package/2006/'
            'content-types">'
            f'<Default Extension="rels" ContentType="{_CT}package.relationships+xml"/>'
            '<Default Extension="xml" ContentType="application/xml"/>'
            '<Override PartName="/xl/workbook.xml" ContentType="'
            f'{_CT}officedocument.spreadsheetml.sheet.main+xml"/>'
            '<Override PartName="/xl/worksheets/sheet1.xml" ContentType="'
            f'{_CT}officedocument.spreadsheetml.worksheet+xml"/>'
            '<Override PartName="/xl/styles.xml" ContentType="'
            f'{_CT}officedocument.spreadsheetml.styles+xml"/>'
            '<Override PartName="/docProps/core.xml" ContentType="'
            f'{_CT}package.core-properties+xml"/>'
            '<Override PartName="/docProps/app.xml" ContentType="'
            f'{_CT}officedocument.extended-properties+xml"/>'
            "</Types>"),
        "_rels/.rels": (
            f'{_XML_HEAD}<Relationships xmlns="{_NS_PKG_REL}">'
            f'<Relationship Id="rId1" Type="{_NS_REL}/officeDocument" Target="xl/workbook.xml"/>'
            '<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/package/2006/'
            'relationships/metadata/core-properties" Target="docProps/core.xml"/>'
            f'<Relationship Id="rId3" Type="{_NS_REL}/extended-properties" '
            'Target="docProps/app.xml"/>'
            "</Relationships>"),
        "docProps/core.xml": (
            f"{_XML_HEAD}<cp:coreProperties xmlns:cp=\"http://schemas.openxmlformats.org/package/"
            '2006/metadata/core-properties" xmlns:dc="http://purl.org/dc/elements/1.1/" '
            'xmlns:dcterms="http://purl.org/dc/terms/" '
            'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">'
            "<dc:creator>reportgen.simulate</dc:creator>"
            f'<dcterms:created xsi:type="dcterms:W3CDTF">{stamp}</dcterms:created>'
            f'<dcterms:modified xsi:type="dcterms:W3CDTF">{stamp}</dcterms:modified>'
            "</cp:coreProperties>"),
        "docProps/app.xml": (
            f'{_XML_HEAD}<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/'
            '2006/extended-properties"><Application>reportgen.simulate</Application></Properties>'),
        "xl/workbook.xml": (
            f'{_XML_HEAD}<workbook xmlns="{_NS_MAIN}" xmlns:r="{_NS_REL}">'
            f'<sheets><sheet name="{_xml_text(sheet)}" sheetId="1" r:id="rId1"/></sheets>'
            "</workbook>"),
        "xl/_rels/workbook.xml.rels": (
            f'{_XML_HEAD}<Relationships xmlns="{_NS_PKG_REL}">'
            f'<Relationship Id="rId1" Type="{_NS_REL}/worksheet" Target="worksheets/sheet1.xml"/>'
            f'<Relationship Id="rId2" Type="{_NS_REL}/styles" Target="styles.xml"/>'
            "</Relationships>"),
        "xl/styles.xml": (
            f'{_XML_HEAD}<styleSheet xmlns="{_NS_MAIN}">'
            '<fonts count="1"><font><sz val="11"/><name val="Calibri"/></font></fonts>'
            '<fills count="2"><fill><patternFill patternType="none"/></fill>'
            '<fill><patternFill patternType="gray125"/></fill></fills>'
            '<borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border>'
            "</borders>"
            '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/>'
            "</cellStyleXfs>"
            '<cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/>'
            '<xf numFmtId="49" fontId="0" fillId="0" borderId="0" xfId="0" '
            'applyNumberFormat="1"/></cellXfs>'
            '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/>'
            "</cellStyles></styleSheet>"),
        "xl/worksheets/sheet1.xml": sheet_xml,
    }
    out = io.BytesIO()
    date_time = (when.year, when.month, when.day, 0, 0, 0)
    with zipfile.ZipFile(out, "w") as zf:
        for name, text in parts.items():
            entry = zipfile.ZipInfo(name, date_time=date_time)
            entry.compress_type = zipfile.ZIP_DEFLATED
            entry.external_attr = 0o644 << 16
            zf.writestr(entry, text.encode("utf-8"))
    return out.getvalue()
