"""Regenerate tests/golden/trend.html: the trend report of one demo participant.

    python scripts/regenerate_trend_golden.py

Scores the three sample rounds (bootstrap 0), archives them in a temporary folder, builds the
trend of participant 0012 with a seeded pooled bootstrap and writes its HTML with chart images
replaced by a placeholder. Review the diff before committing.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from tests.test_trend import GOLDEN, render_trend_golden  # noqa: E402


def main() -> int:
    with tempfile.TemporaryDirectory() as work:
        text = render_trend_golden(Path(work))
    old = GOLDEN.read_text(encoding="utf-8") if GOLDEN.is_file() else None
    GOLDEN.parent.mkdir(parents=True, exist_ok=True)
    GOLDEN.write_text(text, encoding="utf-8", newline="\n")
    state = "unchanged" if old == text else ("written" if old is None else "updated")
    print(f"{GOLDEN.relative_to(ROOT)}: {state}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
