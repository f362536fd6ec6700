"""Archival and accessible PDF (docs/pdf.md), read back with pikepdf.

Tagged PDF/A-3b: structure tree, MarkInfo, /Lang, /DisplayDocTitle, XMP pdfaid, the sRGB output
intent, /Alt on every figure, table rows kept together in the structure tree, and each
certificate's own results embedded as an associated file ("Data") with dates from the round.
"""

from __future__ import annotations

import datetime as dt
import html as html_lib
import io
import json
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pikepdf
import pytest

from reportgen.errors import BuildError
from reportgen.render.certificate import (
    ATTACHMENT_NAME,
    certificate_attachments,
    render_certificate,
)
from reportgen.render.pdf import html_to_pdf
from reportgen.render.results_json import PARTICIPANT_FORMAT, results_json
from reportgen.results.model import ParticipantResult, RoundResults
from reportgen.settings import Settings

from .render_fixtures import build_results

FULL_ITEMS = 60


# ---------------------------------------------------------------------------------------------
# Reading a tagged PDF back: structure elements and the text of their marked content


def _open(pdf: bytes) -> pikepdf.Pdf:
    return pikepdf.open(io.BytesIO(pdf))


def _to_unicode(font: Any) -> dict[int, str]:
    """Glyph code -> text from a font's ToUnicode CMap (WeasyPrint writes bfchar entries)."""
    data = font.ToUnicode.read_bytes().decode("latin-1")
    out: dict[int, str] = {}
    for block in re.findall(r"beginbfchar(.*?)endbfchar", data, re.S):
        for src, dst in re.findall(r"<([0-9a-fA-F]+)>\s*<([0-9a-fA-F]+)>", block):
            out[int(src, 16)] = bytes.fromhex(dst).decode("utf-16-be")
    return out


def _marked_text(page: pikepdf.Page) -> dict[int, str]:
    """MCID -> the text shown inside that marked-content sequence on ``page``."""
    fonts = {str(name): _to_unicode(font) for name, font in page.Resources.Font.items()}
    texts: dict[int, str] = {}
    stack: list[int | None] = []
    cmap: dict[int, str] = {}
    for instruction in pikepdf.parse_content_stream(page):
        operands, op = instruction.operands, str(instruction.operator)
        if op == "BDC":
            props = operands[1]
            stack.append(int(props.MCID) if isinstance(props, pikepdf.Dictionary)
                         and "/MCID" in props else None)
        elif op == "BMC":
            stack.append(None)
        elif op == "EMC":
            stack.pop()
        elif op == "Tf":
            cmap = fonts[str(operands[0])]
        elif op in ("Tj", "TJ"):
            parts = list(operands[0]) if op == "TJ" else [operands[0]]
            raw = b"".join(bytes(p) for p in parts if isinstance(p, pikepdf.String))
            text = "".join(cmap.get(int.from_bytes(raw[i:i + 2], "big"), "\ufffd")
                           for i in range(0, len(raw), 2))
            mcid = next((m for m in reversed(stack) if m is not None), None)
            if mcid is not None:
                texts[mcid] = texts.get(mcid, "") + text
    return texts


class Tagged:
    """A tagged PDF's structure elements in reading (depth-first) order, with their text."""

    def __init__(self, pdf: bytes) -> None:
        self.pdf = _open(pdf)
        self.pages = {page.objgen: i for i, page in enumerate(self.pdf.pages)}
        self.texts = [_marked_text(page) for page in self.pdf.pages]

    def elements(self, node: Any | None = None) -> Iterator[Any]:
        node = self.pdf.Root.StructTreeRoot if node is None else node
        for kid in self._kids(node):
            if isinstance(kid, pikepdf.Dictionary) and kid.get("/Type") == "/StructElem":
                yield kid
                yield from self.elements(kid)

    @staticmethod
    def _kids(node: Any) -> list[Any]:
        kids = node.get("/K")
        if kids is None:
            return []
        return list(kids) if isinstance(kids, pikepdf.Array) else [kids]

    def text(self, element: Any) -> str:
        """The text of ``element`` and its descendants, in structure order."""
        out = []
        for kid in self._kids(element):
            if isinstance(kid, int):
                out.append(self.texts[self.pages[element.Pg.objgen]].get(kid, ""))
            elif isinstance(kid, pikepdf.Dictionary) and kid.get("/Type") == "/StructElem":
                out.append(self.text(kid))
        return "".join(out)

    def of_type(self, kind: str) -> list[Any]:
        return [e for e in self.elements() if str(e.S) == kind]


# ---------------------------------------------------------------------------------------------
# Fixtures: a certificate as the batch renders it (with its attachment), the appendix


@pytest.fixture(scope="module")
def archival_pdf(results: RoundResults, hostile: ParticipantResult,
                 certificate_html: str) -> bytes:
    return html_to_pdf(certificate_html, issued=results.round.config.round.issued,
                       attachments=certificate_attachments(results, hostile))


