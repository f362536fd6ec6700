"""results.xlsx as a provider formats a workbook by hand, and the same numbers as results.json:
read back with openpyxl, and opened in LibreOffice (Debian's libreoffice-calc) headless."""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import math
import shutil
import subprocess
from pathlib import Path
from typing import Any

import pytest
from openpyxl import load_workbook
from openpyxl.workbook.workbook import Workbook
from pypdf import PdfReader

from reportgen import catalogue
from reportgen.render import workbook
from reportgen.render.pdf import html_to_pdf
from reportgen.render.results_json import results_json
from reportgen.results.model import RoundResults
from tests.test_history import sample_results

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def results() -> RoundResults:
    return sample_results()[-1]


@pytest.fixture(scope="module")
def xlsx(results: RoundResults) -> bytes:
    return workbook.results_workbook(results)


@pytest.fixture(scope="module")
def book(xlsx: bytes) -> Workbook:
    return load_workbook(io.BytesIO(xlsx))


@pytest.fixture(scope="module")
def doc(results: RoundResults) -> dict[str, Any]:
    loaded: dict[str, Any] = json.loads(results_json(results))
    return loaded


def _header(ws: Any) -> list[str]:
    return [c.value for c in ws[1]]


def test_every_sheet_is_frozen_filtered_and_set_up_for_print(book: Workbook) -> None:
    assert book.sheetnames == ["Participants", "Items", "Group summary", "Criteria", "Methods",
                               "Round"]
    for ws in book.worksheets:
        assert ws.freeze_panes in ("A2", "B2"), ws.title
        assert ws.auto_filter.ref and ws.auto_filter.ref.startswith("A1:"), ws.title
        assert ws.print_title_rows == "$1:$1", ws.title
        assert ws.page_setup.orientation == "landscape"
        assert ws.sheet_properties.pageSetUpPr.fitToPage
        assert ws.page_setup.fitToWidth == 1 and ws.page_setup.fitToHeight == 0
        assert all(c.font.bold for c in ws[1])


def test_rates_are_percent_indices_fixed_and_counts_whole(book: Workbook) -> None:
    ws = book["Participants"]
    col = {name: i for i, name in enumerate(_header(ws))}
    row = next(ws.iter_rows(min_row=2, max_row=2))
    assert row[col["accuracy"]].number_format == "0.0%"
    assert row[col["accuracy low"]].number_format == "0.0%"
    assert row[col["d_prime"]].number_format == "0.000"
    assert row[col["errors"]].number_format == "0"
    general = [c for r in book["Participants"].iter_rows(min_row=2) for c in r
               if isinstance(c.value, float) and c.number_format == "General"]
    assert not general


def test_numbers_are_numbers_and_dates_are_dates(book: Workbook) -> None:
    items = book["Items"]
    col = {name: i for i, name in enumerate(_header(items))}
    ages = [r[col["age_gap_years"]].value for r in items.iter_rows(min_row=2)]
    assert all(v is None or isinstance(v, int) for v in ages) and any(ages)
    assert all(isinstance(r[col["quality"]].value, str) for r in items.iter_rows(min_row=2))
    fields = {r[0].value: r[1] for r in book["Round"].iter_rows(min_row=2)}
    for key in ("opened", "closed", "issued"):
        assert isinstance(fields[key].value, dt.datetime), key
        assert fields[key].number_format == "yyyy-mm-dd"
    assert fields["interval_level"].value == catalogue.INTERVAL_LEVEL


def test_widths_come_from_the_content(book: Workbook) -> None:
    ws = book["Round"]
    longest = max(len(str(r[1].value)) for r in ws.iter_rows(min_row=2)
                  if isinstance(r[1].value, str))
    assert ws.column_dimensions["B"].width >= min(workbook.MAX_WIDTH, longest)
    sha = next(r[1].value for r in ws.iter_rows(min_row=2) if "SHA-256" in r[0].value)
    assert ws.column_dimensions["B"].width >= len(sha)  # hashes are never cut off


def test_criteria_sheet_has_one_column_per_outcome(book: Workbook, results: RoundResults
                                                   ) -> None:
    ws = book["Criteria"]
    header = _header(ws)
    assert header[:4] == ["criterion", "label", "metric", "kind"]
    assert "participants: met" in header and "participants: not met" in header
    rows = {r[0]: dict(zip(header, r, strict=True)) for r in ws.iter_rows(min_row=2,
                                                                            values_only=True)}
    for rule in results.round.config.criteria:
        counts = results.group.criteria_counts.get(rule.id, {})
        for outcome, n in counts.items():
            assert rows[rule.id][f"participants: {outcome}"] == n


