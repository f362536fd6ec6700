"""Two more invented schemes, with the response scales of docs/round-format.md "Response scales".

* **TMC** - "Tool-mark comparison (graded)" of the fictional *Corrib Vale Forensic Proficiency
  Trust*: examiners compare test marks from a seized tool with a questioned mark and answer on a
  7-level conclusion scale that carries the decision and its strength (three strengths a side and
  "no conclusion"); there is no confidence column (``[confidence] source = "strength"``).
* **SPC** - "Speaker comparison (online form)" of the fictional *Lanthorn Audio Proficiency
  Panel*: examiners compare a questioned recording with a reference and answer same / different /
  inconclusive, with their probability of being right set on a 0-100 slider (any real value, one
  decimal); the level measures use the bins declared in round.toml.

Latent model (the same for both, simpler than the FIC model of ``scripts.simulator``): examiner
ability ``d`` = 0.6 + 2.6 * Beta(3, 1.6), criterion ``c`` ~ N(0.2, 0.25), inconclusive band
``b`` in 0.05-0.6 and metacognitive efficiency ``m`` in 0.3-1.0; item truth ``s`` = +-1 (half each)
with ease ``e`` in 0.6-1; evidence ``x = s d e / 2 + N(0, 1)``; "same" when ``x > c + b``,
"different" when ``x < c - b``, else no conclusion. The strength/confidence reads
``y = m |x - c| + sqrt(1 - m^2) |N(0, 1)|``: TMC strength 1 + (y > 0.8) + (y > 1.7); SPC slider
``100 * (0.5 + 0.5 * (1 - exp(-y)))`` + N(0, 6), clipped to 0-100, one decimal (an inconclusive
answer gets a slider value too, or none one time in three).

Seeded with fixed integers and free of wall-clock time: two runs give byte-identical files.
Everything is invented; no real person, organisation or result is represented.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt

from scripts.simulator.observers import draw_names

__all__ = ["SCHEMES", "Scheme", "scheme_tables", "write_scheme_rounds"]

FloatArray = npt.NDArray[np.float64]

TMC_LEVELS: tuple[tuple[str, str, int | None], ...] = (
    ("common origin, conclusive", "same", 3),
    ("common origin, strong", "same", 2),
    ("common origin, limited", "same", 1),
    ("no conclusion", "inconclusive", None),
    ("different origin, limited", "different", 1),
    ("different origin, strong", "different", 2),
    ("different origin, conclusive", "different", 3),
)


@dataclass(frozen=True)
class Scheme:
    folder: str  # sample_rounds/<folder>
    kind: str  # "graded" or "slider"
    n_participants: int
    n_items: int
    seed: int
    issued: dt.date


SCHEMES: tuple[Scheme, ...] = (
    Scheme("tmc-2026", "graded", 64, 48, 7301, dt.date(2026, 6, 12)),
    Scheme("spc-2026", "slider", 72, 40, 7302, dt.date(2026, 9, 18)),
)


def _responses(scheme: Scheme) -> tuple[list[str], FloatArray, list[str], list[list[str]],
                                        list[list[str]]]:
    """Codes, item truth (+1/-1), item ids, decisions and confidences as text (P x I)."""
    rng = np.random.default_rng((scheme.seed, scheme.n_participants, scheme.n_items))
    n_p, n_i = scheme.n_participants, scheme.n_items
    prefix = "T" if scheme.kind == "graded" else "S"
    codes = [f"{prefix}{n:03d}" for n in np.sort(rng.choice(900, n_p, replace=False) + 100)]
    d = 0.6 + 2.6 * rng.beta(3, 1.6, n_p)
    c = rng.normal(0.2, 0.25, n_p)
    band = rng.uniform(0.05, 0.6, n_p)
    m = rng.uniform(0.3, 1.0, n_p)
    truth = rng.permutation(np.repeat([1.0, -1.0], [n_i // 2, n_i - n_i // 2]))
    ease = rng.uniform(0.6, 1.0, n_i)
    x = truth * d[:, None] * ease / 2 + rng.normal(size=(n_p, n_i))
    said_same, said_diff = x > (c + band)[:, None], x < (c - band)[:, None]
    y = m[:, None] * np.abs(x - c[:, None]) + np.sqrt(1 - m[:, None] ** 2) * np.abs(
        rng.normal(size=(n_p, n_i)))
    items = [f"{prefix}M{i + 1:02d}" if scheme.kind == "graded" else f"R{i + 1:02d}"
             for i in range(n_i)]
    if scheme.kind == "graded":
        strength = 1 + (y > 0.8).astype(int) + (y > 1.7).astype(int)
        words = {(cls, s): label for label, cls, s in TMC_LEVELS}
        dec = [[words[("same", int(s))] if ss else words[("different", int(s))] if sd
                else "no conclusion" for s, ss, sd in zip(srow, arow, brow, strict=True)]
               for srow, arow, brow in zip(strength, said_same, said_diff, strict=True)]
        conf = [[""] * n_i for _ in range(n_p)]
        return codes, truth, items, dec, conf
    slider = 100 * (0.5 + 0.5 * (1 - np.exp(-y))) + rng.normal(0, 6, (n_p, n_i))
    slider = np.clip(np.round(slider, 1), 0, 100)
    blank = rng.random((n_p, n_i)) < 1 / 3
    dec = [["same" if ss else "different" if sd else "inconclusive"
            for ss, sd in zip(arow, brow, strict=True)]
           for arow, brow in zip(said_same, said_diff, strict=True)]
    conf = [["" if (dec[p][i] == "inconclusive" and blank[p, i]) else f"{slider[p, i]:.1f}"
             for i in range(n_i)] for p in range(n_p)]
    return codes, truth, items, dec, conf


def scheme_tables(scheme: Scheme) -> dict[str, str]:
    """The files of the scheme's round folder: name -> text."""
    codes, truth, items, dec, conf = _responses(scheme)
    rng = np.random.default_rng((scheme.seed, 1))
    names = draw_names(len(codes), rng)
    key = "item,truth\n" + "".join(
        f"{item},{'same' if t > 0 else 'different'}\n" for item, t in zip(items, truth,
                                                                           strict=True))
    graded = scheme.kind == "graded"
    head = "participant,item,decision\n" if graded else "participant,item,decision,confidence\n"
    lines = []
    for p, code in enumerate(codes):
        for i, item in enumerate(items):
            label = f'"{dec[p][i]}"' if "," in dec[p][i] else dec[p][i]
            lines.append(f"{code},{item},{label}\n" if graded
                         else f"{code},{item},{label},{conf[p][i]}\n")
    people = "participant,name\n" + "".join(f"{c},{n}\n" for c, n in zip(codes, names,
                                                                          strict=True))
    return {"round.toml": _toml(scheme), "items.csv": key, "responses.csv": head + "".join(lines),
            "participants.csv": people}


