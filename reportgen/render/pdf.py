"""HTML -> PDF with WeasyPrint, from the very HTML the HTML renderer returns.

* One ``FontConfiguration`` and one parsed font ``CSS`` per process (reused across documents; never
  shared between threads). The font stylesheet declares the shipped DejaVu Sans as
  "Reportgen Sans" from ``data:`` URIs, so no font file is fetched at render time and the output
  does not depend on the machine's fonts.
* A restricted URL fetcher: ``data:`` URIs and explicitly allowed files (the provider's logo)
  only. Anything else stops the build with :class:`BuildError` rather than silently dropping an
  image.
* Deterministic: the document dates are fixed to the round's issue date, ``SOURCE_DATE_EPOCH`` is
  set from it while writing (it fixes fontTools' timestamps when HarfBuzz subsetting is missing),
  the /ID is a hash of the content, and no image cache is shared between documents.
* Archival and accessible (docs/pdf.md): every PDF claims PDF/A-3b (:data:`PDF_VARIANT`) and is
  tagged (structure tree, /Lang from ``<html lang>``, /DisplayDocTitle, /Alt from ``<img alt>``).
  An image without alt text or a document without a language stops the build. Attachments
  (a certificate's own results as JSON) are embedded as PDF/A-3 associated files with the issue
  date, midnight UTC, as their dates: never the clock.
"""

from __future__ import annotations

import base64
import calendar
import contextlib
import datetime as dt
import logging
import os
import warnings
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from urllib.parse import unquote, urlsplit

import weasyprint
from weasyprint.text.fonts import FontConfiguration
from weasyprint.urls import FatalURLFetchingError, URLFetcher

from reportgen.errors import BuildError
from reportgen.resources import templates_dir

FONT_FAMILY = "Reportgen Sans"
FONT_FILES = (("DejaVuSans.ttf", "normal"), ("DejaVuSans-Bold.ttf", "bold"))

#: The conformance level claimed in every PDF (XMP pdfaid part 3, conformance B), written with
#: ``pdf_tags=True``. WeasyPrint 70 also offers "pdf/a-3a" (same bytes but the letter) and
#: "pdf/ua-1", one variant at a time; docs/pdf.md says why we claim B and what it costs.
PDF_VARIANT = "pdf/a-3b"
_PDF_OPTIONS: dict[str, Any] = {"pdf_variant": PDF_VARIANT, "pdf_tags": True,
                                "pdf_identifier": True}

# WeasyPrint logs these (as errors, not exceptions) while tagging; each breaks accessibility.
_TAGGING_ERRORS = ("has no required alt description", 'Missing required "lang"')


@dataclass(frozen=True)
class PdfAttachment:
    """A file embedded in the PDF as a PDF/A-3 associated file of the whole document."""

    name: str
    data: bytes
    description: str
    relationship: str = "Data"


class RestrictedFetcher(URLFetcher):  # type: ignore[misc]
    """A WeasyPrint URL fetcher that serves ``data:`` URIs and the listed files only."""

    def __init__(self, allowed_files: Iterable[Path] = ()) -> None:
        super().__init__(allowed_protocols=("data", "file"), allow_redirects=False,
                         fail_on_errors=True)
        self.allowed = frozenset(Path(p).resolve() for p in allowed_files)

    def fetch(self, url: str, headers: Any = None) -> Any:
        scheme = urlsplit(url).scheme.lower()
        if scheme == "data":
            return super().fetch(url, headers)
        if scheme == "file":
            path = Path(unquote(urlsplit(url).path)).resolve()
            if path in self.allowed:
                return super().fetch(url, headers)
        raise PermissionError(f"reportgen refuses to fetch {url[:120]!r}: only data: URIs and "
                              "the provider's logo may be loaded")


@dataclass
class _ProcessResources:
    font_config: FontConfiguration
    css: weasyprint.CSS


_RESOURCES: dict[int, _ProcessResources] = {}


def font_css() -> str:
    """@font-face rules for the shipped font, as data: URIs."""
    rules = []
    folder = templates_dir() / "assets" / "fonts"
    for name, weight in FONT_FILES:
        data = base64.b64encode((folder / name).read_bytes()).decode("ascii")
        rules.append(f'@font-face {{ font-family: "{FONT_FAMILY}"; font-weight: {weight}; '
                     f'font-style: normal; src: url("data:font/ttf;base64,{data}"); }}')
        rules.append(f'@font-face {{ font-family: "{FONT_FAMILY}"; font-weight: {weight}; '
                     f'font-style: italic; src: url("data:font/ttf;base64,{data}"); }}')
    rules.append(f'@page {{ font-family: "{FONT_FAMILY}"; }}')
    return "\n".join(rules)