@pytest.fixture(scope="module")
def full_items() -> tuple[RoundResults, str, bytes]:
    """A certificate with the full 60-item table, which runs across pages (tagging plus tables
    has open crash reports upstream)."""
    results = build_results(n_participants=10, n_items=FULL_ITEMS)
    p = results.participants[3]
    html = render_certificate(results, p, Settings())
    pdf = html_to_pdf(html, issued=results.round.config.round.issued,
                      attachments=certificate_attachments(results, p))
    return results, html, pdf


# ---------------------------------------------------------------------------------------------
# The catalogue: tagged, language, title, PDF/A


def _assert_archival(pdf_bytes: bytes, title: str) -> None:
    pdf = _open(pdf_bytes)
    root = pdf.Root
    assert "/StructTreeRoot" in root
    assert str(root.StructTreeRoot.K[0].S) == "/Document"
    assert bool(root.MarkInfo.Marked) is True
    assert str(root.Lang) == "en"
    assert bool(root.ViewerPreferences.DisplayDocTitle) is True
    assert str(pdf.docinfo["/Title"]) == title
    with pdf.open_metadata() as xmp:
        assert xmp["pdfaid:part"] == "3"
        assert xmp["pdfaid:conformance"] == "B"
        assert xmp["dc:title"] == title
        assert xmp["xmp:CreateDate"].startswith("2026-05-15")
        assert xmp["xmp:ModifyDate"].startswith("2026-05-15")
    (intent,) = root.OutputIntents
    assert str(intent.S) == "/GTS_PDFA1"
    profile = intent.DestOutputProfile
    assert int(profile.N) == 3 and profile.read_bytes()[36:40] == b"acsp"  # an ICC profile
    assert pdf.pdf_version == "1.7"


def _title(html: str) -> str:
    match = re.search(r"<title>(.*?)</title>", html, re.S)
    assert match
    return match.group(1).replace("&mdash;", "\u2014")


def test_certificate_is_tagged_pdf_a_3b(archival_pdf: bytes, certificate_html: str) -> None:
    _assert_archival(archival_pdf, _title(certificate_html))


def test_appendix_is_tagged_pdf_a_3b(appendix_pdf: bytes, appendix_html: str) -> None:
    _assert_archival(appendix_pdf, _title(appendix_html))
    assert len(_open(appendix_pdf).attachments) == 0  # the appendix embeds nothing


# ---------------------------------------------------------------------------------------------
# The participant's own results as an associated file


def test_certificate_embeds_the_participants_own_results(
        results: RoundResults, hostile: ParticipantResult, archival_pdf: bytes) -> None:
    pdf = _open(archival_pdf)
    assert list(pdf.attachments) == [ATTACHMENT_NAME]
    spec = pdf.attachments[ATTACHMENT_NAME]
    assert str(spec.obj.AFRelationship) == "/Data"
    assert [s.objgen for s in pdf.Root.AF] == [spec.obj.objgen]  # associated with the document
    assert str(spec.obj.UF) == ATTACHMENT_NAME and str(spec.obj.Desc)
    stream = spec.obj.EF.F
    assert str(stream.Subtype) == "/application/json"
    # Dates from the round's issue date (midnight UTC), never the clock.
    assert str(stream.Params.CreationDate) == "D:20260515000000Z"
    assert str(stream.Params.ModDate) == "D:20260515000000Z"
    data = spec.get_file().read_bytes()
    assert data == certificate_attachments(results, hostile)[0].data
    doc = json.loads(data)
    assert doc["format"] == PARTICIPANT_FORMAT
    assert doc["round"]["id"] == results.round.config.round.id
    assert doc["participant"]["participant"] == hostile.code
    assert doc["participant"]["accuracy"] == pytest.approx(hostile.metrics["accuracy"].value)
    others = {p.code for p in results.participants} - {hostile.code}
    assert not any(re.search(rf'"{re.escape(code)}"', data.decode()) for code in others)


def test_embedded_results_are_the_participants_object_of_results_json(
        results: RoundResults) -> None:
    full = json.loads(results_json(results))
    for i, p in enumerate(results.participants):
        own = json.loads(certificate_attachments(results, p)[0].data)
        assert own["participant"] == full["participants"][i]
        assert own["round"]["issued"] == full["round"]["issued"]


def test_rerendering_with_attachment_is_byte_identical(
        results: RoundResults, hostile: ParticipantResult, certificate_html: str,
        archival_pdf: bytes) -> None:
    again = html_to_pdf(certificate_html, issued=results.round.config.round.issued,
                        attachments=certificate_attachments(results, hostile))
    assert again == archival_pdf


# ---------------------------------------------------------------------------------------------
# Figures and their alternative text