def _toml(scheme: Scheme) -> str:
    issued = scheme.issued.isoformat()
    opened = (scheme.issued - dt.timedelta(days=70)).isoformat()
    closed = (scheme.issued - dt.timedelta(days=21)).isoformat()
    head = "# Invented sample round, generated by scripts/make_sample_rounds.py.\n" \
           "# Provider, participants and results are fictional.\n\n"
    if scheme.kind == "graded":
        levels = "\n".join(
            f'"{label}" = "inconclusive"' if s is None
            else f'"{label}" = {{ class = "{cls}", strength = {s} }}'
            for label, cls, s in TMC_LEVELS)
        return head + f"""[round]
id = "TMC-2026"
scheme = "Tool-mark comparison (graded)"
title = "Screwdriver marks on window frames, round 2026"
opened = {opened}
closed = {closed}
issued = {issued}
status = "final"
key_statement = \"\"\"Each questioned mark was made under supervision with a tool of the \\
reference set; the tool used was logged at the time and the log sealed until scoring.\"\"\"
description = "{scheme.n_items} mark comparisons answered on a seven-level conclusion scale."

[provider]
name = "Corrib Vale Forensic Proficiency Trust"
contact = "rounds@corribvale.example"
authorised_by = {{ name = "Ailbhe Marrow", role = "Scheme manager, tool marks" }}
accent = "#4d6a5a"

[decisions]
{levels}

[confidence]
source = "strength"   # no confidence column: the conclusion's strength is the rating

[scoring]
seed = 2026

[[criteria]]
id = "T1"
label = "No conclusive error at the strongest level"
metric = "strongest_errors"
at_most = 0

[[criteria]]
id = "T2"
label = "False-positive rate at most 5 %"
metric = "false_positive_rate"
at_most = 0.05
"""
    return head + f"""[round]
id = "SPC-2026"
scheme = "Speaker comparison (online form)"
title = "Telephone-quality recordings, autumn round 2026"
opened = {opened}
closed = {closed}
issued = {issued}
status = "final"
key_statement = \"\"\"Questioned and reference recordings come from consenting volunteers whose \\
identity was recorded at each session; pairs were assembled by the panel's secretary.\"\"\"
description = "{scheme.n_items} recording pairs; confidence set on a 0-100 slider."

[provider]
name = "Lanthorn Audio Proficiency Panel"
contact = "panel@lanthorn.example"
authorised_by = {{ name = "Tobias Wrenfield", role = "Panel secretary" }}
accent = "#6a5a7a"

[confidence]
kind = "probability"   # the slider: probability of being right, 0-100, any real value
min = 0
max = 100
bins = [0, 50, 60, 70, 80, 90, 100]

[scoring]
seed = 2026

[[criteria]]
id = "S1"
label = "Accuracy at least 70 %"
metric = "accuracy"
at_least = 0.7
"""


def write_scheme_rounds(dest: Path | str) -> list[Path]:
    """Write the round folders of :data:`SCHEMES` under ``dest``; return the folders."""
    out = []
    for scheme in SCHEMES:
        folder = Path(dest) / scheme.folder
        folder.mkdir(parents=True, exist_ok=True)
        for name, text in scheme_tables(scheme).items():
            (folder / name).write_bytes(text.encode("utf-8"))
        out.append(folder)
    return out
