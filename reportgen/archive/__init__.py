"""The archive of issued rounds (SQLite) and what is computed from it across rounds.

:mod:`.schema` opens the file and keeps its schema current, :mod:`.store` records rounds and
renames codes, :mod:`.queries` reads a participant's history, and :mod:`.trend` computes one
examiner's trend from it. The names below are the archive's public interface.
"""

from reportgen.archive.queries import (
    ArchivedRound,
    Rename,
    RoundVersion,
    codes,
    current_code,
    current_documents,
    participant_history,
    previous_rounds,
    previous_rounds_for,
    renames,
    report_ids,
    round_versions,
    similar_codes,
)
from reportgen.archive.schema import APPLICATION, MIGRATIONS, SCHEMA_VERSION, migrate
from reportgen.archive.store import (
    RecordOutcome,
    check_record,
    inputs_digest,
    key_digest,
    record_round,
    rename_code,
    robust_accuracy,
)

__all__ = [
    "APPLICATION", "MIGRATIONS", "SCHEMA_VERSION", "ArchivedRound", "RecordOutcome", "Rename",
    "RoundVersion", "check_record", "codes", "current_code", "current_documents",
    "inputs_digest", "key_digest", "migrate", "participant_history", "previous_rounds",
    "previous_rounds_for", "record_round", "rename_code", "renames", "report_ids",
    "robust_accuracy",
    "round_versions", "similar_codes",
]
