"""Regenerate the invented sample rounds in sample_rounds/ (FIC-2024 ... 2026, TMC-2026, SPC-2026).

    .venv/bin/python scripts/make_sample_rounds.py            # into sample_rounds/
    .venv/bin/python scripts/make_sample_rounds.py --out DIR  # somewhere else

Seeded and free of wall-clock time: running it twice gives byte-identical files.
See scripts/simulator/__init__.py for the latent model and sample_rounds/README.md for the
scenario. TMC-2026 (a 7-level graded conclusion scale, no confidence column) and SPC-2026 (a 0-100
confidence slider) come from scripts/simulator/schemes.py.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

from scripts.simulator import (  # noqa: E402
    SAMPLE_SEED,
    sample_rounds,
    summary,
    write_sample_rounds,
)
from scripts.simulator.schemes import write_scheme_rounds  # noqa: E402


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=REPO / "sample_rounds",
                        help="destination folder (default: sample_rounds/ of the repository)")
    parser.add_argument("--seed", type=int, default=SAMPLE_SEED,
                        help=f"master seed (default {SAMPLE_SEED}; change it only on purpose)")
    args = parser.parse_args(argv)
    for folder in write_sample_rounds(args.out, seed=args.seed):
        print(f"wrote {folder}")
    for folder in write_scheme_rounds(args.out):
        print(f"wrote {folder}")
    print(summary(list(sample_rounds(args.seed).values())))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
