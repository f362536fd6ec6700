"""Where the package's own templates and default config live.

In a wheel they are shipped inside the package (``reportgen/_templates``, ``reportgen/_config``, see
pyproject.toml); in a source checkout or editable install they are the repo's top-level
``templates/`` and ``config/`` folders.
"""

from __future__ import annotations

from pathlib import Path

_PACKAGE = Path(__file__).resolve().parent


def _find(installed: str, checkout: str) -> Path:
    for candidate in (_PACKAGE / installed, _PACKAGE.parent / checkout):
        if candidate.is_dir():
            return candidate
    raise FileNotFoundError(f"reportgen's {checkout}/ folder is missing from the installation")


def templates_dir() -> Path:
    return _find("_templates", "templates")


def config_dir() -> Path:
    return _find("_config", "config")


def sample_rounds_dir() -> Path:
    return _find("_sample_rounds", "sample_rounds")
