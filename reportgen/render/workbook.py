"""results.xlsx: the provider's workbook (participants, items, group summary, criteria, methods,
round), formatted as a provider would by hand.

* Numbers are stored as numbers, at full precision (the same doubles as results.json: openpyxl
  would write 16 significant digits, so the shortest exact text is written instead), and shown
  through a number format: rates in percent, indices with fixed decimals, counts whole. Dates
  are real dates. Item attributes that are numbers in the key are stored as numbers.
* Every sheet: a bold header row, frozen and filtered, column widths from the content, and a
  print set-up (A4 landscape, fitted to the page width, the header row repeated on every page).
* Text from the round is untrusted: every text cell is stored as a string (``data_type = "s"``),
  so a value such as ``=HYPERLINK(...)`` reads back as that text and never runs as a formula.
* Document properties and zip entry dates are the round's issue date at 00:00 UTC, the date
  convention of the PDF metadata too, so reruns give identical bytes.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import io
import math
import re
import zipfile
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from typing import Any

from openpyxl import Workbook
from openpyxl.cell import _writer as cell_writer
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.properties import PageSetupProperties
from openpyxl.worksheet.worksheet import Worksheet

from reportgen import catalogue
from reportgen.catalogue import BY_NAME, METRICS
from reportgen.render.wording import statements
from reportgen.results.model import RoundResults
from reportgen.results.records import round_json

Cell = str | int | float | dt.date | None
PERCENT = "0.0%"
INDEX = "0.000"
WHOLE = "0"
DATE = "yyyy-mm-dd"
MAX_WIDTH = 70  # characters (a SHA-256 fits); longer text wraps
_ESCAPE_LIKE = re.compile(r"_(x[0-9A-Fa-f]{4}_)")
_MODIFIED = re.compile(rb"(<dcterms:modified[^>]*>)[^<]*(</dcterms:modified>)")
_NUMBER = re.compile(r"-?(?:0|[1-9][0-9]{0,14})(?:\.[0-9]{1,15})?")


@dataclass(frozen=True)
class Column:
    """One column of a sheet: its header and the number format of its numbers."""

    header: str
    number_format: str | None = None


def _keep_cr(text: str) -> str:
    """A carriage return would be read back as a line feed (XML end-of-line handling), so it is
    written as the OOXML escape ``_x000D_``; text that already looks like an escape has its
    underscore escaped (``_x005F_``) so that it too reads back unchanged (ECMA-376 ST_Xstring)."""
    return _ESCAPE_LIKE.sub(r"_x005F_\1", text).replace("\r", "_x000D_")


def metric_format(name: str) -> str:
    """The number format of a metric's value and interval ends."""
    if name in catalogue.RATES:
        return PERCENT
    if name in catalogue.COUNT_NAMES:
        return WHOLE
    return INDEX


def _shown_length(value: Cell, number_format: str | None) -> int:
    """About how many characters a cell shows, for the column width."""
    if value is None:
        return 0
    if isinstance(value, str):
        return max((len(line) for line in value.splitlines()), default=0)
    if isinstance(value, dt.date):
        return 10
    if number_format == PERCENT:
        return len(f"{100 * value:.1f}%")
    if number_format == INDEX:
        return len(f"{value:.3f}")
    if number_format == WHOLE:
        return len(f"{value:.0f}")
    return min(len(repr(value)), 12)


