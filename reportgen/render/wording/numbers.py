"""Number, date and count formats shared by every report: one formatter for each kind of value.

Pure functions of their arguments: no locale, no clock. Numbers use a full stop for decimals, the
typographic minus sign (U+2212) for negatives and a no-break space before ``%``.
"""

from __future__ import annotations

import datetime as dt
import math

from reportgen.catalogue import BY_NAME
from reportgen.results.model import Metric

DASH = "\u2014"  # shown where a value is not available
MINUS = "\u2212"
NBSP = "\u00a0"

_MONTHS = ("January", "February", "March", "April", "May", "June", "July", "August",
           "September", "October", "November", "December")


def finite(x: float | None) -> bool:
    return x is not None and math.isfinite(x)


def fmt_number(x: float | None, digits: int = 2) -> str:
    """``1.2345 -> "1.23"``, ``-0.5 -> "−0.50"``; a value that rounds to zero loses its sign."""
    if x is None or not finite(x):
        return DASH
    text = f"{x:.{digits}f}"
    if text.startswith("-"):
        text = text[1:] if float(text) == 0 else MINUS + text[1:]
    return text


def fmt_signed(x: float | None, digits: int = 2) -> str:
    """Like :func:`fmt_number` with an explicit ``+`` on positive values."""
    text = fmt_number(x, digits)
    if x is not None and finite(x) and not text.startswith(MINUS) and float(text) != 0:
        return "+" + text
    return text


def fmt_percent(p: float | None, digits: int = 1) -> str:
    """A proportion as a percentage: ``0.85 -> "85.0 %"`` (no-break space)."""
    if p is None or not finite(p):
        return DASH
    return f"{fmt_number(100 * p, digits)}{NBSP}%"


def fmt_interval(m: Metric, kind: str = "number", digits: int | None = None) -> str:
    """The 95 % interval of ``m``: ``"74.3–91.9 %"`` for rates, ``"0.42 to 1.87"`` otherwise."""
    if not (finite(m.low) and finite(m.high)):
        return DASH
    if kind == "percent":
        d = 1 if digits is None else digits
        return f"{fmt_number(100 * (m.low or 0.0), d)}\u2013{fmt_percent(m.high, d)}"
    d = 2 if digits is None else digits
    return f"{fmt_number(m.low, d)} to {fmt_number(m.high, d)}"


def fmt_p(p: float | None) -> str:
    """A p-value: ``"p = 0.047"``, ``"p < 0.001"``."""
    if p is None or not finite(p):
        return DASH
    return "p < 0.001" if p < 0.001 else f"p = {p:.3f}"


def fmt_date(day: dt.date) -> str:
    """``2026-05-15 -> "15 May 2026"`` without the locale."""
    return f"{day.day} {_MONTHS[day.month - 1]} {day.year}"


def fmt_value(name: str, m: Metric) -> str:
    """A metric's value as the report shows it: rates in percent, the rest as numbers."""
    if not m.estimable:
        return DASH  # the reading beside it says why
    spec = BY_NAME.get(name)
    if spec is not None and spec.percent:
        return fmt_percent(m.value)
    return fmt_number(m.value, spec.digits if spec is not None else 2)


def count_of(k: int, n: int) -> str:
    return f"{k} of {n}"


def plural(n: int, one: str, many: str | None = None) -> str:
    return f"{n} {one if n == 1 else (many or one + 's')}"
