"""The wheel carries templates, default config and sample rounds where resources.py looks."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

from reportgen import resources

ROOT = Path(__file__).resolve().parent.parent


@pytest.mark.slow
def test_wheel_contains_package_data(tmp_path: Path) -> None:
    pytest.importorskip("hatchling")
    subprocess.run(
        [sys.executable, "-m", "pip", "wheel", str(ROOT), "--no-deps", "--no-build-isolation",
         "-q", "-w", str(tmp_path)],
        check=True, capture_output=True,
    )
    (wheel,) = tmp_path.glob("reportgen-*.whl")
    names = set(zipfile.ZipFile(wheel).namelist())
    for folder, packaged in (("templates", "_templates"), ("config", "_config"),
                             ("sample_rounds", "_sample_rounds")):
        source = {p.relative_to(ROOT / folder).as_posix()
                  for p in (ROOT / folder).rglob("*") if p.is_file()}
        assert source, folder
        missing = {s for s in source if f"reportgen/{packaged}/{s}" not in names}
        assert not missing, f"{folder}: {sorted(missing)[:5]}"


def test_resources_found_in_checkout() -> None:
    assert (resources.templates_dir() / "certificate.html.j2").is_file()
    assert (resources.config_dir() / "defaults.toml").is_file()
    assert (resources.sample_rounds_dir() / "fic-2026" / "round.toml").is_file()
