"""Speed and accuracy of the meta-d′ fit (reportgen.metrics.metad). A benchmark, not a test.

Targets (issue 4): median ≤ 10 ms per single 60-item, 5-level fit; 2,000 fits on 2 processes
≤ 20 s; every estimate within |Δ| ≤ 0.01 of the slow reference fit (metad_reference); the
bootstrap interval ≤ ~0.3 s per participant. Tables come from seeded simulated SDT observers with
d′ ~ U(0.5, 3), c ~ N(0, 0.3²) and some confidence noise, so M-ratios vary.

Usage: .venv/bin/python benchmarks/bench_metad.py [--n-reference 30]
"""

from __future__ import annotations

import argparse
import statistics
import time
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor

import numpy as np
import numpy.typing as npt

from reportgen.metrics.metad import fit_meta_d, fit_meta_d_many, meta_d_interval
from reportgen.metrics.metad_reference import reference_fit_meta_d

IntArray = npt.NDArray[np.int64]
K = 5


def tables(seed: int, n: int, n_items: int) -> list[tuple[IntArray, IntArray]]:
    rng = np.random.default_rng(seed)
    out = []
    steps = np.linspace(0.5, 0.5 * (K - 1), K - 1)
    for _ in range(n):
        d, c, noise_sd = rng.uniform(0.5, 3.0), rng.normal(0, 0.3), rng.uniform(0, 1)
        pair = []
        for mean in (-d / 2, d / 2):
            x = rng.normal(mean, 1.0, n_items // 2)
            y = x + rng.normal(0.0, noise_sd, x.size)
            said = x > c
            level = (np.where(said, y - c, c - y)[:, None] > steps).sum(1)
            cell = np.where(said, K + level, K - 1 - level)
            pair.append(np.bincount(cell, minlength=2 * K))
        out.append((pair[0], pair[1]))
    return out


def median_ms(fn: Callable[[], object], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return 1000 * statistics.median(times)


def single_fit_times(label: str, data: list[tuple[IntArray, IntArray]]) -> float:
    times = []
    for noise, signal in data:
        start = time.perf_counter()
        fit_meta_d(noise, signal)
        times.append(time.perf_counter() - start)
    med = 1000 * statistics.median(times)
    p90 = 1000 * float(np.quantile(times, 0.9))
    print(f"{label}: median {med:.2f} ms, 90th percentile {p90:.2f} ms per fit ({len(data)} fits)")
    return med


def _fit_pair(pair: tuple[IntArray, IntArray]) -> float | None:
    return fit_meta_d(*pair).meta_d


def _reference_pair(pair: tuple[IntArray, IntArray]) -> float:
    return reference_fit_meta_d(*pair, n_starts=5).meta_d


def main() -> None:
    parser = argparse.ArgumentParser(description="Benchmark the meta-d′ fit.")
    parser.add_argument("--n-reference", type=int, default=30)
    args = parser.parse_args()

    print("## Single fits (fit_meta_d, pad=True)")
    med60 = single_fit_times("60 items, K=5", tables(1, 500, 60))
    single_fit_times("400 items, K=5", tables(2, 200, 400))

    print("\n## Batched (fit_meta_d_many: one call for a whole round)")
    round_ = tables(3, 120, 60)
    noise = np.array([n for n, _ in round_])
    signal = np.array([s for _, s in round_])
    ms = median_ms(lambda: fit_meta_d_many(noise, signal), 5)
    print(f"120 participants x 60 items: {ms:.1f} ms per round ({ms / 120:.2f} ms per participant)")

    print("\n## 2,000 single fits on 2 processes")
    many = tables(4, 2000, 60)
    start = time.perf_counter()
    with ProcessPoolExecutor(max_workers=2) as pool:
        estimates = list(pool.map(_fit_pair, many, chunksize=50))
    wall = time.perf_counter() - start
    print(f"wall time {wall:.2f} s (target <= 20 s); not estimable: {estimates.count(None)}")

    print("\n## Bootstrap interval (meta_d_interval, default n_boot)")
    sample = tables(5, 30, 60)
    times = []
    for n, s in sample:
        start = time.perf_counter()
        meta_d_interval(n, s)
        times.append(time.perf_counter() - start)
    print(
        f"60 items: median {statistics.median(times):.3f} s, max {max(times):.3f} s per participant"
        " (target <= ~0.3 s)"
    )
    big = tables(6, 10, 400)
    times = []
    for n, s in big:
        start = time.perf_counter()
        meta_d_interval(n, s)
        times.append(time.perf_counter() - start)
    print(f"400 items: median {statistics.median(times):.3f} s per participant")

    print(f"\n## Agreement with the reference fit ({args.n_reference} tables, 2 processes)")
    ref_tables = tables(7, args.n_reference // 2, 60) + tables(8, args.n_reference // 2, 400)
    fast = [fit_meta_d(n, s).meta_d for n, s in ref_tables]
    with ProcessPoolExecutor(max_workers=2) as pool:
        slow = list(pool.map(_reference_pair, ref_tables))
    diffs = [abs(f - r) for f, r in zip(fast, slow, strict=True) if f is not None]
    print(
        f"max |Δ meta-d′| = {max(diffs):.2e}, median {statistics.median(diffs):.2e} "
        f"({len(diffs)} estimable of {len(ref_tables)}; target <= 0.01)"
    )

    ok = med60 <= 10 and wall <= 20 and max(diffs) <= 0.01
    print(f"\nall targets met: {ok}")


if __name__ == "__main__":
    main()
