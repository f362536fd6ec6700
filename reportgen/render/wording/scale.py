"""The response scale in words: how each label was scored, how strength was used, the bins of a
continuous scale (certificate, appendix and methods statement; docs/round-format.md,
"Response scales")."""

from __future__ import annotations

from collections.abc import Sequence

from reportgen.render.wording.numbers import NBSP, fmt_percent
from reportgen.results.model import ConclusionRow
from reportgen.rounds.model import Round
from reportgen.rounds.schema import ABSTAIN, RoundConfig
from reportgen.scoring.scale import binned, scale_order

__all__ = ["bin_label", "conclusion_table", "scale_statement", "scale_text"]


def _q(text: str) -> str:
    return f"\u201c{text}\u201d"


def _edge(x: float, unit: float) -> str:
    return f"{x:g}{NBSP}%" if unit == 100 else f"{x:g}"


def bin_label(edges: Sequence[float], k: int, unit: float = 100.0) -> str:
    """``50\u201360 %``: bin k by its edges (left-closed, the last closed on both sides)."""
    return f"{edges[k]:g}\u2013{_edge(edges[k + 1], unit)}"


def scale_text(rnd: Round) -> str | None:
    """The short scale line for a graded scale read from strength or a 0-1 probability scale;
    None for the other scales (whose line the common context already makes)."""
    scale = rnd.config.confidence
    if not rnd.strength_is_confidence:
        if scale.kind == "probability" and scale.unit == 1:
            return f"probability of being right, {scale.min:g}\u2013{scale.max:g}"
        return None
    top = rnd.config.max_strength
    return (f"the strength of each conclusion, 1 (weakest) to {top} (strongest); there is no "
            "separate confidence rating")


def _labels_by_class(cfg: RoundConfig) -> list[str]:
    order = scale_order(cfg)
    lines = []
    for target in (cfg.classes.positive, ABSTAIN, cfg.classes.negative):
        labels = [label for label in order if cfg.decisions[label].target == target]
        if not labels:
            continue
        shown = ", ".join(_q(label) + (f" (strength {cfg.decisions[label].strength})"
                                       if cfg.decisions[label].strength else "")
                          for label in labels)
        lines.append(f"{shown} {'were' if len(labels) > 1 else 'was'} scored as "
                     f"{_q(target)}")
    return lines


def scale_statement(rnd: Round) -> list[str]:
    """Sentences stating the scale: which labels were scored as which class, how strength was
    used and the bins of a continuous scale. Empty for a plain scale with one label per class
    named as the class (nothing collapsed, nothing binned)."""
    cfg = rnd.config
    out: list[str] = []
    collapsed = any(label != g.target for label, g in cfg.decisions.items())
    if cfg.graded or collapsed:
        n = len(cfg.decisions)
        out.append(f"Conclusion scale of {n} levels: " + "; ".join(_labels_by_class(cfg)) + ".")
    if cfg.graded:
        out.append(_strength_sentence(rnd))
    if binned(rnd):
        out.append(_bins_sentence(cfg))
    return out


def _strength_sentence(rnd: Round) -> str:
    cfg = rnd.config
    if not rnd.strength_is_confidence:
        return ("The confidence column was the confidence rating; the strength of each "
                "conclusion was used to count errors at each strength.")
    text = ("The strength of each conclusion served as its confidence rating: the rating ROC "
            "orders the whole scale from the strongest conclusion of one class through the "
            "inconclusive level to the strongest of the other; the insight measures (confidence "
            "gap, type-2 ROC area, gamma, meta-d\u2032) read strength as confidence; errors are "
            "counted at each strength.")
    declared = cfg.strength_probabilities
    if declared is None:
        return text + (" Calibration is not estimable: the scale declares no probability of "
                       "being right for its levels.")
    shown = ", ".join(f"{s} \u2192 {fmt_percent(p, 0)}" for s, p in sorted(declared.items()))
    return text + (f" For calibration each strength stands for the probability of being right "
                   f"declared by the provider: {shown}.")


def _bins_sentence(cfg: RoundConfig) -> str:
    scale = cfg.confidence
    edges = scale.edges
    where = "declared by the provider" if scale.bins is not None else "the default"
    bins = ", ".join(bin_label(edges, k, scale.unit) for k in range(len(edges) - 1))
    what = ("probability of being right" if scale.kind == "probability"
            else "ordinal confidence")
    return (f"Confidence was given as a {what} from {scale.min:g} to {scale.max:g}. Mean "
            "confidence, the confidence gap, the type-2 ROC area, gamma, the Brier score and "
            "over/underconfidence use the values as given; meta-d\u2032, the rating ROC, the "
            f"calibration table and the expected calibration error use {len(edges) - 1} bins "
            f"({where}): {bins}. Each bin includes its lower edge and excludes its upper edge, "
            "except the last, which includes both.")


def conclusion_table(rows: Sequence[ConclusionRow], cfg: RoundConfig) -> list[dict[str, object]]:
    """Rows of the "conclusions by true class" table, errors marked."""
    pos, neg = cfg.classes.positive, cfg.classes.negative
    out: list[dict[str, object]] = []
    for r in rows:
        errors = (r.on_different if r.asserts == pos else r.on_same if r.asserts == neg
                  else None)
        out.append({"label": r.label, "strength": r.strength or "", "asserts": r.asserts,
                    "on_same": r.on_same, "on_different": r.on_different,
                    "errors": "" if errors is None else errors})
    return out
