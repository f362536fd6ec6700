"""Simulated rounds in memory: one round of any size, and the three sample rounds of one pool."""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import pandas as pd

from scripts.simulator.observers import (
    Examiners,
    Items,
    draw_estimates,
    draw_items,
    draw_names,
    draw_traits,
    format_codes,
    make_perfect,
    respond,
    year_traits,
)
from scripts.simulator.scenario import (
    DECISIONS,
    NEVER_ERRS,
    ORGANISATIONS,
    SAMPLE_SEED,
    SAMPLE_YEARS,
    SMALL_ORG_SIZES,
    BoolArray,
    RoundMeta,
)
from scripts.simulator.toml_text import round_toml


@dataclass(frozen=True, eq=False)
class SimulatedRound:
    """One simulated round, in memory.

    ``items``: item, truth, quality, age_gap_years (nullable Int64), pose - in key order.
    ``responses``: long table participant, item, decision, confidence - sorted by participant
    code, then item in key order. ``participants``: participant, name, organisation.
    ``estimates``: participant, estimate (integer percent), when. ``latent``: the examiners' latent
    traits for this year (not part of a round folder; for validation studies).
    """

    meta: RoundMeta
    items: pd.DataFrame
    responses: pd.DataFrame
    participants: pd.DataFrame
    estimates: pd.DataFrame
    latent: pd.DataFrame

    @property
    def round_toml(self) -> str:
        """round.toml text for the default long layout."""
        return round_toml(self.meta, layout="long")

    def wide_responses(self) -> pd.DataFrame:
        """One row per participant; columns ``{item}_decision`` and ``{item}_confidence``."""
        items = list(self.items["item"])
        n_i = len(items)
        codes = self.responses["participant"].to_numpy()[::n_i]
        dec = self.responses["decision"].to_numpy().reshape(-1, n_i)
        conf = self.responses["confidence"].to_numpy().reshape(-1, n_i)
        data: dict[str, object] = {"participant": codes}
        for j, item in enumerate(items):
            data[f"{item}_decision"] = dec[:, j]
            data[f"{item}_confidence"] = conf[:, j]
        return pd.DataFrame(data)


def _build(meta: RoundMeta, ex: Examiners, names: npt.NDArray[np.str_],
           orgs: npt.NDArray[np.str_], items: Items, base_year: int,
           rng: np.random.Generator) -> SimulatedRound:
    order = np.argsort(ex.code, kind="stable")
    ex = ex.take(order)
    names, orgs = names[order], orgs[order]
    traits = year_traits(ex, meta.year, base_year, rng)
    decision, confidence = respond(traits, ex.perfect, items, rng)
    n_p, n_i = decision.shape
    responses = pd.DataFrame({
        "participant": np.repeat(ex.code, n_i),
        "item": np.tile(np.array(items.ids), n_p),
        "decision": np.array(DECISIONS)[decision.ravel()],
        "confidence": confidence.ravel().astype(np.int64),
    })
    participants = pd.DataFrame({"participant": ex.code, "name": names, "organisation": orgs})
    estimates = draw_estimates(ex.code, decision, items.truth, ex.est_bias, ex.perfect, rng)
    latent = pd.DataFrame({"participant": ex.code, **traits, "never_errs": ex.perfect})
    return SimulatedRound(meta=meta, items=items.table(), responses=responses,
                          participants=participants, estimates=estimates, latent=latent)


def _meta(year: int, n_items: int, round_id: str | None = None,
          breakdown: tuple[str, ...] = ()) -> RoundMeta:
    issued = _third_friday_of_may(year)
    return RoundMeta(round_id=round_id or f"FIC-{year}", year=year, n_items=n_items,
                     opened=_first_weekday(dt.date(year, 3, 1)),
                     closed=_first_weekday(dt.date(year, 4, 10)), issued=issued,
                     scoring_seed=year, breakdown=breakdown)


def _first_weekday(day: dt.date) -> dt.date:
    while day.weekday() >= 5:
        day += dt.timedelta(days=1)
    return day


def _third_friday_of_may(year: int) -> dt.date:
    day = dt.date(year, 5, 1)
    day += dt.timedelta(days=(4 - day.weekday()) % 7)
    return day + dt.timedelta(days=14)


def simulate_round(n_participants: int = 120, n_items: int = 60, seed: int = 0, *,
                   year: int = 2026, round_id: str | None = None,
                   numeric_code_share: float = 0.03) -> SimulatedRound:
    """Simulate one round of ``n_participants`` examiners x ``n_items`` items (vectorised).

    Codes are ``E`` + zero-padded numbers, a share ``numeric_code_share`` of them purely numeric
    (e.g. ``"0042"``). The same ``seed`` and arguments always give the same tables.
    """
    if n_participants < 1 or n_items < 2:
        raise ValueError("need at least one participant and two items")
    rng = np.random.default_rng((seed, year, n_participants, n_items))
    numbers = np.sort(rng.choice(max(2 * n_participants, 100), size=n_participants,
                                 replace=False) + 1).astype(np.int64)
    codes = format_codes(numbers, rng.random(n_participants) < numeric_code_share)
    ex = draw_traits(n_participants, codes, rng)
    weights = np.array([w for _, w in ORGANISATIONS])
    org_idx = rng.choice(len(ORGANISATIONS), size=n_participants, p=weights / weights.sum())
    orgs = np.array([o for o, _ in ORGANISATIONS])[org_idx]
    names = draw_names(n_participants, rng)
    items = draw_items(n_items, rng)
    return _build(_meta(year, n_items, round_id), ex, names, orgs, items, year, rng)