def _img_alts(html: str) -> list[str]:
    """Alternative texts of the charts in document order: an <img>'s alt, an inline chart
    <svg>'s <title>."""
    found = re.findall(r'<img\b[^>]*\balt="([^"]*)"|<svg class="chart"[^>]*><title>([^<]*)</title>',
                       html)
    return [html_lib.unescape(alt or title) for alt, title in found]


@pytest.mark.parametrize("which", ["certificate", "appendix"])
def test_every_figure_carries_the_alt_text_of_its_image(
        which: str, archival_pdf: bytes, certificate_html: str, appendix_pdf: bytes,
        appendix_html: str) -> None:
    pdf, html = ((archival_pdf, certificate_html) if which == "certificate"
                 else (appendix_pdf, appendix_html))
    tagged = Tagged(pdf)  # keep the open PDF alive while its objects are read
    figures = tagged.of_type("/Figure")
    assert figures, "charts are tagged as figures"
    alts = [str(f.Alt) for f in figures]
    assert all(alt.strip() for alt in alts)
    # A chart is an <img> or (certificates) one inline <svg role="img"> with a <title>
    assert len(re.findall(r'<img\b|<svg class="chart"', html)) == len(figures)
    assert alts == _img_alts(html)


def test_an_image_without_alt_text_stops_the_build() -> None:
    png = ("data:image/png;base64,iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAAAAAA6fptVAAAACklEQVR4"
           "nGNoAAAAggCBd81ytgAAAABJRU5ErkJggg==")
    html = f'<html lang="en"><head><title>t</title></head><body><img src="{png}"></body></html>'
    with pytest.raises(BuildError, match="alt"):
        html_to_pdf(html, issued=dt.date(2026, 5, 15))
    assert html_to_pdf(html.replace("<img ", '<img alt="a grey dot" '),
                       issued=dt.date(2026, 5, 15)).startswith(b"%PDF")


def test_a_document_without_language_stops_the_build() -> None:
    with pytest.raises(BuildError, match="lang"):
        html_to_pdf("<html><head><title>t</title></head><body><p>x</p></body></html>",
                    issued=dt.date(2026, 5, 15))


# ---------------------------------------------------------------------------------------------
# The full item table: renders tagged, and the structure keeps each item's cells together


@pytest.mark.slow
def test_full_item_table_keeps_each_items_cells_together(
        full_items: tuple[RoundResults, str, bytes]) -> None:
    results, _, pdf = full_items
    tagged = Tagged(pdf)
    assert len(tagged.pdf.pages) >= 4
    items = set(results.round.items)
    seen: list[str] = []
    rows_with_items = 0
    for tr in tagged.of_type("/TR"):
        cells = [c for c in Tagged._kids(tr) if isinstance(c, pikepdf.Dictionary)]
        assert all(str(c.S) in ("/TD", "/TH") for c in cells)
        texts = [tagged.text(c).strip() for c in cells]
        for i, text in enumerate(texts):
            if text in items:
                rows_with_items += 1
                seen.append(text)
                # The item's own cells follow it in the same row: truth, answer, confidence.
                truth, answer = texts[i + 1], texts[i + 2]
                assert truth in ("same", "different"), texts
                assert answer in ("same", "different", "inconclusive", "\u2013"), texts
    assert sorted(seen) == sorted(items), "every item once, in a table row of its own cells"
    assert rows_with_items == FULL_ITEMS
    # A TD's header references point at the column headers (Item, Truth, ...).
    tds = [td for td in tagged.of_type("/TD") if "/Headers" in td.A]
    assert tds


@pytest.mark.slow
def test_full_item_table_certificate_is_archival_and_repeatable(
        full_items: tuple[RoundResults, str, bytes]) -> None:
    results, html, pdf = full_items
    _assert_archival(pdf, _title(html))
    p = results.participants[3]
    again = html_to_pdf(render_certificate(results, p, Settings()),
                        issued=results.round.config.round.issued,
                        attachments=certificate_attachments(results, p))
    assert again == pdf


@pytest.mark.slow
def test_trend_report_is_tagged_pdf_a_3b(tmp_path: Path) -> None:
    from reportgen.archive.trend import build_trend
    from reportgen.render.trend import render_trend_html, render_trend_pdf
    from tests.test_history import record_all, sample_results

    archive = tmp_path / "archive.sqlite"
    record_all(archive, sample_results())
    trend = build_trend(archive, "0012", last_n=None, seed=1, n_boot=0)
    pdf = render_trend_pdf(trend, Settings())
    html = render_trend_html(trend, Settings())
    _assert_archival(pdf, _title(html))
    tagged = Tagged(pdf)
    assert [str(f.Alt) for f in tagged.of_type("/Figure")] == _img_alts(html)
    assert len(_open(pdf).attachments) == 0
