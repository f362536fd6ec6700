"""A hostile or mistaken -o (issue 5): reportgen replaces its output folder as a whole, so it
must refuse to replace anything that is not its own output (the round folder itself, a folder
holding it, a folder of the provider's files), and leave it byte for byte as it was."""

from __future__ import annotations

from pathlib import Path

import pytest

from reportgen.cli import main
from scripts.hostile import base


def _snapshot(root: Path) -> dict[str, bytes | None]:
    return {p.relative_to(root).as_posix(): p.read_bytes() if p.is_file() else None
            for p in sorted(root.rglob("*"))}


def _refused(argv: list[str], capsys: pytest.CaptureFixture[str]) -> str:
    capsys.readouterr()
    assert main(argv) == 2
    return capsys.readouterr().err


@pytest.mark.parametrize("target", ["round", ".", "notes"])
def test_a_folder_that_is_not_a_reportgen_output_is_not_replaced(
        target: str, tmp_path: Path, capsys: pytest.CaptureFixture[str],
        monkeypatch: pytest.MonkeyPatch) -> None:
    base(tmp_path / "round")
    (tmp_path / "notes").mkdir()
    (tmp_path / "notes" / "minutes.txt").write_text("the provider's own file\n")
    monkeypatch.chdir(tmp_path)
    before = _snapshot(tmp_path)
    err = _refused(["score", "round", "-o", target, "--quiet"], capsys)
    out = (tmp_path / target).resolve()
    assert err == (f"error: {out} is not empty and is not a reportgen output folder (it has no "
                   "reportgen manifest.json); reportgen replaces its output folder as a whole, "
                   "so name a new or empty folder with -o\n")
    assert _snapshot(tmp_path) == before  # not even a lock file beside OUT
    assert not (out.parent / f".{out.name}.lock").exists()


def test_an_output_path_that_is_a_file_is_refused(tmp_path: Path,
                                                  capsys: pytest.CaptureFixture[str]) -> None:
    base(tmp_path / "round")
    (tmp_path / "out").write_text("not a folder\n")
    err = _refused(["score", str(tmp_path / "round"), "-o", str(tmp_path / "out"), "--quiet"],
                   capsys)
    assert err == f"error: {tmp_path / 'out'} exists and is not a folder\n"
    assert (tmp_path / "out").read_text() == "not a folder\n"


def test_an_empty_folder_and_an_earlier_output_are_replaced(tmp_path: Path) -> None:
    base(tmp_path / "round")
    (tmp_path / "out").mkdir()
    for _ in range(2):  # into an empty folder, then over its own output
        assert main(["score", str(tmp_path / "round"), "-o", str(tmp_path / "out"),
                     "--quiet"]) == 0
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == ["manifest.json", "provider"]
    assert sorted(p.name for p in (tmp_path / "out" / "provider").iterdir()) == [
        "results.json", "results.xlsx"]
