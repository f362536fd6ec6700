"""All prose of the reports: number formats, one-line readings, cautions and statements.

Computation returns numbers and reason codes; sentences are made here and nowhere else.
:mod:`.numbers` holds the one formatter of each kind of value.
"""

from reportgen.render.wording.numbers import (
    DASH,
    MINUS,
    NBSP,
    count_of,
    finite,
    fmt_date,
    fmt_interval,
    fmt_number,
    fmt_p,
    fmt_percent,
    fmt_signed,
    fmt_value,
    plural,
)
from reportgen.render.wording.readings import CAUTIONS, metric_readings

__all__ = [
    "CAUTIONS", "DASH", "MINUS", "NBSP", "count_of", "finite", "fmt_date", "fmt_interval",
    "fmt_number", "fmt_p", "fmt_percent", "fmt_signed", "fmt_value", "metric_readings", "plural",
]
