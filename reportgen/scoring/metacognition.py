"""Model-based insight per participant: meta-d′, M-ratio and the ideal observer's expectation.

All participants' rating tables (conclusive answers) are fitted in one batch (Maniscalco & Lau
2012, as pinned in docs/design.md §3). Bootstrap seeds derive from the round's seed and the
participant's code, so a participant's interval does not depend on who else took part.
"""

from __future__ import annotations

import zlib
from collections.abc import Sequence

import numpy as np

from reportgen.metrics.ideal_observer import ideal_observer
from reportgen.metrics.metad import fit_meta_d_many, meta_d_interval
from reportgen.results import reasons
from reportgen.rounds.schema import Scoring
from reportgen.scoring.columns import Array, Column, Tables

_UNEVEN_NOTE = "confidence levels are not evenly spaced"
_IDEAL_NOTE = "needs d′ from conclusive answers on both classes and at least two confidence levels"


def participant_seed(round_seed: int, code: str) -> int:
    return (round_seed * 1_000_003 + zlib.crc32(code.encode("utf-8"))) % (2**32)


def insight_columns(tables: Tables, levels: Array, scoring: Scoring,
                    n_boot: int, codes: Sequence[str]) -> dict[str, Column]:
    """meta_d and m_ratio (with bootstrap intervals and the few-errors flag), and the type-2 ROC
    area and confidence gap expected of an observer with the participant's own d′ and c whose
    confidence reads the same evidence (meta-d′ = d′)."""
    n, k = len(codes), levels.size
    fits = fit_meta_d_many(tables.rating_noise, tables.rating_signal, pad=True)
    cols = {name: np.full(n, np.nan) for name in (
        "meta_d", "meta_d_low", "meta_d_high", "m_ratio", "m_ratio_low", "m_ratio_high",
        "expected_type2_auroc", "expected_conf_gap")}
    notes: dict[str, list[str | None]] = {"meta_d": [], "m_ratio": [], "expected": []}
    step = float(levels[1] - levels[0]) if k > 1 else 1.0
    even = bool(np.allclose(np.diff(levels), step))
    n_wrong = tables.wrong.sum(axis=1)  # conclusive errors: what the fits rest on
    for p, (code, fit) in enumerate(zip(codes, fits, strict=True)):
        flag = reasons.FEW_ERRORS if n_wrong[p] < scoring.few_errors else None
        notes["meta_d"].append(fit.note if fit.meta_d is None else flag)
        notes["m_ratio"].append(fit.note if fit.m_ratio is None else flag)
        if fit.meta_d is not None:
            cols["meta_d"][p] = fit.meta_d
            if fit.m_ratio is not None:
                cols["m_ratio"][p] = fit.m_ratio
            if n_boot > 0:
                ci = meta_d_interval(tables.rating_noise[p], tables.rating_signal[p],
                                     n_boot=n_boot, seed=participant_seed(scoring.seed, code),
                                     point=fit)
                for name in ("meta_d_low", "meta_d_high", "m_ratio_low", "m_ratio_high"):
                    value = getattr(ci, name)
                    cols[name][p] = np.nan if value is None else value
        d, c = fit.d_prime, fit.criterion
        if d is None or c is None or k < 2 or not np.isfinite(d):
            notes["expected"].append(_IDEAL_NOTE)
            continue
        ideal = ideal_observer(d, c, k, noise_counts=tables.rating_noise[p],
                               signal_counts=tables.rating_signal[p])
        cols["expected_type2_auroc"][p] = ideal.type2_auroc
        # The ideal gap is on the 1..K scale; it converts only when levels are evenly spaced.
        cols["expected_conf_gap"][p] = ideal.conf_gap * step if even else np.nan
        notes["expected"].append(None if even else _UNEVEN_NOTE)
    return {
        "meta_d": Column(cols["meta_d"], cols["meta_d_low"], cols["meta_d_high"],
                         notes=tuple(notes["meta_d"])),
        "m_ratio": Column(cols["m_ratio"], cols["m_ratio_low"], cols["m_ratio_high"],
                          notes=tuple(notes["m_ratio"])),
        "expected_type2_auroc": Column(cols["expected_type2_auroc"],
                                       notes=tuple(notes["expected"])),
        "expected_conf_gap": Column(cols["expected_conf_gap"], notes=tuple(notes["expected"])),
    }
