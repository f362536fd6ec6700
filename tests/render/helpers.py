"""Small helpers shared by the rendering tests."""

from __future__ import annotations

import html as html_lib
import io
import re

from pypdf import PdfReader

DATA_URI = re.compile(r"data:[a-z/+.-]+;base64,[A-Za-z0-9+/=]+")


def pdf_text(pdf: bytes) -> str:
    """All text of a PDF (pypdf), whitespace collapsed to single spaces."""
    reader = PdfReader(io.BytesIO(pdf))
    return " ".join(norm(page.extract_text() or "") for page in reader.pages)


def html_text(document: str) -> str:
    """Visible-ish text of an HTML string: data URIs removed, tags stripped, entities decoded."""
    without_images = DATA_URI.sub("data:", document)
    without_style = re.sub(r"<style>.*?</style>", " ", without_images, flags=re.DOTALL)
    text = re.sub(r"<[^>]+>", " ", without_style)
    return norm(html_lib.unescape(text))


def norm(text: str) -> str:
    """Every run of whitespace (no-break spaces included) as one space."""
    return " ".join(text.split())


def contains_token(text: str, token: str) -> bool:
    """``token`` occurs in ``text`` not glued to other letters or digits."""
    return re.search(rf"(?<![A-Za-z0-9]){re.escape(token)}(?![A-Za-z0-9])", text) is not None


def page_count(pdf: bytes) -> int:
    return len(PdfReader(io.BytesIO(pdf)).pages)
