"""The orchestrator: each command reads as numbered steps (load, compute, render, write).

Nothing here prints or exits; progress is reported through a callback and problems are raised
(:mod:`reportgen.errors`) for the CLI to turn into messages and exit codes.
"""

from __future__ import annotations

import itertools
import shutil
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path

from reportgen import archive as history
from reportgen.archive.trend import build_trend
from reportgen.errors import InputError, Problem
from reportgen.output import ManifestInput, Staging, manifest, sha256_bytes, sha256_file
from reportgen.render.batch import output_names, render_documents
from reportgen.render.pdf import html_to_pdf
from reportgen.render.results_json import results_json
from reportgen.render.trend import render_trend_html
from reportgen.render.workbook import results_workbook
from reportgen.resources import config_dir, sample_rounds_dir
from reportgen.results.model import RoundResults
from reportgen.rounds.folder import open_round
from reportgen.rounds.model import Round
from reportgen.rounds.tables import ReadLimits
from reportgen.scoring.score import score_round
from reportgen.settings import Settings, load_settings

TREND_SEED = 20240601

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
    return open_round(folder, limits)


def score_folder(folder: Path, settings: Settings | None = None) -> RoundResults:
    """Load and score a round folder in memory (used by tests and the golden-file script)."""
    return score_round(load(folder), settings or load_settings())


def _settings_hash(settings: Settings) -> str:
    source = Path(settings.source) if settings.source != "built-in defaults" else (
        config_dir() / "defaults.toml")
    return sha256_bytes(source.read_bytes())


def _write_all(out: Path, results: RoundResults, settings: Settings,
               documents: Iterable[tuple[str, bytes]],
               file_names: Mapping[str, str] | None,
               archive: ArchivePlan | None = None) -> RunSummary:
    """Write every document into a locked staging folder, update an archive kept inside OUT,
    then the manifest, then swap the folder into place (output.Staging)."""
    with Staging(out) as stage:
        for name, data in documents:
            stage.write(name, data)
        if archive is not None and archive.inside is not None:
            staged = stage.stage / archive.inside
            if archive.source.is_file():
                shutil.copyfile(archive.source, staged)
            archive.record(staged)
            stage.written[archive.inside] = sha256_file(staged)
        stage.write("manifest.json", manifest(
            round_id=results.round.config.round.id,
            inputs=[ManifestInput(s.name, s.sha256) for s in results.round.sources],
            settings_source=settings.source,
            settings_sha256=_settings_hash(settings),
            outputs=dict(stage.written),
            file_names=file_names,
        ))
        files = tuple(sorted(stage.written))
    if archive is not None and archive.inside is None:
        archive.record(archive.path)  # outside OUT: after OUT is complete; rerun is idempotent
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


@dataclass(frozen=True)
class ArchivePlan:
    """Where the archive is, and how this run records into it.

    ``inside`` is the archive's name within OUT when it lives there: the archive as it stands
    (``source``: normally the same file) is then copied into the staging folder and updated there,
    so it is swapped into place with the rest of OUT."""

    path: Path
    inside: str | None
    source: Path
    results: RoundResults
    inputs_sha256: str
    config_sha256: str
    replace: bool

    def check(self) -> None:
        """Refuse now (before anything is written) what recording would refuse later."""
        history.check_record(self.source, self.results, inputs_sha256=self.inputs_sha256,
                             config_sha256=self.config_sha256, replace=self.replace)

    def record(self, path: Path) -> None:
        history.record_round(path, self.results, inputs_sha256=self.inputs_sha256,
                             config_sha256=self.config_sha256, replace=self.replace)


def archive_path(out: Path, settings: Settings, override: Path | None) -> Path | None:
    """--archive, else [archive] path of the settings (relative to OUT); "" turns it off."""
    if override is not None:
        return override
    if not settings.archive.path:
        return None
    return out / settings.archive.path


def _archive_plan(path: Path | None, out: Path, results: RoundResults, settings: Settings,
                  replace: bool, source: Path | None = None) -> ArchivePlan | None:
    if path is None:
        return None
    resolved, out_dir = path.resolve(), out.resolve()
    inside = (resolved.relative_to(out_dir).as_posix()
              if resolved.parent == out_dir else None)
    plan = ArchivePlan(resolved, inside, source or resolved, results,
                       history.inputs_digest(results), _settings_hash(settings), replace)
    plan.check()
    return plan


