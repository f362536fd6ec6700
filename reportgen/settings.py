"""Tool settings: config/defaults.toml, overridden key by key by a provider's --config file."""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, Field, ValidationError

from reportgen.errors import InputError, Problem
from reportgen.resources import config_dir


class _Table(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class TemplateSettings(_Table):
    override_dir: str = ""


class ReportSettings(_Table):
    min_item_answers: int = Field(default=3, ge=1)
    min_group_size: int = Field(default=5, ge=1)
    bootstrap: int = Field(default=200, ge=0, le=10_000)


class ArchiveSettings(_Table):
    path: str = "archive.sqlite"


class Settings(_Table):
    templates: TemplateSettings = TemplateSettings()
    report: ReportSettings = ReportSettings()
    archive: ArchiveSettings = ArchiveSettings()
    source: str = "built-in defaults"

    @property
    def override_dir(self) -> Path | None:
        return Path(self.templates.override_dir) if self.templates.override_dir else None


def _read_toml(path: Path) -> dict[str, Any]:
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise InputError.single(str(path),
                                f"cannot read the settings file: {exc.strerror}") from exc
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise InputError.single(str(path), f"not valid TOML: {exc}") from exc


def _merge(base: dict[str, Any], over: dict[str, Any]) -> dict[str, Any]:
    merged = dict(base)
    for key, value in over.items():
        if isinstance(value, dict) and isinstance(merged.get(key), dict):
            merged[key] = _merge(merged[key], value)
        else:
            merged[key] = value
    return merged


def load_settings(path: Path | None = None) -> Settings:
    """Built-in defaults, with the provider's file (if any) laid over them."""
    data = _read_toml(config_dir() / "defaults.toml")
    source = "built-in defaults"
    if path is not None:
        data = _merge(data, _read_toml(path))
        source = str(path)
    try:
        return Settings.model_validate({**data, "source": source})
    except ValidationError as exc:
        raise InputError(
            Problem(file=source, column=".".join(str(p) for p in err["loc"]), message=err["msg"])
            for err in exc.errors()
        ) from exc
