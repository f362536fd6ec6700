"""The import layers of pyproject.toml ([tool.importlinter]) hold, and the check really bites.

import-linter (a general-purpose tool, run by `make lint` in CI) reads the contracts; here it runs
on the package as it is, and on a copy where the archive imports the renderer, which must fail.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
LINT = Path(sys.executable).with_name("lint-imports")

pytestmark = pytest.mark.skipif(not LINT.exists(), reason="import-linter is not installed")


def _lint(tree: Path) -> subprocess.CompletedProcess[str]:
    env = {**os.environ, "PYTHONPATH": str(tree)}
    return subprocess.run([str(LINT), "--config", str(tree / "pyproject.toml"), "--no-cache"],
                          cwd=tree, env=env, capture_output=True, text=True, timeout=120)


def _copy(tmp_path: Path) -> Path:
    tree = tmp_path / "tree"
    shutil.copytree(ROOT / "reportgen", tree / "reportgen",
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pyproject.toml", tree / "pyproject.toml")
    return tree


def test_the_layers_hold(tmp_path: Path) -> None:
    result = _lint(_copy(tmp_path))
    assert result.returncode == 0, result.stdout + result.stderr
    assert "Stages point one way KEPT" in result.stdout


def test_an_archive_that_imports_the_renderer_is_refused(tmp_path: Path) -> None:
    tree = _copy(tmp_path)
    queries = tree / "reportgen" / "archive" / "queries.py"
    queries.write_text(queries.read_text(encoding="utf-8")
                       + "\nfrom reportgen.render import wording  # noqa: E402\n",
                       encoding="utf-8")
    result = _lint(tree)
    assert result.returncode != 0
    assert "Stages point one way BROKEN" in result.stdout
    assert "reportgen.archive.queries -> reportgen.render.wording" in result.stdout


def test_metrics_may_not_import_the_foundation(tmp_path: Path) -> None:
    tree = _copy(tmp_path)
    sdt = tree / "reportgen" / "metrics" / "sdt.py"
    sdt.write_text(sdt.read_text(encoding="utf-8") + "\nimport reportgen.errors  # noqa: E402\n",
                   encoding="utf-8")
    result = _lint(tree)
    assert result.returncode != 0
    assert "metrics is pure computation BROKEN" in result.stdout