def issue(folder: Path, out: Path, settings: Settings, *, jobs: int = 1,
          progress: Progress = _silent, archive: Path | None = None,
          replace: bool = False, archive_source: Path | None = None) -> RunSummary:
    """`reportgen issue`: everything `score` writes, every certificate (HTML and PDF) and the
    group appendix, rendered in ``jobs`` worker processes; the round is recorded in the archive
    and each certificate shows the participant's earlier archived rounds."""
    # 1. Load and validate everything, and check the archive would accept the round.
    rnd = load(folder)
    progress("scoring", 0, 1)
    # 2. Compute.
    results = score_round(rnd, settings)
    progress("scoring", 1, 1)
    plan = _archive_plan(archive_path(out, settings, archive), out, results, settings, replace,
                         archive_source)
    previous = ({} if plan is None else history.previous_rounds_for(
        plan.source, rnd.participants, rnd.config.round.issued))
    # 3. Render (in workers) and 4. write, streaming each document into the staging folder.
    names = output_names(results)
    documents = itertools.chain(
        _tables(results),
        render_documents(results, settings, jobs=jobs, previous_rounds=previous,
                         progress=lambda done, total: progress("certificates", done, total)),
    )
    file_names = {code: f"{stem}.pdf" for code, stem in names.items()}
    return _write_all(out, results, settings, documents, file_names, plan)


def record(folder: Path, archive: Path, settings: Settings, *, replace: bool = False) -> str:
    """`reportgen record`: score a round and store it in the archive, writing nothing else."""
    results = score_round(load(folder), settings)
    return history.record_round(archive, results, inputs_sha256=history.inputs_digest(results),
                                config_sha256=_settings_hash(settings), replace=replace)


def trend(code: str, archive: Path, out: Path, settings: Settings, *,
          last_n: int | None = None) -> RunSummary:
    """`reportgen trend`: one examiner's rounds from the archive as trend.html and trend.pdf."""
    # 1. Read the archive and 2. compute (pooled insight, change tests, standings).
    result = build_trend(archive, code, last_n=last_n, seed=TREND_SEED,
                         n_boot=settings.report.bootstrap)
    # 3. Render, then 4. write atomically with a manifest.
    html = render_trend_html(result, settings)
    with Staging(out) as stage:
        stage.write("trend.html", html.encode("utf-8"))
        stage.write("trend.pdf", html_to_pdf(html, issued=result.issued))
        stage.write("manifest.json", manifest(
            round_id=f"trend of {result.code}",
            inputs=[ManifestInput(archive.name, sha256_file(archive))],
            settings_source=settings.source, settings_sha256=_settings_hash(settings),
            outputs=dict(stage.written)))
        files = tuple(sorted(stage.written))
    return RunSummary(out, files, (), 1)


def demo(out: Path, settings: Settings, *, jobs: int = 1,
         progress: Progress = _silent) -> RunSummary:
    """`reportgen demo`: record the earlier sample rounds in OUT's archive, then issue the newest
    (so certificates show previous rounds and `reportgen trend` works for any demo code)."""
    *earlier, newest = _sample_rounds()
    archive = archive_path(out, settings, None)
    if archive is None:
        return issue(newest, out, settings, jobs=jobs, progress=progress)
    # The earlier rounds go into a working copy beside OUT; issue() carries it into OUT.
    work = out.resolve().parent / f".{out.name}.archive-work.sqlite"
    work.parent.mkdir(parents=True, exist_ok=True)
    work.unlink(missing_ok=True)
    try:
        if archive.is_file():
            shutil.copyfile(archive, work)
        for n, folder in enumerate(earlier):
            progress("earlier rounds", n, len(earlier))
            record(folder, work, settings)
        progress("earlier rounds", len(earlier), len(earlier))
        return issue(newest, out, settings, jobs=jobs, progress=progress, archive=archive,
                     archive_source=work)
    finally:
        work.unlink(missing_ok=True)


def _sample_rounds() -> list[Path]:
    rounds = sorted(p for p in sample_rounds_dir().iterdir() if (p / "round.toml").is_file())
    if not rounds:
        raise InputError.single(str(sample_rounds_dir()), "no sample rounds are installed")
    return rounds


def newest_sample_round() -> Path:
    return _sample_rounds()[-1]
