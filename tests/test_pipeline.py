"""End to end through the command line: score, determinism, verify, safe workbook text."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest
from openpyxl import load_workbook

from reportgen.cli import main
from reportgen.resources import sample_rounds_dir
from tests.conftest import PARTICIPANTS

MakeRound = Callable[..., Path]
NEWEST = sample_rounds_dir() / "fic-2026"


@pytest.fixture(scope="module")
def scored_twice(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    base = tmp_path_factory.mktemp("score")
    outs = base / "a", base / "b"
    for out in outs:
        assert main(["score", str(NEWEST), "-o", str(out), "--quiet"]) == 0
    return outs


def test_score_writes_results_and_is_byte_identical(scored_twice: tuple[Path, Path]) -> None:
    a, b = scored_twice
    names = sorted(p.relative_to(a).as_posix() for p in a.rglob("*") if p.is_file())
    assert names == ["manifest.json", "provider/results.json", "provider/results.xlsx"]
    for name in names:
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


def test_results_json_shape(scored_twice: tuple[Path, Path]) -> None:
    doc = json.loads((scored_twice[0] / "provider" / "results.json").read_text())
    assert doc["round"]["id"] == "FIC-2026"
    assert len(doc["participants"]) == doc["round"]["n_participants"] == 122
    first = doc["participants"][0]
    for key in ("accuracy", "accuracy_ci", "false_positive_rate", "d_prime", "criterion", "auc",
                "conf_gap", "type2_auroc", "gamma", "meta_d", "m_ratio", "brier", "ece",
                "criteria", "overall"):
        assert key in first, key
    for p in doc["participants"]:
        for key, value in p.items():  # docs/design.md §8: null always comes with a reason
            if value is None and not key.endswith(("_ci", "_note")):
                assert p.get(f"{key}_note"), (p["participant"], key)


def test_workbook_sheets_and_methods(scored_twice: tuple[Path, Path]) -> None:
    wb = load_workbook(scored_twice[0] / "provider" / "results.xlsx", read_only=True)
    assert wb.sheetnames == ["Participants", "Items", "Group summary", "Criteria", "Methods",
                             "Round"]
    methods = {row[0]: row[3] for row in wb["Methods"].iter_rows(min_row=2, values_only=True)}
    assert "Hautus" in methods["d_prime"]
    assert "Maniscalco" in methods["meta_d"]


def test_verify_confirms_then_catches_one_changed_byte(scored_twice: tuple[Path, Path],
                                                       capsys: pytest.CaptureFixture[str],
                                                       tmp_path: Path) -> None:
    import shutil

    out = tmp_path / "copy"
    shutil.copytree(scored_twice[0], out)
    assert main(["verify", str(out)]) == 0
    assert "intact: all 2 files match" in capsys.readouterr().out
    data = bytearray((out / "provider" / "results.json").read_bytes())
    data[100] ^= 0x01
    (out / "provider" / "results.json").write_bytes(bytes(data))
    assert main(["verify", str(out)]) == 1
    assert capsys.readouterr().out == "altered: provider/results.json\n"


def test_formula_text_stays_text_in_workbook(make_round: MakeRound, tmp_path: Path) -> None:
    """OWASP CSV/formula injection (CWE-1236): text from the round must not become a formula."""
    people = PARTICIPANTS.replace("Ines Varga", '"=HYPERLINK(""http://x"",""y"")"').replace(
        "Lab South", "@SUM(A1)")
    folder = make_round(participants__csv=people)
    out = tmp_path / "out"
    assert main(["score", str(folder), "-o", str(out), "--quiet"]) == 0
    ws = load_workbook(out / "provider" / "results.xlsx")["Participants"]
    cells = {c.value: c.data_type for row in ws.iter_rows() for c in row
             if isinstance(c.value, str)}
    assert cells['=HYPERLINK("http://x","y")'] == "s"
    assert cells["@SUM(A1)"] == "s"


def test_output_locked_by_another_run(make_round: MakeRound, tmp_path: Path,
                                      capsys: pytest.CaptureFixture[str]) -> None:
    import fcntl
    import os

    folder = make_round()
    out = tmp_path / "out"
    fd = os.open(tmp_path / ".out.lock", os.O_RDWR | os.O_CREAT)
    fcntl.flock(fd, fcntl.LOCK_EX)
    try:
        assert main(["score", str(folder), "-o", str(out), "--quiet"]) == 2
    finally:
        os.close(fd)
    assert "another reportgen run is writing" in capsys.readouterr().err
    assert not out.exists()
