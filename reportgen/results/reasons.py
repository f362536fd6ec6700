"""Why a value is not estimable or not assessable: the short reason phrases results carry.

These phrases are the reason codes of the results: they appear as ``<name>_note`` in
results.json, in the workbook and after "not estimable" on reports. Each lives here once.
"""

from __future__ import annotations

from reportgen.metrics.robust import MIN_GROUP

FEW_ERRORS = "few errors: unstable"
NO_ERRORS = "no errors"
FEW_IN_GROUP = f"fewer than {MIN_GROUP} estimable results in the group"
ROBUST_SD_ZERO = "the group's robust standard deviation is 0"
NOT_ESTIMABLE = "not estimable"
NO_LEVEL_PROBABILITY = "the conclusion scale declares no probability for its levels"
BLANK_LEVEL = "not given"
"""The attribute level of items whose cell in a break-down column is blank."""


def merged_levels(min_items: int) -> str:
    """The name of the level that merges an attribute's levels with too few items."""
    return f"other (fewer than {min_items} items each)"
