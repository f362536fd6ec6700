"""Page breaks of the PDF (issue 15): a table never leaves one or two rows alone at the foot or
the top of a page, and repeats its header on every page it runs onto. Read back with pypdf,
page by page.

A spacer before the item table moves it down the page; the two heights below are ones where,
without the table rules of report.css, the table left one row alone at the top of the next page
(20 mm) or two rows alone at the foot of a page (100 mm)."""

from __future__ import annotations

import io
import re

import pytest
from pypdf import PdfReader

from reportgen.render.certificate import render_certificate
from reportgen.render.pdf import html_to_pdf
from reportgen.settings import Settings

from .render_fixtures import build_results

pytestmark = pytest.mark.slow
ITEM = re.compile(r"\bFIC-\d{2,3}\b")
N_ITEMS = 40  # 20 rows of two items


@pytest.mark.parametrize("spacer_mm", [20, 100])
def test_item_table_rows_are_never_orphaned(settings: Settings, spacer_mm: int) -> None:
    results = build_results(n_participants=8, n_items=N_ITEMS)
    html = render_certificate(results, results.participants[2], settings)
    heading = "<h2>Item by item</h2>"
    assert heading in html
    html = html.replace(heading, f'<div style="height: {spacer_mm}mm"></div>{heading}')
    pdf = html_to_pdf(html, issued=results.round.config.round.issued)
    pages = [page.extract_text() or "" for page in PdfReader(io.BytesIO(pdf)).pages]
    with_items = [(n, set(ITEM.findall(text))) for n, text in enumerate(pages, start=1)
                  if ITEM.search(text)]
    seen: set[str] = set()
    for n, items in with_items:
        assert len(items) >= 6, f"page {n}: only {len(items)} items (fewer than 3 rows)"
        assert re.search(r"Item\s+Truth\s+Answer", pages[n - 1]), f"page {n}: no header"
        seen |= items
    assert len(seen) == N_ITEMS
