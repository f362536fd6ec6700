"""A seeded simulator of proficiency-testing rounds: the invented sample rounds and benchmark data.

Everything here is invented. The scenario of the sample rounds is a fictional provider,
"Harbourline Proficiency Services" of Port Ellery, running an annual facial image comparison (FIC)
round: each item pairs a body-worn-camera still with a reference portrait from a consented volunteer
session; examiners answer ``same`` / ``different`` / ``inconclusive`` with a confidence 1-5.
No real person, organisation, photograph or result is represented.

Latent model
------------
Each **examiner** ``p`` has, for a given year,

* ``d_prime``   ability, spread 0.5-3.5 (``0.5 + 3 * Beta(4, 1.8)``, mean about 2.6); a random
  quarter improve by 0.05-0.20 a year, and everyone drifts a little (normal, sd 0.12) from year to
  year;
* ``criterion`` response criterion ``c`` (normal, mean 0.4, sd 0.25): reluctant to say "same",
  the costly error in identification work, so misses outnumber false positives;
* ``band``      half-width of the inconclusive band around ``c``: light users of ``inconclusive``
  (0.03-0.25, seven in ten) and heavy users (0.45-0.9);
* ``m_ratio``   target metacognitive efficiency: good insight (0.8-1.0, four in ten), middling
  (0.45-0.8) and poor insight (0.2-0.45, a quarter);
* ``conf_shift`` shifts the confidence thresholds (normal, sd 0.15; negative: readier to say 4
  or 5);
* ``est_bias``  personal bias of the self-estimate (normal, sd 0.06).

Traits are drawn once per examiner and carried across years with the small drift above
(``criterion`` sd 0.08, ``band`` x lognormal sd 0.1, ``m_ratio`` sd 0.04, ``conf_shift`` sd 0.05).

Each **item** ``i`` has a truth ``s_i`` (+1 same source, -1 different source; half each),
attributes ``quality`` (good / fair / poor), ``pose`` (frontal / three-quarter / profile) and
``age_gap_years`` (years between the two photographs: 0-20 for every same-source pair; for a
different-source pair only where both capture dates were recorded, else blank). They set an
*ease* ``e_i`` in (0, 1]: quality x {1, 0.9, 0.75}, pose x {1, 0.92, 0.8}, and for same-source
pairs x ``exp(-age_gap / 60)``. Items also carry a shared shift ``delta_i`` (normal, sd 0.15); about
one in thirty items is a trap - a look-alike different-source pair or a changed-appearance
same-source pair - whose shift of 0.6-1.0 points towards the wrong answer, so that even strong
examiners sometimes answer against the key.

Type-1 evidence: ``x = s_i * d_prime * e_i / 2 + delta_i + N(0, 1)``.
Decision: ``same`` if ``x > c + band``, ``different`` if ``x < c - band``, else ``inconclusive``.

Type-2 evidence, for confidence, follows the meta-d' model of Maniscalco & Lau (2012): a second
SDT observer whose sensitivity is ``m * d'`` (``m = m_ratio``; evidence mean ``m * mean(x)``,
criterion and band edges ``m * (c +- band)``, unit noise) is read on the side of the decision
actually made, i.e. ``y`` is drawn from that observer's normal distribution truncated to the
decision's side of its band edge. ``m = 1`` gives confidence as informative as the decision itself;
``m = 0.3`` gives confidence that hardly separates right from wrong. With no inconclusive band the
M-ratio estimated by maximum likelihood recovers ``m`` (checked by simulation over d' 1-3); with a
band it comes out lower, because the conclusive-only table inflates d' (a property of scoring
conclusive answers only, not of the simulator). For a conclusive answer the confidence is 1 + the
number of thresholds ``s_p * (conf_shift + (0.1, 0.3, 0.65, 1.15))`` that the depth of ``y`` beyond
its band edge exceeds, where ``s_p = sqrt(1 + mean_i (m * (mean(x) - c))^2)`` is the spread of the
examiner's own type-2 evidence - so weak examiners use the whole scale too and come out
overconfident. For ``inconclusive`` the confidence (in that conclusion) is higher the nearer
``x + (1 - m) * N(0, 1)`` lies to ``c``: 1 + the number of ``(0, 0.35, 0.7, 0.92)`` that
``1 - |y - c| / band`` exceeds.

Self-estimate (``when = after``): percent of items the examiner believes they answered correctly,
``100 * (accuracy + 0.03 + 0.3 * (group mean accuracy - accuracy) + est_bias + N(0, 0.03))``,
rounded and clipped to 0-100. The weak thus tend to overestimate a little, the strong to
underestimate a little. About nine in ten examiners return an estimate.

The examiner who never errs
---------------------------
In the sample rounds the examiner :data:`NEVER_ERRS` (``"E0107"``) takes part every year with high
ability (d' 3.5), a conservative criterion and a moderate inconclusive band, and always returns an
estimate; the few answers of theirs that the model makes wrong (typically traps) are turned into
``inconclusive`` with confidence 2, so they make no error in any of the three years - a case where
the insight indices are not estimable ("no errors").

Participation
-------------
The sample pool has stable codes across years, numbered in order of registration: ``E`` + four
digits, and seven purely numeric codes with leading zeros (e.g. ``"0028"``) to exercise text
handling. FIC-2024 has 120 examiners; ten leave after 2024, two skip 2025 and return in 2026, twelve
join in 2025, nine leave after 2025 and nine join in 2026. Fifteen invented organisations; four
have fewer than five members in the pool (a few more fall below five in a given round).

Determinism
-----------
Every draw comes from :func:`numpy.random.default_rng` seeded with a tuple of fixed integers; no
wall clock is read. Rows are sorted: participants by code, items in key order. CSV files are UTF-8
with ``\\n`` line endings; the xlsx workbook has its document dates fixed to the round's issue date
and fixed zip entry timestamps, so two generations are byte-identical.
"""

