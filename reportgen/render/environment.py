"""The Jinja2 environment: the provider's override folder first, then the package's templates.

Autoescaping is on for HTML templates (``.html``, ``.htm``, ``.xml``, ``.j2``): participant names,
organisations and item ids come from spreadsheets and are untrusted. Undefined variables raise
(``StrictUndefined``) so a template typo fails the build instead of printing nothing.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import jinja2

from reportgen.render import wording
from reportgen.resources import templates_dir
from reportgen.settings import Settings

AUTOESCAPE_EXTENSIONS = ("html", "htm", "xml", "j2")


def search_path(settings: Settings) -> list[Path]:
    """Folders searched for templates, first match wins."""
    override = settings.override_dir
    package = templates_dir()
    return [override, package] if override is not None else [package]


def environment(settings: Settings) -> jinja2.Environment:
    """The (per-process cached) environment for ``settings``' template search path."""
    return _environment(tuple(str(p) for p in search_path(settings)))


@lru_cache(maxsize=8)
def _environment(folders: tuple[str, ...]) -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(list(folders), encoding="utf-8"),
        autoescape=jinja2.select_autoescape(
            enabled_extensions=AUTOESCAPE_EXTENSIONS, disabled_extensions=("css",),
            default_for_string=True, default=False),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        auto_reload=False,
    )
    env.filters.update(
        num=wording.fmt_number,
        pct=wording.fmt_percent,
        interval=wording.fmt_interval,
        signed=wording.fmt_signed,
        date=wording.fmt_date,
    )
    return env
