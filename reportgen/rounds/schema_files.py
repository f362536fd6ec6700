"""round.toml: which files hold the tables and how their columns are named ([files],
[columns], [wide], [limits])."""

from __future__ import annotations

from typing import Literal

from pydantic import (
    Field,
    field_validator,
    model_validator,
)

from reportgen.rounds.schema_base import _no_control_characters, _Table

TABLE_COLUMNS: dict[str, tuple[str, ...]] = {
    "items": ("item", "truth"),
    "responses": ("participant", "item", "decision", "confidence", "submitted"),
    "participants": ("participant", "name", "organisation", "email"),
    "estimates": ("participant", "estimate", "when"),
}
"""The [columns] keys each table uses."""


def _plain_file_name(value: str | None) -> str | None:
    _no_control_characters(value, "the name")
    if value is not None and not value.strip():
        raise ValueError("the name is blank; leave the key out to use the default")
    return value


class TableFile(_Table):
    """[files.items], [files.responses], ...: one table's file name, sheet and column names,
    overriding the [files] and [columns] defaults for that table only."""

    name: str | None = None
    sheet: str | None = None
    columns: dict[str, str] = Field(default_factory=dict)

    @field_validator("name", "sheet")
    @classmethod
    def _plain(cls, value: str | None) -> str | None:
        return _plain_file_name(value)


class Files(_Table):
    """[files]: where the tables are. Each name may be .csv or .xlsx; ``None`` means discover.

    A table may instead be a sub-table (``[files.items]``) with ``name``, ``sheet`` and
    ``columns`` of its own; the plain keys and [columns] are the defaults."""

    items: str | TableFile | None = None
    responses: str | TableFile | None = None
    participants: str | TableFile | None = None
    estimates: str | TableFile | None = None
    layout: Literal["long", "wide"] = "long"
    sheet: str | None = Field(default=None, description="Sheet to read in xlsx files.")
    duplicates: Literal["error", "latest"] = Field(
        default="error",
        description="'latest': keep each participant's latest submission (by the submitted "
        "column of the responses) and report the dropped rows as a warning.",
    )

    @field_validator("items", "responses", "participants", "estimates", "sheet")
    @classmethod
    def _plain_name(cls, value: str | TableFile | None) -> str | TableFile | None:
        return value if isinstance(value, TableFile) else _plain_file_name(value)

    @model_validator(mode="after")
    def _known_columns(self) -> Files:
        for table, keys in TABLE_COLUMNS.items():
            spec = getattr(self, table)
            if isinstance(spec, TableFile):
                for key in spec.columns:
                    if key not in keys:
                        raise ValueError(f"files.{table}.columns: {key!r} is not a column of "
                                         f"the {table} table (allowed: {', '.join(keys)})")
        return self

    def name(self, table: str) -> str | None:
        spec = getattr(self, table)
        return spec.name if isinstance(spec, TableFile) else spec

    def sheet_of(self, table: str) -> str | None:
        spec = getattr(self, table)
        own = spec.sheet if isinstance(spec, TableFile) else None
        return own if own is not None else self.sheet


class Limits(_Table):
    """[limits]: the most reportgen reads from one table file. A file beyond a limit is refused,
    and the message names the key here that would raise it. The ceilings keep the guards useful:
    beyond them a workbook could exhaust memory before it is refused."""

    max_rows: int = Field(default=200_000, ge=1, le=5_000_000)
    max_cells: int = Field(default=5_000_000, ge=1, le=100_000_000)
    max_file_mib: int = Field(default=256, ge=1, le=4096)
    max_unpacked_mib: int = Field(default=512, ge=1, le=16384)
    max_compression_ratio: float = Field(default=100.0, ge=2.0, le=10_000.0)


class Columns(_Table):
    """[columns]: column names, when a provider's files use other headers."""

    participant: str = "participant"
    item: str = "item"
    truth: str = "truth"
    decision: str = "decision"
    confidence: str = "confidence"
    name: str = "name"
    organisation: str = "organisation"
    email: str = "email"
    estimate: str = "estimate"
    when: str = "when"
    submitted: str = "submitted"

    @model_validator(mode="after")
    def _distinct_in_each_file(self) -> Columns:
        for file, keys in TABLE_COLUMNS.items():
            by_name: dict[str, list[str]] = {}
            for key in keys:
                by_name.setdefault(getattr(self, key).strip(), []).append(key)
            for name, shared in by_name.items():
                if len(shared) > 1:
                    raise ValueError(f"{' and '.join(shared)} both name the column {name!r} of "
                                     f"the {file} table; each needs its own column")
            for key in keys:
                if not getattr(self, key).strip():
                    raise ValueError(f"the column name for {key} is blank")
        return self


class Wide(_Table):
    """[wide]: the column patterns of a wide responses sheet; ``{item}`` stands for the item id."""

    decision: str = "{item}_decision"
    confidence: str = "{item}_confidence"

    @model_validator(mode="after")
    def _has_placeholder(self) -> Wide:
        for pattern in (self.decision, self.confidence):
            if pattern.count("{item}") != 1:
                raise ValueError(f"pattern {pattern!r} must contain {{item}} exactly once")
        if self.decision == self.confidence:
            raise ValueError("decision and confidence patterns must differ")
        return self


class Attributes(_Table):
    """[attributes]: extra columns of the items file to break the results down by (docs/
    round-format.md). Each named column must be in the items file."""

    breakdown: tuple[str, ...] = Field(
        default=(),
        description="Items-file columns (e.g. image quality, disguise, difficulty band) whose "
        "levels get accuracy, error rates and insight of their own in the reports.",
    )

    @field_validator("breakdown")
    @classmethod
    def _distinct_names(cls, names: tuple[str, ...]) -> tuple[str, ...]:
        for name in names:
            _no_control_characters(name, "the column name")
            if not name.strip():
                raise ValueError("a column name is blank")
        if len(set(names)) < len(names):
            raise ValueError("a column is named twice")
        return names
