"""Benchmark (not a test): read + score a simulated round of 2,000 participants x 100 items and
one 4x larger; prints the time ratio (target <= 4.4, i.e. linear in participants).

    .venv/bin/python benchmarks/bench_scoring.py [--bootstrap N]

Times are the best of ``--repeat`` runs, measured in one process on a noisy 2-core machine, so
compare the ratio, not the seconds. meta-d′ intervals are part of scoring: ``--bootstrap``
sets their resamples (the default config uses 200; 0 times the rest of scoring alone).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))  # scripts.simulator

from reportgen.pipeline import load
from reportgen.scoring.score import score_round
from reportgen.settings import ReportSettings, Settings
from scripts.simulator import simulate_round, write_round


def _time(folder: Path, settings: Settings, repeat: int) -> tuple[float, float]:
    best_load = best_score = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        rnd = load(folder)
        t1 = time.perf_counter()
        score_round(rnd, settings)
        t2 = time.perf_counter()
        best_load, best_score = min(best_load, t1 - t0), min(best_score, t2 - t1)
    return best_load, best_score


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--participants", type=int, default=2000)
    parser.add_argument("--items", type=int, default=100)
    parser.add_argument("--repeat", type=int, default=2)
    parser.add_argument("--bootstrap", type=int, default=0)
    args = parser.parse_args()
    settings = Settings(report=ReportSettings(bootstrap=args.bootstrap))
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in (args.participants, 4 * args.participants):
            folder = write_round(simulate_round(n, args.items, seed=7), Path(tmp) / f"r{n}")
            with (folder / "round.toml").open("a", encoding="utf-8") as fh:
                fh.write("\n[limits]\nmax_rows = 2000000\nmax_cells = 20000000\n")
            t_load, t_score = _time(folder, settings, args.repeat)
            rows.append((n, t_load, t_score))
            print(f"{n:>6} participants x {args.items} items: read {t_load:6.2f} s, "
                  f"score {t_score:6.2f} s, total {t_load + t_score:6.2f} s")
    (n1, l1, s1), (n4, l4, s4) = rows
    ratio = (l4 + s4) / (l1 + s1)
    print(f"time ratio {n4 // n1}x participants: {ratio:.2f} (target <= 4.4); "
          f"read {l4 / l1:.2f}, score {s4 / s1:.2f}")


if __name__ == "__main__":
    main()