from __future__ import annotations

import datetime as dt
import io
import math
import zipfile
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

import numpy as np
import numpy.typing as npt
import pandas as pd
from scipy import special

__all__ = [
    "DECISIONS",
    "NEVER_ERRS",
    "ORGANISATIONS",
    "SAMPLE_LAYOUTS",
    "SAMPLE_SEED",
    "SAMPLE_YEARS",
    "Layout",
    "ResponsesFormat",
    "RoundMeta",
    "SimulatedRound",
    "round_toml",
    "sample_rounds",
    "simulate_round",
    "summary",
    "write_round",
    "write_sample_rounds",
]

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

QUALITIES = ("good", "fair", "poor")
_QUALITY_P = (0.45, 0.35, 0.20)
_QUALITY_EASE = (1.0, 0.9, 0.75)
POSES = ("frontal", "three-quarter", "profile")
_POSE_P = (0.5, 0.35, 0.15)
_POSE_EASE = (1.0, 0.92, 0.8)
_AGE_SCALE = 60.0

_CONF_STEPS = np.array([0.1, 0.3, 0.65, 1.15])
_INCONCLUSIVE_STEPS = np.array([0.0, 0.35, 0.7, 0.92])

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
_SMALL_ORG_SIZES = (4, 3, 2, 1)  # sample pool: the last four organisations, fixed small sizes

_FIRST_ON = ("Al", "Be", "Ca", "Da", "E", "Fi", "Ga", "Ha", "I", "Jo", "Ka", "Le", "Mi", "No",
             "O", "Pe", "Ri", "Sa", "Te", "Va", "Yo", "Zu")
_FIRST_END = ("ra", "na", "lin", "ren", "mo", "sa", "thea", "vi", "dan", "el", "rin", "la")
_LAST_ON = ("Ash", "Bram", "Cor", "Dal", "Fen", "Gar", "Hol", "Kel", "Lor", "Mar", "Nor", "Pen",
            "Quil", "Rad", "Sel", "Tor", "Var", "Wen", "Ell", "Tam")
_LAST_END = ("by", "ford", "wick", "ton", "more", "ley", "dale", "mere", "rick", "stead", "croft",
             "holm")


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


# ---------------------------------------------------------------------------------------------
# Latent examiners and items


@dataclass(frozen=True)
class _Examiners:
    code: npt.NDArray[np.str_]
    d_prime: FloatArray
    trend: FloatArray
    criterion: FloatArray
    band: FloatArray
    m_ratio: FloatArray
    conf_shift: FloatArray
    est_bias: FloatArray
    perfect: BoolArray

    def take(self, idx: IntArray) -> _Examiners:
        return _Examiners(*(getattr(self, f)[idx] for f in _EXAMINER_FIELDS))


