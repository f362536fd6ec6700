"""Shared fixtures: a tiny, hand-made round folder that tests copy and break on purpose."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest

ROUND_TOML = """\
[round]
id = "T-1"
scheme = "Test scheme"
title = "Tiny round"
opened = 2026-01-05
closed = 2026-01-20
issued = 2026-02-01
key_statement = "Known from the capture sessions."

[provider]
name = "Test Provider"
authorised_by = { name = "Wren Talbot", role = "Scheme coordinator" }

[confidence]
kind = "ordinal"
min = 1
max = 5
probability_map = "linear"

[[criteria]]
id = "C1"
label = "No false positives"
metric = "false_positives"
at_most = 0

[[criteria]]
id = "C2"
label = "Accuracy at least 0.5"
metric = "accuracy"
at_least = 0.5
"""

ITEMS = """item,truth,quality
I1,same,good
I2,same,poor
I3,same,good
I4,different,good
I5,different,fair
I6,different,poor
"""

# participant, then (decision, confidence) for I1..I6
_ANSWERS = {
    "0042": [("same", 5), ("same", 4), ("same", 3), ("different", 5), ("different", 4),
             ("different", 2)],
    "A7": [("same", 4), ("different", 2), ("same", 5), ("same", 2), ("different", 5),
           ("inconclusive", 3)],
    "B3": [("inconclusive", 2), ("same", 3), ("different", 1), ("different", 4),
           ("different", 3), ("same", 1)],
    "C9": [("same", 3), ("same", 5), ("same", 4), ("different", 3), ("same", 2),
           ("different", 5)],
}


def responses_csv() -> str:
    lines = ["participant,item,decision,confidence"]
    for code, answers in _ANSWERS.items():
        for n, (decision, conf) in enumerate(answers, start=1):
            lines.append(f"{code},I{n},{decision},{conf}")
    return "\n".join(lines) + "\n"


PARTICIPANTS = """participant,name,organisation
0042,Ines Varga,Lab North
A7,Tomas Reyl,Lab North
B3,Odile Marsh,Lab South
C9,Piet Salo,Lab East
"""


@pytest.fixture
def make_round(tmp_path: Path) -> Callable[..., Path]:
    """Write the tiny round, with any file replaced or removed (``name=None``)."""

    def _make(folder: str = "round", **files: str | None) -> Path:
        root = tmp_path / folder
        root.mkdir()
        contents: dict[str, str | None] = {
            "round.toml": ROUND_TOML,
            "items.csv": ITEMS,
            "responses.csv": responses_csv(),
            "participants.csv": PARTICIPANTS,
        }
        contents.update({k.replace("__", "."): v for k, v in files.items()})
        for name, text in contents.items():
            if text is not None:
                (root / name).write_text(text, encoding="utf-8")
        return root

    return _make
