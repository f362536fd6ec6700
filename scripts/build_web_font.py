"""Builds the web subset of the shipped font that HTML reports embed (run once, commit the output).

The PDF renderer embeds the full DejaVu Sans (``templates/assets/fonts/DejaVuSans*.ttf``); HTML
reports carry this subset as WOFF data URIs under the family "Reportgen Sans Web", so a browser
shows the same type without a 1.5 MB font in every file. The subset covers Latin (with Latin
Extended-A and B), Greek, Cyrillic, general punctuation and the arrows, mathematical symbols and
marks the templates use. Characters outside it fall back to DejaVu Sans or sans-serif.

Usage: python scripts/build_web_font.py
"""

from __future__ import annotations

from pathlib import Path

from fontTools import subset
from fontTools.ttLib import TTFont

FONTS = Path(__file__).resolve().parents[1] / "templates" / "assets" / "fonts"
RANGES = (
    (0x0020, 0x024F),  # Basic Latin, Latin-1, Latin Extended-A and -B
    (0x0370, 0x03FF),  # Greek
    (0x0400, 0x04FF),  # Cyrillic
    (0x2000, 0x206F),  # General Punctuation (dashes, quotes, prime, bullet)
    (0x20AC, 0x20AC),  # euro sign
    (0x2190, 0x21FF),  # arrows
    (0x2200, 0x22FF),  # mathematical operators (minus, ≤, ≥, ±)
    (0x2713, 0x2717),  # check and cross marks
)


def build(source: str, target: str) -> None:
    options = subset.Options()
    options.flavor = "woff"
    options.hinting = False  # screens hint on their own; halves the size
    options.desubroutinize = True
    options.name_IDs = ["*"]
    options.notdef_outline = True
    options.recalc_timestamp = False
    font = TTFont(FONTS / source, recalcTimestamp=False)
    subsetter = subset.Subsetter(options)
    subsetter.populate(unicodes=[c for lo, hi in RANGES for c in range(lo, hi + 1)])
    subsetter.subset(font)
    font.flavor = "woff"
    font.save(FONTS / target, reorderTables=True)


if __name__ == "__main__":
    build("DejaVuSans.ttf", "ReportgenSansWeb.woff")
    build("DejaVuSans-Bold.ttf", "ReportgenSansWeb-Bold.woff")
