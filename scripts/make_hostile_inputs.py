"""Generate every crafted round input of the hostile-input suite (tests/hostile).

    python scripts/make_hostile_inputs.py OUTDIR            # every case, OUTDIR/<case>/
    python scripts/make_hostile_inputs.py OUTDIR --case xlsx_zip_bomb

The cases live in the package scripts/hostile/ (which the tests import); this is its command line.
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from scripts.hostile.cli import main

if __name__ == "__main__":
    raise SystemExit(main())
