"""provider/distribution.csv: who receives which files, with each file's SHA-256.

One row per file a participant receives: their own certificate (HTML and PDF) and the group
appendix. Names and e-mail addresses come from the participants file, so every text field is
untrusted: a field starting with ``=``, ``+``, ``-``, ``@``, a tab, a carriage return or NUL gets
a leading apostrophe, so a spreadsheet opening the file shows it as text instead of running it
as a formula (OWASP ASVS 5.0 §1.2.10, CWE-1236).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Mapping

from reportgen.results.model import RoundResults

HEADER = ("participant", "name", "email", "file", "sha256")
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\x00")


def _text(value: str) -> str:
    return "'" + value if value.startswith(_FORMULA_START) else value


def distribution_csv(results: RoundResults, certificate_stems: Mapping[str, str],
                     written: Mapping[str, str], appendix_stem: str = "appendix") -> bytes:
    """``certificate_stems``: code -> ``certificates/<stem>``; ``written``: file -> SHA-256."""
    buffer = io.StringIO()
    out = csv.writer(buffer, lineterminator="\r\n")
    out.writerow(HEADER)
    shared = [f"{appendix_stem}.pdf", f"{appendix_stem}.html"]
    for p in results.participants:
        ident = results.round.identity(p.code)
        stem = certificate_stems[p.code]
        for name in (f"{stem}.pdf", f"{stem}.html", *shared):
            out.writerow([_text(p.code), _text(ident.name), _text(ident.email), name,
                          written[name]])
    return buffer.getvalue().encode("utf-8")
