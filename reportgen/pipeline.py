"""The orchestrator: each command reads as numbered steps (load, compute, render, write).

Nothing here prints or exits; progress is reported through a callback and problems are raised
(:mod:`reportgen.errors`) for the CLI to turn into messages and exit codes.
"""

from __future__ import annotations

import datetime as dt
import itertools
import shutil
import tempfile
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from dataclasses import replace as replace_field
from pathlib import Path
from typing import TYPE_CHECKING

from reportgen import archive as history
from reportgen.archive.trend import build_trend
from reportgen.errors import InputError, OutputError, Problem
from reportgen.output import (
    MANIFEST,
    MANIFEST_SIGNATURE,
    ManifestInput,
    Staging,
    manifest,
    recorded_outputs,
    sha256_bytes,
    sha256_file,
)
from reportgen.render.batch import DocumentRecord, RenderWorkers, output_names, render_documents
from reportgen.render.distribution import distribution_csv
from reportgen.render.key_audit import render_key_audit
from reportgen.render.pdf import html_to_pdf
from reportgen.render.results_json import results_json
from reportgen.render.trend import render_trend_html
from reportgen.render.workbook import results_workbook
from reportgen.resources import config_dir, sample_rounds_dir
from reportgen.results.model import Amendment, RoundResults
from reportgen.rounds.folder import open_round
from reportgen.rounds.model import Round
from reportgen.rounds.tables import ReadLimits
from reportgen.scoring.score import score_round
from reportgen.settings import Settings, load_settings

if TYPE_CHECKING:
    from reportgen.signing import Signer

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
               stems: Mapping[str, str] | None,
               archive: ArchivePlan | None = None,
               signer: Signer | None = None) -> RunSummary:
    """Write every document into a locked staging folder, update an archive kept inside OUT,
    then the manifest, then swap the folder into place (output.Staging)."""
    with Staging(out) as stage:
        for name, data in documents:
            stage.write(name, data)
        if stems is not None:
            stage.write(f"{PROVIDER}/distribution.csv",
                        distribution_csv(results, stems, stage.written))
        if archive is not None and archive.inside is not None:
            staged = stage.stage / archive.inside
            if archive.source.is_file():
                shutil.copyfile(archive.source, staged)
            archive.record(staged)
            stage.written[archive.inside] = sha256_file(staged)
        manifest_bytes = manifest(
            round_id=results.round.config.round.id,
            inputs=[ManifestInput(s.name, s.sha256) for s in results.round.sources],
            settings_source=settings.source,
            settings_sha256=_settings_hash(settings),
            outputs=dict(stage.written),
            file_names=None if stems is None else {c: f"{s}.pdf" for c, s in stems.items()},
        )
        stage.write(MANIFEST, manifest_bytes)
        if signer is not None:
            from reportgen import signing

            stage.write(MANIFEST_SIGNATURE, signing.sign_manifest(
                manifest_bytes, signer, when=signing.signing_time(_issue_date(results, archive))))
        files = tuple(sorted(stage.written))
    if archive is not None and archive.inside is None:
        archive.record(archive.path)  # outside OUT: after OUT is complete; rerun is idempotent
    return RunSummary(out, files, results.round.warnings, results.round.n_participants)


def _issue_date(results: RoundResults, archive: ArchivePlan | None) -> dt.date:
    """The date this run issues its documents: the amendment's date when amending."""
    amendment = archive.documents.amendment if archive is not None else None
    return amendment.amended_on if amendment is not None else results.round.config.round.issued


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


PROVIDER = "provider"
"""OUT/provider/: what stays with the provider (results of everyone, the release review, the
distribution list); everything else in OUT is what participants receive."""


def _tables(results: RoundResults) -> Iterator[tuple[str, bytes]]:
    yield f"{PROVIDER}/results.json", results_json(results)
    yield f"{PROVIDER}/results.xlsx", results_workbook(results)


