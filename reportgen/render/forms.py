"""Response forms: one workbook per participant that prevents the usual errors at the source.

The participant code, round and items are filled in and locked (sheet protection without a
password: it stops slips, not a determined user, and every returned form is checked again by
:mod:`reportgen.rounds.forms`). The decision cells offer the declared labels as a drop-down,
the confidence cells accept only the declared scale, the estimate cell only 0 to 100. A hidden
sheet holds the round id, the code and a checksum of the item list. Bytes are reproducible:
document dates come from the round's issue date.
"""

from __future__ import annotations

import io
from collections.abc import Sequence

from openpyxl import Workbook
from openpyxl.styles import Font, Protection
from openpyxl.worksheet.datavalidation import DataValidation
from openpyxl.worksheet.worksheet import Worksheet

from reportgen.render.workbook import (
    document_time,
    fixed_zip,  # the one way to date zip entries
)
from reportgen.rounds.forms import (
    CODE_CELL,
    ESTIMATE_CELL,
    FIRST_ITEM_ROW,
    FORM_SHEET,
    FORM_TAG,
    HEADER_ROW,
    META_ROWS,
    META_SHEET,
    ROUND_CELL,
    items_checksum,
)
from reportgen.rounds.schema import RoundConfig

__all__ = ["response_form"]

_OPEN = Protection(locked=False)


def _text(ws: Worksheet, row: int, column: int, value: str, *, bold: bool = False) -> None:
    cell = ws.cell(row, column, value)
    cell.data_type = "s"  # never a formula, whatever the text starts with
    if bold:
        cell.font = Font(bold=True)


def _scale_rule(cfg: RoundConfig) -> tuple[str, str]:
    scale = cfg.confidence
    kind = "whole" if scale.kind == "ordinal" else "decimal"
    words = (f"a whole number from {scale.min:g} to {scale.max:g}" if kind == "whole"
             else f"a percentage from {scale.min:g} to {scale.max:g}")
    return kind, words


def _meta_sheet(wb: Workbook, cfg: RoundConfig, items: Sequence[str], code: str) -> str:
    """The hidden sheet: identification in A:B, the decision labels in D (the drop-down's
    source, so labels with commas or quotes work). Returns the labels' range."""
    meta = wb.create_sheet(META_SHEET)
    values = {"form": FORM_TAG, "round": cfg.round.id,
              "items_sha256": items_checksum(cfg.round.id, items), "participant": code}
    for key, row in META_ROWS.items():
        _text(meta, row, 1, key)
        _text(meta, row, 2, values[key])
    labels = sorted(cfg.decisions)
    for n, label in enumerate(labels, start=1):
        _text(meta, n, 4, label)
    meta.sheet_state = "hidden"
    meta.protection.sheet = True
    return f"'{META_SHEET}'!$D$1:$D${len(labels)}"


def response_form(cfg: RoundConfig, items: Sequence[str], code: str) -> bytes:
    """The response form of participant ``code`` as .xlsx bytes."""
    wb = Workbook()
    ws = wb.active
    ws.title = FORM_SHEET
    _text(ws, CODE_CELL[0], 1, "Participant code", bold=True)
    _text(ws, CODE_CELL[0], 2, code)
    _text(ws, ROUND_CELL[0], 1, "Round", bold=True)
    _text(ws, ROUND_CELL[0], 2, cfg.round.id)
    _text(ws, ESTIMATE_CELL[0], 1, "Your estimate: percent of items you got right (0 to 100)",
          bold=True)
    kind, words = _scale_rule(cfg)
    _text(ws, HEADER_ROW - 1, 1, f"Choose a decision for every item; confidence is {words}.")
    for column, title in enumerate(("Item", "Decision", "Confidence"), start=1):
        _text(ws, HEADER_ROW, column, title, bold=True)
    last = FIRST_ITEM_ROW + len(items) - 1
    for n, item in enumerate(items):
        _text(ws, FIRST_ITEM_ROW + n, 1, item)
        for column in (2, 3):
            ws.cell(FIRST_ITEM_ROW + n, column).protection = _OPEN
    ws.cell(*ESTIMATE_CELL).protection = _OPEN
    source = _meta_sheet(wb, cfg, items, code)
    decision = DataValidation(type="list", formula1=source, allow_blank=True,
                              showErrorMessage=True, errorTitle="Decision",
                              error="Choose one of the decisions in the list.")
    confidence = DataValidation(type=kind, operator="between", formula1=f"{cfg.confidence.min:g}",
                                formula2=f"{cfg.confidence.max:g}", allow_blank=True,
                                showErrorMessage=True, errorTitle="Confidence",
                                error=f"Confidence is {words}.")
    estimate = DataValidation(type="decimal", operator="between", formula1="0", formula2="100",
                              allow_blank=True, showErrorMessage=True, errorTitle="Estimate",
                              error="The estimate is a percentage from 0 to 100.")
    for rule, ref in ((decision, f"B{FIRST_ITEM_ROW}:B{last}"),
                      (confidence, f"C{FIRST_ITEM_ROW}:C{last}"),
                      (estimate, f"B{ESTIMATE_CELL[0]}")):
        ws.add_data_validation(rule)
        rule.add(ref)
    ws.protection.sheet = True
    ws.column_dimensions["A"].width = max(12, min(40, max(map(len, items), default=4) + 2))
    ws.column_dimensions["B"].width = max(14, max(map(len, cfg.decisions), default=4) + 4)
    ws.column_dimensions["C"].width = 12
    when = document_time(cfg.round.issued).replace(tzinfo=None)
    wb.properties.created = wb.properties.modified = when
    buffer = io.BytesIO()
    wb.save(buffer)
    return fixed_zip(buffer.getvalue(), document_time(cfg.round.issued))
