"""The latent model: examiners, items, and the answers, confidences and self-estimates they give.

See the package docstring (scripts/simulator/__init__.py) for the model in words.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import pandas as pd
from scipy import special

from scripts.simulator.scenario import BoolArray, FloatArray, IntArray

QUALITIES = ("good", "fair", "poor")
_QUALITY_P = (0.45, 0.35, 0.20)
_QUALITY_EASE = (1.0, 0.9, 0.75)
POSES = ("frontal", "three-quarter", "profile")
_POSE_P = (0.5, 0.35, 0.15)
_POSE_EASE = (1.0, 0.92, 0.8)
_AGE_SCALE = 60.0

_CONF_STEPS = np.array([0.1, 0.3, 0.65, 1.15])
_INCONCLUSIVE_STEPS = np.array([0.0, 0.35, 0.7, 0.92])

_FIRST_ON = ("Al", "Be", "Ca", "Da", "E", "Fi", "Ga", "Ha", "I", "Jo", "Ka", "Le", "Mi", "No",
             "O", "Pe", "Ri", "Sa", "Te", "Va", "Yo", "Zu")
_FIRST_END = ("ra", "na", "lin", "ren", "mo", "sa", "thea", "vi", "dan", "el", "rin", "la")
_LAST_ON = ("Ash", "Bram", "Cor", "Dal", "Fen", "Gar", "Hol", "Kel", "Lor", "Mar", "Nor", "Pen",
            "Quil", "Rad", "Sel", "Tor", "Var", "Wen", "Ell", "Tam")
_LAST_END = ("by", "ford", "wick", "ton", "more", "ley", "dale", "mere", "rick", "stead", "croft",
             "holm")


@dataclass(frozen=True)
class Examiners:
    code: npt.NDArray[np.str_]
    d_prime: FloatArray
    trend: FloatArray
    criterion: FloatArray
    band: FloatArray
    m_ratio: FloatArray
    conf_shift: FloatArray
    est_bias: FloatArray
    perfect: BoolArray

    def take(self, idx: IntArray) -> Examiners:
        return Examiners(*(getattr(self, f)[idx] for f in _EXAMINER_FIELDS))


_EXAMINER_FIELDS = ("code", "d_prime", "trend", "criterion", "band", "m_ratio", "conf_shift",
                    "est_bias", "perfect")


def draw_traits(n: int, codes: npt.NDArray[np.str_], rng: np.random.Generator) -> Examiners:
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
    return Examiners(code=codes, d_prime=d_prime, trend=trend, criterion=criterion, band=band,
                      m_ratio=m_ratio, conf_shift=conf_shift, est_bias=est_bias,
                      perfect=np.zeros(n, dtype=np.bool_))


def make_perfect(ex: Examiners, idx: int) -> None:
    """Give examiner ``idx`` the traits of a strong, careful examiner (arrays are mutated)."""
    ex.d_prime[idx] = 3.5
    ex.trend[idx] = 0.02
    ex.criterion[idx] = 0.3
    ex.band[idx] = 0.45
    ex.m_ratio[idx] = 0.9
    ex.conf_shift[idx] = 0.1
    ex.est_bias[idx] = -0.02
    ex.perfect[idx] = True


def format_codes(numbers: IntArray, numeric: BoolArray) -> npt.NDArray[np.str_]:
    width = max(4, len(str(int(numbers.max()))) if numbers.size else 4)
    return np.array([f"{n:0{width}d}" if bare else f"E{n:0{width}d}"
                     for n, bare in zip(numbers.tolist(), numeric.tolist(), strict=True)])


def draw_names(n: int, rng: np.random.Generator) -> npt.NDArray[np.str_]:
    """Invented names built from syllables, unique while the combinations last."""
    firsts = np.array([a + b for a in _FIRST_ON for b in _FIRST_END])
    lasts = np.array([a + b for a in _LAST_ON for b in _LAST_END])
    combos = firsts.size * lasts.size
    pick = rng.choice(combos, size=n, replace=n > combos)
    out: npt.NDArray[np.str_] = np.char.add(np.char.add(firsts[pick // lasts.size], " "),
                                            lasts[pick % lasts.size])
    return out


@dataclass(frozen=True)
class Items:
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


def draw_items(n_items: int, rng: np.random.Generator) -> Items:
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
    return Items(ids=ids, truth=truth, quality=quality, pose=pose, age_gap=age_gap,
                  ease=ease.astype(np.float64), shift=shift)


# ---------------------------------------------------------------------------------------------
# Responses


def year_traits(ex: Examiners, year: int, base_year: int,
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


def respond(traits: Mapping[str, FloatArray], perfect: BoolArray, items: Items,
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


def draw_estimates(codes: npt.NDArray[np.str_], decision: npt.NDArray[np.int8],
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

