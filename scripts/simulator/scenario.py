"""Names, seeds and layouts of the invented scenario, and the metadata of a simulated round."""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Literal

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]
ResponsesFormat = Literal["csv", "xlsx"]
Layout = Literal["long", "wide"]

SAMPLE_SEED = 20240517
"""Master seed of the sample rounds."""

SAMPLE_YEARS = (2024, 2025, 2026)

NEVER_ERRS = "E0107"
"""Code of the sample-round examiner who makes no error in any year."""

SAMPLE_LAYOUTS: Mapping[int, tuple[ResponsesFormat, Layout]] = {
    2024: ("csv", "wide"),
    2025: ("xlsx", "long"),
    2026: ("csv", "long"),
}
"""How each sample round's responses are written (format, layout)."""

DECISIONS = ("different", "same", "inconclusive")
"""Decision labels, indexed by the codes 0 (different), 1 (same), 2 (inconclusive)."""

# Invented organisations (weight ~ expected share of participants). The last four are small.
ORGANISATIONS: tuple[tuple[str, float], ...] = (
    ("Port Ellery Constabulary — Imaging Unit", 0.19),
    ("Harrowgate Vale Police — Forensic Image Analysis", 0.14),
    ("Quenby Harbour Police Service — Identification Bureau", 0.11),
    ("Marrowsound Regional Police — Digital Evidence Unit", 0.10),
    ("Oskerby County Police — Facial Comparison Team", 0.08),
    ("Tarrowfield Forensic Services Ltd", 0.08),
    ("Vellmouth Metropolitan Police — Image Examination Section", 0.07),
    ("Carrowdene Transit Police — CCTV Review Unit", 0.06),
    ("Ashtarn Forensic Laboratory", 0.05),
    ("Lindqvale Police — Scientific Support", 0.04),
    ("Kestrow Image Forensics Partnership", 0.035),
    ("Morrick Island Police — Technical Services", 0.025),
    ("Dunhallow Coroner's Office — Identification Support", 0.02),
    ("Brennoch Independent Image Examiners", 0.015),
    ("Selkirra University — Face Perception Research Clinic", 0.01),
)
SMALL_ORG_SIZES = (4, 3, 2, 1)  # sample pool: the last four organisations, fixed small sizes


@dataclass(frozen=True)
class RoundMeta:
    """What round.toml says about a simulated round."""

    round_id: str
    year: int
    n_items: int
    opened: dt.date
    closed: dt.date
    issued: dt.date
    scoring_seed: int
    breakdown: tuple[str, ...] = ()  # [attributes] breakdown: key columns to break results down by
