"""Partial submissions and self-estimates (issue 11): counts, rates over answered items, the
completeness threshold for the group statistics, and what the certificate and workbook say."""

from __future__ import annotations

import io
from collections.abc import Callable
from pathlib import Path

import openpyxl
import pytest

from reportgen.pipeline import score_folder
from reportgen.render.certificate import render_certificate
from reportgen.render.workbook import results_workbook
from reportgen.results.records import participant_json
from reportgen.settings import load_settings
from tests.conftest import ROUND_TOML, responses_csv

MakeRound = Callable[..., Path]

# C9 leaves I4 and I5 (both different-source) blank: 4 of 6 answered.
_PARTIAL = responses_csv().replace("C9,I4,different,3\n", "").replace("C9,I5,same,2\n", "")
_ESTIMATES = "participant,estimate\n0042,90\nA7,60 %\nB3,\nC9,50\n"


def _toml(scoring: str) -> str:
    return ROUND_TOML.replace("[confidence]", f"[scoring]\n{scoring}\n\n[confidence]")


@pytest.fixture
def partial_round(make_round: MakeRound) -> Path:
    return make_round(round__toml=_toml("allow_missing = true"), responses__csv=_PARTIAL,
                      estimates__csv=_ESTIMATES)


def test_counts_and_rates_over_answered_items(partial_round: Path) -> None:
    results = score_folder(partial_round)
    c9 = next(p for p in results.participants if p.code == "C9")
    assert {k: c9.counts[k] for k in ("n_items", "n_answered", "complete", "in_group",
                                      "missing_same", "missing_different")} == {
        "n_items": 6, "n_answered": 4, "complete": 0, "in_group": 0, "missing_same": 0,
        "missing_different": 2}
    # different-source items answered: only I6 ("different", right) -> 0 of 1 false positives
    assert c9.metrics["false_positive_rate"].value == 0.0
    assert c9.metrics["accuracy"].value == pytest.approx(4 / 6)  # I1-I3 and I6 right, of 6
    assert c9.metrics["answered_accuracy"].value == 1.0
    record = participant_json(results, c9)
    assert (record["n_answered"], record["n_items"], record["complete"]) == (4, 6, 0)


def test_incomplete_participant_left_out_of_group_statistics(partial_round: Path) -> None:
    results = score_folder(partial_round)
    assert results.group.distributions["accuracy"].n == 3  # C9 (4 of 6 < 80 %) left out
    assert results.group.error_types["missing"] == 0
    lenient = score_folder(_with(partial_round, "allow_missing = true\nmin_answered = 0.5"))
    assert lenient.group.distributions["accuracy"].n == 4


def _with(folder: Path, scoring: str) -> Path:
    (folder / "round.toml").write_text(_toml(scoring), encoding="utf-8")
    return folder


def test_certificate_says_incomplete_and_shows_the_estimate(partial_round: Path) -> None:
    results = score_folder(partial_round)
    settings = load_settings()
    c9 = next(p for p in results.participants if p.code == "C9")
    html = render_certificate(results, c9, settings)
    assert "You answered 4 of 6 items; 2 were left blank." in html
    assert ("because fewer than 80\u00a0% of the items were answered, the minimum the provider "
            "set for them.") in html
    assert "You estimated that you got 50\u00a0% of the items right." in html
    assert ("Your accuracy was 66.7\u00a0%, so your estimate was 16.7 percentage points below "
            "it.") in html
    assert "answered fewer than 80\u00a0% of the items is left out" in html  # methods
    full = next(p for p in results.participants if p.code == "0042")
    html = render_certificate(results, full, settings)
    assert "Incomplete submission" not in html
    assert "percentage points below it" in html or "percentage points above it" in html
    b3 = next(p for p in results.participants if p.code == "B3")  # blank estimate: missing
    assert "Your own estimate" not in render_certificate(results, b3, settings)


def test_workbook_has_the_estimate_and_the_flags(partial_round: Path) -> None:
    results = score_folder(partial_round)
    book = openpyxl.load_workbook(io.BytesIO(results_workbook(results)))
    sheet = book.worksheets[0]
    header = [cell.value for cell in sheet[1]]
    rows = {row[0]: dict(zip(header, row, strict=True))
            for row in sheet.iter_rows(min_row=2, values_only=True)}
    assert rows["C9"]["self_estimate"] == 0.5 and rows["B3"]["self_estimate"] is None
    assert (rows["C9"]["in_group"], rows["C9"]["complete"], rows["0042"]["in_group"]) == (0, 0, 1)
