"""Small pieces every HTML report shares: the embedded web font and the provider's contact line.

The PDF renderer embeds the full DejaVu Sans as "Reportgen Sans" (:mod:`reportgen.render.pdf`);
HTML reports carry the smaller subset made by ``scripts/build_web_font.py`` as "Reportgen Sans
Web", so every recipient's browser draws the same type, offline, whatever fonts it has.
"""

from __future__ import annotations

import base64
import re
from functools import lru_cache
from typing import Any

from markupsafe import Markup

from reportgen.resources import templates_dir

WEB_FAMILY = "Reportgen Sans Web"
WEB_FILES = (("ReportgenSansWeb.woff", "normal"), ("ReportgenSansWeb-Bold.woff", "bold"))
_EMAIL = re.compile(r"[A-Za-z0-9._%+-]+@[A-Za-z0-9-]+(?:\.[A-Za-z0-9-]+)+")


@lru_cache(maxsize=1)
def font_faces() -> Markup:
    """The ``@font-face`` rules, marked safe for a ``<style>`` element: they hold only the
    package's own font files as data URIs."""
    folder = templates_dir() / "assets" / "fonts"
    rules = []
    for name, weight in WEB_FILES:
        data = base64.b64encode((folder / name).read_bytes()).decode("ascii")
        rules.append(f'@font-face {{ font-family: "{WEB_FAMILY}"; font-weight: {weight}; '
                     f'font-style: normal; font-display: block; '
                     f'src: url("data:font/woff;base64,{data}") format("woff"); }}')
    return Markup("\n".join(rules))


def contact_parts(text: str) -> list[dict[str, Any]]:
    """``text`` split into plain parts and e-mail addresses (``email`` set), in order; the
    template escapes every part and links the addresses with ``mailto:``."""
    parts: list[dict[str, Any]] = []
    at = 0
    for match in _EMAIL.finditer(text):
        if match.start() > at:
            parts.append({"text": text[at:match.start()], "email": None})
        parts.append({"text": match.group(), "email": match.group()})
        at = match.end()
    if at < len(text):
        parts.append({"text": text[at:], "email": None})
    return parts


def html_context() -> dict[str, Any]:
    """The context entries base.html.j2 needs beside the document's own."""
    return {"font_faces": font_faces(), "contact_parts": contact_parts}
