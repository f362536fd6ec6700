"""The orchestrator: each command reads as numbered steps (load, compute, render, write).

Nothing here prints or exits; progress is reported through a callback and problems are raised
(:mod:`reportgen.errors`) for the CLI to turn into messages and exit codes.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path

from reportgen.errors import InputError, Problem
from reportgen.names import KNOWN_METRICS
from reportgen.output import ManifestInput, Staging, manifest, sha256_bytes
from reportgen.render.batch import output_names, render_documents
from reportgen.render.results_json import results_json
from reportgen.render.workbook import results_workbook
from reportgen.resources import config_dir, sample_rounds_dir
from reportgen.results import RoundResults
from reportgen.rounds.load import load_round
from reportgen.rounds.model import Round
from reportgen.rounds.tables import ReadLimits
from reportgen.scoring import score_round
from reportgen.settings import Settings, load_settings

Progress = Callable[[str, int, int], None]


def _silent(stage: str, done: int, total: int) -> None:
    return None


@dataclass(frozen=True)
class RunSummary:
    out: Path
    files: tuple[str, ...]
    warnings: tuple[Problem, ...]
    n_participants: int


def load(folder: Path, limits: ReadLimits | None = None) -> Round:
    """Read and validate a round folder; raises InputError with every problem found."""
    if not folder.is_dir():
        raise InputError.single(str(folder), "round folder not found (or not a folder)")
    return load_round(folder, KNOWN_METRICS, limits)


def score_folder(folder: Path, settings: Settings | None = None) -> RoundResults:
    """Load and score a round folder in memory (used by tests and the golden-file script)."""
    return score_round(load(folder), settings or load_settings())


def _settings_hash(settings: Settings) -> str:
    source = Path(settings.source) if settings.source != "built-in defaults" else (
        config_dir() / "defaults.toml")
    return sha256_bytes(source.read_bytes())


def _write_all(out: Path, results: RoundResults, settings: Settings,
               documents: Iterable[tuple[str, bytes]],
               file_names: Mapping[str, str] | None) -> RunSummary:
    """Write every document into a locked staging folder, then the manifest, then swap it in."""
    with Staging(out) as stage:
        for name, data in documents:
            stage.write(name, data)
        stage.write("manifest.json", manifest(
            round_id=results.round.config.round.id,
            inputs=[ManifestInput(s.name, s.sha256) for s in results.round.sources],
            settings_source=settings.source,
            settings_sha256=_settings_hash(settings),
            outputs=dict(stage.written),
            file_names=file_names,
        ))
        files = tuple(sorted(stage.written))
    return RunSummary(out, files, results.round.warnings, results.round.n_participants)


def score(folder: Path, out: Path, settings: Settings,
          progress: Progress = _silent) -> RunSummary:
    """`reportgen score`: results.json, results.xlsx and manifest.json."""
    # 1. Load and validate everything before anything is written.
    rnd = load(folder)
    progress("scoring", 0, 1)
    # 2. Compute.
    results = score_round(rnd, settings)
    progress("scoring", 1, 1)
    # 3. Render to bytes, then 4. write atomically.
    return _write_all(out, results, settings, _tables(results), None)


def _tables(results: RoundResults) -> Iterator[tuple[str, bytes]]:
    yield "results.json", results_json(results)
    yield "results.xlsx", results_workbook(results)


def issue(folder: Path, out: Path, settings: Settings, *, jobs: int = 1,
          progress: Progress = _silent) -> RunSummary:
    """`reportgen issue`: everything `score` writes, plus every certificate (HTML and PDF) and
    the group appendix; documents are rendered in ``jobs`` worker processes."""
    # 1. Load and validate everything before anything is written.
    rnd = load(folder)
    # 2. Compute.
    progress("scoring", 0, 1)
    results = score_round(rnd, settings)
    progress("scoring", 1, 1)
    # 3. Render (in workers) and 4. write, streaming each document into the staging folder.
    names = output_names(results)
    documents = itertools.chain(
        _tables(results),
        render_documents(results, settings, jobs=jobs,
                         progress=lambda done, total: progress("certificates", done, total)),
    )
    file_names = {code: f"{stem}.pdf" for code, stem in names.items()}
    return _write_all(out, results, settings, documents, file_names)


def newest_sample_round() -> Path:
    rounds = sorted(p for p in sample_rounds_dir().iterdir() if (p / "round.toml").is_file())
    if not rounds:
        raise InputError.single(str(sample_rounds_dir()), "no sample rounds are installed")
    return rounds[-1]
