"""Benchmark (not a test): read + score 2,000 participants x 60 items with confidence on a 0-100
slider (any real value, one decimal) against the same round on the 1-5 scale; prints the time
ratio (target <= 1.5: a continuous scale costs about what an ordinal one does, since level
measures use bins and raw-value measures each participant's own values).

    .venv/bin/python benchmarks/bench_scales.py [--bootstrap N] [--repeat N] [--default-bins]

The slider values are the 1-5 answers spread over 44-100; by default the bins are cut at the
midpoints between the five levels' centres, so both rounds fit meta-d′ on five levels a side
(``--default-bins``: the documented default, five equal bins over 0-100, of which the lower two
are almost empty).

Times are the best of ``--repeat`` runs in one process on a noisy 2-core machine: compare the
ratio, not the seconds.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))  # scripts.simulator

from reportgen.pipeline import load
from reportgen.scoring.score import score_round
from reportgen.settings import ReportSettings, Settings
from scripts.simulator import simulate_round, write_round

ORDINAL = ('kind = "ordinal"\nmin = 1\nmax = 5\nprobability_map = "linear"   '
           "# convention: 1 -> 0.5 ... 5 -> 1.0\nmap_low = 0.5\n")
SLIDER = 'kind = "probability"\nmin = 0\nmax = 100\n'
LEVEL_BINS = "bins = [0, 56.25, 68.75, 81.25, 93.75, 100]\n"
LIMITS = "\n[limits]\nmax_rows = 2000000\nmax_cells = 20000000\n"


def _time(folder: Path, settings: Settings, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        score_round(load(folder), settings)
        best = min(best, time.perf_counter() - t0)
    return best


def _rounds(tmp: Path, n_participants: int, n_items: int, bins: str) -> tuple[Path, Path]:
    sim = simulate_round(n_participants, n_items, seed=11)
    ordinal = write_round(sim, tmp / "ordinal")
    rng = np.random.default_rng(11)
    conf = sim.responses["confidence"].to_numpy(dtype=float)
    slider = np.clip(50 + (conf - 1) * 12.5 + rng.uniform(-6, 6, conf.size), 0, 100)
    sim.responses["confidence"] = [f"{v:.1f}" for v in slider]
    continuous = write_round(sim, tmp / "slider")
    for folder, scale in ((ordinal, ORDINAL), (continuous, SLIDER + bins)):
        toml = (folder / "round.toml").read_text(encoding="utf-8")
        assert ORDINAL in toml, "the simulator's [confidence] table changed"
        (folder / "round.toml").write_text(toml.replace(ORDINAL, scale) + LIMITS,
                                           encoding="utf-8")
    return ordinal, continuous


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--participants", type=int, default=2000)
    parser.add_argument("--items", type=int, default=60)
    parser.add_argument("--repeat", type=int, default=2)
    parser.add_argument("--bootstrap", type=int, default=0)
    parser.add_argument("--default-bins", action="store_true")
    args = parser.parse_args()
    settings = Settings(report=ReportSettings(bootstrap=args.bootstrap))
    with tempfile.TemporaryDirectory() as tmp:
        ordinal, slider = _rounds(Path(tmp), args.participants, args.items,
                                  "" if args.default_bins else LEVEL_BINS)
        t_ord = _time(ordinal, settings, args.repeat)
        t_cont = _time(slider, settings, args.repeat)
    print(f"{args.participants} participants x {args.items} items, read + score:")
    print(f"  1-5 scale        {t_ord:6.2f} s")
    bins = "default bins" if args.default_bins else "bins at the levels' midpoints"
    print(f"  0-100 slider     {t_cont:6.2f} s  ({bins})")
    print(f"time ratio slider / 1-5: {t_cont / t_ord:.2f} (target <= 1.5)")


if __name__ == "__main__":
    main()