def test_self_estimates_are_included(book: Workbook, results: RoundResults) -> None:
    assert results.round.estimates
    ws = book["Participants"]
    col = _header(ws).index("self_estimate")
    got = {r[0]: r[col] for r in ws.iter_rows(min_row=2, values_only=True)}
    for code, value in results.round.estimates.items():
        assert got[code] == value


def test_workbook_and_json_hold_the_same_doubles(book: Workbook, doc: dict[str, Any]) -> None:
    ws = book["Participants"]
    header = _header(ws)
    by_code = {p["participant"]: p for p in doc["participants"]}
    compared = 0
    for row in ws.iter_rows(min_row=2, values_only=True):
        record = by_code[row[0]]
        for name, value in zip(header, row, strict=True):
            if name in record and isinstance(record[name], float):
                assert value == record[name], (row[0], name)
                compared += 1
            elif name.endswith((" low", " high")) and record.get(f"{name.split()[0]}_ci"):
                low, high = record[f"{name.split()[0]}_ci"]
                assert value == (low if name.endswith(" low") else high), (row[0], name)
                compared += 1
    assert compared > 1000


def test_document_dates_follow_one_convention(book: Workbook, results: RoundResults,
                                              xlsx: bytes) -> None:
    """The issue date at 00:00 UTC, as in the PDF metadata (reportgen.render.pdf)."""
    issued = results.round.config.round.issued
    midnight = dt.datetime(issued.year, issued.month, issued.day)
    assert book.properties.created == midnight
    assert book.properties.modified == midnight
    assert workbook.document_time(issued) == midnight.replace(tzinfo=dt.UTC)
    assert workbook.results_workbook(results) == xlsx  # byte-identical on a rerun


@pytest.fixture(scope="module")
def libreoffice_csv(xlsx: bytes, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    soffice = shutil.which("soffice") or shutil.which("libreoffice")
    if soffice is None:
        pytest.skip("LibreOffice is not installed (scripts/system-deps.sh installs it)")
    work = tmp_path_factory.mktemp("libreoffice")
    (work / "results.xlsx").write_bytes(xlsx)
    # Text CSV filter: comma, quote, UTF-8, from line 1, en-US, values not "as shown", all sheets
    options = "44,34,76,1,,1033,false,true,false,false,false,-1"
    subprocess.run([soffice, "--headless", "--norestore",
                    f"-env:UserInstallation={(work / 'profile').as_uri()}",
                    "--convert-to", f"csv:Text - txt - csv (StarCalc):{options}",
                    "--outdir", str(work), str(work / "results.xlsx")],
                   check=True, capture_output=True, timeout=180)
    return {p.stem.removeprefix("results-"): p for p in work.glob("results-*.csv")}


def _lo_number(text: str) -> float:
    return float(text[:-1]) / 100 if text.endswith("%") else float(text)


def test_libreoffice_reads_the_values_of_results_json(libreoffice_csv: dict[str, Path],
                                                      doc: dict[str, Any]) -> None:
    """LibreOffice opens the workbook (no repair) and reads every participant value as the
    number in results.json. LibreOffice writes 15 significant digits in CSV, hence the
    relative tolerance of 1e-13; openpyxl's reading above is exact."""
    assert {"Participants", "Items", "Round"} <= set(libreoffice_csv)
    with libreoffice_csv["Participants"].open(encoding="utf-8") as f:
        rows = list(csv.reader(f))
    header, body = rows[0], rows[1:]
    by_code = {p["participant"]: p for p in doc["participants"]}
    assert {r[0] for r in body} == set(by_code)
    compared = 0
    for row in body:
        record = by_code[row[0]]
        for name, text in zip(header, row, strict=True):
            value = record.get(name)
            if isinstance(value, bool) or not isinstance(value, int | float):
                continue
            assert math.isclose(_lo_number(text), value, rel_tol=1e-13, abs_tol=1e-15), (
                row[0], name, text, value)
            compared += 1
    assert compared > 1000
    with libreoffice_csv["Round"].open(encoding="utf-8") as f:
        fields = dict(r[:2] for r in csv.reader(f))
    assert fields["issued"] == doc["round"]["issued"]  # a real date, shown as ISO


def test_pdf_metadata_uses_the_same_date_convention(results: RoundResults) -> None:
    issued = results.round.config.round.issued
    html = ('<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><title>t</title></head>'
            "<body><p>date</p></body></html>")
    meta = PdfReader(io.BytesIO(html_to_pdf(html, issued=issued))).metadata
    assert meta is not None and meta.creation_date is not None
    assert meta.creation_date.astimezone(dt.UTC) == workbook.document_time(issued)
    assert meta.modification_date is not None
    assert meta.modification_date.astimezone(dt.UTC) == workbook.document_time(issued)
