"""Command line: the only place that prints to the user and chooses exit codes.

Exit status: 0 done; 1 ``verify`` found a difference; 2 input or output problem the user can fix;
3 an internal failure (a bug or a broken installation: please report it).
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, TextIO

from reportgen import __version__
from reportgen.errors import BuildError, InputError, OutputError, Problem
from reportgen.output import verify
from reportgen.settings import load_settings

if TYPE_CHECKING:
    from reportgen.signing import Signer

EXIT_OK, EXIT_DIFFERS, EXIT_INPUT, EXIT_INTERNAL = 0, 1, 2, 3


class ProgressBar:
    """``stage  [#####.....]  12/120`` on stderr; redrawn in place on a terminal."""

    def __init__(self, stream: TextIO, quiet: bool) -> None:
        self.stream = stream
        self.quiet = quiet
        self.tty = stream.isatty()
        self._last: tuple[str, int] | None = None

    def __call__(self, stage: str, done: int, total: int) -> None:
        if self.quiet or total <= 0:
            return
        tenth = done * 10 // total
        if not self.tty and self._last == (stage, tenth) and done != total:
            return
        self._last = (stage, tenth)
        width = 30
        filled = done * width // total
        bar = "#" * filled + "." * (width - filled)
        end = "\n" if done == total or not self.tty else ""
        self.stream.write(f"\r{stage:<14} [{bar}] {done}/{total}{end}")
        self.stream.flush()


def _print_problems(problems: Sequence[Problem], stream: TextIO) -> None:
    errors = [p for p in problems if p.severity == "error"]
    warnings = [p for p in problems if p.severity == "warning"]
    if errors:
        stream.write(f"{len(errors)} problem(s) must be fixed before the round can be scored:\n")
        for p in errors:
            stream.write(f"  error: {p}\n")
    for p in warnings:
        stream.write(f"  warning: {p}\n")


def _default_jobs() -> int:
    """The CPUs this process may run on (its affinity where the system tells it)."""
    affinity = getattr(os, "sched_getaffinity", None)
    if affinity is not None:
        return max(1, len(affinity(0)))
    return max(1, os.cpu_count() or 1)


def _date(text: str) -> dt.date:
    try:
        return dt.date.fromisoformat(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(f"not a date of the form YYYY-MM-DD: {text!r}") from exc


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="reportgen",
        description="Score a proficiency-testing round and issue its reports.",
        epilog="Exit status: 0 done, 1 verify found a difference, 2 a problem in the input or "
        "the output folder (nothing was written), 3 an internal error.",
    )
    parser.add_argument("--version", action="version", version=f"reportgen {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def config(p: argparse.ArgumentParser) -> None:
        p.add_argument("--config", type=Path, metavar="FILE",
                       help="provider settings file (TOML) overriding the built-in defaults: "
                       "[templates] override_dir, [report], [archive]; see docs/settings.md")

    def out(p: argparse.ArgumentParser) -> None:
        p.add_argument("-o", "--out", type=Path, required=True, metavar="OUT",
                       help="output folder: new, empty, or an earlier reportgen output, "
                       "which is replaced as a whole once the new output is complete")

    def runs(p: argparse.ArgumentParser) -> None:
        p.add_argument("--quiet", action="store_true", help="no progress bar on stderr")

    def jobs(p: argparse.ArgumentParser) -> None:
        p.add_argument("--jobs", type=int, default=None, metavar="N",
                       help="worker processes rendering documents (default: the CPUs "
                       f"available, here {_default_jobs()})")

    def archive(p: argparse.ArgumentParser, required: bool) -> None:
        p.add_argument("--archive", type=Path, required=required, metavar="FILE",
                       help="the SQLite archive of issued rounds" + (
                           "" if required else " (default: the [archive] path of the settings, "
                           "inside OUT)"))

    def replace(p: argparse.ArgumentParser) -> None:
        p.add_argument("--replace", action="store_true",
                       help="the round is already archived with other inputs: record these "
                       "corrected inputs as a new version (the earlier one is kept)")

    def sign(p: argparse.ArgumentParser) -> None:
        p.add_argument("--sign", type=Path, metavar="KEY.p12",
                       help="sign every PDF (PAdES) and manifest.json with this PKCS#12 key file; "
                       "the passphrase is read from the environment variable "
                       "REPORTGEN_SIGN_PASSPHRASE, never from the command line")

    def round_arg(p: argparse.ArgumentParser) -> None:
        p.add_argument("round", type=Path, metavar="ROUND",
                       help="round folder (round.toml and its tables; docs/round-format.md)")

    p = sub.add_parser("check", help="read and validate a round folder; write nothing",
                       description="Read and validate a round folder and report every problem "
                       "at once; nothing is written.")
    round_arg(p)
    config(p)
    p = sub.add_parser("score", help="write results.json, results.xlsx and manifest.json",
                       description="Score a round: results.json, results.xlsx, manifest.json.")
    round_arg(p)
    out(p)
    config(p)
    runs(p)
    p = sub.add_parser("issue", help="score, render certificates and the group appendix, and "
                       "record the round in the archive",
                       description="Score a round, render a certificate per participant and "
                       "the group appendix (HTML and PDF), and record the round in the archive.")
    round_arg(p)
    out(p)
    config(p)
    runs(p)
    jobs(p)
    archive(p, required=False)
    replace(p)
    p.add_argument("--reason", metavar="TEXT",
                   help="with --replace: why the reports are amended; printed on every "
                   "amended report and kept in the archive")
    sign(p)
    p.add_argument("--amended-on", type=_date, metavar="DATE",
                   help="with --replace: the date of the amendment, YYYY-MM-DD (reportgen never "
                   "reads the clock)")
    p = sub.add_parser("record", help="score a round and store it in the archive only",
                       description="Score a round and store it in the archive without issuing "
                       "anything (e.g. rounds issued before reportgen was used).")
    round_arg(p)
    archive(p, required=True)
    replace(p)
    config(p)
    p = sub.add_parser("trend", help="one examiner's rounds from the archive: trend report",
                       description="One examiner's rounds from the archive as a trend report "
                       "(HTML and PDF).")
    p.add_argument("participant", metavar="CODE", help="the participant's code (as archived)")
    archive(p, required=True)
    out(p)
    sign(p)
    p.add_argument("--last", type=int, metavar="N",
                   help="pool insight over the last N rounds only (default: all rounds)")
    config(p)
    p = sub.add_parser("verify", help="check an output folder against its manifest",
                       description="Recompute every checksum of an output folder and name any "
                       "file altered, added or missing.")
    p.add_argument("out", type=Path, metavar="OUT", help="an output folder written by reportgen")
    p = sub.add_parser("forms", help="write a response form (.xlsx) for every participant",
                       description="Write one response form per participant of the "
                       "participants file into OUT: code and items filled in and locked, "
                       "decisions as a drop-down, confidence and estimate validated. Name the "
                       "returned forms in round.toml ([files] responses = \"returned/*.xlsx\").")
    round_arg(p)
    out(p)
    p = sub.add_parser("demo", help="run the newest sample round end to end",
                       description="Archive the earlier sample rounds, then issue the newest "
                       "one into OUT.")
    p.add_argument("-o", "--out", type=Path, default=Path("demo-output"), metavar="OUT",
                   help="output folder (default: demo-output)")
    config(p)
    runs(p)
    jobs(p)
    return parser


def _signer(args: argparse.Namespace) -> Signer | None:
    """The key of ``--sign`` (pyHanko loads only when one is given)."""
    if getattr(args, "sign", None) is None:
        return None
    from reportgen import signing

    return signing.load_signer(args.sign)


def _check(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """``check`` reads the round only: no scoring, rendering or archive module is imported."""
    from reportgen.rounds.folder import open_round

    load_settings(args.config)  # a settings file given here is validated too
    rnd = open_round(args.round)
    _print_problems(rnd.warnings, err)
    out.write(f"{args.round}: no problems found ({rnd.n_participants} participants, "
              f"{rnd.n_items} items)\n")
    return EXIT_OK


def _run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    if args.command == "check":
        return _check(args, out, err)
    from reportgen import pipeline  # imported here so --help and check stay fast

    if args.command == "forms":
        made = pipeline.forms(args.round, args.out)
        out.write(f"wrote {len(made.files)} response forms to {made.out}\n")
        return EXIT_OK
    if args.command == "verify":
        result = verify(args.out)
        for label, names in (("altered", result.altered), ("missing", result.missing),
                             ("added", result.added)):
            for name in names:
                out.write(f"{label}: {name}\n")
        for name, why in result.bad_signatures:
            out.write(f"signature: {name}: {why}\n")
        if result.signed_by:
            out.write(f"{result.signed_by}\n")
        if result.intact:
            out.write(f"intact: all {result.checked} files match {args.out}/manifest.json\n")
            return EXIT_OK
        return EXIT_DIFFERS

    settings = load_settings(args.config)
    if args.command == "record":
        outcome = pipeline.record(args.round, args.archive, settings, replace=args.replace)
        out.write(f"{args.round}: {outcome} in {args.archive}\n")
        return EXIT_OK
    if args.command == "trend":
        summary = pipeline.trend(args.participant, args.archive, args.out, settings,
                                 last_n=args.last, signer=_signer(args))
        out.write(f"wrote the trend report of {args.participant} to {summary.out}\n")
        return EXIT_OK
    progress = ProgressBar(err, args.quiet)
    jobs = _default_jobs() if getattr(args, "jobs", None) is None else args.jobs
    if jobs < 1:
        err.write("--jobs must be at least 1\n")
        return EXIT_INPUT
    if args.command == "score":
        summary = pipeline.score(args.round, args.out, settings, progress)
    elif args.command == "issue":
        summary = pipeline.issue(args.round, args.out, settings, jobs=jobs,
                                 progress=progress, archive=args.archive, replace=args.replace,
                                 reason=args.reason, amended_on=args.amended_on,
                                 signer=_signer(args))
    else:  # demo
        summary = pipeline.demo(args.out, settings, jobs=jobs, progress=progress)
    _print_problems(summary.warnings, err)
    out.write(f"wrote {len(summary.files)} files for {summary.n_participants} participants "
              f"to {summary.out}\n")
    return EXIT_OK


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    out, err = sys.stdout, sys.stderr
    try:
        return _run(args, out, err)
    except InputError as exc:
        _print_problems(exc.problems, err)
        err.write("Nothing was written.\n")
        return EXIT_INPUT
    except OutputError as exc:
        err.write(f"error: {exc}\n")
        return EXIT_INPUT
    except BuildError as exc:
        err.write(f"internal error: {exc}\nPlease report this with the round folder.\n")
        return EXIT_INTERNAL
    except KeyboardInterrupt:
        err.write("interrupted; the output folder was left as it was\n")
        return 130
    except Exception as exc:  # a bug of ours: a short message, the traceback only on request
        if os.environ.get("REPORTGEN_DEBUG"):
            raise
        err.write(f"internal error ({type(exc).__name__}): {exc}\n"
                  "Nothing was written. Run again with REPORTGEN_DEBUG=1 for the details and "
                  "please report it.\n")
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
