"""What a new provider meets first: options and their help, what `check` loads, leftovers beside
the output folder, and one wrong setting never hiding another (issue: first use)."""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen import cli
from tests.conftest import ROUND_TOML

ROOT = Path(__file__).resolve().parents[1]
COMMANDS_DOC = ROOT / "docs" / "commands.md"


def _subparsers() -> dict[str, argparse.ArgumentParser]:
    parser = cli._parser()
    action = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return dict(action.choices)


def test_every_option_has_help_and_is_documented() -> None:
    doc = COMMANDS_DOC.read_text(encoding="utf-8")
    for name, sub in _subparsers().items():
        assert f"`reportgen {name}" in doc, name
        for action in sub._actions:
            if isinstance(action, argparse._HelpAction):
                continue
            assert action.help, f"{name} {action.option_strings or action.dest} has no help"
            for option in action.option_strings:
                assert f"`{option}" in doc or f" {option}" in doc, f"{name} {option}"


@pytest.mark.parametrize("option", ["--jobs", "--quiet"])
def test_check_accepts_no_option_it_would_ignore(option: str, capsys: pytest.CaptureFixture[str]
                                                 ) -> None:
    argv = ["check", "round", option] + (["2"] if option == "--jobs" else [])
    with pytest.raises(SystemExit) as exc:
        cli.main(argv)
    assert exc.value.code == 2
    assert f"unrecognized arguments: {option}" in capsys.readouterr().err


def test_check_loads_no_scoring_rendering_or_archive_module(
        make_round: Callable[..., Path]) -> None:
    folder = make_round()
    code = (
        "import sys\n"
        "from reportgen import cli\n"
        f"rc = cli.main(['check', {str(folder)!r}])\n"
        "heavy = sorted(m for m in sys.modules if m.split('.')[0] in "
        "('weasyprint', 'altair', 'vl_convert', 'openpyxl', 'jinja2', 'pandas') "
        "or m.startswith(('reportgen.render', 'reportgen.scoring', 'reportgen.archive', "
        "'reportgen.pipeline', 'scipy.stats', 'scipy.optimize')))\n"
        "print(rc, heavy)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         cwd=ROOT, timeout=120, check=True).stdout
    assert out.strip().splitlines()[-1] == "0 []"


def test_no_lock_or_staging_file_is_left_beside_the_output(make_round: Callable[..., Path],
                                                           tmp_path: Path) -> None:
    folder = make_round()
    parent = tmp_path / "outputs"
    parent.mkdir()
    assert cli.main(["score", str(folder), "-o", str(parent / "out"), "--quiet"]) == 0
    assert sorted(p.name for p in parent.iterdir()) == ["out"]
    # A second run over the first, then a run refused for a bad round: still nothing else.
    assert cli.main(["score", str(folder), "-o", str(parent / "out"), "--quiet"]) == 0
    (folder / "items.csv").write_text("item,truth\nI1,maybe\n", encoding="utf-8")
    assert cli.main(["score", str(folder), "-o", str(parent / "out"), "--quiet"]) == 2
    assert sorted(p.name for p in parent.iterdir()) == ["out"]
    manifest = json.loads((parent / "out" / "manifest.json").read_text(encoding="utf-8"))
    assert manifest["format"] == "reportgen-manifest/1"


def test_a_wrong_accent_does_not_hide_a_wrong_logo(make_round: Callable[..., Path],
                                                   capsys: pytest.CaptureFixture[str]) -> None:
    toml = ROUND_TOML.replace('name = "Test Provider"',
                              'name = "Test Provider"\naccent = "blue"\nlogo = "logo.bmp"')
    folder = make_round(round__toml=toml)
    assert cli.main(["check", str(folder)]) == 2
    err = capsys.readouterr().err
    assert "2 problem(s) must be fixed" in err
    assert ("error: round.toml, column 'provider.accent': accent must be a colour like #5f6b73 "
            "(value 'blue')") in err
    assert ("error: round.toml, column 'provider.logo': the provider logo must be a .png, .jpg, "
            ".svg or .gif file inside the round folder (value 'logo.bmp')") in err


def test_a_wrong_sheet_name_does_not_hide_mistakes_in_the_answers(
        make_round: Callable[..., Path], capsys: pytest.CaptureFixture[str]) -> None:
    import csv
    import io

    import openpyxl

    from tests.conftest import ITEMS, responses_csv

    answers = responses_csv().replace("A7,I2,different,2", "A7,I2,maybe,2").replace(
        "B3,I3,different,1", "B3,I3,different,9")
    folder = make_round(round__toml=ROUND_TOML + '\n[files.items]\nname = "items.xlsx"\n'
                        'sheet = "Answers"\n', items__csv=None, responses__csv=answers)
    book = openpyxl.Workbook()
    book.active.title = "Key"
    for row in csv.reader(io.StringIO(ITEMS)):
        book.active.append(row)
    book.save(folder / "items.xlsx")
    assert cli.main(["check", str(folder)]) == 2
    err = capsys.readouterr().err
    assert "3 problem(s) must be fixed" in err
    assert ("error: items.xlsx: sheet 'Answers' (named under [files] in round.toml) is not in "
            "the workbook (value 'Answers'); allowed: 'Key'") in err
    assert ("error: responses.csv, row 9, column 'decision': undeclared decision label (value "
            "'maybe'); allowed: different, inconclusive, same") in err
    assert ("error: responses.csv, row 16, column 'confidence': confidence is outside the scale "
            "(value '9'); allowed: whole numbers 1 to 5") in err