def _release_review(results: RoundResults, settings: Settings, signer: Signer | None = None
                    ) -> Iterator[tuple[str, bytes]]:
    html = render_key_audit(results, settings)
    issued = results.round.config.round.issued
    pdf = html_to_pdf(html, issued=issued)
    if signer is not None:
        from reportgen import signing

        pdf = signing.sign_pdf(pdf, signer, when=signing.signing_time(issued))
    yield f"{PROVIDER}/key-audit.html", html.encode("utf-8")
    yield f"{PROVIDER}/key-audit.pdf", pdf


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
    documents: DocumentRecord = field(default_factory=DocumentRecord)

    def check(self) -> None:
        """Refuse now (before anything is written) what recording would refuse later."""
        history.check_record(self.source, self.results, inputs_sha256=self.inputs_sha256,
                             config_sha256=self.config_sha256, replace=self.replace)

    def record(self, path: Path) -> None:
        history.record_round(path, self.results, inputs_sha256=self.inputs_sha256,
                             config_sha256=self.config_sha256, replace=self.replace,
                             documents=tuple(self.documents.issued),
                             amendment=self.documents.amendment)


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
          replace: bool = False, archive_source: Path | None = None,
          reason: str | None = None, amended_on: dt.date | None = None,
          signer: Signer | None = None) -> RunSummary:
    """`reportgen issue`: everything `score` writes, every certificate (HTML and PDF) and the
    group appendix, rendered in ``jobs`` worker processes; the round is recorded in the archive
    and each certificate shows the participant's earlier archived rounds. With ``replace`` the
    reports are amended: ``reason`` and ``amended_on`` are required (docs/archive.md); a
    certificate whose content changed gets a new report id and an amendment notice. ``signer``
    signs every PDF and the manifest (docs/signing.md)."""
    # 1. Load and validate everything, and check the archive would accept the round.
    rnd = load(folder)
    amendment = amendment_of(rnd, replace, reason, amended_on)
    if signer is not None:
        from reportgen import signing

        signer.check_at(signing.signing_time(
            amended_on if amendment is not None and amended_on else rnd.config.round.issued))
    # The render workers start now: they import the renderers while this process scores.
    with RenderWorkers(jobs - 1) as workers:
        progress("scoring", 0, 1)
        # 2. Compute.
        results = score_round(rnd, settings)
        progress("scoring", 1, 1)
        plan = _archive_plan(archive_path(out, settings, archive), out, results, settings,
                             replace, archive_source)
        previous = ({} if plan is None else history.previous_rounds_for(
            plan.source, rnd.participants, rnd.config.round.issued))
        record = DocumentRecord(
            current={} if plan is None else history.current_documents(
                plan.source, rnd.config.round.id),
            taken=frozenset() if plan is None else frozenset(history.report_ids(plan.source)),
            amendment=amendment, signer=signer)
        if plan is not None:
            plan = replace_field(plan, documents=record)
        # 3. Render (in workers) and 4. write, streaming each document into the staging folder.
        names = output_names(results)
        documents = itertools.chain(
            _tables(results),
            _release_review(results, settings, signer),
            render_documents(results, settings, jobs=jobs, previous_rounds=previous,
                             workers=workers, record=record,
                             progress=lambda done, total: progress("certificates", done, total)),
        )
        return _write_all(out, results, settings, documents, names, plan, signer)


def amendment_of(rnd: Round, replace: bool, reason: str | None,
                 amended_on: dt.date | None) -> Amendment | None:
    """``issue --replace`` amends issued reports: it needs a reason and a date (the tool never
    reads the clock); without ``--replace`` neither may be given."""
    problems = []
    if replace:
        if reason is None or not reason.strip():
            problems.append(Problem("--reason", "`issue --replace` amends issued reports: say "
                                    "why with --reason TEXT (printed on every amended report)"))
        if amended_on is None:
            problems.append(Problem("--amended-on", "`issue --replace` amends issued reports: "
                                    "give the date of the amendment with --amended-on "
                                    "YYYY-MM-DD"))
        elif amended_on < rnd.config.round.issued:
            problems.append(Problem(
                "--amended-on", "an amendment cannot be dated before the round was issued",
                value=amended_on.isoformat(),
                allowed=f"{rnd.config.round.issued.isoformat()} or later"))
    elif reason is not None or amended_on is not None:
        problems.append(Problem("--reason", "--reason and --amended-on go with --replace, "
                                "which amends reports already issued"))
    if problems:
        raise InputError(problems)
    if not replace or reason is None or amended_on is None:
        return None
    return Amendment(reason.strip(), amended_on)


def record(folder: Path, archive: Path, settings: Settings, *, replace: bool = False) -> str:
    """`reportgen record`: score a round and store it in the archive, writing nothing else."""
    refuse_issued_archive(archive)
    results = score_round(load(folder), settings)
    return history.record_round(archive, results, inputs_sha256=history.inputs_digest(results),
                                config_sha256=_settings_hash(settings), replace=replace)


