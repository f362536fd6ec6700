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
"""

from __future__ import annotations

import base64
import calendar
import contextlib
import datetime as dt
import os
from collections.abc import Iterable, Iterator
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


def html_to_pdf(html: str, *, issued: dt.date, allowed_files: Iterable[Path] = (),
                base_url: str | None = None) -> bytes:
    """Render ``html`` (as returned by :mod:`reportgen.render.html`) to PDF bytes.

    ``issued`` fixes the PDF's creation and modification dates and SOURCE_DATE_EPOCH.
    ``allowed_files`` are the only files the document may load (the provider's logo, when the
    template refers to it by file URL rather than embedding it); ``base_url`` resolves relative
    references to them.
    """
    res = _resources()
    fetcher = RestrictedFetcher(allowed_files)
    stamp = issued.isoformat()
    try:
        with _source_date_epoch(issued):
            document = weasyprint.HTML(string=html, base_url=base_url, url_fetcher=fetcher
                                       ).render(font_config=res.font_config,
                                                stylesheets=[res.css])
            document.metadata.created = stamp
            document.metadata.modified = stamp
            pdf = document.write_pdf(pdf_identifier=True)
    except FatalURLFetchingError as exc:
        raise BuildError(f"PDF rendering refused a resource: {exc.__cause__ or exc}") from exc
    except (OSError, ValueError, RuntimeError) as exc:
        raise BuildError(f"PDF rendering failed: {exc}") from exc
    if not isinstance(pdf, bytes):
        raise BuildError("WeasyPrint returned no PDF bytes")
    return pdf