_EXAMINER_FIELDS = ("code", "d_prime", "trend", "criterion", "band", "m_ratio", "conf_shift",
                    "est_bias", "perfect")


def _draw_traits(n: int, codes: npt.NDArray[np.str_], rng: np.random.Generator) -> _Examiners:
    d_prime = 0.5 + 3.0 * rng.beta(4.0, 1.8, n)
    improving = rng.random(n) < 0.25
    trend = np.where(improving, rng.uniform(0.05, 0.20, n), 0.0)
    criterion = rng.normal(0.4, 0.25, n)
    heavy = rng.random(n) < 0.3
    band = np.where(heavy, rng.uniform(0.45, 0.9, n), rng.uniform(0.03, 0.25, n))
    group = rng.choice(3, size=n, p=[0.4, 0.35, 0.25])
    m_ratio = np.choose(group, [rng.uniform(0.8, 1.0, n), rng.uniform(0.45, 0.8, n),
                                rng.uniform(0.2, 0.45, n)])
    conf_shift = rng.normal(0.0, 0.15, n)
    est_bias = rng.normal(0.0, 0.06, n)
    return _Examiners(code=codes, d_prime=d_prime, trend=trend, criterion=criterion, band=band,
                      m_ratio=m_ratio, conf_shift=conf_shift, est_bias=est_bias,
                      perfect=np.zeros(n, dtype=np.bool_))


def _make_perfect(ex: _Examiners, idx: int) -> None:
    """Give examiner ``idx`` the traits of a strong, careful examiner (arrays are mutated)."""
    ex.d_prime[idx] = 3.5
    ex.trend[idx] = 0.02
    ex.criterion[idx] = 0.3
    ex.band[idx] = 0.45
    ex.m_ratio[idx] = 0.9
    ex.conf_shift[idx] = 0.1
    ex.est_bias[idx] = -0.02
    ex.perfect[idx] = True


def _format_codes(numbers: IntArray, numeric: BoolArray) -> npt.NDArray[np.str_]:
    width = max(4, len(str(int(numbers.max()))) if numbers.size else 4)
    return np.array([f"{n:0{width}d}" if bare else f"E{n:0{width}d}"
                     for n, bare in zip(numbers.tolist(), numeric.tolist(), strict=True)])


