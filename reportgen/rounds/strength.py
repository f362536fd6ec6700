"""Graded conclusion scales at the reading edge: whether the strength of a conclusion stands in
for a confidence column, and the confidence it gives (docs/round-format.md, "Response scales").

With ``[confidence] source = "strength"`` a responses table needs no confidence column: each
conclusive answer's confidence is the strength of its label (1 = weakest); an inconclusive answer
has none. A confidence column, when the table has one, wins, and a warning says so.
"""

from __future__ import annotations

from reportgen.errors import ProblemLog
from reportgen.rounds.schema import RoundConfig
from reportgen.rounds.tables import Table

__all__ = ["strength_confidence", "strength_sourced"]


def strength_sourced(table: Table, cfg: RoundConfig, log: ProblemLog | None = None) -> bool:
    """True when the confidence is the conclusion's strength: ``source = "strength"`` and the
    (long) responses table has no confidence column. With the column, warn that it wins."""
    if cfg.confidence.source != "strength":
        return False
    column = cfg.columns_for("responses").confidence
    if not table.has(column):
        return True
    if log is not None:
        log.warn(table.file, f"the confidence column {column!r} is read as the confidence; the "
                 "strength of the conclusions is not ([confidence] source = \"strength\" applies "
                 "only to a table without a confidence column)", sheet=table.sheet,
                 row=table.header_row, column=column)
    return False


def strength_confidence(cfg: RoundConfig, label: str | None) -> float | None:
    """The confidence a decision label carries on a graded scale: its strength, or None for an
    inconclusive or unknown label."""
    grade = cfg.decisions.get(label) if label is not None else None
    if grade is None or grade.strength is None:
        return None
    return float(grade.strength)
