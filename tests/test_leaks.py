"""Confidentiality (issue 5; ISO/IEC 17043: identities known only to the provider): a scan of the
whole demo output.

The newest sample round is issued once (the slowest fixture of the suite). Then every
certificate, as HTML text and as PDF text, must hold no other participant's code, name or
organisation, and the group appendix none at all. Codes are matched as whole tokens (``0042``
is not found in ``10042`` or ``0.0042``), names and organisations as substrings; a certificate
may show its holder's own organisation, which colleagues share.

Charts are PNG images; their text cannot be scanned here (their data are group aggregates).
"""

from __future__ import annotations

import json
import multiprocessing
import re
import subprocess
import sys
from collections.abc import Iterable, Iterator
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import pytest

from reportgen.pipeline import load, newest_sample_round
from reportgen.rounds.model import Identity
from tests.render.helpers import html_text, pdf_text

pytestmark = pytest.mark.slow


@dataclass(frozen=True)
class Issued:
    out: Path
    identities: dict[str, Identity]


@pytest.fixture(scope="module")
def issued(tmp_path_factory: pytest.TempPathFactory) -> Issued:
    folder = newest_sample_round()
    out = tmp_path_factory.mktemp("leaks") / "out"
    done = subprocess.run([sys.executable, "-m", "reportgen", "issue", str(folder), "-o",
                           str(out), "--jobs", "2", "--quiet"], capture_output=True, text=True,
                          timeout=900, check=False)
    assert done.returncode == 0, done.stderr[-3000:]
    identities = load(folder).identities
    assert identities is not None, "the demo round has a participants file"
    return Issued(out, dict(identities))


def _code_pattern(codes: Iterable[str]) -> re.Pattern[str]:
    """Any of ``codes`` as a whole token: not inside a longer word or number."""
    alternatives = "|".join(re.escape(c) for c in sorted(codes, key=len, reverse=True))
    return re.compile(rf"(?<![\w.,])(?:{alternatives})(?![\w]|[.,]\d)")


def _leaks(text: str, codes: set[str], phrases: set[str]) -> list[str]:
    found = sorted(set(_code_pattern(codes).findall(text))) if codes else []
    return found + sorted(p for p in phrases if p in text)


def _forbidden(issued: Issued, holder: str | None) -> tuple[set[str], set[str]]:
    """(codes, names and organisations) that must not appear in ``holder``'s certificate, or in
    the appendix when ``holder`` is None."""
    own = issued.identities.get(holder) if holder is not None else None
    allowed = {holder, own.name, own.organisation} if own is not None else set()
    codes = {c for c in issued.identities if c != holder}
    phrases = {x for ident in issued.identities.values()
               for x in (ident.name, ident.organisation) if x and x not in allowed}
    # a phrase inside the holder's own name or organisation is theirs to show
    phrases = {p for p in phrases if not any(p in a for a in allowed if a)}
    return codes, phrases


def _pdf_text(path: Path) -> str:
    return pdf_text(path.read_bytes())


def _texts(paths: list[Path]) -> Iterator[tuple[Path, dict[str, str]]]:
    """Each document's HTML text and PDF text (``paths`` without extension); the PDFs are read
    in two processes (pypdf takes about half a second a certificate)."""
    pdfs = [path.with_suffix(".pdf") for path in paths]
    with ProcessPoolExecutor(2, mp_context=multiprocessing.get_context("spawn")) as pool:
        for path, text in zip(paths, pool.map(_pdf_text, pdfs, chunksize=8), strict=True):
            html = path.with_suffix(".html").read_text("utf-8")
            yield path, {"html": html_text(html), "pdf": text}


def test_every_participant_has_a_certificate(issued: Issued) -> None:
    files = json.loads((issued.out / "manifest.json").read_text("utf-8"))["participant_files"]
    assert sorted(files) == sorted(issued.identities)
    for pdf in files.values():
        assert (issued.out / pdf).is_file() and (issued.out / pdf).with_suffix(".html").is_file()


def test_no_certificate_names_another_participant(issued: Issued) -> None:
    files = json.loads((issued.out / "manifest.json").read_text("utf-8"))["participant_files"]
    leaks: dict[str, list[str]] = {}
    code_of = {issued.out / pdf: code for code, pdf in files.items()}
    for path, texts in _texts(sorted(code_of)):
        code = code_of[path]
        codes, phrases = _forbidden(issued, code)
        for kind, text in texts.items():
            assert code in text, (code, kind)  # the scan reads the document's text
            found = _leaks(text, codes, phrases)
            if found:
                leaks[f"{code} ({kind})"] = found
    assert leaks == {}
    assert len(files) >= 100


def test_appendix_names_nobody(issued: Issued) -> None:
    codes, phrases = _forbidden(issued, None)
    for _, texts in _texts([issued.out / "appendix"]):
        for kind, text in texts.items():
            assert _leaks(text, codes, phrases) == [], kind


def test_the_scan_covers_every_file_participants_receive(issued: Issued) -> None:
    """Everything in OUT outside provider/ (and the manifest and archive, which stay with the
    provider) is a certificate or the appendix, and so is scanned above."""
    kept = {"manifest.json", "archive.sqlite"}
    received = sorted(p.relative_to(issued.out).as_posix() for p in issued.out.rglob("*")
                      if p.is_file() and p.relative_to(issued.out).parts[0] != "provider"
                      and p.name not in kept)
    files = json.loads((issued.out / "manifest.json").read_text("utf-8"))["participant_files"]
    certificates = sorted(f"{Path(pdf).with_suffix('')}{ext}" for pdf in files.values()
                          for ext in (".html", ".pdf"))
    assert received == sorted([*certificates, "appendix.html", "appendix.pdf"])


def test_code_matching_is_by_whole_token() -> None:
    pattern = _code_pattern({"0042", "A7"})
    assert pattern.findall("participant 0042, A7.") == ["0042", "A7"]
    assert pattern.findall("10042 0.0042 00421 A77 BA7 1,0042") == []
