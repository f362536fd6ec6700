"""`reportgen issue` with the archive: idempotent, refuses changed inputs unless --replace,
and each certificate shows the participant's earlier archived rounds."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen import archive as history
from reportgen.cli import main
from tests.conftest import ROUND_TOML, responses_csv

MakeRound = Callable[..., Path]


def _earlier_toml() -> str:
    return (ROUND_TOML.replace('id = "T-1"', 'id = "T-0"')
            .replace("opened = 2026-01-05", "opened = 2025-01-06")
            .replace("closed = 2026-01-20", "closed = 2025-01-21")
            .replace("issued = 2026-02-01", "issued = 2025-02-03"))


@pytest.mark.slow
def test_issue_records_once_refuses_changes_and_shows_previous_rounds(
        make_round: MakeRound, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "out"
    archive = out / "archive.sqlite"
    earlier = make_round(folder="earlier", round__toml=_earlier_toml())
    current = make_round(folder="current")

    # The earlier round issued into OUT, then the current one: the archive is carried over.
    assert main(["issue", str(earlier), "-o", str(out), "--quiet"]) == 0
    assert main(["issue", str(current), "-o", str(out), "--quiet"]) == 0
    html = next((out / "certificates").glob("A7*.html")).read_text(encoding="utf-8")
    assert "T-0" in html  # the previous-rounds block names the earlier round
    assert main(["verify", str(out)]) == 0  # the archive is covered by the manifest
    assert [v.version for v in history.round_versions(archive, "T-1")] == [1]

    # Issuing the same inputs again changes nothing in the archive.
    assert main(["issue", str(current), "-o", str(out), "--quiet"]) == 0
    assert [v.version for v in history.round_versions(archive, "T-1")] == [1]

    # Changed inputs are refused before anything is written ...
    before = (out / "provider" / "results.json").read_bytes()
    changed = make_round(folder="changed", responses__csv=responses_csv().replace(
        "A7,I1,same,4", "A7,I1,different,4"))
    capsys.readouterr()
    assert main(["issue", str(changed), "-o", str(out), "--quiet"]) == 2
    assert "--replace" in capsys.readouterr().err
    assert (out / "provider" / "results.json").read_bytes() == before
    # ... and with --replace they become a new version; the old one is kept.
    assert main(["issue", str(changed), "-o", str(out), "--quiet", "--replace",
                 "--reason", "One answer was misread.", "--amended-on", "2026-02-05"]) == 0
    assert [v.version for v in history.round_versions(archive, "T-1")] == [1, 2]
    assert [v.version for v in history.round_versions(archive, "T-0")] == [1]


def test_record_then_trend(make_round: MakeRound, tmp_path: Path) -> None:
    archive = tmp_path / "archive.sqlite"
    assert main(["record", str(make_round(folder="earlier", round__toml=_earlier_toml())),
                 "--archive", str(archive)]) == 0
    assert main(["record", str(make_round(folder="current")), "--archive", str(archive)]) == 0
    out = tmp_path / "trend"
    assert main(["trend", "A7", "--archive", str(archive), "-o", str(out)]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["manifest.json", "trend.html", "trend.pdf"]
    text = (out / "trend.html").read_text(encoding="utf-8")
    assert "T-0" in text and "T-1" in text
    assert main(["verify", str(out)]) == 0
