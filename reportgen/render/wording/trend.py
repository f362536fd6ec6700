"""Sentences of the trend report: what moved between rounds, the pooled insight, the summary.

The numbers come from :mod:`reportgen.archive.trend`; nothing is claimed here that the tests and
intervals computed there do not support.
"""

from __future__ import annotations

from collections.abc import Callable

from reportgen.archive.trend import ALPHA, ChangeTest, PooledInsight, Trend
from reportgen.catalogue import RATES
from reportgen.render.wording.numbers import fmt_number, fmt_p, fmt_percent
from reportgen.render.wording.statements import fmt_z

ONE_ROUND_NOTE = ("There is only one round of yours in the archive, so a change cannot be "
                  "assessed yet.")


def value_format(metric: str) -> Callable[[float | None], str]:
    """Rates in percent, everything else as a number."""
    return fmt_percent if metric in RATES else fmt_number


def change_reading(c: ChangeTest) -> str:
    """One plain sentence: what moved, and whether chance alone explains it."""
    fmt = value_format(c.metric)
    return moved_sentence(c.label, fmt(c.earlier.value), fmt(c.latest.value), c.earlier_round,
                          c.latest_round, c.test.difference, c.test.p_value, c.test.note,
                          c.noun)


def moved_sentence(label: str, earlier: str, latest: str, earlier_round: str,
                   latest_round: str, difference: float | None, p_value: float | None,
                   note: str | None, noun: str = "") -> str:
    if p_value is None:
        if note == "none in either round" and noun:
            return (f"{label}: no {noun} in {earlier_round} or {latest_round}, so there is "
                    "nothing to compare.")
        why = note or "nothing to compare"
        return f"{label}: {why} ({earlier} in {earlier_round}, {latest} in {latest_round})."
    d = difference or 0.0
    if earlier == latest:
        moved = f"stayed at {latest} from {earlier_round} to {latest_round}"
    else:
        verb = "rose" if d > 0 else "fell"
        moved = f"{verb} from {earlier} in {earlier_round} to {latest} in {latest_round}"
    if p_value >= ALPHA:
        return (f"{label} {moved}. Chance alone often gives a difference this size between two "
                f"rounds ({fmt_p(p_value)}): this is not evidence of a change.")
    return (f"{label} {moved}. Chance alone would seldom give a difference this large "
            f"({fmt_p(p_value)}), so it may be a real change; the rounds had different "
            "items, so read it together with your standing in each round's group.")


def pooled_reading(p: PooledInsight) -> str:
    """Plain sentences on the pooled estimate; nothing is claimed that the interval does not
    support."""
    n = len(p.round_ids)
    scope = "your one round" if n == 1 else f"your {n} rounds {p.round_ids[0]} to {p.round_ids[-1]}"
    if p.meta_d.value is None:
        return f"Pooled over {scope}, meta-d\u2032 cannot be estimated ({p.meta_d.note})."
    out = [f"Pooled over {scope} ({p.n_conclusive} conclusive answers, {p.n_errors} of them "
           f"errors), meta-d\u2032 is {fmt_number(p.meta_d.value)} against a d\u2032 of "
           f"{fmt_number(p.d_prime)}."]
    m = p.m_ratio
    if m.value is not None and m.low is not None and m.high is not None:
        ratio = (f"The M-ratio of {fmt_number(m.value)} (95\u00a0% interval "
                 f"{fmt_number(m.low)} to {fmt_number(m.high)})")
        if m.low <= 1 <= m.high:
            out.append(f"{ratio} is consistent with confidence that uses all the information "
                       "your decisions carry.")
        elif m.high < 1:
            out.append(f"{ratio} shows confidence using less of the information your decisions "
                       "carry than an ideal observer.")
        else:
            out.append(f"{ratio} lies above 1: confidence drew on information the decisions did "
                       "not use.")
    elif m.value is not None:
        out.append(f"The M-ratio is {fmt_number(m.value)}; without an interval, read only its "
                   "rough size.")
    out.extend(_relative(p))
    if p.few_errors:
        pooled = "even pooled, " if n > 1 else ""
        out.append(f"Caution: {pooled}the table holds fewer than {p.threshold} errors, so "
                   "these estimates are unstable.")
    return " ".join(out)


def _relative(p: PooledInsight) -> list[str]:
    a, expected = p.type2_auroc, p.expected_type2_auroc
    if a.value is None or expected is None:
        return []
    if a.low is not None and a.high is not None and expected < a.low:
        verdict = "more than"
    elif a.low is not None and a.high is not None and expected > a.high:
        verdict = "less than"
    else:
        verdict = "about as well as"
    return [f"An observer as accurate as you over these rounds, whose confidence reads the same "
            f"evidence as the decisions, would reach a type-2 ROC area of about "
            f"{fmt_number(expected)}; yours is {fmt_number(a.value)}, so your confidence "
            f"separated right from wrong {verdict} your accuracy allows."]


def summary(trend: Trend) -> tuple[str, ...]:
    """The first lines of the trend report."""
    points, changes, pooled = trend.points, trend.changes, trend.pooled
    last = points[-1]
    span = (f"{len(points)} rounds from {points[0].round_id} to {last.round_id}"
            if len(points) > 1 else f"one round, {last.round_id}")
    out = [f"The archive holds {span}."]
    s = last.standing
    acc = fmt_percent(last.metrics["accuracy"].value)
    if s.z is not None:
        out.append(f"In {last.round_id} your accuracy was {acc}, z = {fmt_z(s.z)} against "
                   f"the group: {s.classification}.")
    else:
        out.append(f"In {last.round_id} your accuracy was {acc}; standing in the group not "
                   f"assessable ({s.note}).")
    if not changes:
        out.append(ONE_ROUND_NOTE)
    else:
        moved = [c.label.lower() for c in changes
                 if c.test.p_value is not None and c.test.p_value < ALPHA]
        prev = changes[0].earlier_round
        out.append(f"Since {prev}, no difference stands out from chance." if not moved else
                   f"Since {prev}, a difference larger than chance would usually give: "
                   f"{', '.join(moved)} (see below).")
    m = pooled.m_ratio
    rounds = "your one round" if len(pooled.round_ids) == 1 else (
        f"{len(pooled.round_ids)} rounds")
    if m.value is None:
        out.append(f"Pooled over {rounds}, insight (M-ratio) is not estimable ({m.note}).")
    else:
        interval = (f" (95\u00a0% interval {fmt_number(m.low)} to {fmt_number(m.high)})"
                    if m.low is not None and m.high is not None else "")
        out.append(f"Pooled over {rounds}, your M-ratio is {fmt_number(m.value)}{interval}.")
    return tuple(out)
