"""Render every certificate and the appendix, as HTML and PDF, in several processes.

Workers are started with ``spawn`` (never ``fork``: WeasyPrint, GLib and vl-convert hold state
that must not be copied), receive the scored round once, and each keeps its own
FontConfiguration and font CSS (:mod:`reportgen.render.pdf`). Documents come back as bytes; the
caller writes them. Output names are made safe from participant codes by :func:`safe_stems`.

This module imports the renderers lazily. Workers can be started before the round is scored
(:class:`RenderWorkers`, used by ``pipeline.issue``): each imports WeasyPrint, Altair and SciPy
(≈ 4 s) while this process scores. The scored round then reaches them as one pickle file in the
system's temporary folder, read once per worker, not through the pipe with every task.

Workers run under :class:`concurrent.futures.ProcessPoolExecutor`, not ``multiprocessing.Pool``:
when a worker dies outright (killed, out of memory, a crash in a C library) the executor marks
the pool broken and every pending result raises ``BrokenProcessPool``, which becomes a
:class:`BuildError`; a ``Pool`` would silently replace the worker and wait for its lost task
forever.
"""

from __future__ import annotations

import bisect
import hashlib
import itertools
import multiprocessing
import os
import pickle
import re
import tempfile
import unicodedata
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING

from reportgen.errors import BuildError

if TYPE_CHECKING:
    from reportgen.results.model import Amendment, IssuedDocument, PreviousRound, RoundResults
    from reportgen.settings import Settings
    from reportgen.signing import Signer

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
    record: DocumentRecord | None = None


@dataclass(frozen=True)
class DocumentRecord:
    """What the documents of this run must know beyond the results: the documents of the
    round's current archived version (by code, ``""`` for the appendix), every report id ever
    issued, the amendment (``issue --replace``), the signer; ``issued`` collects the archive
    record of each document rendered (in the parent process)."""

    current: Mapping[str, IssuedDocument] = field(default_factory=dict)
    taken: frozenset[str] = frozenset()
    amendment: Amendment | None = None
    signer: Signer | None = None
    issued: list[IssuedDocument] = field(default_factory=list)


_JOB: tuple[str, _Job] | None = None  # (the pickle file it came from, the job)


def _warm_worker() -> None:
    """Worker initialiser: import the renderers now, while the parent is still scoring."""
    import reportgen.render.appendix
    import reportgen.render.certificate
    import reportgen.render.pdf  # noqa: F401


def _job_from(path: str) -> _Job:
    global _JOB
    if _JOB is None or _JOB[0] != path:
        with open(path, "rb") as fh:
            _JOB = (path, pickle.load(fh))
    return _JOB[1]


def _render_one(job: _Job, index: int) -> Rendered:
    from reportgen.render.appendix import render_appendix
    from reportgen.render.certificate import certificate_attachments, render_certificate
    from reportgen.render.context import appendix_id, logo_path, report_id
    from reportgen.render.identity import Identity, Signed, identify
    from reportgen.render.pdf import PdfAttachment, html_to_pdf

    results, settings, record = job.results, job.settings, job.record or DocumentRecord()
    cfg = results.round.config
    signed = None if record.signer is None else Signed(demo=record.signer.is_demo)
    code = "" if index == APPENDIX else results.participants[index].code
    render: Callable[[Identity], str]
    if index == APPENDIX:
        base = appendix_id(cfg.round.id)

        def render(identity: Identity) -> str:
            return render_appendix(results, settings, identity=identity, signed=signed)
    else:
        p = results.participants[index]
        base = report_id(cfg.round.id, p.code)

        def render(identity: Identity) -> str:
            return render_certificate(results, p, settings, job.previous.get(p.code),
                                      identity=identity, signed=signed)
    html, document = identify(render, code=code, base_id=base, issued=cfg.round.issued,
                              current=record.current.get(code), amendment=record.amendment,
                              taken=record.taken)
    attachments: tuple[PdfAttachment, ...] = ()
    if index != APPENDIX:
        attachments = certificate_attachments(
            results, results.participants[index],
            Identity(document.report_id, document.issued, document.replaces))
    logo = logo_path(results)
    pdf = html_to_pdf(html, issued=document.issued,
                      allowed_files=[logo] if logo is not None else [],
                      attachments=attachments)
    if record.signer is not None:
        from reportgen import signing

        pdf = signing.sign_pdf(pdf, record.signer, when=signing.signing_time(document.issued))
    return index, html.encode("utf-8"), pdf, document


def _work(path: str, index: int) -> Rendered:
    return _render_one(_job_from(path), index)


class RenderWorkers:
    """``count`` spawned worker processes, started now so that they import the renderers while
    the caller does other work (scoring); hand them to :func:`render_documents`. A context
    manager: leaving it shuts the processes down."""

    def __init__(self, count: int) -> None:
        self.count = max(0, count)
        self.pool: ProcessPoolExecutor | None = None
        if self.count:
            self.pool = ProcessPoolExecutor(self.count,
                                            mp_context=multiprocessing.get_context("spawn"),
                                            initializer=_warm_worker)
            for _ in range(self.count):  # spawns every process now (the pool is lazy)
                self.pool.submit(int)

    def __enter__(self) -> RenderWorkers:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        if self.pool is not None:
            self.pool.shutdown(wait=True, cancel_futures=True)
            self.pool = None