def _resources() -> _ProcessResources:
    """The per-process font configuration and parsed font stylesheet (made on first use)."""
    pid = os.getpid()
    res = _RESOURCES.get(pid)
    if res is None:
        _RESOURCES.clear()  # a forked child must not reuse its parent's objects
        font_config = FontConfiguration()
        css = weasyprint.CSS(string=font_css(), font_config=font_config,
                             url_fetcher=RestrictedFetcher())
        res = _RESOURCES[pid] = _ProcessResources(font_config, css)
    return res


def source_date_epoch(day: dt.date) -> int:
    """Seconds since 1970-01-01 UTC at midnight UTC of ``day``."""
    return calendar.timegm(day.timetuple())


@contextlib.contextmanager
def _source_date_epoch(day: dt.date) -> Iterator[None]:
    old = os.environ.get("SOURCE_DATE_EPOCH")
    os.environ["SOURCE_DATE_EPOCH"] = str(source_date_epoch(day))
    try:
        yield
    finally:
        if old is None:
            os.environ.pop("SOURCE_DATE_EPOCH", None)
        else:
            os.environ["SOURCE_DATE_EPOCH"] = old


def attachment_time(day: dt.date) -> dt.datetime:
    """The creation and modification time of an embedded file: midnight UTC of ``day``."""
    return dt.datetime(day.year, day.month, day.day, tzinfo=dt.UTC)


class _TaggingErrors(logging.Handler):
    """Collects WeasyPrint's tagging errors (missing alt text or language) during one write."""

    def __init__(self) -> None:
        super().__init__(logging.ERROR)
        self.messages: list[str] = []

    def emit(self, record: logging.LogRecord) -> None:
        message = record.getMessage()
        if any(part in message for part in _TAGGING_ERRORS):
            # An image's src may be a long data: URI: keep its start and the complaint.
            self.messages.append(message if len(message) <= 160
                                 else f"{message[:100]}…{message[-60:]}")


@contextlib.contextmanager
def _tagging_errors() -> Iterator[_TaggingErrors]:
    handler = _TaggingErrors()
    logger = logging.getLogger("weasyprint")
    logger.addHandler(handler)
    try:
        yield handler
    finally:
        logger.removeHandler(handler)


def _list_each_file_once(document: Any, pdf: Any) -> None:
    """WeasyPrint 70 lists each PDF/A-3 associated file twice in the catalogue's /AF (once from
    /EmbeddedFiles, once from the file specifications): keep the first of each."""
    files = pdf.catalog.get("AF")
    if files:
        files[:] = list(dict.fromkeys(files))


def html_to_pdf(html: str, *, issued: dt.date, allowed_files: Iterable[Path] = (),
                base_url: str | None = None,
                attachments: Sequence[PdfAttachment] = ()) -> bytes:
    """Render ``html`` (as returned by :mod:`reportgen.render.html`) to a tagged PDF/A-3b.

    ``issued`` fixes the PDF's creation and modification dates, the embedded files' dates and
    SOURCE_DATE_EPOCH. ``allowed_files`` are the only files the document may load (the
    provider's logo, when the template refers to it by file URL rather than embedding it);
    ``base_url`` resolves relative references to them. ``attachments`` are embedded as associated
    files with their relationship (e.g. a certificate's own results as JSON, "Data").
    """
    res = _resources()
    fetcher = RestrictedFetcher(allowed_files)
    stamp = issued.isoformat()
    when = attachment_time(issued)
    files = [weasyprint.Attachment(string=a.data, name=a.name, description=a.description,
                                   relationship=a.relationship, created=when, modified=when,
                                   url_fetcher=fetcher)
             for a in attachments]
    try:
        with _source_date_epoch(issued), _tagging_errors() as problems:
            # The variant goes to render() too, as HTML.write_pdf() does: it sets the sRGB
            # output intent that colours are written against.
            document = weasyprint.HTML(string=html, base_url=base_url, url_fetcher=fetcher
                                       ).render(font_config=res.font_config,
                                                stylesheets=[res.css], **_PDF_OPTIONS)
            document.metadata.created = stamp
            document.metadata.modified = stamp
            with warnings.catch_warnings():
                # WeasyPrint 70 opens its sRGB profile for the output intent and never closes
                # it: the ResourceWarning is its own, not a problem of the document.
                warnings.simplefilter("ignore", ResourceWarning)
                pdf = document.write_pdf(attachments=files, finisher=_list_each_file_once,
                                         **_PDF_OPTIONS)
    except FatalURLFetchingError as exc:
        raise BuildError(f"PDF rendering refused a resource: {exc.__cause__ or exc}") from exc
    except (OSError, ValueError, RuntimeError) as exc:
        raise BuildError(f"PDF rendering failed: {exc}") from exc
    if not isinstance(pdf, bytes):
        raise BuildError("WeasyPrint returned no PDF bytes")
    if problems.messages:
        raise BuildError("the PDF would not be accessible: " + "; ".join(problems.messages)
                         + " (give every <img> an alt text and <html> a lang attribute)")
    return pdf
