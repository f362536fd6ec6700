"""Issue 14 at any round size: scoring against the reference fit, scaling, memory and workers.

A benchmark, not a test (numbers depend on the machine and its load; compare ratios).

    .venv/bin/python benchmarks/bench_scale.py [--sizes 122 500 2000] [--issue-sizes 122 500]
        [--memory 122 2000] [--jobs-participants 300] [--reference-sample 20] [--skip ...]

1. **Scoring with intervals against the reference's point fits** (target ratio ≤ 0.03): CPU time
   of ``score_round`` for the largest size, against the registry's reference implementation of
   the Maniscalco & Lau fit (metadpy's ``fit_metad``, trust-constr; PyPI ``metadpy``, a
   benchmark-only dependency: see ``--reference-path``) timed in the same run on a sample of the
   round's padded tables and scaled to all participants. Without metadpy the slow reference of
   this package (``metad_reference``, 5 starts) is timed instead, and the line says so.
2. **Scaling**: time ∝ participants^k between the sizes, for ``score`` (read + score) and
   ``issue`` (everything written); k from a least-squares line through log time against
   log participants (target k ≤ 1.05).
3. **Flat memory**: peak RSS of ``issue`` (this process and, separately, its largest worker)
   at two sizes, each in a fresh subprocess (target ratio ≤ 1.5).
4. **Workers**: ``issue`` wall time with ``--jobs 1`` and ``--jobs 2`` on one round (target
   ≥ 1.8× on a quiet machine), and the outputs compared byte for byte.

Rounds come from the seeded simulator (``scripts/simulator``), 60 items, confidence 1–5.
"""

from __future__ import annotations

import argparse
import contextlib
import filecmp
import json
import os
import subprocess
import sys
import tempfile
import time
import types
import warnings
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from reportgen.rounds.model import Round
    from reportgen.settings import Settings

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))  # scripts.simulator

ITEMS = 60
DEFAULT_REFERENCE = ROOT / ".venv" / "bench-deps"


def make_round(n: int, folder: Path) -> Path:
    from scripts.simulator import simulate_round, write_round

    out = write_round(simulate_round(n, ITEMS, seed=7), folder / f"r{n}")
    with (out / "round.toml").open("a", encoding="utf-8") as fh:
        fh.write("\n[limits]\nmax_rows = 2000000\nmax_cells = 20000000\n")
    return out


def cpu_load(folder: Path) -> tuple[float, Round]:
    from reportgen.pipeline import load

    start = time.process_time()
    rnd = load(folder)
    return time.process_time() - start, rnd


def cpu_score(rnd: Round, settings: Settings) -> float:
    from reportgen.scoring.score import score_round

    start = time.process_time()
    score_round(rnd, settings)
    return time.process_time() - start


# ------------------------------------------------------------------------ 1. reference ratio


