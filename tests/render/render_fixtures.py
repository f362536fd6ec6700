"""A small, hand-built RoundResults for the rendering tests and the benchmark.

The dataclasses are constructed directly (no reading, no scoring module) so the rendering tests do
not move when scoring changes. Values are computed with simple textbook formulas so they look like
a real round; they are *not* reference values for scoring.

``build_results(n_participants, n_items)`` is deterministic. Participant 0 never errs (so the
"no errors" notes appear); participant 1 carries a hostile name to test escaping. The group views
(self-estimate quartiles, insight by ability, the ideal-observer curve) come from the pure
functions of ``reportgen.metrics``; ``estimates`` chooses their source ("file", "confidence" or
None for no view).
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path
from statistics import NormalDist

import numpy as np

from reportgen.metrics.ideal_observer import ideal_observer
from reportgen.metrics.selfestimate import (
    AbilityGroup,
    insight_by_ability,
    quartile_view,
)
from reportgen.results.model import (
    CriterionOutcome,
    Distribution,
    GroupResult,
    IdealPoint,
    ItemResult,
    LevelRow,
    Metric,
    ParticipantResult,
    RoundResults,
    SelfEstimateView,
)
from reportgen.rounds.model import (
    ABSTAINED,
    SAID_NEGATIVE,
    SAID_POSITIVE,
    Identity,
    Round,
    SourceFile,
)
from reportgen.rounds.schema import RoundConfig

ROOT = Path(__file__).resolve().parents[2]
HOSTILE_NAME = "<script>alert(1)</script>"
FEW_ERRORS = 5
Z = 1.959963984540054


def _norm_ppf(p: float) -> float:
    return NormalDist().inv_cdf(p)


def wilson(k: int, n: int) -> Metric:
    if n == 0:
        return Metric(None, note="no items of this kind")
    p = k / n
    denom = 1 + Z * Z / n
    centre = (p + Z * Z / (2 * n)) / denom
    half = Z * math.sqrt(p * (1 - p) / n + Z * Z / (4 * n * n)) / denom
    return Metric(p, max(0.0, centre - half), min(1.0, centre + half))


def _mann_whitney(pos: list[float], neg: list[float]) -> float | None:
    if not pos or not neg:
        return None
    wins = sum((a > b) + 0.5 * (a == b) for a in pos for b in neg)
    return float(wins / (len(pos) * len(neg)))


def _gamma(pos: list[float], neg: list[float]) -> float | None:
    c = sum(a > b for a in pos for b in neg)
    d = sum(a < b for a in pos for b in neg)
    return None if c + d == 0 else float((c - d) / (c + d))


def round_config(**provider: str) -> RoundConfig:
    data = tomllib.loads((ROOT / "docs" / "example-round.toml").read_text(encoding="utf-8"))
    data["provider"].update(provider)
    return RoundConfig.model_validate(data)


def build_round(n_participants: int = 8, n_items: int = 20, seed: int = 7,
                config: RoundConfig | None = None, folder: Path | None = None) -> Round:
    cfg = config or round_config()
    rng = np.random.default_rng(seed)
    truth = np.array([i % 2 for i in range(n_items)], dtype=np.int8)
    codes = tuple(f"P{p + 1:03d}" for p in range(n_participants))
    skill = np.linspace(2.6, 0.8, n_participants)
    evidence = (truth[None, :] - 0.5) * skill[:, None] + rng.normal(0, 1, (n_participants, n_items))
    decision = np.where(evidence > 0, SAID_POSITIVE, SAID_NEGATIVE).astype(np.int8)
    decision[np.abs(evidence) < 0.25] = ABSTAINED
    confidence = np.clip(np.round(1 + 1.6 * np.abs(evidence) + rng.normal(0, 0.6, evidence.shape)),
                         1, 5)
    decision[0] = np.where(truth == 1, SAID_POSITIVE, SAID_NEGATIVE)  # never errs
    decision[0, :2] = ABSTAINED
    confidence[0] = np.clip(confidence[0] + 1, 1, 5)
    labels = np.array(["different", "same", "inconclusive"])
    raw = labels[decision]
    identities = {code: Identity(f"Examiner {code[1:]}", f"Agency {(p % 3) + 1}")
                  for p, code in enumerate(codes)}
    identities[codes[1]] = Identity(HOSTILE_NAME, "Agency & Sons <Lab>")
    return Round(
        config=cfg,
        folder=folder or ROOT / "docs",
        sources=(SourceFile("round.toml", "0" * 64),),
        items=tuple(f"FIC-{i + 1:02d}" for i in range(n_items)),
        truth=truth,
        item_attributes={"quality": tuple("good" if i % 3 else "poor" for i in range(n_items))},
        participants=codes,
        decision=decision,
        confidence=confidence.astype(np.float64),
        raw_decision=raw,
        identities=identities,
    )


def _participant_metrics(rnd: Round, p: int) -> tuple[dict[str, int], dict[str, Metric],
                                                      tuple[LevelRow, ...]]:
    t, d, c = rnd.truth, rnd.decision[p], rnd.confidence[p]
    conclusive = d != ABSTAINED
    right = conclusive & (d == t)
    wrong = conclusive & (d != t)
    inc = d == ABSTAINED
    counts = {
        "items": int(t.size), "answered": int(t.size), "correct": int(right.sum()),
        "errors": int(wrong.sum()), "inconclusive": int(inc.sum()),
        "inconclusive_same": int((inc & (t == 1)).sum()),
        "inconclusive_different": int((inc & (t == 0)).sum()), "missing": 0,
        "missing_same": 0, "missing_different": 0, "n_items": int(t.size),
        "n_answered": int(t.size), "complete": 1, "in_group": 1,
        "false_positives": int((wrong & (t == 0)).sum()),
        "false_negatives": int((wrong & (t == 1)).sum()),
        "n_same": int((t == 1).sum()), "n_different": int((t == 0).sum()),
        "correct_same": int((right & (t == 1)).sum()),
        "correct_different": int((right & (t == 0)).sum()),
    }
    m: dict[str, Metric] = {
        "accuracy": wilson(counts["correct"], counts["items"]),
        "error_rate": wilson(counts["errors"], counts["items"]),
        "decisive_accuracy": wilson(counts["correct"], counts["correct"] + counts["errors"]),
        "false_positive_rate": wilson(counts["false_positives"], counts["n_different"]),
        "false_negative_rate": wilson(counts["false_negatives"], counts["n_same"]),
        "inconclusive_rate": wilson(counts["inconclusive"], counts["items"]),
    }
    n_s = counts["correct_same"] + counts["false_negatives"]
    n_n = counts["correct_different"] + counts["false_positives"]
    h = (counts["correct_same"] + 0.5) / (n_s + 1)
    f = (counts["false_positives"] + 0.5) / (n_n + 1)
    dp = _norm_ppf(h) - _norm_ppf(f)
    m["d_prime"] = Metric(dp, dp - 0.8, dp + 0.8)
    m["criterion"] = Metric(-(_norm_ppf(h) + _norm_ppf(f)) / 2)
    score = np.where(d == SAID_POSITIVE, c, np.where(d == SAID_NEGATIVE, -c, 0.0))
    auc = _mann_whitney(list(score[t == 1]), list(score[t == 0]))
    m["auc"] = Metric(auc, None if auc is None else max(0, auc - 0.1),
                      None if auc is None else min(1, auc + 0.1))
    cr, cw, ci = list(c[right]), list(c[wrong]), list(c[inc])
    m["mean_confidence_correct"] = Metric(float(np.mean(cr))) if cr else Metric(None, note="none")
    m["mean_confidence_wrong"] = (Metric(float(np.mean(cw))) if cw
                                  else Metric(None, note="no errors"))
    m["mean_confidence_inconclusive"] = (Metric(float(np.mean(ci))) if ci
                                         else Metric(None, note="no inconclusive answers"))
    caution = "few errors: unstable" if 0 < len(cw) < FEW_ERRORS else None
    if cw and cr:
        gap = float(np.mean(cr) - np.mean(cw))
        a2 = _mann_whitney(cr, cw) or 0.5
        m["conf_gap"] = Metric(gap, gap - 0.9, gap + 0.9, caution)
        m["type2_auroc"] = Metric(a2, max(0, a2 - 0.15), min(1, a2 + 0.15), caution)
        m["gamma"] = Metric(_gamma(cr, cw), note=caution)
        m["meta_d"] = Metric(0.8 * dp, 0.8 * dp - 1.1, 0.8 * dp + 1.1, caution)
        m["m_ratio"] = Metric(0.8, 0.2, 1.5, caution)
    else:
        for name in ("conf_gap", "type2_auroc", "gamma", "meta_d", "m_ratio"):
            m[name] = Metric(None, note="no errors")
    m["expected_type2_auroc"] = Metric(0.5 + 0.12 * dp)
    m["expected_conf_gap"] = Metric(0.5 * dp)
    prob = 0.5 + (c - 1) / 8
    conc = conclusive
    outcome = right[conc].astype(float)
    fc = prob[conc]
    m["overconfidence"] = Metric(float(fc.mean() - outcome.mean()))
    m["brier"] = Metric(float(np.mean((fc - outcome) ** 2)))
    m["brier_reliability"] = Metric(0.01)
    m["brier_resolution"] = Metric(0.02)
    m["brier_uncertainty"] = Metric(float(outcome.mean() * (1 - outcome.mean())))
    m["ece"] = Metric(abs(m["overconfidence"].value or 0.0))
    levels = tuple(
        LevelRow(level=float(k), correct=int((right & (c == k)).sum()),
                 wrong=int((wrong & (c == k)).sum()), inconclusive=int((inc & (c == k)).sum()),
                 probability=0.5 + (k - 1) / 8)
        for k in range(1, 6)
    )
    return counts, m, levels


def _criteria(rnd: Round, counts: dict[str, int], m: dict[str, Metric], z: float
              ) -> tuple[CriterionOutcome, ...]:
    out = []
    for crit in rnd.config.criteria:
        if crit.kind == "z":
            outcome = ("satisfactory" if abs(z) <= 2 or z > 0 else
                       "questionable" if abs(z) < 3 else "unsatisfactory")
            out.append(CriterionOutcome(crit.id, crit.label, crit.metric,
                                        m[crit.metric].value, outcome,  # type: ignore[arg-type]
                                        z=z))
            continue
        value = float(counts[crit.metric]) if crit.metric in counts else m[crit.metric].value
        ok = value is not None and (crit.at_least is None or value >= crit.at_least) and (
            crit.at_most is None or value <= crit.at_most)
        out.append(CriterionOutcome(crit.id, crit.label, crit.metric, value,
                                    "met" if ok else "not met"))
    return tuple(out)


def _distribution(values: list[float | None]) -> Distribution:
    v = np.array([x for x in values if x is not None], dtype=float)
    if v.size == 0:
        return Distribution(0, None, None, None, None, None, None, None)
    q1, med, q3 = np.percentile(v, [25, 50, 75])
    return Distribution(int(v.size), float(v.mean()), float(v.std(ddof=1)) if v.size > 1 else None,
                        float(v.min()), float(q1), float(med), float(q3), float(v.max()))


def _items(rnd: Round) -> tuple[ItemResult, ...]:
    out = []
    totals = (rnd.decision == rnd.truth[None, :]).sum(axis=1).astype(float)
    for i, item in enumerate(rnd.items):
        d = rnd.decision[:, i]
        right = d == rnd.truth[i]
        wrong = (d != ABSTAINED) & ~right
        inc = d == ABSTAINED
        rest = totals - right
        disc = (float(np.corrcoef(right.astype(float), rest)[0, 1])
                if right.std() > 0 and rest.std() > 0 else None)
        flagged = bool(right.mean() < 0.6)
        out.append(ItemResult(
            item=item, truth="same" if rnd.truth[i] else "different", answered=int(d.size),
            correct=int(right.sum()), wrong=int(wrong.sum()), inconclusive=int(inc.sum()),
            difficulty=float(right.mean()), discrimination=disc,
            inconclusive_rate=float(inc.mean()), flagged=flagged,
            strong_against=0.5 if flagged else None))
    return tuple(out)


NO_ESTIMATES_NOTE = "only 3 participants have both a score and an estimate (8 needed)"


PerParticipant = list[tuple[dict[str, int], dict[str, Metric], tuple[LevelRow, ...]]]


def _self_estimates(acc: np.ndarray, per: PerParticipant, estimates: str | None, seed: int
                    ) -> tuple[SelfEstimateView | None, str | None]:
    """Estimates that lean towards the middle (so the weakest overestimate), or mean confidence."""
    if estimates is None or acc.size < 8:
        return None, NO_ESTIMATES_NOTE
    if estimates == "file":
        rng = np.random.default_rng(seed)
        estimate = np.clip(0.5 * acc + 0.4 + rng.normal(0, 0.05, acc.size), 0, 1)
        view = quartile_view(acc, estimate, n_perm=500, seed=seed)
        return SelfEstimateView("estimates file", "accuracy", view), None
    conf = np.array([0.5 + ((m["mean_confidence_correct"].value or 3.0) - 1) / 8
                     for _, m, _ in per])
    decisive = np.array([m["decisive_accuracy"].value or 0.0 for _, m, _ in per])
    view = quartile_view(decisive, conf, n_perm=500, seed=seed)
    return SelfEstimateView("mean stated confidence", "decisive_accuracy", view), None


def _ability(per: PerParticipant) -> tuple[AbilityGroup, ...]:
    def col(name: str) -> list[float]:
        return [np.nan if (v := m[name].value) is None else v for _, m, _ in per]

    return insight_by_ability(col("accuracy"), col("mean_confidence_correct"),
                              col("mean_confidence_wrong"))


IDEAL_CURVE = tuple(IdealPoint(d, ideal_observer(d, 0.0, 5).type2_auroc)
                    for d in (0.5, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0))


def build_results(n_participants: int = 8, n_items: int = 20, seed: int = 7,
                  config: RoundConfig | None = None, folder: Path | None = None,
                  estimates: str | None = "file") -> RoundResults:
    rnd = build_round(n_participants, n_items, seed, config, folder)
    per = [_participant_metrics(rnd, p) for p in range(n_participants)]
    acc = np.array([m["accuracy"].value for _, m, _ in per], dtype=float)
    med = float(np.median(acc))
    mad = float(np.median(np.abs(acc - med))) * 1.483 or 0.05
    participants = []
    for p, (counts, m, levels) in enumerate(per):
        criteria = _criteria(rnd, counts, m, (acc[p] - med) / mad)
        ok = all(c.outcome in ("met", "satisfactory") for c in criteria)
        participants.append(ParticipantResult(
            code=rnd.participants[p], row=p, counts=counts, metrics=m, levels=levels,
            criteria=criteria, overall="all criteria met" if ok else "not all criteria met"))
    names = list(per[0][1])
    view, view_note = _self_estimates(acc, per, estimates, seed)
    group_levels = tuple(
        LevelRow(level=float(k), correct=sum(lv[k - 1].correct for _, _, lv in per),
                 wrong=sum(lv[k - 1].wrong for _, _, lv in per),
                 inconclusive=sum(lv[k - 1].inconclusive for _, _, lv in per),
                 probability=0.5 + (k - 1) / 8)
        for k in range(1, 6))
    criteria_counts: dict[str, dict[str, int]] = {}
    for pr in participants:
        for co in pr.criteria:
            bucket = criteria_counts.setdefault(co.id, {})
            bucket[co.outcome] = bucket.get(co.outcome, 0) + 1
    overall_counts: dict[str, int] = {}
    for pr in participants:
        overall_counts[pr.overall] = overall_counts.get(pr.overall, 0) + 1
    error_keys = ("false_positives", "false_negatives", "inconclusive_same",
                  "inconclusive_different", "correct_same", "correct_different", "n_same",
                  "n_different", "missing")
    group = GroupResult(
        n_participants=n_participants,
        distributions={n: _distribution([m[n].value for _, m, _ in per]) for n in names},
        criteria_counts=criteria_counts,
        overall_counts=overall_counts,
        robust={"accuracy": (med, mad)},
        error_types={k: sum(c[k] for c, _, _ in per) for k in error_keys},
        levels=group_levels,
        self_estimates=view,
        self_estimates_note=view_note,
        ability_groups=_ability(per),
        ideal_curve=IDEAL_CURVE,
    )
    return RoundResults(rnd, tuple(participants), _items(rnd), group)

