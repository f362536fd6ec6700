"""Start-up cost of the commands a provider runs first: `check` on a sample round against
`reportgen --help` (target: check ≤ 3 × --help). Wall time, median of several runs, one process
each, in one run of this script; prints the ratio.

    python benchmarks/bench_startup.py [--runs N]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
ROUND = ROOT / "sample_rounds" / "fic-2026"


def _median_seconds(argv: list[str], runs: int) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "reportgen", *argv], cwd=ROOT, check=True,
                       capture_output=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7)
    args = parser.parse_args()
    help_s = _median_seconds(["--help"], args.runs)
    check_s = _median_seconds(["check", str(ROUND)], args.runs)
    print(f"reportgen --help          {help_s:6.3f} s")
    print(f"reportgen check fic-2026  {check_s:6.3f} s")
    print(f"ratio check / --help      {check_s / help_s:6.2f}  (target <= 3)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