def _names(n: int, rng: np.random.Generator) -> npt.NDArray[np.str_]:
    """Invented names built from syllables, unique while the combinations last."""
    firsts = np.array([a + b for a in _FIRST_ON for b in _FIRST_END])
    lasts = np.array([a + b for a in _LAST_ON for b in _LAST_END])
    combos = firsts.size * lasts.size
    pick = rng.choice(combos, size=n, replace=n > combos)
    out: npt.NDArray[np.str_] = np.char.add(np.char.add(firsts[pick // lasts.size], " "),
                                            lasts[pick % lasts.size])
    return out


@dataclass(frozen=True)
class _Items:
    ids: tuple[str, ...]
    truth: npt.NDArray[np.int8]
    quality: IntArray
    pose: IntArray
    age_gap: IntArray  # -1 where blank
    ease: FloatArray
    shift: FloatArray

    def table(self) -> pd.DataFrame:
        gap = pd.array([None if g < 0 else int(g) for g in self.age_gap.tolist()], dtype="Int64")
        return pd.DataFrame({
            "item": list(self.ids),
            "truth": np.where(self.truth == 1, "same", "different"),
            "quality": np.array(QUALITIES)[self.quality],
            "age_gap_years": gap,
            "pose": np.array(POSES)[self.pose],
        })


def _draw_items(n_items: int, rng: np.random.Generator) -> _Items:
    width = max(2, len(str(n_items)))
    ids = tuple(f"P{k:0{width}d}" for k in range(1, n_items + 1))
    truth = np.zeros(n_items, dtype=np.int8)
    truth[rng.permutation(n_items)[: (n_items + 1) // 2]] = 1
    quality = rng.choice(3, size=n_items, p=_QUALITY_P).astype(np.int64)
    pose = rng.choice(3, size=n_items, p=_POSE_P).astype(np.int64)
    # Same-source: years between the photographs, skewed towards small gaps.
    gap_same = np.minimum(20, np.floor(rng.exponential(6.0, n_items))).astype(np.int64)
    recorded = rng.random(n_items) < 0.35
    gap_diff = np.where(recorded, rng.integers(0, 16, n_items), -1)
    age_gap = np.where(truth == 1, gap_same, gap_diff).astype(np.int64)
    ease = (np.asarray(_QUALITY_EASE)[quality] * np.asarray(_POSE_EASE)[pose]
            * np.where(truth == 1, np.exp(-np.maximum(age_gap, 0) / _AGE_SCALE), 1.0))
    sign = np.where(truth == 1, 1.0, -1.0)
    shift = rng.normal(0.0, 0.15, n_items)
    # A few traps: look-alike different-source pairs, changed-appearance same-source pairs.
    n_traps = max(1, round(n_items / 30))
    for cls, size in ((0, n_traps), (1, max(1, n_traps - 1))):
        pool = np.flatnonzero(truth == cls)
        chosen = rng.choice(pool, size=min(size, pool.size), replace=False)
        shift[chosen] = -sign[chosen] * rng.uniform(0.6, 1.0, chosen.size)
    return _Items(ids=ids, truth=truth, quality=quality, pose=pose, age_gap=age_gap,
                  ease=ease.astype(np.float64), shift=shift)


# ---------------------------------------------------------------------------------------------
# Responses


def _year_traits(ex: _Examiners, year: int, base_year: int,
                 rng: np.random.Generator) -> dict[str, FloatArray]:
    n = ex.code.size
    years = year - base_year
    drift = rng.normal(0.0, 0.12, n) if years else np.zeros(n)
    d_prime = np.clip(ex.d_prime + ex.trend * years + drift, 0.4, 3.8)
    d_prime = np.where(ex.perfect, ex.d_prime + ex.trend * years, d_prime)
    return {
        "d_prime": d_prime,
        "criterion": ex.criterion + (rng.normal(0.0, 0.08, n) if years else 0.0),
        "band": ex.band * (np.exp(rng.normal(0.0, 0.1, n)) if years else 1.0),
        "m_ratio": np.clip(ex.m_ratio + (rng.normal(0.0, 0.04, n) if years else 0.0), 0.15, 1.0),
        "conf_shift": ex.conf_shift + (rng.normal(0.0, 0.05, n) if years else 0.0),
    }


def _respond(traits: Mapping[str, FloatArray], perfect: BoolArray, items: _Items,
             rng: np.random.Generator) -> tuple[npt.NDArray[np.int8], npt.NDArray[np.int8]]:
    """Decision codes (0 different, 1 same, 2 inconclusive) and confidences, each p x i."""
    n_p, n_i = traits["d_prime"].size, len(items.ids)
    sign = np.where(items.truth == 1, 1.0, -1.0)
    mean = (traits["d_prime"][:, None] * (sign * items.ease / 2.0)[None, :]
            + items.shift[None, :])
    x = mean + rng.standard_normal((n_p, n_i))
    c = traits["criterion"][:, None]
    band = traits["band"][:, None]
    decision = np.full((n_p, n_i), 2, dtype=np.int8)
    decision[x > c + band] = 1
    decision[x < c - band] = 0

    # Type-2 evidence from the meta-d' model: an SDT observer whose sensitivity is m * d'
    # (means m * mean, criterion and band edges m * (c +- band)), drawn by inverse CDF from the
    # normal truncated to the side of the decision actually made.
    m = traits["m_ratio"][:, None]
    meta_mean = m * mean
    said_same = decision == 1
    upper_tail = np.where(said_same, meta_mean - m * (c + band), m * (c - band) - meta_mean)
    u = special.ndtr(upper_tail) * (1.0 - rng.random((n_p, n_i)))  # in (0, P(decision side)]
    depth = np.maximum(upper_tail - special.ndtri(u), 0.0)  # how far y lies beyond the edge
    spread = np.sqrt(1.0 + np.mean(np.square(meta_mean - m * c), axis=1, keepdims=True))
    steps = spread[:, :, None] * (traits["conf_shift"][:, None, None] + _CONF_STEPS[None, None, :])
    conf_decisive = 1 + (depth[:, :, None] > steps).sum(axis=2)
    # Inconclusive: confidence in that conclusion grows the nearer x lies to c (noisy by 1 - m).
    y = x + (1.0 - m) * rng.standard_normal((n_p, n_i))
    closeness = 1.0 - np.abs(y - c) / np.maximum(band, 0.05)
    conf_inconclusive = 1 + (closeness[:, :, None] > _INCONCLUSIVE_STEPS).sum(axis=2)
    confidence = np.where(decision == 2, conf_inconclusive, conf_decisive).astype(np.int8)

    if perfect.any():
        wrong = (decision != 2) & (decision != items.truth[None, :]) & perfect[:, None]
        decision[wrong] = 2
        confidence[wrong] = 2
    return decision, confidence


def _estimates(codes: npt.NDArray[np.str_], decision: npt.NDArray[np.int8],
               truth: npt.NDArray[np.int8], est_bias: FloatArray, always: BoolArray,
               rng: np.random.Generator) -> pd.DataFrame:
    accuracy = (decision == truth[None, :]).mean(axis=1)
    believed = (accuracy + 0.03 + 0.3 * (accuracy.mean() - accuracy) + est_bias
                + rng.normal(0.0, 0.03, accuracy.size))
    estimate = np.clip(np.rint(100.0 * believed), 0, 100).astype(np.int64)
    returned = (rng.random(accuracy.size) < 0.9) | always
    return pd.DataFrame({
        "participant": codes[returned],
        "estimate": estimate[returned],
        "when": "after",
    }).reset_index(drop=True)


def _build(meta: RoundMeta, ex: _Examiners, names: npt.NDArray[np.str_],
           orgs: npt.NDArray[np.str_], items: _Items, base_year: int,
           rng: np.random.Generator) -> SimulatedRound:
    order = np.argsort(ex.code, kind="stable")
    ex = ex.take(order)
    names, orgs = names[order], orgs[order]
    traits = _year_traits(ex, meta.year, base_year, rng)
    decision, confidence = _respond(traits, ex.perfect, items, rng)
    n_p, n_i = decision.shape
    responses = pd.DataFrame({
        "participant": np.repeat(ex.code, n_i),
        "item": np.tile(np.array(items.ids), n_p),
        "decision": np.array(DECISIONS)[decision.ravel()],
        "confidence": confidence.ravel().astype(np.int64),
    })
    participants = pd.DataFrame({"participant": ex.code, "name": names, "organisation": orgs})
    estimates = _estimates(ex.code, decision, items.truth, ex.est_bias, ex.perfect, rng)
    latent = pd.DataFrame({"participant": ex.code, **traits, "never_errs": ex.perfect})
    return SimulatedRound(meta=meta, items=items.table(), responses=responses,
                          participants=participants, estimates=estimates, latent=latent)


def _meta(year: int, n_items: int, round_id: str | None = None) -> RoundMeta:
    issued = _third_friday_of_may(year)
    return RoundMeta(round_id=round_id or f"FIC-{year}", year=year, n_items=n_items,
                     opened=_first_weekday(dt.date(year, 3, 1)),
                     closed=_first_weekday(dt.date(year, 4, 10)), issued=issued,
                     scoring_seed=year)


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
    codes = _format_codes(numbers, rng.random(n_participants) < numeric_code_share)
    ex = _draw_traits(n_participants, codes, rng)
    weights = np.array([w for _, w in ORGANISATIONS])
    org_idx = rng.choice(len(ORGANISATIONS), size=n_participants, p=weights / weights.sum())
    orgs = np.array([o for o, _ in ORGANISATIONS])[org_idx]
    names = _names(n_participants, rng)
    items = _draw_items(n_items, rng)
    return _build(_meta(year, n_items, round_id), ex, names, orgs, items, year, rng)


# ---------------------------------------------------------------------------------------------
# The sample rounds: one stable pool of examiners over three years


def _sample_pool(seed: int) -> tuple[_Examiners, npt.NDArray[np.str_], npt.NDArray[np.str_],
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
    codes = _format_codes(numbers, numeric)

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
    ex = _draw_traits(n, codes, rng)
    _make_perfect(ex, int(np.flatnonzero(is_perfect)[0]))

    names = _names(n, rng)
    # Organisations: fixed small sizes for the last four, the rest by weight.
    n_big = len(ORGANISATIONS) - len(_SMALL_ORG_SIZES)
    weights = np.array([w for _, w in ORGANISATIONS[:n_big]])
    rest = n - sum(_SMALL_ORG_SIZES)
    sizes = np.floor(rest * weights / weights.sum()).astype(np.int64)
    sizes[: rest - int(sizes.sum())] += 1
    labels = np.repeat(np.array([o for o, _ in ORGANISATIONS]),
                       np.concatenate([sizes, np.array(_SMALL_ORG_SIZES)]))
    orgs = labels[rng.permutation(n)]
    return ex, names, orgs, mask


def sample_rounds(seed: int = SAMPLE_SEED) -> dict[int, SimulatedRound]:
    """The three invented sample rounds FIC-2024, FIC-2025 and FIC-2026, keyed by year."""
    ex, names, orgs, mask = _sample_pool(seed)
    out: dict[int, SimulatedRound] = {}
    for k, year in enumerate(SAMPLE_YEARS):
        rng = np.random.default_rng((seed, year))
        idx = np.flatnonzero(mask[:, k]).astype(np.int64)
        items = _draw_items(60, rng)
        out[year] = _build(_meta(year, 60), ex.take(idx), names[idx], orgs[idx], items,
                           SAMPLE_YEARS[0], rng)
    return out


# ---------------------------------------------------------------------------------------------
# round.toml


def _toml_str(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'


def round_toml(meta: RoundMeta, *, layout: Layout = "long") -> str:
    """round.toml text for a simulated round (the shape of docs/example-round.toml)."""
    files = '[files]\nlayout = "long"\n'
    if layout == "wide":
        files = ('[files]\nlayout = "wide"\n\n'
                 "[wide]\n"
                 'decision = "{item}_decision"\n'
                 'confidence = "{item}_confidence"\n')
    title = (f"Annual round {meta.year}: body-worn camera stills against reference portraits")
    return f"""\
# Invented sample round, generated by scripts/make_sample_rounds.py (reportgen.simulate).
# Provider, participants, organisations and results are fictional.

[round]
id = {_toml_str(meta.round_id)}
scheme = "Facial image comparison (FIC)"
title = {_toml_str(title)}
opened = {meta.opened.isoformat()}
closed = {meta.closed.isoformat()}
issued = {meta.issued.isoformat()}
status = "final"
coordinator = "Round coordinator, Harbourline Proficiency Services"
key_statement = \"\"\"Every pair was assembled from consented volunteer sessions in which the \\
identity of each person photographed was recorded at capture; same-source pairs show one \\
volunteer, different-source pairs two volunteers matched on apparent age band and sex.\"\"\"
description = "{meta.n_items} image pairs; each examiner decides same person, different persons \
or inconclusive."

[provider]
name = "Harbourline Proficiency Services"
address = "12 Quay Lane, Port Ellery"
contact = "rounds@harbourline.example"
accent = "#5f6b73"

[classes]
labels = ["same", "different"]
positive = "same"

[decisions]
same = "same"
different = "different"
inconclusive = "inconclusive"

[confidence]
kind = "ordinal"
min = 1
max = 5
probability_map = "linear"   # convention: 1 -> 0.5 ... 5 -> 1.0
map_low = 0.5

[scoring]
interval = "wilson"
inconclusive_is_error = false
allow_missing = false
normalise_labels = false
seed = {meta.scoring_seed}

{files}
[columns]
participant = "participant"
item = "item"
truth = "truth"
decision = "decision"
confidence = "confidence"

[[criteria]]
id = "C1"
label = "False positive rate of at most 5 %"
metric = "false_positive_rate"
at_most = 0.05

[[criteria]]
id = "C2"
label = "Accuracy of at least 0.70"
metric = "accuracy"
at_least = 0.70

[[criteria]]
id = "C3"
label = "Accuracy within the group's robust range"
metric = "accuracy"
kind = "z"
worse = "low"
"""


# ---------------------------------------------------------------------------------------------
# Writing


def _csv_bytes(table: pd.DataFrame) -> bytes:
    text = table.to_csv(index=False, lineterminator="\n")
    return text.encode("utf-8")


_NS_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_NS_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_NS_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
_XML_HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
_CT = "application/vnd.openxmlformats-"


def _xml_text(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _column_letter(index: int) -> str:
    """0 -> A, 25 -> Z, 26 -> AA."""
    letters = ""
    index += 1
    while index:
        index, rem = divmod(index - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


def _xlsx_cells(values: npt.NDArray[np.object_], column: str, first_row: int) -> list[str]:
    """``<c>`` elements of one column; strings are inline and formatted as text (``@``)."""
    out = []
    for row, value in enumerate(values.tolist(), start=first_row):
        ref = f"{column}{row}"
        if isinstance(value, str):
            space = ' xml:space="preserve"' if value != value.strip() else ""
            out.append(f'<c r="{ref}" s="1" t="inlineStr"><is><t{space}>{_xml_text(value)}'
                       "</t></is></c>")
        elif value is None or (isinstance(value, float) and math.isnan(value)):
            out.append("")
        elif isinstance(value, bool):
            out.append(f'<c r="{ref}" t="b"><v>{int(value)}</v></c>')
        elif isinstance(value, int | float):
            out.append(f'<c r="{ref}"><v>{value!r}</v></c>')
        else:
            raise TypeError(f"cannot write {type(value).__name__} to a workbook cell")
    return out


def _xlsx_bytes(table: pd.DataFrame, when: dt.date, sheet: str = "responses") -> bytes:
    """A minimal, deterministic xlsx workbook of one sheet, written directly (no wall clock).

    The document properties ``created`` and ``modified`` and every zip entry's timestamp are the
    given date; strings are inline strings with the text number format, so codes keep their
    leading zeros; integers are numbers.
    """
    n_rows, n_cols = table.shape
    letters = [_column_letter(j) for j in range(n_cols)]
    header = [f"{_column_letter(j)}1" for j in range(n_cols)]
    columns = []
    for j, name in enumerate(table.columns):
        values = table[name].to_numpy(dtype=object)
        cells = _xlsx_cells(values, letters[j], 2)
        columns.append(cells)
    head = "".join(f'<c r="{ref}" s="1" t="inlineStr"><is><t>{_xml_text(str(name))}</t></is></c>'
                   for ref, name in zip(header, table.columns, strict=True))
    rows = [f'<row r="1">{head}</row>']
    rows.extend(f'<row r="{k + 2}">{"".join(cells)}</row>'
                for k, cells in enumerate(zip(*columns, strict=True)))
    last = f"{letters[-1]}{n_rows + 1}" if n_cols else "A1"
    sheet_xml = (f'{_XML_HEAD}<worksheet xmlns="{_NS_MAIN}"><dimension ref="A1:{last}"/>'
                 f'<sheetData>{"".join(rows)}</sheetData></worksheet>')
    stamp = f"{when.isoformat()}T00:00:00Z"
    parts = {
        "[Content_Types].xml": (
            f'{_XML_HEAD}<Types xmlns="http://schemas.openxmlformats.org/package/2006/'
            'content-types">'
            f'<Default Extension="rels" ContentType="{_CT}package.relationships+xml"/>'
            '<Default Extension="xml" ContentType="application/xml"/>'
            '<Override PartName="/xl/workbook.xml" ContentType="'
            f'{_CT}officedocument.spreadsheetml.sheet.main+xml"/>'
            '<Override PartName="/xl/worksheets/sheet1.xml" ContentType="'
            f'{_CT}officedocument.spreadsheetml.worksheet+xml"/>'
            '<Override PartName="/xl/styles.xml" ContentType="'
            f'{_CT}officedocument.spreadsheetml.styles+xml"/>'
            '<Override PartName="/docProps/core.xml" ContentType="'
            f'{_CT}package.core-properties+xml"/>'
            '<Override PartName="/docProps/app.xml" ContentType="'
            f'{_CT}officedocument.extended-properties+xml"/>'
            "</Types>"),
        "_rels/.rels": (
            f'{_XML_HEAD}<Relationships xmlns="{_NS_PKG_REL}">'
            f'<Relationship Id="rId1" Type="{_NS_REL}/officeDocument" Target="xl/workbook.xml"/>'
            '<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/package/2006/'
            'relationships/metadata/core-properties" Target="docProps/core.xml"/>'
            f'<Relationship Id="rId3" Type="{_NS_REL}/extended-properties" '
            'Target="docProps/app.xml"/>'
            "</Relationships>"),
        "docProps/core.xml": (
            f"{_XML_HEAD}<cp:coreProperties xmlns:cp=\"http://schemas.openxmlformats.org/package/"
            '2006/metadata/core-properties" xmlns:dc="http://purl.org/dc/elements/1.1/" '
            'xmlns:dcterms="http://purl.org/dc/terms/" '
            'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">'
            "<dc:creator>reportgen.simulate</dc:creator>"
            f'<dcterms:created xsi:type="dcterms:W3CDTF">{stamp}</dcterms:created>'
            f'<dcterms:modified xsi:type="dcterms:W3CDTF">{stamp}</dcterms:modified>'
            "</cp:coreProperties>"),
        "docProps/app.xml": (
            f'{_XML_HEAD}<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/'
            '2006/extended-properties"><Application>reportgen.simulate</Application></Properties>'),
        "xl/workbook.xml": (
            f'{_XML_HEAD}<workbook xmlns="{_NS_MAIN}" xmlns:r="{_NS_REL}">'
            f'<sheets><sheet name="{_xml_text(sheet)}" sheetId="1" r:id="rId1"/></sheets>'
            "</workbook>"),
        "xl/_rels/workbook.xml.rels": (
            f'{_XML_HEAD}<Relationships xmlns="{_NS_PKG_REL}">'
            f'<Relationship Id="rId1" Type="{_NS_REL}/worksheet" Target="worksheets/sheet1.xml"/>'
            f'<Relationship Id="rId2" Type="{_NS_REL}/styles" Target="styles.xml"/>'
            "</Relationships>"),
        "xl/styles.xml": (
            f'{_XML_HEAD}<styleSheet xmlns="{_NS_MAIN}">'
            '<fonts count="1"><font><sz val="11"/><name val="Calibri"/></font></fonts>'
            '<fills count="2"><fill><patternFill patternType="none"/></fill>'
            '<fill><patternFill patternType="gray125"/></fill></fills>'
            '<borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border>'
            "</borders>"
            '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/>'
            "</cellStyleXfs>"
            '<cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/>'
            '<xf numFmtId="49" fontId="0" fillId="0" borderId="0" xfId="0" '
            'applyNumberFormat="1"/></cellXfs>'
            '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/>'
            "</cellStyles></styleSheet>"),
        "xl/worksheets/sheet1.xml": sheet_xml,
    }
    out = io.BytesIO()
    date_time = (when.year, when.month, when.day, 0, 0, 0)
    with zipfile.ZipFile(out, "w") as zf:
        for name, text in parts.items():
            entry = zipfile.ZipInfo(name, date_time=date_time)
            entry.compress_type = zipfile.ZIP_DEFLATED
            entry.external_attr = 0o644 << 16
            zf.writestr(entry, text.encode("utf-8"))
    return out.getvalue()


def _write(path: Path, data: bytes) -> None:
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_bytes(data)
    tmp.replace(path)


def write_round(sim: SimulatedRound, folder: Path | str, *,
                responses_format: ResponsesFormat = "csv", layout: Layout = "long") -> Path:
    """Write a round folder: round.toml, items.csv, responses.{csv,xlsx}, participants.csv,
    estimates.csv. A responses file of the other format left from an earlier run is removed."""
    if responses_format not in ("csv", "xlsx"):
        raise ValueError(f"responses_format must be 'csv' or 'xlsx', not {responses_format!r}")
    if layout not in ("long", "wide"):
        raise ValueError(f"layout must be 'long' or 'wide', not {layout!r}")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    _write(folder / "round.toml", round_toml(sim.meta, layout=layout).encode("utf-8"))
    _write(folder / "items.csv", _csv_bytes(sim.items))
    responses = sim.wide_responses() if layout == "wide" else sim.responses
    other = "xlsx" if responses_format == "csv" else "csv"
    (folder / f"responses.{other}").unlink(missing_ok=True)
    if responses_format == "csv":
        _write(folder / "responses.csv", _csv_bytes(responses))
    else:
        _write(folder / "responses.xlsx", _xlsx_bytes(responses, sim.meta.issued))
    _write(folder / "participants.csv", _csv_bytes(sim.participants))
    _write(folder / "estimates.csv", _csv_bytes(sim.estimates))
    return folder


def write_sample_rounds(dest: Path | str, seed: int = SAMPLE_SEED) -> list[Path]:
    """Regenerate the sample rounds into ``dest/fic-2024`` ... ``dest/fic-2026``."""
    dest = Path(dest)
    written = []
    for year, sim in sample_rounds(seed).items():
        fmt, layout = SAMPLE_LAYOUTS[year]
        written.append(write_round(sim, dest / f"fic-{year}", responses_format=fmt,
                                   layout=layout))
    return written


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
