"""reportgen.render.batch: safe output names and rendering in worker processes."""

from __future__ import annotations

import os
import re
import time
from typing import Any

import pytest
from hypothesis import given
from hypothesis import strategies as st

from reportgen.errors import BuildError
from reportgen.render.batch import (
    MAX_STEM,
    RenderWorkers,
    output_names,
    render_documents,
    safe_stems,
)
from reportgen.settings import Settings

from .render_fixtures import build_results

SAFE = re.compile(r"[A-Za-z0-9_][A-Za-z0-9._-]*")
RESERVED = re.compile(r"(CON|PRN|AUX|NUL|COM\d|LPT\d)(\..*)?", re.IGNORECASE)


def _assert_safe(stem: str) -> None:
    assert SAFE.fullmatch(stem), stem
    assert len(stem) <= MAX_STEM
    assert ".." not in stem
    assert not stem.endswith(".")
    assert not RESERVED.fullmatch(stem), stem


@given(st.lists(st.text(min_size=1, max_size=120), min_size=1, max_size=30))
def test_stems_are_safe_and_collision_free(codes: list[str]) -> None:
    stems = safe_stems(codes)
    assert set(stems) == set(codes)
    for stem in stems.values():
        _assert_safe(stem)
    folded = [s.casefold() for s in stems.values()]
    assert len(folded) == len(set(folded))


@given(st.lists(st.text(min_size=1, max_size=20), min_size=1, max_size=10, unique=True),
       st.randoms())
def test_stems_do_not_depend_on_order(codes: list[str], rnd: object) -> None:
    shuffled = list(codes)
    rnd.shuffle(shuffled)  # type: ignore[attr-defined]
    assert safe_stems(codes) == safe_stems(shuffled)


def test_stems_examples() -> None:
    stems = safe_stems(["P001", "p001", "../x", "a/b", "CON", "con.txt", "x" * 200, "Ana\u00efs",
                        "E-17"])
    assert stems["E-17"] == "E-17"  # already safe: unchanged
    assert stems["P001"] != stems["p001"]
    assert stems["P001"].startswith("P001-") and stems["p001"].startswith("p001-")
    assert stems["../x"].startswith("x-")
    assert stems["a/b"].startswith("a_b-")
    assert stems["CON"].startswith("_CON-")
    assert stems["con.txt"].startswith("_con.txt-")
    assert len(stems["x" * 200]) == MAX_STEM
    for stem in stems.values():
        _assert_safe(stem)


def test_batch_in_two_processes_matches_one() -> None:
    results = build_results(n_participants=2, n_items=8)
    settings = Settings()
    seen: list[tuple[int, int]] = []
    serial = dict(render_documents(results, settings, jobs=1))
    parallel = dict(render_documents(results, settings, jobs=2,
                                     progress=lambda d, t: seen.append((d, t))))
    names = output_names(results)
    expected = {f"{stem}.{ext}" for stem in names.values() for ext in ("html", "pdf")}
    assert set(serial) == expected | {"appendix.html", "appendix.pdf"}
    assert serial == parallel  # byte-identical across processes
    assert seen == [(0, 3), (1, 3), (2, 3), (3, 3)]


def test_workers_started_before_scoring_give_the_same_bytes() -> None:
    # pipeline.issue starts the workers first (they import while the round is scored) and
    # hands them to render_documents; two rounds in a row reuse them (the job file changes).
    results = build_results(n_participants=2, n_items=8)
    other = build_results(n_participants=3, n_items=6)
    settings = Settings()
    with RenderWorkers(1) as workers:
        early = dict(render_documents(results, settings, jobs=2, workers=workers))
        again = dict(render_documents(other, settings, jobs=2, workers=workers))
    assert early == dict(render_documents(results, settings, jobs=1))
    assert again == dict(render_documents(other, settings, jobs=1))


def test_a_safe_code_shaped_like_a_hashed_stem_still_gets_its_own_name() -> None:
    clash = safe_stems(["a/b"])["a/b"]  # e.g. "a_b-1a2b3c4d"
    stems = safe_stems(["a/b", clash])
    assert stems[clash] != stems["a/b"]
    for stem in stems.values():
        _assert_safe(stem)


class _KillsTheWorker:
    """Unpickling this ends the process at once (``os._exit``): a worker that crashes outright,
    as one killed by the kernel or crashing inside a C library would."""

    def __reduce__(self) -> tuple[Any, tuple[int]]:
        return os._exit, (3,)


def test_a_worker_that_dies_raises_build_error_instead_of_hanging() -> None:
    results = build_results(n_participants=3, n_items=6)
    # Previous rounds travel to every worker with the round; no participant has this code, so
    # the document rendered in this process never touches it.
    poison = {"not-a-participant": [_KillsTheWorker()]}
    start = time.monotonic()
    with pytest.raises(BuildError, match="worker process stopped unexpectedly"):
        dict(render_documents(results, Settings(), jobs=2,
                              previous_rounds=poison))  # type: ignore[arg-type]
    assert time.monotonic() - start < 120
