"""Bad response scales (docs/round-format.md, "Response scales"): each is a located error, exit
status 2, and nothing is written."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen.cli import main
from tests.scoring.test_scales import SLIDER_TOML, graded_round, slider_round

MakeRound = Callable[..., Path]


def _graded(make_round: MakeRound) -> Path:
    return graded_round(make_round, n_p=3, n_i=8)


def _toml(folder: Path, old: str, new: str) -> None:
    text = (folder / "round.toml").read_text()
    assert old in text, old
    (folder / "round.toml").write_text(text.replace(old, new, 1))


def _responses(folder: Path, old: str, new: str) -> None:
    text = (folder / "responses.csv").read_text()
    assert old in text, old
    (folder / "responses.csv").write_text(text.replace(old, new, 1))


CASES: dict[str, tuple[Callable[[MakeRound], Path], Callable[[Path], None], str]] = {
    "undeclared level": (
        _graded, lambda f: _responses(f, '"same, strong"', '"same, very strong"'),
        "column 'decision': undeclared decision label (value 'same, very strong')"),
    "strength gap": (
        _graded, lambda f: _toml(f, '"same, moderate" = { class = "same", strength = 2 }\n', ""),
        "error: round.toml, column 'decisions': class 'same' has strengths 1, 3 but no 2: "
        "strengths count 1, 2, 3 ... from the weakest, without gaps"),
    "two labels with one class and strength": (
        _graded, lambda f: _toml(f, '"same, moderate" = { class = "same", strength = 2 }',
                                 '"same, moderate" = { class = "same", strength = 3 }'),
        "error: round.toml, column 'decisions': decisions 'same, moderate' and 'same, strong' "
        "both have class 'same' and strength 3: each level of the scale needs its own strength"),
    "a level's probability outside 0 to 1": (
        lambda m: graded_round(m, n_p=3, n_i=8, probabilities={1: 0.6, 2: 0.8, 3: 1.5}),
        lambda f: None,
        "error: round.toml, column 'decisions.different, strong.probability': a level's "
        "probability of being right is between 0 and 1 (e.g. 0.9) (value '1.5')"),
    "a confidence outside the declared scale": (
        slider_round, lambda f: _responses(f, "P00,I1,", "P00,I1,same,105\nP99,I1,"),
        "column 'confidence': confidence is outside the scale (value '105'); allowed: "
        "numbers 0 to 100 (percent)"),
    "bins that do not cover the scale": (
        lambda m: slider_round(m, bins="bins = [10, 50, 100]\n"), lambda f: None,
        "error: round.toml, column 'confidence': bins [10, 50, 100] do not cover the scale 0 "
        "to 100: the first edge must be at most 0 and the last at least 100"),
    "bins that do not increase": (
        lambda m: slider_round(m, bins="bins = [0, 50, 50, 100]\n"), lambda f: None,
        "error: round.toml, column 'confidence': bins [0, 50, 50, 100] must be increasing "
        "edges"),
    "strength source without strengths": (
        lambda m: m(round__toml=SLIDER_TOML.replace("{bins}", 'source = "strength"\n')),
        lambda f: None,
        "error: round.toml, column 'confidence': source = 'strength' needs a graded conclusion "
        "scale: give the labels of [decisions] a strength ({ class = \"same\", strength = 1 } "
        "...)"),
    "a criterion on a strength the scale lacks": (
        lambda m: graded_round(m, n_p=3, n_i=8, extra=(
            '\n[[criteria]]\nid = "S4"\nlabel = "x"\nmetric = "errors_at_strength_4"\n'
            'at_most = 0\n')),
        lambda f: None,
        "error: round.toml, column 'criteria': criterion 'S4' names 'errors_at_strength_4', but "
        "the conclusion scale of [decisions] has strengths 1 to 3 only"),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_bad_scale_is_located_and_nothing_written(case: str, make_round: MakeRound,
                                                  tmp_path: Path,
                                                  capsys: pytest.CaptureFixture[str]) -> None:
    build, breaks, expected = CASES[case]
    folder = build(make_round)
    breaks(folder)
    out = tmp_path / "out"
    status = main(["score", str(folder), "-o", str(out), "--quiet"])
    err = capsys.readouterr().err
    assert status == 2, err
    assert any(expected in line for line in err.splitlines()), err
    assert "Nothing was written." in err
    assert not out.exists()