def _sheet(wb: Workbook, title: str, columns: Sequence[Column],
           rows: Iterable[Sequence[Cell]]) -> Worksheet:
    ws = wb.create_sheet(title)
    ws.append([c.header for c in columns])
    for cell in ws[1]:
        cell.data_type = "s"
        cell.font = Font(bold=True)
        cell.alignment = Alignment(vertical="top", wrap_text=True)
    widths = [len(c.header) for c in columns]
    for row in rows:
        ws.append([_keep_cr(v) if isinstance(v, str) else v for v in row])
        for i, (cell, col) in enumerate(zip(ws[ws.max_row], columns, strict=True)):
            if isinstance(cell.value, str):
                cell.data_type = "s"  # never a formula, whatever the text starts with
                if len(cell.value) > MAX_WIDTH or "\n" in cell.value:
                    cell.alignment = Alignment(vertical="top", wrap_text=True)
            elif isinstance(cell.value, dt.date):
                cell.number_format = DATE
            elif cell.value is not None and col.number_format:
                cell.number_format = col.number_format
            widths[i] = max(widths[i], _shown_length(row[i], col.number_format))
    for i, width in enumerate(widths, start=1):
        ws.column_dimensions[get_column_letter(i)].width = min(MAX_WIDTH, max(8, width + 2))
    ws.freeze_panes = "B2"
    ws.auto_filter.ref = f"A1:{get_column_letter(len(columns))}{max(ws.max_row, 2)}"
    ws.print_title_rows = "1:1"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr = PageSetupProperties(fitToPage=True)
    return ws


def _attribute(text: str) -> Cell:
    """An item attribute from the key: a number when it is written as one, else the text."""
    if not _NUMBER.fullmatch(text):
        return text if text else None
    return int(text) if "." not in text else float(text)


def _participants(results: RoundResults) -> tuple[list[Column], list[list[Cell]]]:
    first = results.participants[0] if results.participants else None
    count_names = list(first.counts) if first else []
    metric_names = list(first.metrics) if first else []
    ids = results.round.identities is not None
    estimates = results.round.estimates
    columns = [Column("participant"),
               *([Column("name"), Column("organisation")] if ids else []),
               *(Column(n, WHOLE) for n in count_names)]
    for name in metric_names:
        fmt = metric_format(name)
        columns += [Column(name, fmt), Column(f"{name} low", fmt), Column(f"{name} high", fmt),
                    Column(f"{name} note")]
    columns += [Column(f"criterion {c.id}") for c in results.round.config.criteria]
    columns += [Column("overall")]
    columns += [Column("self_estimate", "0.##")] if estimates is not None else []
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
        row += [estimates.get(p.code)] if estimates is not None else []
        rows.append(row)
    return columns, rows


def _items(results: RoundResults) -> tuple[list[Column], list[list[Cell]]]:
    attrs = sorted(results.round.item_attributes)
    columns = [Column("item"), Column("truth"), *(Column(a, "General") for a in attrs),
               Column("answered", WHOLE), Column("correct", WHOLE), Column("wrong", WHOLE),
               Column("inconclusive", WHOLE), Column("difficulty (share correct)", PERCENT),
               Column("discrimination", INDEX), Column("inconclusive rate", PERCENT),
               Column("review before release"), Column("why")]
    rows: list[list[Cell]] = []
    for i, it in enumerate(results.items):
        rows.append([it.item, it.truth,
                     *(_attribute(results.round.item_attributes[a][i]) for a in attrs),
                     it.answered, it.correct, it.wrong, it.inconclusive, it.difficulty,
                     it.discrimination, it.inconclusive_rate, "yes" if it.flagged else "no",
                     statements.flag_reason(it)])
    return columns, rows


def _group(results: RoundResults) -> list[list[Cell]]:
    rows: list[list[Cell]] = []
    for name, d in results.group.distributions.items():
        rows.append([name, d.n, d.mean, d.sd, d.minimum, d.q1, d.median, d.q3, d.maximum])
    return rows


GROUP_COLUMNS = [Column("metric"), Column("n", WHOLE),
                 *(Column(h) for h in ("mean", "sd", "min", "lower quartile", "median",
                                       "upper quartile", "max"))]


def _format_group_rows(ws: Worksheet) -> None:
    """Group summary values take their metric's format (a row per metric)."""
    for row in ws.iter_rows(min_row=2):
        fmt = metric_format(str(row[0].value))
        for cell in row[2:]:
            if cell.value is not None:
                cell.number_format = fmt


CRITERIA_OUTCOMES = ("met", "not met", "satisfactory", "questionable", "unsatisfactory",
                     "not assessable")