def trend(code: str, archive: Path, out: Path, settings: Settings, *,
          last_n: int | None = None, signer: Signer | None = None) -> RunSummary:
    """`reportgen trend`: one examiner's rounds from the archive as trend.html and trend.pdf."""
    # 1. Read the archive and 2. compute (pooled insight, change tests, standings).
    result = build_trend(archive, code, last_n=last_n, seed=TREND_SEED,
                         n_boot=settings.report.bootstrap)
    # 3. Render, then 4. write atomically with a manifest.
    html = render_trend_html(result, settings)
    pdf = html_to_pdf(html, issued=result.issued)
    when = None
    if signer is not None:
        from reportgen import signing

        when = signing.signing_time(result.issued)
        signer.check_at(when)
        pdf = signing.sign_pdf(pdf, signer, when=when)
    with Staging(out) as stage:
        stage.write("trend.html", html.encode("utf-8"))
        stage.write("trend.pdf", pdf)
        manifest_bytes = manifest(
            round_id=f"trend of {result.code}",
            inputs=[ManifestInput(archive.name, sha256_file(archive))],
            settings_source=settings.source, settings_sha256=_settings_hash(settings),
            outputs=dict(stage.written))
        stage.write(MANIFEST, manifest_bytes)
        if signer is not None and when is not None:
            stage.write(MANIFEST_SIGNATURE, signing.sign_manifest(manifest_bytes, signer,
                                                                  when=when))
        files = tuple(sorted(stage.written))
    return RunSummary(out, files, (), 1)


def demo(out: Path, settings: Settings, *, jobs: int = 1,
         progress: Progress = _silent, sign: bool = True) -> RunSummary:
    """`reportgen demo`: record the earlier sample rounds in OUT's archive, then issue the newest
    (so certificates show previous rounds and `reportgen trend` works for any demo code). With
    ``sign`` every PDF and the manifest are signed with a throwaway demonstration key made for
    this run only (the certificates say so; docs/signing.md)."""
    if not sign:
        return _demo(out, settings, jobs, progress, None)
    from reportgen import signing

    with tempfile.TemporaryDirectory(prefix="reportgen-demo-key-") as tmp:
        key = signing.make_demo_key(Path(tmp))
        signer = signing.load_signer(key, signing.DEMO_PASSPHRASE_ENV)
        return _demo(out, settings, jobs, progress, signer)


def _demo(out: Path, settings: Settings, jobs: int, progress: Progress,
          signer: Signer | None) -> RunSummary:
    *earlier, newest = _sample_rounds()
    archive = archive_path(out, settings, None)
    if archive is None:
        return issue(newest, out, settings, jobs=jobs, progress=progress, signer=signer)
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
                     archive_source=work, signer=signer)
    finally:
        work.unlink(missing_ok=True)


def refuse_issued_archive(archive: Path) -> None:
    """An archive inside an issued output folder is one of that folder's files (its manifest
    lists its SHA-256): recording into it afterwards would make `verify` report it altered."""
    folder = archive.resolve().parent
    try:
        listed = recorded_outputs(folder)
    except OutputError:
        return  # no reportgen output folder around it
    if archive.name in listed:
        raise InputError.single(
            str(archive), f"this archive is part of the issued output folder {folder} (its "
            f"{MANIFEST} lists it), so recording into it would make `reportgen verify` report "
            "the folder altered. Keep the archive outside the output folder: record into a "
            "file of its own (--archive FILE) and pass the same --archive to `reportgen issue`",
            value=archive.name)


DEMO_SCHEME = "fic-"
"""The sample scheme `reportgen demo` runs (folders fic-2024 ...); the other sample schemes
(sample_rounds/README.md) show other response scales and are run by the tests."""


def _sample_rounds() -> list[Path]:
    rounds = sorted(p for p in sample_rounds_dir().iterdir()
                    if p.name.startswith(DEMO_SCHEME) and (p / "round.toml").is_file())
    if not rounds:
        raise InputError.single(str(sample_rounds_dir()), "no sample rounds are installed")
    return rounds


def newest_sample_round() -> Path:
    return _sample_rounds()[-1]


def forms(folder: Path, out: Path) -> RunSummary:
    """`reportgen forms`: one response form (.xlsx) per participant of the participants file."""
    from reportgen.catalogue import KNOWN_METRICS
    from reportgen.render.batch import safe_stems
    from reportgen.render.forms import response_form
    from reportgen.rounds.load import load_form_round

    # 1. Load the settings, the key's item list and the participant codes.
    if not folder.is_dir():
        raise InputError.single(str(folder), "round folder not found (or not a folder)")
    plan = load_form_round(folder, KNOWN_METRICS)
    # 2. Render every form to bytes, then 3. write them atomically.
    stems = safe_stems(plan.codes)
    with Staging(out) as stage:
        for code in plan.codes:
            stage.write(f"{stems[code]}.xlsx", response_form(plan.config, plan.items, code))
        files = tuple(sorted(stage.written))
    return RunSummary(out, files, (), len(plan.codes))
