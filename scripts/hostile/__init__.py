"""Every crafted round input of the hostile-input suite (tests/hostile), built from code.

Each case is a whole round folder: a tiny valid round with one thing broken the way outside files
break (spreadsheet exports, hand-edited workbooks, crafted zip and XML files, mistyped settings).
No binary file is committed: workbooks, OLE headers and zip bombs are built here, from code.

    python scripts/make_hostile_inputs.py OUTDIR            # every case, OUTDIR/<case>/
    python scripts/make_hostile_inputs.py OUTDIR --case xlsx_zip_bomb

``REFUSED`` cases must be refused (exit status 2, a located message, nothing written);
``ACCEPTED`` cases are awkward but valid and must be read without losing a character.
The expected messages live in the tests, not here.

Modules: ``base_round`` (the valid base round and text helpers), ``workbooks`` (xlsx, zip and OLE
builders), ``registry`` (``REFUSED``, ``ACCEPTED``), the cases in ``cases_settings`` (round.toml,
which file), ``cases_tables`` (csv, xlsx) and ``cases_values`` (codes and labels; the accepted
cases), ``text_round`` (a valid round with hostile text) and ``cli`` (the command line).
"""

from __future__ import annotations

from scripts.hostile import cases_settings, cases_tables, cases_values  # register the cases
from scripts.hostile.base_round import (
    ROUND_TOML,
    base,
    csv_text,
    items_rows,
    participants_rows,
    replace_once,
    responses_rows,
    toml,
    toml_table,
)
from scripts.hostile.cases_values import NAMES
from scripts.hostile.registry import ACCEPTED, REFUSED
from scripts.hostile.text_round import HOSTILE_ATTRIBUTES, HOSTILE_PEOPLE, hostile_text_round
from scripts.hostile.workbooks import (
    BILLION_LAUGHS,
    EXTERNAL_ENTITY,
    SHEET,
    edit_part,
    make_zip,
    responses_xlsx,
    workbook,
    zip_parts,
)

__all__ = [
    "ACCEPTED",
    "BILLION_LAUGHS",
    "EXTERNAL_ENTITY",
    "HOSTILE_ATTRIBUTES",
    "HOSTILE_PEOPLE",
    "NAMES",
    "REFUSED",
    "ROUND_TOML",
    "SHEET",
    "base",
    "cases_settings",
    "cases_tables",
    "cases_values",
    "csv_text",
    "edit_part",
    "hostile_text_round",
    "items_rows",
    "make_zip",
    "participants_rows",
    "replace_once",
    "responses_rows",
    "responses_xlsx",
    "toml",
    "toml_table",
    "workbook",
    "zip_parts",
]
