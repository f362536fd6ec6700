"""Model-based insight per participant: meta-d′, M-ratio and the ideal observer's expectation.

All participants' rating tables (conclusive answers) are fitted in one batch (Maniscalco & Lau
2012, as pinned in docs/design.md §3), and their intervals in one more: profile-likelihood
intervals (no resampling, so nothing depends on a seed; docs/metacognition.md §3). A participant
whose profile has no finite end gets a stratified bootstrap instead, seeded from the round's seed
and the participant's code. Either way a participant's interval does not depend on who else took
part. ``[report] bootstrap = 0`` turns the intervals off.
"""

from __future__ import annotations

import zlib
from collections.abc import Sequence

import numpy as np

from reportgen.catalogue import INTERVAL_LEVEL
from reportgen.metrics.ideal_observer import ideal_observer
from reportgen.metrics.metad import (
    MAX_LEVELS,
    MetaDInterval,
    MetaDResult,
    fit_meta_d_many,
    meta_d_intervals,
    meta_d_profile_intervals,
)
from reportgen.results import reasons
from reportgen.rounds.schema import Scoring
from reportgen.scoring.columns import Array, Column, Tables

_UNEVEN_NOTE = "confidence levels are not evenly spaced"
_IDEAL_NOTE = "needs d′ from conclusive answers on both classes and at least two confidence levels"
_IDEAL_LEVELS_NOTE = f"more than {MAX_LEVELS} confidence levels: the scale needs bins"


def participant_seed(round_seed: int, code: str) -> int:
    return (round_seed * 1_000_003 + zlib.crc32(code.encode("utf-8"))) % (2**32)


def _intervals(tables: Tables, fits: Sequence[MetaDResult], scoring: Scoring, n_boot: int,
               method: str, codes: Sequence[str]) -> list[MetaDInterval]:
    """Profile-likelihood intervals; a participant whose profile has no finite end (or, with
    ``method`` "bootstrap", everyone) gets a seeded stratified bootstrap instead."""
    out: list[MetaDInterval | None] = [None] * len(fits)
    if method == "profile":
        out[:] = meta_d_profile_intervals(tables.rating_noise, tables.rating_signal, fits,
                                          level=INTERVAL_LEVEL)
    redo = [p for p, (fit, ci) in enumerate(zip(fits, out, strict=True))
            if fit.meta_d is not None and (ci is None or ci.meta_d_low is None)]
    if redo:
        boot = meta_d_intervals(tables.rating_noise[redo], tables.rating_signal[redo],
                                [fits[p] for p in redo],
                                [participant_seed(scoring.seed, codes[p]) for p in redo],
                                n_boot=n_boot, level=INTERVAL_LEVEL)
        for p, ci in zip(redo, boot, strict=True):
            out[p] = ci
    empty = MetaDInterval(None, None, None, None, INTERVAL_LEVEL, 0)
    return [empty if ci is None else ci for ci in out]


def insight_columns(tables: Tables, levels: Array, scoring: Scoring,
                    n_boot: int, codes: Sequence[str],
                    method: str = "profile") -> dict[str, Column]:
    """meta_d and m_ratio (with intervals and the few-errors flag), and the type-2 ROC area and
    confidence gap expected of an observer with the participant's own d′ and c whose confidence
    reads the same evidence (meta-d′ = d′). ``n_boot`` 0: no intervals; ``method``: "profile"
    (profile likelihood) or "bootstrap" (``n_boot`` stratified resamples)."""
    n, k = len(codes), levels.size
    fits = fit_meta_d_many(tables.rating_noise, tables.rating_signal, pad=True)
    intervals = (_intervals(tables, fits, scoring, n_boot, method, codes) if n_boot > 0
                 else [None] * n)
    cols = {name: np.full(n, np.nan) for name in (
        "meta_d", "meta_d_low", "meta_d_high", "m_ratio", "m_ratio_low", "m_ratio_high",
        "expected_type2_auroc", "expected_conf_gap")}
    notes: dict[str, list[str | None]] = {"meta_d": [], "m_ratio": [], "expected": []}
    step = float(levels[1] - levels[0]) if k > 1 else 1.0
    even = bool(np.allclose(np.diff(levels), step))
    n_wrong = tables.wrong.sum(axis=1)  # conclusive errors: what the fits rest on
    for p, fit in enumerate(fits):
        flag = reasons.FEW_ERRORS if n_wrong[p] < scoring.few_errors else None
        notes["meta_d"].append(fit.note if fit.meta_d is None else flag)
        notes["m_ratio"].append(fit.note if fit.m_ratio is None else flag)
        if fit.meta_d is not None:
            cols["meta_d"][p] = fit.meta_d
            if fit.m_ratio is not None:
                cols["m_ratio"][p] = fit.m_ratio
            ci = intervals[p]
            if ci is not None:
                for name in ("meta_d_low", "meta_d_high", "m_ratio_low", "m_ratio_high"):
                    value = getattr(ci, name)
                    cols[name][p] = np.nan if value is None else value
        d, c = fit.d_prime, fit.criterion
        if d is None or c is None or k < 2 or not np.isfinite(d):
            notes["expected"].append(_IDEAL_NOTE)
            continue
        if k > MAX_LEVELS:  # the closed form solves 2(K−1) quantiles per participant
            notes["expected"].append(_IDEAL_LEVELS_NOTE)
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
