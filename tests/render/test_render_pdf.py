"""reportgen.render.pdf: the PDF from the same HTML; determinism, text, fetcher."""

from __future__ import annotations

import datetime as dt
import io
import re
import zlib
from pathlib import Path
from typing import Any

import pytest
from pypdf import PdfReader

from reportgen.errors import BuildError
from reportgen.render import wording
from reportgen.render.pdf import RestrictedFetcher, html_to_pdf
from reportgen.results.model import ParticipantResult, RoundResults

from .helpers import contains_token, norm, page_count, pdf_text
from .render_fixtures import HOSTILE_NAME


def _tiny_png() -> bytes:
    """A valid 1 x 1 grey PNG (PNG specification: signature, IHDR, IDAT, IEND)."""
    def chunk(kind: bytes, data: bytes) -> bytes:
        return (len(data).to_bytes(4, "big") + kind + data
                + zlib.crc32(kind + data).to_bytes(4, "big"))

    ihdr = (1).to_bytes(4, "big") * 2 + bytes([8, 0, 0, 0, 0])
    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr)
            + chunk(b"IDAT", zlib.compress(b"\x00\x80")) + chunk(b"IEND", b""))


PNG_1PX = _tiny_png()


def test_two_renders_are_byte_identical(results: RoundResults, certificate_html: str,
                                        certificate_pdf: bytes) -> None:
    again = html_to_pdf(certificate_html, issued=results.round.config.round.issued)
    assert again == certificate_pdf
    first, second = PdfReader(io.BytesIO(certificate_pdf)), PdfReader(io.BytesIO(again))
    assert first.trailer["/ID"] == second.trailer["/ID"]
    fonts = _font_names(first)
    assert fonts == _font_names(second)
    assert fonts, "fonts are embedded"
    for name in fonts:  # subsets of the shipped font only, e.g. /ABCDEF+Reportgen-Sans-Bold
        assert re.fullmatch(r"/[A-Z]{6}\+Reportgen-Sans(-Bold)?", name), name


def _font_names(reader: PdfReader) -> list[str]:
    names: set[str] = set()
    for page in reader.pages:
        resources: Any = page["/Resources"]
        fonts: Any = resources.get_object().get("/Font", {})
        for ref in fonts.get_object().values():
            names.add(str(ref.get_object()["/BaseFont"]))
    return sorted(names)


def test_pdf_dates_come_from_the_round(certificate_pdf: bytes) -> None:
    meta = PdfReader(io.BytesIO(certificate_pdf)).metadata
    assert meta is not None
    assert str(meta["/CreationDate"]).startswith("D:20260515")
    assert str(meta["/ModDate"]).startswith("D:20260515")


def test_certificate_pdf_text(results: RoundResults, hostile: ParticipantResult,
                              certificate_pdf: bytes) -> None:
    assert 3 <= page_count(certificate_pdf) <= 5
    text = pdf_text(certificate_pdf)
    assert contains_token(text, hostile.code)
    assert HOSTILE_NAME in text  # escaped in HTML, shown as text in the PDF
    assert norm(wording.fmt_value("accuracy", hostile.metrics["accuracy"])) in text
    for criterion in results.round.config.criteria:
        assert criterion.label in text
    assert "Page 1 of" in text
    assert "END OF REPORT" in text.upper()


def test_appendix_pdf_names_nobody(results: RoundResults, appendix_pdf: bytes) -> None:
    text = pdf_text(appendix_pdf)
    assert "Group appendix" in text
    rnd = results.round
    for p in results.participants:
        ident = rnd.identity(p.code)
        for token in (p.code, ident.name, ident.organisation):
            assert not token or not contains_token(text, token), token


def test_fetcher_serves_data_and_the_logo_only(tmp_path: Path) -> None:
    logo = tmp_path / "logo.png"
    logo.write_bytes(PNG_1PX)
    secret = tmp_path / "secret.png"
    secret.write_bytes(PNG_1PX)
    fetcher = RestrictedFetcher([logo])
    assert fetcher.fetch("data:text/plain;base64,aGk=").read() == b"hi"
    assert fetcher.fetch(logo.as_uri()).read() == PNG_1PX
    for url in (secret.as_uri(), "file:///etc/passwd", "http://example.org/x.png",
                "https://example.org/x.png", "ftp://example.org/x"):
        with pytest.raises(PermissionError):
            fetcher.fetch(url)


def test_a_refused_resource_stops_the_build(tmp_path: Path) -> None:
    secret = tmp_path / "secret.png"
    secret.write_bytes(PNG_1PX)
    html = (f'<html lang="en"><body><img src="{secret.as_uri()}" alt="a grey dot"><p>x</p>'
            '</body></html>')
    with pytest.raises(BuildError, match="refused"):
        html_to_pdf(html, issued=dt.date(2026, 5, 15))
    # The same file, allowed as the logo, renders.
    pdf = html_to_pdf(html, issued=dt.date(2026, 5, 15),
                      allowed_files=[secret])
    assert pdf.startswith(b"%PDF")
