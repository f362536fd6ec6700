"""Every sample round end to end, and the two schemes with other response scales: TMC-2026 (a
7-level graded conclusion scale, no confidence column) and SPC-2026 (a 0-100 slider)."""

from __future__ import annotations

import json
import re
import shutil
import sys
from html import unescape
from pathlib import Path

import jsonschema
import pytest

from reportgen import pipeline
from reportgen.cli import main
from reportgen.resources import sample_rounds_dir
from reportgen.results.records import results_schema
from reportgen.settings import ReportSettings, Settings

REPO = Path(__file__).resolve().parent.parent
ALL_ROUNDS = sorted(p.name for p in sample_rounds_dir().iterdir() if (p / "round.toml").is_file())
NEW_SCHEMES = ("spc-2026", "tmc-2026")


def test_the_sample_folder_holds_three_schemes() -> None:
    assert ALL_ROUNDS == ["fic-2024", "fic-2025", "fic-2026", "spc-2026", "tmc-2026"]


def test_demo_keeps_issuing_the_newest_round_of_the_first_scheme() -> None:
    assert pipeline.newest_sample_round().name == "fic-2026"


@pytest.mark.parametrize("name", ALL_ROUNDS)
def test_every_sample_round_scores(name: str, tmp_path: Path,
                                   capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "out"
    status = main(["score", str(sample_rounds_dir() / name), "-o", str(out), "--quiet"])
    assert status == 0, capsys.readouterr().err
    (results,) = out.rglob("results.json")
    doc = json.loads(results.read_text(encoding="utf-8"))
    assert doc["participants"]
    validator = jsonschema.Draft202012Validator(results_schema())
    assert not [f"{e.json_path}: {e.message}" for e in validator.iter_errors(doc)][:5]
    if name == "tmc-2026":
        first = doc["participants"][0]
        assert {"strongest_errors", "errors_at_strength_3", "conclusions"} <= set(first)
        assert first["brier"] is None and first["brier_note"]
    if name == "spc-2026":
        assert len(doc["group"]["levels"]) == 6  # the declared bins


def test_committed_scheme_rounds_match_the_generator(tmp_path: Path) -> None:
    sys.path.insert(0, str(REPO))
    from scripts.simulator.schemes import write_scheme_rounds

    for folder in write_scheme_rounds(tmp_path):
        for path in sorted(folder.iterdir()):
            committed = sample_rounds_dir() / folder.name / path.name
            assert committed.read_bytes() == path.read_bytes(), committed


def _subset(name: str, dest: Path, n: int) -> Path:
    """The sample round with its first ``n`` participants (issuing all of them takes minutes)."""
    src = sample_rounds_dir() / name
    shutil.copytree(src, dest)
    keep = sorted({line.split(",", 1)[0] for line in
                   (src / "participants.csv").read_text().splitlines()[1:]})[:n]
    for table in ("responses.csv", "participants.csv"):
        lines = (dest / table).read_text().splitlines()
        (dest / table).write_text("\n".join(
            [lines[0]] + [ln for ln in lines[1:] if ln.split(",", 1)[0] in keep]) + "\n")
    return dest


def _text(path: Path) -> str:
    return unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", path.read_text("utf-8"))))


@pytest.mark.slow
@pytest.mark.parametrize("name", NEW_SCHEMES)
def test_new_schemes_issue_certificates_that_state_the_scale(name: str, tmp_path: Path) -> None:
    folder = _subset(name, tmp_path / name, 6)
    out = tmp_path / "out"
    pipeline.issue(folder, out, Settings(report=ReportSettings(bootstrap=20)))
    certificate = _text(sorted((out / "certificates").glob("*.html"))[0])
    appendix = _text(out / "appendix.html")
    for text in (certificate, appendix):
        assert "Response scale." in text
    if name == "tmc-2026":
        assert "Your conclusions by true class" in certificate
        assert "The group's conclusions by true class" in appendix
        assert ("\u201cno conclusion\u201d was scored as \u201cinconclusive\u201d" in certificate)
        assert "served as its confidence rating" in certificate
    else:
        assert "6 bins (declared by the provider): 0\u201350 %, 50\u201360 %" in (
            certificate)
        assert "includes its lower edge" in certificate
