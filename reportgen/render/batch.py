"""Render every certificate and the appendix, as HTML and PDF, in several processes.

Workers are started with ``spawn`` (never ``fork``: WeasyPrint, GLib and vl-convert hold state
that must not be copied), receive the scored round once, and each keeps its own
FontConfiguration and font CSS (:mod:`reportgen.render.pdf`). Documents come back as bytes; the
caller writes them. Output names are made safe from participant codes by :func:`safe_stems`.

This module imports the renderers lazily and hands the round to workers as pickled bytes: a
spawned worker then reads its start-up data at once, instead of keeping the parent blocked on the
pipe while it imports WeasyPrint, Altair and SciPy.

Workers run under :class:`concurrent.futures.ProcessPoolExecutor`, not ``multiprocessing.Pool``:
when a worker dies outright (killed, out of memory, a crash in a C library) the executor marks
the pool broken and every pending result raises ``BrokenProcessPool``, which becomes a
:class:`BuildError`; a ``Pool`` would silently replace the worker and wait for its lost task
forever.
"""

from __future__ import annotations

import hashlib
import itertools
import multiprocessing
import pickle
import re
import unicodedata
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from typing import TYPE_CHECKING

from reportgen.errors import BuildError

if TYPE_CHECKING:
    from reportgen.results.model import PreviousRound, RoundResults
    from reportgen.settings import Settings

Progress = Callable[[int, int], None]
APPENDIX = -1
MAX_STEM = 64
HASH_LEN = 8

# Names Windows reserves whatever the extension (CON, CON.txt, ...), compared case-insensitively.
_RESERVED = frozenset({"CON", "PRN", "AUX", "NUL", "CONIN$", "CONOUT$", "CLOCK$"}
                      | {f"{p}{d}" for p in ("COM", "LPT") for d in "0123456789"})
_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


# ---------------------------------------------------------------------------------------------
# File names


def _digest(code: str, length: int) -> str:
    return hashlib.sha256(code.encode("utf-8", "surrogatepass")).hexdigest()[:length]


def _clean(code: str) -> str:
    """The code reduced to ``[A-Za-z0-9._-]``, no leading dot/dash, no trailing dot."""
    text = unicodedata.normalize("NFKC", code)
    text = _UNSAFE.sub("_", text)
    text = re.sub(r"\.{2,}", ".", text).strip("._-")
    if text.split(".")[0].upper() in _RESERVED:
        text = "_" + text
    return text[:MAX_STEM - HASH_LEN - 1] or "participant"


def safe_stems(codes: Iterable[str]) -> dict[str, str]:
    """Participant code -> file stem, safe on every common file system and collision-free.

    A code that is already safe keeps its spelling. Any code that had to change (unsafe
    characters, path parts like ``../``, reserved device names like ``CON``, more than 64
    characters), or whose stem would collide with another's *ignoring case*, gets ``-`` and 8 hex
    digits of the SHA-256 of the code appended. The mapping does not depend on the order of
    ``codes``.
    """
    unique = sorted(set(codes))
    stems = {c: _clean(c) for c in unique}
    changed = {c for c in unique if stems[c] != c}
    folded: dict[str, list[str]] = {}
    for c in unique:
        folded.setdefault(stems[c].casefold(), []).append(c)
    clashing = {c for group in folded.values() if len(group) > 1 for c in group}
    out = {c: f"{stems[c]}-{_digest(c, HASH_LEN)}" if c in changed | clashing else stems[c]
           for c in unique}
    return _resolve_residual(out)


def _resolve_residual(out: dict[str, str]) -> dict[str, str]:
    """Guarantee uniqueness ignoring case in the leftover cases (a safe code that happens to
    look like another code's hashed stem): lengthen the hashes of the clashing codes."""
    for length in range(2 * HASH_LEN, MAX_STEM - 1, HASH_LEN):
        seen: dict[str, list[str]] = {}
        for code, stem in out.items():
            seen.setdefault(stem.casefold(), []).append(code)
        clashes = [c for group in seen.values() if len(group) > 1 for c in group]
        if not clashes:
            return out
        for c in clashes:
            out[c] = f"{_clean(c)[:MAX_STEM - length - 1]}-{_digest(c, length)}"
    raise BuildError("cannot make collision-free file names from the participant codes")


def output_names(results: RoundResults) -> dict[str, str]:
    """Participant code -> relative output path without extension (``certificates/<stem>``)."""
    return {code: f"certificates/{stem}"
            for code, stem in safe_stems(p.code for p in results.participants).items()}


# ---------------------------------------------------------------------------------------------
# Rendering one document (runs in a worker or in-process)


