"""Validation of a round folder: every case names file, row, column and value; exit status 2;
nothing is written. The tiny round of conftest.py is broken one way per case."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen.cli import main
from tests.conftest import ITEMS, PARTICIPANTS, responses_csv

MakeRound = Callable[..., Path]


def _swap(text: str, old: str, new: str) -> str:
    assert old in text, old
    return text.replace(old, new, 1)


# (files to change, the exact problem line the provider must see)
CASES: dict[str, tuple[dict[str, str | None], str]] = {
    "missing responses file": (
        {"responses__csv": None},
        "error: responses: no responses.csv or responses.xlsx in the round folder",
    ),
    "missing column": (
        {"responses__csv": _swap(responses_csv(), "confidence", "conf")},
        "error: responses.csv, row 1: required column 'confidence' is missing, so the "
        "responses cannot be read; if it has another header, name that header in round.toml: "
        "[files.responses.columns] confidence = \"…\"; allowed: columns present: participant, "
        "item, decision, conf",
    ),
    "response to unknown item": (
        {"responses__csv": _swap(responses_csv(), "A7,I2,", "A7,I9,")},
        "error: responses.csv, row 9, column 'item': response to an item that is not in the key "
        "(value 'I9'); allowed: the item ids of the key",
    ),
    "key item nobody answered": (
        {"items__csv": ITEMS + "I7,same,good\n"},
        "error: responses.csv, column 'item': item of the key that no participant answered "
        "(value 'I7'); allowed: remove it from the key, or add the responses",
    ),
    "participant with missing items": (
        {"responses__csv": responses_csv().replace("C9,I5,same,2\n", "")},
        "error: responses.csv, row 20, column 'participant': participant has no response to 1 "
        "item(s): I5 (value 'C9'); allowed: every item answered, or [scoring] allow_missing = "
        "true",
    ),
    "duplicate participant and item": (
        {"responses__csv": responses_csv() + "B3,I4,same,2\n"},
        "error: responses.csv, row 26, column 'participant': participant 'B3' answered 1 "
        "item(s) more than once: row 26 repeats the answers of row 17; delete the rows that "
        "should not count, or set [files] duplicates = \"latest\" in round.toml to keep each "
        "participant's latest submission (by its 'submitted' column) (value 'B3')",
    ),
    "undeclared decision label": (
        {"responses__csv": _swap(responses_csv(), "B3,I2,same,3", "B3,I2,identical,3")},
        "error: responses.csv, row 15, column 'decision': undeclared decision label (value "
        "'identical'); allowed: different, inconclusive, same",
    ),
    "decision differing only by case": (
        {"responses__csv": _swap(responses_csv(), "B3,I2,same,3", "B3,I2,Same ,3")},
        "error: responses.csv, row 15, column 'decision': decision label differs from the "
        "declared label 'same' only by case or spaces; correct it, or set [scoring] "
        "normalise_labels = true in round.toml (value 'Same '); allowed: different, "
        "inconclusive, same",
    ),
    "undeclared truth class": (
        {"items__csv": _swap(ITEMS, "I5,different", "I5,other")},
        "error: items.csv, row 6, column 'truth': undeclared truth class (value 'other'); "
        "allowed: same, different",
    ),
    "confidence not a number": (
        {"responses__csv": _swap(responses_csv(), "0042,I3,same,3", "0042,I3,same,high")},
        "error: responses.csv, row 4, column 'confidence': confidence is not a number (value "
        "'high'); allowed: whole numbers 1 to 5",
    ),
    "confidence outside the scale": (
        {"responses__csv": _swap(responses_csv(), "0042,I3,same,3", "0042,I3,same,7")},
        "error: responses.csv, row 4, column 'confidence': confidence is outside the scale "
        "(value '7'); allowed: whole numbers 1 to 5",
    ),
    "blank participant code": (
        {"responses__csv": _swap(responses_csv(), "A7,I1,", ",I1,")},
        "error: responses.csv, row 8, column 'participant': participant code is blank",
    ),
    "codes differing only by case": (
        {"responses__csv": responses_csv().replace("A7,", "a7,", 1)},
        "error: responses.csv, row 8, column 'participant': participant codes differ only by "
        "case, spaces or Unicode form and would be read as different people: 'A7' (first at "
        "row 9); 'a7' (first at row 8) (value 'a7')",
    ),
    "code missing from participants file": (
        {"participants__csv": PARTICIPANTS.replace("C9,Piet Salo,Lab East\n", "")},
        "error: responses.csv, row 20, column 'participant': participant code is not in the "
        "participants file participants.csv (value 'C9')",
    ),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_each_problem_is_located_and_nothing_written(
    case: str, make_round: MakeRound, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    files, expected = CASES[case]
    folder = make_round(**files)
    out = tmp_path / "out"
    status = main(["score", str(folder), "-o", str(out), "--quiet"])
    err = capsys.readouterr().err
    assert status == 2, err
    assert expected in [line.strip() for line in err.splitlines()], err
    assert "Nothing was written." in err
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["round"]  # no staging, no lock left


def test_all_problems_reported_at_once(make_round: MakeRound,
                                       capsys: pytest.CaptureFixture[str]) -> None:
    broken = _swap(responses_csv(), "0042,I3,same,3", "0042,I3,same,7")
    broken = _swap(broken, "B3,I2,same,3", "B3,I2,identical,3")
    folder = make_round(responses__csv=broken, items__csv=_swap(ITEMS, "I5,different",
                                                                "I5,other"))
    assert main(["check", str(folder)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("3 problem(s) must be fixed before the round can be scored:")
    assert "items.csv, row 6" in err and "responses.csv, row 4" in err
    assert "responses.csv, row 15" in err


def test_single_truth_class_is_a_warning(make_round: MakeRound,
                                         capsys: pytest.CaptureFixture[str]) -> None:
    items = ITEMS.replace("different", "same")
    folder = make_round(items__csv=items)
    assert main(["check", str(folder)]) == 0
    err = capsys.readouterr().err
    assert ("warning: items.csv: every item in the key has the same truth class ('same'): d′, "
            "criterion, ROC area and meta-d′ are not defined") in err


def test_clean_round_checks_and_keeps_codes_as_text(make_round: MakeRound,
                                                    capsys: pytest.CaptureFixture[str]) -> None:
    from reportgen.pipeline import load

    folder = make_round()
    assert main(["check", str(folder)]) == 0
    assert "no problems found (4 participants, 6 items)" in capsys.readouterr().out
    rnd = load(folder)
    assert rnd.participants == ("0042", "A7", "B3", "C9")  # '0042' stays text


def test_allow_missing_turns_missing_items_into_a_warning(make_round: MakeRound) -> None:
    from reportgen.pipeline import load
    from tests.conftest import ROUND_TOML

    toml = ROUND_TOML.replace("[confidence]", "[scoring]\nallow_missing = true\n\n[confidence]")
    folder = make_round(round__toml=toml,
                        responses__csv=responses_csv().replace("C9,I5,same,2\n", ""))
    rnd = load(folder)
    assert rnd.decision[3, 4] == -1
    assert any("scored as missing" in w.message for w in rnd.warnings)


def test_round_toml_problems_are_located(make_round: MakeRound,
                                         capsys: pytest.CaptureFixture[str]) -> None:
    from tests.conftest import ROUND_TOML

    toml = ROUND_TOML.replace("max = 5", "max = 5\ncolour = 3").replace(
        'name = "Test Provider"', 'name = "Test Provider"\naccent = 12')
    folder = make_round(round__toml=toml)
    assert main(["check", str(folder)]) == 2
    err = capsys.readouterr().err
    assert "error: round.toml, column 'confidence.colour': unknown key (misspelt, or not " \
           "supported) (value '3')" in err
    assert "error: round.toml, column 'provider.accent': Input should be a valid string " \
           "(value '12')" in err

    folder = make_round(folder="scale", round__toml=ROUND_TOML.replace("max = 5", "max = 1"))
    assert main(["check", str(folder)]) == 2
    assert "error: round.toml, column 'confidence': min (1) must be below max (1)" in \
        capsys.readouterr().err

    toml = ROUND_TOML.replace('metric = "accuracy"', 'metric = "acuracy"')
    folder = make_round(folder="second", round__toml=toml)
    assert main(["check", str(folder)]) == 2
    err = capsys.readouterr().err
    assert "error: round.toml, column 'criteria.1.metric': criterion 'C2' names an unknown " \
           "metric (value 'acuracy')" in err

    folder = make_round(folder="third", round__toml=ROUND_TOML.replace("[provider]", "[provider"))
    assert main(["check", str(folder)]) == 2
    assert "error: round.toml: TOML syntax error at line 10, character 10: Expected ']' at the " \
        "end of a table declaration" in capsys.readouterr().err