def reference_fitter(path: Path) -> tuple[str, Callable[[np.ndarray, np.ndarray], float]]:
    """metadpy's point fit when importable (its mle module only: the package's __init__ pulls
    in plotting and Bayesian extras), else this package's slow reference fit."""
    if path.is_dir():
        sys.path.insert(0, str(path))
    try:
        import importlib.util

        spec = importlib.util.find_spec("metadpy")
        if spec is None or not spec.submodule_search_locations:
            raise ImportError("metadpy not found")
        stub = types.ModuleType("metadpy")
        stub.__path__ = list(spec.submodule_search_locations)
        sys.modules["metadpy"] = stub
        from metadpy.mle import fit_metad  # type: ignore[import-not-found]

        def run(noise: np.ndarray, signal: np.ndarray) -> float:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                return float(fit_metad(noise, signal, nRatings=noise.size // 2)["meta_d"])

        return "metadpy.mle.fit_metad (PyPI metadpy)", run
    except Exception as exc:  # benchmark-only dependency: fall back, and say so
        from reportgen.metrics.metad_reference import reference_fit_meta_d

        def slow(noise: np.ndarray, signal: np.ndarray) -> float:
            return reference_fit_meta_d(noise, signal, pad=False, n_starts=5).meta_d

        return f"reportgen metad_reference, 5 starts (metadpy unavailable: {exc})", slow


def reference_seconds(noise: np.ndarray, signal: np.ndarray, sample: int, path: Path
                      ) -> tuple[str, float, int]:
    """Mean CPU seconds per reference point fit on ``sample`` padded tables (after a warm-up)."""
    label, fit = reference_fitter(path)
    k = noise.shape[1] // 2
    rows = np.linspace(0, len(noise) - 1, sample).astype(int)
    pad = 1 / (2 * k)
    with contextlib.suppress(Exception):
        fit(noise[rows[0]] + pad, signal[rows[0]] + pad)  # compiles numba code once
    times, failed = [], 0
    for r in rows:
        start = time.process_time()
        try:
            fit(noise[r] + pad, signal[r] + pad)
        except Exception:  # metadpy raises ZeroDivisionError on some tables
            failed += 1
            continue
        times.append(time.process_time() - start)
    return label, float(np.mean(times)), failed


# ---------------------------------------------------------------------- 2–4. subprocess runs


def run_issue(folder: Path, out: Path, jobs: int) -> dict[str, float]:
    """``reportgen issue`` in a fresh interpreter: wall, CPU and peak RSS (MiB)."""
    code = (
        "import json, resource, sys, time\n"
        "from pathlib import Path\n"
        "from reportgen.pipeline import issue\n"
        "from reportgen.settings import load_settings\n"
        "t = time.perf_counter(); c = time.process_time()\n"
        f"issue(Path({str(folder)!r}), Path({str(out)!r}), load_settings(), jobs={jobs})\n"
        "self = resource.getrusage(resource.RUSAGE_SELF)\n"
        "kids = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
        "print(json.dumps({'wall': time.perf_counter() - t, 'cpu': time.process_time() - c,\n"
        "  'cpu_workers': kids.ru_utime + kids.ru_stime,\n"
        "  'rss_main': self.ru_maxrss / 1024, 'rss_worker': kids.ru_maxrss / 1024}))\n"
    )
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, check=True,
                          capture_output=True, text=True)
    result: dict[str, float] = json.loads(done.stdout.strip().splitlines()[-1])
    return result


def exponent(sizes: Sequence[int], times: Sequence[float]) -> float:
    slope, _ = np.polyfit(np.log(sizes), np.log(times), 1)
    return float(slope)


def same_tree(a: Path, b: Path) -> bool:
    files_a = sorted(p.relative_to(a) for p in a.rglob("*") if p.is_file())
    files_b = sorted(p.relative_to(b) for p in b.rglob("*") if p.is_file())
    if files_a != files_b:
        return False
    _, mismatch, errors = filecmp.cmpfiles(a, b, [str(p) for p in files_a], shallow=False)
    return not mismatch and not errors


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sizes", type=int, nargs="+", default=[122, 500, 2000])
    ap.add_argument("--issue-sizes", type=int, nargs="+", default=[122, 500, 2000])
    ap.add_argument("--memory", type=int, nargs=2, default=[122, 2000])
    ap.add_argument("--issue-jobs", type=int, default=1)
    ap.add_argument("--jobs-participants", type=int, default=300)
    ap.add_argument("--reference-sample", type=int, default=20)
    ap.add_argument("--reference-path", type=Path, default=DEFAULT_REFERENCE,
                    help="a folder with metadpy (e.g. pip install --target DIR --no-deps "
                    "metadpy numba llvmlite tqdm pandas-flavor)")
    ap.add_argument("--skip", nargs="*", default=[],
                    choices=["reference", "score", "issue", "memory", "jobs"])
    args = ap.parse_args()

    from reportgen.scoring.columns import masks, tables
    from reportgen.settings import load_settings

    settings = load_settings()
    print(f"machine: {os.cpu_count()} CPUs, load average "
          f"{', '.join(f'{x:.1f}' for x in os.getloadavg())}; 60 items, confidence 1–5")
    with tempfile.TemporaryDirectory() as tmp_name:
        tmp = Path(tmp_name)
        folders: dict[int, Path] = {}

        def folder(n: int) -> Path:
            if n not in folders:
                folders[n] = make_round(n, tmp)
            return folders[n]

        score_cpu: dict[int, float] = {}
        score_wall: dict[int, float] = {}
        if "score" not in args.skip or "reference" not in args.skip:
            print("\n## score (read + score, one process)")
            for n in args.sizes:
                wall = time.perf_counter()
                t_load, rnd = cpu_load(folder(n))
                t_score = cpu_score(rnd, settings)
                score_wall[n] = time.perf_counter() - wall
                score_cpu[n] = t_load + t_score
                print(f"{n:>6} participants: read {t_load:6.2f} s CPU, score {t_score:6.2f} s CPU "
                      f"(with meta-d′ intervals), wall {score_wall[n]:6.2f} s")
                if n == max(args.sizes):
                    biggest = (n, t_score, rnd)
            if len(args.sizes) > 1:
                k = exponent(args.sizes, list(score_cpu.values()))
                print(f"scaling exponent k (score, CPU): {k:.3f} (target <= 1.05)")

        if "reference" not in args.skip:
            n, t_score, rnd = biggest
            t = tables(masks(rnd))
            label, per_fit, failed = reference_seconds(t.rating_noise.astype(float),
                                                       t.rating_signal.astype(float),
                                                       args.reference_sample, args.reference_path)
            reference_total = per_fit * n
            print(f"\n## scoring against the reference\nreference: {label}")
            print(f"{per_fit:.3f} s CPU per point fit ({args.reference_sample} tables, "
                  f"{failed} raised), x {n} participants = {reference_total:.0f} s")
            print(f"scoring {n} participants with intervals: {t_score:.2f} s CPU -> ratio "
                  f"{t_score / reference_total:.4f} (target <= 0.03)")

        if "issue" not in args.skip:
            print(f"\n## issue (everything written, --jobs {args.issue_jobs}, fresh process each)")
            walls, cpus = [], []
            rss = {}
            for n in args.issue_sizes:
                r = rss[n] = run_issue(folder(n), tmp / f"out-issue-{n}", args.issue_jobs)
                walls.append(r["wall"])
                cpus.append(r["cpu"] + r["cpu_workers"])
                print(f"{n:>6} participants: wall {r['wall']:7.1f} s, CPU {cpus[-1]:7.1f} s, "
                      f"{1000 * cpus[-1] / n:5.0f} ms CPU per participant; peak RSS main "
                      f"{r['rss_main']:.0f} MiB, worker {r['rss_worker']:.0f} MiB")
            if len(args.issue_sizes) > 1:
                print(f"scaling exponent k (issue, CPU): {exponent(args.issue_sizes, cpus):.3f}, "
                      f"(wall: {exponent(args.issue_sizes, walls):.3f}) (target <= 1.05)")
                small, large = rss[min(args.issue_sizes)], rss[max(args.issue_sizes)]
                print(f"peak RSS {max(args.issue_sizes)} / {min(args.issue_sizes)} participants "
                      f"(--jobs {args.issue_jobs}): main "
                      f"{large['rss_main'] / small['rss_main']:.2f}, worker "
                      f"{large['rss_worker'] / max(small['rss_worker'], 1e-9):.2f} "
                      "(target <= 1.5; the memory section measures it with --jobs 2)")

        if "memory" not in args.skip:
            print("\n## peak RSS of issue (--jobs 2: this process / its worker)")
            rss = {}
            for n in args.memory:
                r = run_issue(folder(n), tmp / f"out-mem-{n}", 2)
                rss[n] = r
                print(f"{n:>6} participants: main {r['rss_main']:6.0f} MiB, worker "
                      f"{r['rss_worker']:6.0f} MiB")
            a, b = args.memory
            print(f"ratio {b} / {a}: main {rss[b]['rss_main'] / rss[a]['rss_main']:.2f}, worker "
                  f"{rss[b]['rss_worker'] / rss[a]['rss_worker']:.2f} (target <= 1.5)")

        if "jobs" not in args.skip:
            n = args.jobs_participants
            print(f"\n## workers: issue of {n} participants")
            runs = {jobs: run_issue(folder(n), tmp / f"out-jobs-{jobs}", jobs) for jobs in (1, 2)}
            for jobs, r in runs.items():
                print(f"--jobs {jobs}: wall {r['wall']:6.1f} s")
            same = same_tree(tmp / "out-jobs-1", tmp / "out-jobs-2")
            print(f"speed-up 2 jobs / 1 job: {runs[1]['wall'] / runs[2]['wall']:.2f}x "
                  f"(target >= 1.8x on a quiet machine); outputs byte-identical: {same}")


if __name__ == "__main__":
    main()
