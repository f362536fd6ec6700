"""Regenerate the golden HTML files in tests/golden/ from the newest sample round.

    python scripts/regenerate_golden.py [ROUND_FOLDER]

Scores the round with ``reportgen.pipeline.score_folder``, renders the first participant's
certificate and the group appendix, replaces chart images by a placeholder and writes
tests/golden/certificate.html and tests/golden/appendix.html. Review the diff before committing.
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from tests.render.golden import GOLDEN_DIR, render_golden  # noqa: E402


def main(argv: list[str]) -> int:
    folder = Path(argv[1]) if len(argv) > 1 else None
    GOLDEN_DIR.mkdir(parents=True, exist_ok=True)
    for path, text in render_golden(folder).items():
        old = path.read_text(encoding="utf-8") if path.is_file() else None
        path.write_text(text, encoding="utf-8", newline="\n")
        state = "unchanged" if old == text else ("written" if old is None else "updated")
        print(f"{path.relative_to(ROOT)}: {state}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
