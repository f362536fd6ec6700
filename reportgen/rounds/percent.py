"""Percentages as providers write them: ``80``, ``80%``, ``80 %``, or a cell formatted as a
percentage (which the xlsx reader hands over as the text it shows, ``80%``).

A column of plain numbers that are all between 0 and 1, on a scale that runs to 100, could be
fractions (0.8 = 80 %) or tiny percentages (0.8 %): reportgen refuses to guess
(:func:`fraction_problem`).
"""

from __future__ import annotations

import math
from collections.abc import Iterable

__all__ = ["fraction_problem", "percent_value"]


def percent_value(text: str) -> tuple[float | None, bool]:
    """The number on the 0-100 scale (``None`` if the text is not a finite number) and whether
    it carried a percent sign. A decimal comma is read as a point."""
    body = text.strip()
    explicit = body.endswith("%")
    if explicit:
        body = body[:-1].rstrip()
    try:
        value = float(body.replace(",", "."))
    except ValueError:
        return None, explicit
    return (value if math.isfinite(value) else None), explicit


def fraction_problem(texts: Iterable[str], what: str, scale_max: float) -> str | None:
    """A message when every plain number (no ``%`` sign, no percent format) of a column is
    between 0 and 1 while the scale runs to ``scale_max`` > 1; else ``None``."""
    if scale_max <= 1:
        return None
    plain = [v for v, explicit in map(percent_value, texts) if v is not None and not explicit]
    if not plain or not all(0 <= v <= 1 for v in plain):
        return None
    return (f"every {what} is a number between 0 and 1, but {what}s are percentages (up to "
            f"{scale_max:g}): reportgen will not guess whether 0.8 means 0.8 % or 80 %; write "
            "80 or 80 %, or format the cells as Percentage in the spreadsheet")