def _criteria(results: RoundResults) -> tuple[list[Column], list[list[Cell]]]:
    """One row per announced criterion: what it requires and how many participants had each
    outcome (blank where the outcome does not apply to the criterion's kind)."""
    columns = [Column("criterion"), Column("label"), Column("metric"), Column("kind"),
               Column("at least", "General"), Column("at most", "General"),
               *(Column(f"participants: {o}", WHOLE) for o in CRITERIA_OUTCOMES)]
    rows: list[list[Cell]] = []
    for rule in results.round.config.criteria:
        counts = results.group.criteria_counts.get(rule.id, {})
        applies = (("satisfactory", "questionable", "unsatisfactory", "not assessable")
                   if rule.kind == "z" else ("met", "not met", "not assessable"))
        rows.append([rule.id, rule.label, rule.metric, rule.kind, rule.at_least, rule.at_most,
                     *(int(counts.get(o, 0)) if o in applies else None
                       for o in CRITERIA_OUTCOMES)])
    return columns, rows


def _round_rows(results: RoundResults) -> list[list[Cell]]:
    info = round_json(results)
    cfg = results.round.config.round
    rows: list[list[Cell]] = []
    dates = {"opened": cfg.opened, "closed": cfg.closed, "issued": cfg.issued}
    for key in ("id", "scheme", "title", "opened", "closed", "issued", "status",
                "n_participants", "n_items"):
        rows.append([key, dates.get(key, info[key])])
    rows.append(["interval_level", catalogue.INTERVAL_LEVEL])
    for outcome, n in sorted(results.group.overall_counts.items()):
        rows.append([f"participants overall: {outcome}", n])
    for src in info["inputs"]:
        rows.append([f"input {src['name']} (SHA-256)", src["sha256"]])
    for w in info["warnings"]:
        rows.append(["input warning", w])
    return rows


def document_time(issued: dt.date) -> dt.datetime:
    """The time every document of a round carries in its metadata: the issue date at 00:00 UTC
    (results.xlsx properties and zip entries, the PDF's creation and modification dates)."""
    return dt.datetime(issued.year, issued.month, issued.day, tzinfo=dt.UTC)


def _exact_number_text(value: Any) -> str:
    """A cell value as openpyxl writes it, except that a float is written as the shortest text
    that reads back as the same double (``repr``) rather than openpyxl's ``%.16g``."""
    if isinstance(value, float) and math.isfinite(value):
        return repr(value)
    if isinstance(value, int) and not isinstance(value, bool):
        return str(value)
    text: str = _OPENPYXL_SAFE_STRING(value)
    return text


_OPENPYXL_SAFE_STRING = cell_writer.safe_string


@contextlib.contextmanager
def _exact_numbers() -> Iterator[None]:
    """Write floats exactly while saving (one workbook at a time per process: the renderer runs
    in worker processes, never in threads)."""
    cell_writer.safe_string = _exact_number_text
    try:
        yield
    finally:
        cell_writer.safe_string = _OPENPYXL_SAFE_STRING


def fixed_zip(data: bytes, when: dt.datetime) -> bytes:
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
    columns, rows = _participants(results)
    _sheet(wb, "Participants", columns, rows)
    columns, rows = _items(results)
    _sheet(wb, "Items", columns, rows)
    _format_group_rows(_sheet(wb, "Group summary", GROUP_COLUMNS, _group(results)))
    columns, rows = _criteria(results)
    _sheet(wb, "Criteria", columns, rows)
    _sheet(wb, "Methods", [Column("metric"), Column("label"), Column("formula"),
                           Column("source")],
           [[m.name, m.label, m.formula, m.source] for m in METRICS
            if m.name in (results.participants[0].metrics if results.participants else BY_NAME)])
    ws = _sheet(wb, "Round", [Column("field"), Column("value", "General")], _round_rows(results))
    ws.freeze_panes = "A2"
    when = document_time(results.round.config.round.issued)
    props: Any = wb.properties
    props.created = props.modified = when.replace(tzinfo=None)
    props.creator = props.lastModifiedBy = "reportgen"
    props.title = f"Results of round {results.round.config.round.id}"
    buf = io.BytesIO()
    with _exact_numbers():
        wb.save(buf)
    return fixed_zip(buf.getvalue(), when)