# ---------------------------------------------------------------------------------------------
# The sample rounds: one stable pool of examiners over three years


def _sample_pool(seed: int) -> tuple[Examiners, npt.NDArray[np.str_], npt.NDArray[np.str_],
                                     BoolArray]:
    """Examiners, names, organisations and a (pool x 3 years) participation mask."""
    rng = np.random.default_rng((seed, 0))
    n_first, join_2025, join_2026 = 119, 12, 9
    leave_after_2024, skip_2025, leave_after_2025 = 10, 2, 9
    # Registration numbers: founders 1-399, later joiners above, in order of joining.
    perfect_number = int(NEVER_ERRS[1:])
    founders = rng.choice(np.setdiff1d(np.arange(1, 400), [perfect_number]), size=n_first,
                          replace=False)
    numbers = np.concatenate([
        np.sort(np.append(founders, perfect_number)),
        400 + np.sort(rng.choice(np.arange(1, 60), size=join_2025, replace=False)),
        460 + np.sort(rng.choice(np.arange(1, 60), size=join_2026, replace=False)),
    ]).astype(np.int64)
    n = numbers.size
    first_year = np.repeat([2024, 2025, 2026], [n_first + 1, join_2025, join_2026])
    is_perfect = numbers == perfect_number
    numeric = np.zeros(n, dtype=np.bool_)
    numeric[rng.choice(np.flatnonzero(~is_perfect & (numbers < 1000)), size=7,
                       replace=False)] = True
    codes = format_codes(numbers, numeric)

    mask = np.zeros((n, 3), dtype=np.bool_)
    mask[:, 0] = first_year == 2024
    mask[:, 1] = first_year <= 2025
    mask[:, 2] = True
    founders_idx = np.flatnonzero((first_year == 2024) & ~is_perfect)
    movers = rng.permutation(founders_idx)
    left_2024 = movers[:leave_after_2024]
    skipped = movers[leave_after_2024: leave_after_2024 + skip_2025]
    mask[left_2024, 1:] = False
    mask[skipped, 1] = False
    in_2025 = np.flatnonzero(mask[:, 1] & ~is_perfect)
    left_2025 = rng.choice(in_2025, size=leave_after_2025, replace=False)
    mask[left_2025, 2] = False
    ex = draw_traits(n, codes, rng)
    make_perfect(ex, int(np.flatnonzero(is_perfect)[0]))

    names = draw_names(n, rng)
    # Organisations: fixed small sizes for the last four, the rest by weight.
    n_big = len(ORGANISATIONS) - len(SMALL_ORG_SIZES)
    weights = np.array([w for _, w in ORGANISATIONS[:n_big]])
    rest = n - sum(SMALL_ORG_SIZES)
    sizes = np.floor(rest * weights / weights.sum()).astype(np.int64)
    sizes[: rest - int(sizes.sum())] += 1
    labels = np.repeat(np.array([o for o, _ in ORGANISATIONS]),
                       np.concatenate([sizes, np.array(SMALL_ORG_SIZES)]))
    orgs = labels[rng.permutation(n)]
    return ex, names, orgs, mask


SAMPLE_BREAKDOWN = ("quality", "pose")
"""[attributes] breakdown of the newest sample round: columns of its items file."""


def sample_rounds(seed: int = SAMPLE_SEED) -> dict[int, SimulatedRound]:
    """The three invented sample rounds FIC-2024, FIC-2025 and FIC-2026, keyed by year."""
    ex, names, orgs, mask = _sample_pool(seed)
    out: dict[int, SimulatedRound] = {}
    for k, year in enumerate(SAMPLE_YEARS):
        rng = np.random.default_rng((seed, year))
        idx = np.flatnonzero(mask[:, k]).astype(np.int64)
        items = draw_items(60, rng)
        # The newest round breaks its results down by image quality and pose.
        breakdown = SAMPLE_BREAKDOWN if year == SAMPLE_YEARS[-1] else ()
        out[year] = _build(_meta(year, 60, breakdown=breakdown), ex.take(idx), names[idx],
                           orgs[idx], items, SAMPLE_YEARS[0], rng)
    return out


def summary(sims: Sequence[SimulatedRound]) -> str:
    """A short plain-text summary of simulated rounds (for the regeneration script)."""
    lines = []
    for sim in sims:
        r = sim.responses
        truth = dict(zip(sim.items["item"], sim.items["truth"], strict=True))
        key = r["item"].map(truth)
        decisive = r["decision"] != "inconclusive"
        errors = int((decisive & (r["decision"] != key)).sum())
        lines.append(
            f"{sim.meta.round_id}: {sim.participants.shape[0]} participants x "
            f"{sim.items.shape[0]} items; inconclusive {math.fsum(~decisive) / len(r):.1%}, "
            f"errors {errors / len(r):.1%}, estimates {sim.estimates.shape[0]}"
        )
    return "\n".join(lines)
