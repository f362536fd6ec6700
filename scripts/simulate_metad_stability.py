"""How unstable is the M-ratio when a participant made few errors? Sets FEW_ERRORS_THRESHOLD.

Simulates ideal observers (confidence read from the same evidence as the decision, so the true
M-ratio is 1) and fits every simulated rating table exactly as reportgen does (Maniscalco & Lau 2012
maximum likelihood, 1/(2K) added to every cell). Three parts:

A. Widening: true d′ fixed, round length varied. Shows how the 90 % range of the estimated M-ratio
   widens as the expected number of errors falls.
B. Threshold: 60 items (30 + 30), K = 5, d′ ~ U(1.5, 2), criterion c ~ N(0, 0.25²).
   Fits are grouped by the number of errors the simulated participant actually made -- which is
   what the flag sees. Usable: at least 90 % of ideal observers with that many errors get an
   M-ratio within a factor of two of the truth (0.5–2). The threshold is the smallest error count
   from which this holds (at that count and the next).
C. Sensitivity: the same rule for other populations and round lengths.

Confidence criteria sit at c ± (0.5, 1.0, 1.5, 2.0)·s with a per-observer spread s ~ U(0.6, 1.2), so
rating use differs between observers. Seeded: every run prints the same numbers.

Usage: .venv/bin/python scripts/simulate_metad_stability.py [--n-sim 40000]
"""

from __future__ import annotations

import argparse
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from reportgen.metrics.metad import fit_meta_d_many

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
K = 5
USABLE_SHARE = 0.9  # share of ideal observers whose estimate must lie within a factor of two


@dataclass(frozen=True)
class Fits:
    errors: IntArray  # conclusive errors made
    m_ratio: FloatArray  # NaN where not estimable


def simulate(
    rng: np.random.Generator, n_sim: int, n_items: int, d_range: tuple[float, float]
) -> Fits:
    """Simulate ideal SDT observers (true meta-d′ = d′) and fit each rating table."""
    d = rng.uniform(*d_range, n_sim)[:, None]
    c = rng.normal(0.0, 0.25, n_sim)[:, None]
    spread = rng.uniform(0.6, 1.2, n_sim)[:, None]
    steps = np.linspace(0.5, 0.5 * (K - 1), K - 1)
    edges = np.hstack([c - steps[::-1] * spread, c, c + steps * spread])  # (n_sim, 2K-1)
    n_noise = n_items // 2
    tables = []
    for mean, n in ((-d / 2, n_noise), (d / 2, n_items - n_noise)):
        x = rng.normal(0.0, 1.0, (n_sim, n)) + mean
        rating = (x[:, :, None] > edges[:, None, :]).sum(2)  # 0 .. 2K-1
        offset = np.arange(n_sim)[:, None] * 2 * K
        counts = np.bincount((rating + offset).ravel(), minlength=n_sim * 2 * K)
        tables.append(counts.reshape(n_sim, 2 * K))
    noise, signal = tables
    fits = fit_meta_d_many(noise, signal, pad=True)
    m_ratio = np.array([np.nan if f.m_ratio is None else f.m_ratio for f in fits])
    errors = noise[:, K:].sum(1) + signal[:, :K].sum(1)
    return Fits(errors.astype(np.int64), m_ratio)


def summary(m: FloatArray) -> tuple[float, float, float, float]:
    """5 %, 50 %, 95 % and the share within a factor of two of 1 (non-estimable counts as out)."""
    q05, q50, q95 = np.nanquantile(m, [0.05, 0.5, 0.95])
    inside = float(np.mean((m >= 0.5) & (m <= 2.0)))
    return float(q05), float(q50), float(q95), inside


def part_a(rng: np.random.Generator, n_sim: int) -> None:
    print("## A. Fixed true d′, round length varied (K = 5, true M-ratio 1)\n")
    print("| d′ | items | mean errors | 5 % | median | 95 % | 90 % width | within ×2 |")
    print("|---:|---:|---:|---:|---:|---:|---:|---:|")
    for d in (1.5, 2.0, 2.5):
        for n_items in (20, 40, 60, 100, 200):
            fits = simulate(rng, n_sim, n_items, (d, d))
            q05, q50, q95, inside = summary(fits.m_ratio)
            print(
                f"| {d} | {n_items} | {fits.errors.mean():.1f} | {q05:.2f} | {q50:.2f} | "
                f"{q95:.2f} | {q95 - q05:.2f} | {inside:.3f} |"
            )


def by_errors(fits: Fits, min_n: int = 200) -> dict[int, tuple[int, float, float, float, float]]:
    rows = {}
    for e in range(int(fits.errors.max()) + 1):
        sel = fits.errors == e
        if sel.sum() >= min_n:
            rows[e] = (int(sel.sum()), *summary(fits.m_ratio[sel]))
    return rows


def threshold(rows: dict[int, tuple[int, float, float, float, float]]) -> int | None:
    for e in sorted(rows):
        ok_here = rows[e][4] >= USABLE_SHARE
        ok_next = e + 1 not in rows or rows[e + 1][4] >= USABLE_SHARE
        if ok_here and ok_next:
            return e
    return None


def part_b(rng: np.random.Generator, n_sim: int) -> None:
    print(f"\n## B. 60 items, d′ ~ U(1.5, 2), {n_sim} simulated ideal observers, by errors made\n")
    rows = by_errors(simulate(rng, n_sim, 60, (1.5, 2.0)))
    print("| errors | n | 5 % | median | 95 % | 90 % width | within ×2 |")
    print("|---:|---:|---:|---:|---:|---:|---:|")
    for e, (n, q05, q50, q95, inside) in rows.items():
        print(f"| {e} | {n} | {q05:.2f} | {q50:.2f} | {q95:.2f} | {q95 - q05:.2f} | {inside:.3f} |")
    print(f"\nthreshold: {threshold(rows)} errors")


def part_c(rng: np.random.Generator, n_sim: int) -> None:
    print("\n## C. The same rule for other designs\n")
    print("| items | d′ range | threshold (errors) |")
    print("|---:|---|---:|")
    for n_items, d_range in (
        (60, (1.0, 3.0)),
        (60, (2.0, 3.0)),
        (40, (1.5, 2.0)),
        (120, (1.5, 2.0)),
        (120, (1.0, 3.0)),
    ):
        cut = threshold(by_errors(simulate(rng, n_sim, n_items, d_range)))
        print(f"| {n_items} | {d_range[0]}–{d_range[1]} | {cut} |")


def main() -> None:
    parser = argparse.ArgumentParser(description="Sets FEW_ERRORS_THRESHOLD by simulation.")
    parser.add_argument("--n-sim", type=int, default=40000, help="simulated observers in B and C")
    parser.add_argument("--seed", type=int, default=20240601)
    args = parser.parse_args()
    rng = np.random.default_rng(args.seed)
    part_a(rng, max(args.n_sim // 10, 1000))
    part_b(rng, args.n_sim)
    part_c(rng, args.n_sim // 2)


if __name__ == "__main__":
    main()
