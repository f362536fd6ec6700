"""A valid round whose text is hostile to what is written from it (HTML, workbook, file names)."""

from __future__ import annotations

from pathlib import Path

from scripts.hostile.base_round import ANSWERS, ITEMS, TRUTH, base, csv_text

# code, name, organisation: markup for the HTML, formulas for the workbook, path parts and
# reserved device names for file names, a 300-character code, and two codes whose file names
# would collide on a case-insensitive file system.
HOSTILE_PEOPLE = [
    ("0042", "<script>alert(1)</script>", "Lab <b>North</b> & Sons"),
    ("../x", "=cmd|' /C calc'!A0", "+1"),
    ("a/b", "-2", "@x"),
    ("CON", "@SUM(A1:A9)", "Lab South"),
    ("Z" * 300, "Long Code", "Lab East"),
    ("a b", "Stem Clash", "Lab East"),
    ("A_B", "Other Clash", "Lab West"),
    ("=1+2", "Formula Code", "Lab West"),
    ("\tTAB", "Tab Code", "Lab West"),
    ("\rCR", "Return Code", "Lab West"),
]
# item attributes are kept exactly as written (names are stripped of surrounding spaces)
HOSTILE_ATTRIBUTES = ["\tTAB", "\rCR", "=1+2", "+1", "-2", "@x"]


def _quoted(value: str) -> str:
    return '"' + value.replace('"', '""') + '"'


def hostile_text_round(folder: Path) -> None:
    """The base round with the codes, names and organisations of ``HOSTILE_PEOPLE`` and the
    item attributes of ``HOSTILE_ATTRIBUTES``; every participant answers like 0042 or A7."""
    codes = [code for code, _, _ in HOSTILE_PEOPLE]
    responses = [["participant", "item", "decision", "confidence"]]
    for n, code in enumerate(codes):
        answers = ANSWERS["0042"] if n % 2 == 0 else ANSWERS["A7"]
        responses += [[_quoted(code), item, d, str(c)]
                      for item, (d, c) in zip(ITEMS, answers, strict=True)]
    people = [["participant", "name", "organisation"],
              *[[_quoted(c), _quoted(n), _quoted(o)] for c, n, o in HOSTILE_PEOPLE]]
    items = [["item", "truth", "quality"],
             *[[i, t, _quoted(q)] for i, t, q in zip(ITEMS, TRUTH, HOSTILE_ATTRIBUTES,
                                                     strict=True)]]
    base(folder, responses__csv=csv_text(responses), participants__csv=csv_text(people),
         items__csv=csv_text(items))

