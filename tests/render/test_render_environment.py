"""reportgen.render.environment: search path, autoescaping, strict undefined."""

from __future__ import annotations

from pathlib import Path

import jinja2
import pytest

from reportgen.render.environment import environment, search_path
from reportgen.resources import templates_dir
from reportgen.settings import Settings, TemplateSettings


def _settings(folder: Path) -> Settings:
    return Settings(templates=TemplateSettings(override_dir=str(folder)))


def test_override_folder_comes_first(tmp_path: Path) -> None:
    assert search_path(Settings()) == [templates_dir()]
    assert search_path(_settings(tmp_path)) == [tmp_path, templates_dir()]
    (tmp_path / "certificate.html.j2").write_text("override {{ x }}", encoding="utf-8")
    env = environment(_settings(tmp_path))
    assert env.get_template("certificate.html.j2").render(x=1) == "override 1"
    # Templates not overridden still come from the package.
    assert "Cautions" in env.get_template("partials/cautions.html.j2").render(cautions=())


def test_autoescape_on_for_html_templates(tmp_path: Path) -> None:
    (tmp_path / "t.html.j2").write_text("{{ name }}", encoding="utf-8")
    (tmp_path / "t.html").write_text("{{ name }}", encoding="utf-8")
    env = environment(_settings(tmp_path))
    for name in ("t.html.j2", "t.html"):
        out = env.get_template(name).render(name="<script>alert(1)</script>")
        assert out == "&lt;script&gt;alert(1)&lt;/script&gt;"


def test_undefined_variables_raise(tmp_path: Path) -> None:
    (tmp_path / "u.html.j2").write_text("{{ missing }}", encoding="utf-8")
    env = environment(_settings(tmp_path))
    with pytest.raises(jinja2.UndefinedError):
        env.get_template("u.html.j2").render()
