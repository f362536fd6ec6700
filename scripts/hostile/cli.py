"""Command line: write the hostile cases as round folders (``scripts/make_hostile_inputs.py``)."""

from __future__ import annotations

import argparse
import shutil
from collections.abc import Sequence
from pathlib import Path

from scripts.hostile import ACCEPTED, REFUSED, hostile_text_round

DESCRIPTION = "Generate every crafted round input of the hostile-input suite (tests/hostile)."


def build(target: Path, names: Sequence[str] | None = None) -> list[Path]:
    """Write the cases (all, or ``names``) into ``target/<case>/``; return their folders."""
    cases = {**REFUSED, **ACCEPTED, "hostile_text_round": hostile_text_round}
    folders = []
    for name in names or sorted(cases):
        folder = target / name
        shutil.rmtree(folder, ignore_errors=True)
        cases[name](folder)
        folders.append(folder)
    return folders


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=DESCRIPTION)
    parser.add_argument("target", type=Path, help="folder to write the cases into")
    parser.add_argument("--case", action="append",
                        choices=sorted({**REFUSED, **ACCEPTED, "hostile_text_round": None}),
                        help="write only this case (repeatable)")
    args = parser.parse_args(argv)
    folders = build(args.target, args.case)
    print(f"wrote {len(folders)} round folders to {args.target}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
