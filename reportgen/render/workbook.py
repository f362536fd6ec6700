"""results.xlsx: the provider's workbook (participants, items, group summary, methods, round).

Text from the round is untrusted: every text cell is stored as a string (``data_type = "s"``),
so a value such as ``=HYPERLINK(...)`` reads back as that text and never runs as a formula.
Document properties and zip entry dates come from the round, so reruns give identical bytes.
"""

from __future__ import annotations

import datetime as dt
import io
import re
import zipfile
from collections.abc import Iterable, Sequence
from typing import Any

from openpyxl import Workbook
from openpyxl.styles import Font
from openpyxl.worksheet.worksheet import Worksheet

from reportgen.catalogue import BY_NAME, METRICS
from reportgen.render.wording import statements
from reportgen.results.model import RoundResults
from reportgen.results.records import round_json

Cell = str | int | float | None
_ESCAPE_LIKE = re.compile(r"_(x[0-9A-Fa-f]{4}_)")
_MODIFIED = re.compile(rb"(<dcterms:modified[^>]*>)[^<]*(</dcterms:modified>)")


def _keep_cr(text: str) -> str:
    """A carriage return would be read back as a line feed (XML end-of-line handling), so it is
    written as the OOXML escape ``_x000D_``; text that already looks like an escape has its
    underscore escaped (``_x005F_``) so that it too reads back unchanged (ECMA-376 ST_Xstring)."""
    return _ESCAPE_LIKE.sub(r"_x005F_\1", text).replace("\r", "_x000D_")


def _append(ws: Worksheet, row: Sequence[Cell]) -> None:
    ws.append([_keep_cr(v) if isinstance(v, str) else v for v in row])
    for cell in ws[ws.max_row]:
        if isinstance(cell.value, str):
            cell.data_type = "s"  # never a formula, whatever the text starts with


def _sheet(wb: Workbook, title: str, header: Sequence[str],
           rows: Iterable[Sequence[Cell]]) -> None:
    ws = wb.create_sheet(title)
    _append(ws, header)
    for cell in ws[1]:
        cell.font = Font(bold=True)
    for row in rows:
        _append(ws, row)
    ws.freeze_panes = "B2"
    for i, name in enumerate(header, start=1):
        ws.column_dimensions[ws.cell(1, i).column_letter].width = max(10, min(40, len(name) + 2))


def _participants(results: RoundResults) -> tuple[list[str], list[list[Cell]]]:
    first = results.participants[0] if results.participants else None
    count_names = list(first.counts) if first else []
    metric_names = list(first.metrics) if first else []
    ids = results.round.identities is not None
    header = ["participant", *(["name", "organisation"] if ids else []), *count_names]
    for name in metric_names:
        header += [name, f"{name} low", f"{name} high", f"{name} note"]
    crit = [c.id for c in results.round.config.criteria]
    header += [f"criterion {c}" for c in crit] + ["overall"]
    rows = []
    for p in results.participants:
        row: list[Cell] = [p.code]
        if ids:
            ident = results.round.identity(p.code)
            row += [ident.name, ident.organisation]
        row += [p.counts[n] for n in count_names]
        for n in metric_names:
            m = p.metrics[n]
            row += [m.value, m.low, m.high, m.note]
        row += [c.outcome for c in p.criteria] + [p.overall]
        rows.append(row)
    return header, rows


def _items(results: RoundResults) -> tuple[list[str], list[list[Cell]]]:
    attrs = sorted(results.round.item_attributes)
    header = ["item", "truth", *attrs, "answered", "correct", "wrong", "inconclusive",
              "difficulty (share correct)", "discrimination", "inconclusive rate",
              "review before release", "why"]
    rows: list[list[Cell]] = []
    for i, it in enumerate(results.items):
        rows.append([it.item, it.truth, *(results.round.item_attributes[a][i] for a in attrs),
                     it.answered, it.correct, it.wrong, it.inconclusive, it.difficulty,
                     it.discrimination, it.inconclusive_rate, "yes" if it.flagged else "no",
                     statements.flag_reason(it)])
    return header, rows


def _group(results: RoundResults) -> list[list[Cell]]:
    rows: list[list[Cell]] = []
    for name, d in results.group.distributions.items():
        rows.append([name, d.n, d.mean, d.sd, d.minimum, d.q1, d.median, d.q3, d.maximum])
    return rows


def _round_rows(results: RoundResults) -> list[list[Cell]]:
    info = round_json(results)
    rows: list[list[Cell]] = []
    for key in ("id", "scheme", "title", "opened", "closed", "issued", "status",
                "n_participants", "n_items"):
        rows.append([key, info[key]])
    for src in info["inputs"]:
        rows.append([f"input {src['name']} (SHA-256)", src["sha256"]])
    for rule in results.round.config.criteria:
        rows.append([f"criterion {rule.id}", f"{rule.label} [{rule.metric}]"])
        for outcome, n in sorted(results.group.criteria_counts.get(rule.id, {}).items()):
            rows.append([f"criterion {rule.id}: {outcome}", n])
    for outcome, n in sorted(results.group.overall_counts.items()):
        rows.append([f"overall: {outcome}", n])
    for w in info["warnings"]:
        rows.append(["input warning", w])
    return rows


def _fixed_zip(data: bytes, when: dt.datetime) -> bytes:
    """Re-pack the workbook with every zip entry dated ``when``.

    openpyxl stamps the clock twice on save: as zip entry dates and as the ``dcterms:modified``
    document property (it overwrites whatever was set); both are replaced by ``when``.
    """
    src = zipfile.ZipFile(io.BytesIO(data))
    out = io.BytesIO()
    stamp = when.strftime("%Y-%m-%dT%H:%M:%SZ").encode()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            content = src.read(info.filename)
            if info.filename == "docProps/core.xml":
                content = _MODIFIED.sub(rb"\g<1>" + stamp + rb"\g<2>", content)
            fixed = zipfile.ZipInfo(info.filename, date_time=when.timetuple()[:6])
            fixed.compress_type = zipfile.ZIP_DEFLATED
            fixed.external_attr = info.external_attr
            dst.writestr(fixed, content)
    return out.getvalue()


def results_workbook(results: RoundResults) -> bytes:
    wb = Workbook()
    wb.remove(wb.active)
    header, rows = _participants(results)
    _sheet(wb, "Participants", header, rows)
    header, rows = _items(results)
    _sheet(wb, "Items", header, rows)
    _sheet(wb, "Group summary", ["metric", "n", "mean", "sd", "min", "lower quartile", "median",
                                 "upper quartile", "max"], _group(results))
    _sheet(wb, "Methods", ["metric", "label", "formula", "source"],
           [[m.name, m.label, m.formula, m.source] for m in METRICS
            if m.name in (results.participants[0].metrics if results.participants else BY_NAME)])
    _sheet(wb, "Round", ["field", "value"], _round_rows(results))
    issued = results.round.config.round.issued
    when = dt.datetime(issued.year, issued.month, issued.day, 12, 0, 0)
    props: Any = wb.properties
    props.created = props.modified = when
    props.creator = props.lastModifiedBy = "reportgen"
    props.title = f"Results of round {results.round.config.round.id}"
    buf = io.BytesIO()
    wb.save(buf)
    return _fixed_zip(buf.getvalue(), when)