def _named(results: RoundResults, names: Mapping[str, str], index: int, html: bytes,
           pdf: bytes) -> Iterator[tuple[str, bytes]]:
    stem = "appendix" if index == APPENDIX else names[results.participants[index].code]
    yield f"{stem}.html", html
    yield f"{stem}.pdf", pdf


def render_documents(results: RoundResults, settings: Settings, *, jobs: int = 1,
                     progress: Progress | None = None,
                     previous_rounds: Mapping[str, Sequence[PreviousRound]] | None = None,
                     workers: RenderWorkers | None = None,
                     record: DocumentRecord | None = None,
                     ) -> Iterator[tuple[str, bytes]]:
    """Yield ``(relative name, bytes)`` for every certificate (HTML, PDF) and the appendix.

    Names are ``certificates/<stem>.html|.pdf`` (stems from :func:`output_names`) and
    ``appendix.html|.pdf``; each document's HTML comes right before its PDF. ``jobs`` processes
    render: this one and ``jobs - 1`` spawned workers, so this process works while the workers
    start up. With ``jobs > 1`` documents arrive in the order they finish (the bytes do not
    depend on it). ``workers``: processes started earlier (:class:`RenderWorkers`, of
    ``jobs - 1`` processes), used instead of starting new ones; the caller closes them.
    ``progress(done, total)`` is called at the start and after each document, with ``total`` =
    participants + 1. ``record``: the documents issued before (for amendments), the signer,
    and the list each document's archive record is appended to.
    """
    names = output_names(results)
    job = _Job(results, settings, dict(previous_rounds or {}),
               None if record is None else replace(record, issued=[]))
    order = [*range(len(results.participants)), APPENDIX]
    report = progress or (lambda done, total: None)
    report(0, len(order))
    if jobs <= 1 or len(order) <= 1:
        rendered = _serial(job, order)
    elif workers is not None and workers.pool is not None:
        rendered = _parallel(job, order, workers)
    else:
        rendered = _own_workers(job, order, min(jobs, len(order)) - 1)
    # ``record.issued`` is kept in the order of ``order`` whatever order the documents finish
    # in, so the archive is byte-identical whatever ``jobs`` is.
    rank = {index: n for n, index in enumerate(order)}
    ranks: list[int] = []
    for done, (index, html, pdf, document) in enumerate(rendered, start=1):
        if record is not None:
            at = bisect.bisect(ranks, rank[index])
            ranks.insert(at, rank[index])
            record.issued.insert(at, document)
        yield from _named(results, names, index, html, pdf)
        report(done, len(order))


Rendered = tuple[int, bytes, bytes, "IssuedDocument"]


def _serial(job: _Job, order: Sequence[int]) -> Iterator[Rendered]:
    for index in order:
        yield _render_one(job, index)


def _own_workers(job: _Job, order: Sequence[int], count: int) -> Iterator[Rendered]:
    with RenderWorkers(count) as workers:
        yield from _parallel(job, order, workers)


def _parallel(job: _Job, order: Sequence[int], workers: RenderWorkers) -> Iterator[Rendered]:
    """Feed the worker processes a few tasks ahead; render here between harvests.

    A worker that dies outright breaks the pool: the remaining tasks are cancelled and
    :class:`BuildError` is raised instead of waiting for a result that will never come.
    """
    pool = workers.pool
    if pool is None:
        raise RuntimeError("render workers used after they were closed")
    todo = deque(order)
    window = 3 * workers.count
    fd, path = tempfile.mkstemp(prefix="reportgen-job-", suffix=".pickle")
    inflight: dict[Future[Rendered], int] = {}  # future -> submission number
    submitted = itertools.count()
    try:
        with os.fdopen(fd, "wb") as fh:
            pickle.dump(job, fh, protocol=pickle.HIGHEST_PROTOCOL)
        while todo or inflight:
            for future in sorted((f for f in inflight if f.done()), key=inflight.__getitem__):
                del inflight[future]
                yield _result(future)
            while todo and len(inflight) < window:
                inflight[pool.submit(_work, path, todo.popleft())] = next(submitted)
            if todo:
                yield _render_one(job, todo.pop())  # this process takes from the far end
            elif inflight:
                wait(inflight, timeout=1.0, return_when=FIRST_COMPLETED)
    finally:
        for future in inflight:
            future.cancel()
        wait([f for f in inflight if not f.cancelled()])
        os.unlink(path)


def _result(future: Future[Rendered]) -> Rendered:
    try:
        return future.result()
    except BrokenProcessPool as exc:
        raise BuildError(
            "a document-rendering worker process stopped unexpectedly (killed, out of memory "
            "or crashed in a library), so the documents cannot be completed; run again with "
            f"--jobs 1 to render in one process and see the underlying error ({exc})") from exc
