"""A round folder as the commands open it: the folder must exist, then every file is read and
checked by :func:`reportgen.rounds.load.load_round` against the catalogue's metric names.

Light on purpose: ``reportgen check`` imports this and nothing of scoring or rendering.
"""

from __future__ import annotations

from pathlib import Path

from reportgen.catalogue import KNOWN_METRICS
from reportgen.errors import InputError
from reportgen.rounds.load import load_round
from reportgen.rounds.model import Round
from reportgen.rounds.tables import ReadLimits


def open_round(folder: Path, limits: ReadLimits | None = None) -> Round:
    """Read and validate a round folder; raises InputError with every problem found."""
    if not folder.is_dir():
        raise InputError.single(str(folder), "round folder not found (or not a folder)")
    return load_round(folder, KNOWN_METRICS, limits)