@dataclass(frozen=True)
class _Job:
    results: RoundResults
    settings: Settings
    previous: Mapping[str, Sequence[PreviousRound]]


_JOB: _Job | None = None


def _init_worker(payload: bytes) -> None:
    global _JOB
    _JOB = pickle.loads(payload)


def _render_one(job: _Job, index: int) -> tuple[int, bytes, bytes]:
    from reportgen.render.appendix import render_appendix
    from reportgen.render.certificate import render_certificate
    from reportgen.render.context import logo_path
    from reportgen.render.pdf import html_to_pdf

    results, settings = job.results, job.settings
    if index == APPENDIX:
        html = render_appendix(results, settings)
    else:
        p = results.participants[index]
        html = render_certificate(results, p, settings, job.previous.get(p.code))
    logo = logo_path(results)
    pdf = html_to_pdf(html, issued=results.round.config.round.issued,
                      allowed_files=[logo] if logo is not None else [])
    return index, html.encode("utf-8"), pdf


def _work(index: int) -> tuple[int, bytes, bytes]:
    if _JOB is None:
        raise RuntimeError("worker used before initialisation")
    return _render_one(_JOB, index)


def _named(results: RoundResults, names: Mapping[str, str], index: int, html: bytes,
           pdf: bytes) -> Iterator[tuple[str, bytes]]:
    stem = "appendix" if index == APPENDIX else names[results.participants[index].code]
    yield f"{stem}.html", html
    yield f"{stem}.pdf", pdf


def render_documents(results: RoundResults, settings: Settings, *, jobs: int = 1,
                     progress: Progress | None = None,
                     previous_rounds: Mapping[str, Sequence[PreviousRound]] | None = None,
                     ) -> Iterator[tuple[str, bytes]]:
    """Yield ``(relative name, bytes)`` for every certificate (HTML, PDF) and the appendix.

    Names are ``certificates/<stem>.html|.pdf`` (stems from :func:`output_names`) and
    ``appendix.html|.pdf``; each document's HTML comes right before its PDF. ``jobs`` processes
    render: this one and ``jobs - 1`` spawned workers, so this process works while the workers
    start up. With ``jobs > 1`` documents arrive in the order they finish (the bytes do not
    depend on it). ``progress(done, total)`` is called at the start and after each document,
    with ``total`` = participants + 1.
    """
    names = output_names(results)
    job = _Job(results, settings, dict(previous_rounds or {}))
    order = [*range(len(results.participants)), APPENDIX]
    report = progress or (lambda done, total: None)
    report(0, len(order))
    rendered = (_serial(job, order) if jobs <= 1 or len(order) <= 1
                else _parallel(job, order, min(jobs, len(order)) - 1))
    for done, (index, html, pdf) in enumerate(rendered, start=1):
        yield from _named(results, names, index, html, pdf)
        report(done, len(order))


Rendered = tuple[int, bytes, bytes]


def _serial(job: _Job, order: Sequence[int]) -> Iterator[Rendered]:
    for index in order:
        yield _render_one(job, index)


def _parallel(job: _Job, order: Sequence[int], workers: int) -> Iterator[Rendered]:
    """Feed ``workers`` spawned processes a few tasks ahead; render here between harvests.

    A worker that dies outright breaks the pool: the remaining tasks are cancelled and
    :class:`BuildError` is raised instead of waiting for a result that will never come.
    """
    todo = deque(order)
    window = 3 * workers
    payload = pickle.dumps(job, protocol=pickle.HIGHEST_PROTOCOL)
    pool = ProcessPoolExecutor(workers, mp_context=multiprocessing.get_context("spawn"),
                               initializer=_init_worker, initargs=(payload,))
    inflight: dict[Future[Rendered], int] = {}  # future -> submission number
    submitted = itertools.count()
    try:
        while todo or inflight:
            for future in sorted((f for f in inflight if f.done()), key=inflight.__getitem__):
                del inflight[future]
                yield _result(future)
            while todo and len(inflight) < window:
                inflight[pool.submit(_work, todo.popleft())] = next(submitted)
            if todo:
                yield _render_one(job, todo.pop())  # this process takes from the far end
            elif inflight:
                wait(inflight, timeout=1.0, return_when=FIRST_COMPLETED)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _result(future: Future[Rendered]) -> Rendered:
    try:
        return future.result()
    except BrokenProcessPool as exc:
        raise BuildError(
            "a document-rendering worker process stopped unexpectedly (killed, out of memory "
            "or crashed in a library), so the documents cannot be completed; run again with "
            f"--jobs 1 to render in one process and see the underlying error ({exc})") from exc
