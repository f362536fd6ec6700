"""Golden test: the demo round's certificate and appendix HTML against the committed files.

After an intended change to templates or wording, run ``python scripts/regenerate_golden.py``
and review the diff of tests/golden/.
"""

from __future__ import annotations

import difflib

import pytest

from .golden import APPENDIX, CERTIFICATE, render_golden


def test_demo_round_matches_the_golden_files() -> None:
    if not (CERTIFICATE.is_file() and APPENDIX.is_file()):
        pytest.skip("no golden files yet: run scripts/regenerate_golden.py")
    for path, fresh in render_golden().items():
        committed = path.read_text(encoding="utf-8")
        if fresh != committed:
            diff = "\n".join(difflib.unified_diff(
                committed.splitlines(), fresh.splitlines(), str(path), "rendered now",
                lineterm="", n=2))
            pytest.fail(f"{path.name} differs from the golden file; if intended, run "
                        f"scripts/regenerate_golden.py\n{diff[:4000]}")
