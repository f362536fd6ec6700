"""A trend (:class:`reportgen.archive.trend.Trend`) -> the trend report as HTML (and PDF).

Like the certificate, the context holds plain values, formatted text and chart data URIs, and
the template is found on the search path (:mod:`reportgen.render.environment`). The report holds
the examiner's own records and, for each round, only the group's robust mean and standard
deviation and its size: no other participant's code or result. Its date is the issue date of
the latest round it covers, so rendering twice gives the same bytes.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from typing import Any

import altair as alt
import jinja2

from reportgen import __version__, catalogue
from reportgen.archive.trend import ALPHA, ChangeTest, RoundPoint, Trend
from reportgen.errors import BuildError
from reportgen.render import charts, html_parts, wording
from reportgen.render.environment import environment
from reportgen.render.pdf import html_to_pdf
from reportgen.render.wording import statements
from reportgen.render.wording import trend as trend_wording
from reportgen.results.model import Metric
from reportgen.settings import Settings

TREND_TEMPLATE = "trend.html.j2"
QUESTIONABLE_COLOUR = charts.WRONG_COLOUR
ACTION_COLOUR = "#9c3a24"

TREND_CAUTIONS: tuple[str, ...] = (
    "Each round had its own items, and some sets are harder than others. A rate that moves "
    "between rounds mixes a change in the examiner with a change in the items; the standing in "
    "each round's group (z-score) allows for that, the raw rates do not.",
    "The pooled insight estimate assumes that the examiner's insight stayed the same over the "
    "rounds pooled. Its interval reflects the number of answers pooled, not how much insight "
    "may have varied from round to round.",
)

RATE_PANELS: tuple[tuple[str, str], ...] = (
    ("accuracy", "Accuracy"), ("false_positive_rate", "False-positive rate"),
    ("false_negative_rate", "False-negative rate"), ("inconclusive_rate", "Inconclusive rate"),
)
INSIGHT_PANELS: tuple[tuple[str, str, float], ...] = (
    ("d_prime", "Discriminability d\u2032", 0.0),
    ("conf_gap", "Confidence gap (right \u2212 wrong)", 0.0),
    ("type2_auroc", "Type-2 ROC area (0.5: no insight)", 0.5),
    ("m_ratio", "M-ratio (1: ideal observer)", 1.0),
)


# ---------------------------------------------------------------------------------------------
# Charts


GAP_SHARE_TITLE = "Confidence gap, share of the scale\u2019s range"


def mixed_scales(points: Sequence[RoundPoint]) -> bool:
    """Whether the rounds used different confidence scales (their gaps are then in different
    units and are drawn as a share of each scale's range)."""
    return len({p.levels for p in points}) > 1


def _span(levels: Sequence[float]) -> float | None:
    return (max(levels) - min(levels)) if len(levels) > 1 else None


def _series(points: Sequence[RoundPoint], name: str, *, per_range: bool = False
            ) -> list[dict[str, Any]]:
    """One measure over the rounds; ``per_range`` divides each round's values by the range of
    its confidence scale (lowest to highest level), so gaps on a 1\u20135 and a 1\u20137 scale
    share one axis (0: no gap, 1: the whole scale). Rounds without a known scale are left out."""
    rows = []
    for p in points:
        m = p.metrics[name]
        span = _span(p.levels) if per_range else 1.0
        if m.value is None or span is None:
            continue
        rows.append({"round": p.round_id, "value": m.value / span,
                     "low": (m.low if m.low is not None else m.value) / span,
                     "high": (m.high if m.high is not None else m.value) / span})
    return rows


def _x(order: Sequence[str]) -> alt.X:
    return alt.X("round:O", title=None, sort=list(order), scale=alt.Scale(domain=list(order)),
                 axis=alt.Axis(labelAngle=0 if len(order) <= 6 else -35))


def _title(text: str) -> alt.TitleParams:
    return alt.TitleParams(text, fontSize=10, fontWeight="bold", anchor="start",
                           color=charts.DARK)


def metric_panel(rows: list[dict[str, Any]], order: Sequence[str], title: str, *, accent: str,
                 percent: bool, reference: float | None = None) -> alt.LayerChart:
    """One measure over the rounds: points with 95 % interval bars, joined by a thin line."""
    scale = alt.Scale(domain=[0, 1]) if percent else alt.Scale(zero=True, nice=True)
    axis = alt.Axis(format=".0%", tickCount=5) if percent else alt.Axis(tickCount=5)
    y = alt.Y("value:Q", title=None, scale=scale, axis=axis)
    base = alt.Chart(alt.InlineData(values=rows)).encode(x=_x(order))
    layers: list[alt.Chart] = []
    if reference is not None:
        layers.append(alt.Chart(alt.InlineData(values=[{"ref": reference}])).mark_rule(
            color=charts.GREY, strokeDash=[4, 3], strokeWidth=1).encode(y=alt.Y("ref:Q")))
    layers += [
        base.mark_line(color=charts.LIGHT, strokeWidth=1).encode(y=y),
        base.mark_rule(color=accent, strokeWidth=1.6).encode(y=alt.Y("low:Q"), y2="high:Q"),
        base.mark_point(filled=True, size=48, color=accent, opacity=1).encode(y=y),
    ]
    if not rows:
        layers.append(alt.Chart(alt.InlineData(values=[{"t": "not estimable in any round"}]))
                      .mark_text(color=charts.GREY, fontSize=10)
                      .encode(text="t:N", x=alt.value(130), y=alt.value(55)))
    return alt.LayerChart(layer=layers, width=260, height=110, title=_title(title))


def _grid(panels: Sequence[alt.LayerChart]) -> alt.TopLevelMixin:
    rows = [alt.hconcat(*panels[i:i + 2], spacing=28) for i in range(0, len(panels), 2)]
    grid: alt.TopLevelMixin = alt.vconcat(*rows, spacing=14)
    return grid


def rates_chart(points: Sequence[RoundPoint], *, accent: str) -> alt.TopLevelMixin:
    """Accuracy and the three kinds of non-correct answer over the rounds, with intervals."""
    order = [p.round_id for p in points]
    return _grid([metric_panel(_series(points, name), order, title, accent=accent,
                               percent=True) for name, title in RATE_PANELS])


def insight_chart(points: Sequence[RoundPoint], *, accent: str) -> alt.TopLevelMixin:
    """d′ and the insight measures over the rounds, each with its reference value."""
    order = [p.round_id for p in points]
    mixed = mixed_scales(points)
    panels = []
    for name, title, ref in INSIGHT_PANELS:
        per_range = mixed and name == "conf_gap"
        panels.append(metric_panel(_series(points, name, per_range=per_range), order,
                                   GAP_SHARE_TITLE if per_range else title, accent=accent,
                                   percent=False, reference=ref))
    return _grid(panels)


def control_chart(points: Sequence[RoundPoint], *, accent: str) -> alt.TopLevelMixin:
    """z of accuracy in each round's group, with the ISO 13528 limits at ±2 and ±3."""
    order = [p.round_id for p in points]
    rows = [{"round": p.round_id, "z": p.standing.z, "class": p.standing.classification}
            for p in points if p.standing.z is not None]
    reach = max([4.0] + [abs(p.standing.z) + 0.5 for p in points if p.standing.z is not None])
    y = alt.Y("z:Q", title="z-score of accuracy", scale=alt.Scale(domain=[-reach, reach]),
              axis=alt.Axis(values=[-3, -2, 0, 2, 3]))
    def rules(values: list[float], colour: str, dash: list[int]) -> alt.Chart:
        chart: alt.Chart = alt.Chart(alt.InlineData(values=[{"y": v} for v in values])).mark_rule(
            color=colour, strokeWidth=1.2, strokeDash=dash).encode(y=alt.Y("y:Q"))
        return chart

    base = alt.Chart(alt.InlineData(values=rows)).encode(x=_x(order), y=y)
    classes = ["satisfactory", "questionable", "unsatisfactory"]
    legend = alt.Legend(title=None)
    points_layer = base.mark_point(filled=True, size=70, opacity=1).encode(
        color=alt.Color("class:N", legend=legend, scale=alt.Scale(
            domain=classes, range=[accent, QUESTIONABLE_COLOUR, ACTION_COLOUR])),
        shape=alt.Shape("class:N", legend=legend, scale=alt.Scale(
            domain=classes, range=["circle", "diamond", "square"])))
    layered: alt.TopLevelMixin = alt.layer(
        rules([0.0], charts.GREY, [1, 0]),
        rules([-2.0, 2.0], QUESTIONABLE_COLOUR, [5, 3]),
        rules([-3.0, 3.0], ACTION_COLOUR, [1, 0]),
        base.mark_line(color=charts.LIGHT, strokeWidth=1),
        points_layer,
    ).properties(width=560, height=170)
    return layered


# ---------------------------------------------------------------------------------------------
# Context


def trend_report_id(trend: Trend) -> str:
    """Deterministic id: the latest round and 10 hex digits of SHA-256 over the code and every
    round (with its archive version) the report covers."""
    parts = [trend.code] + [f"{p.round_id}@{p.version}" for p in trend.points]
    digest = hashlib.sha256("\x1f".join(parts).encode("utf-8")).hexdigest()[:10].upper()
    return f"{trend.points[-1].round_id}-TREND-{digest}"


def _cell(name: str, m: Metric) -> dict[str, Any]:
    kind = "percent" if name in catalogue.RATES else "number"
    return {"value": wording.fmt_value(name, m), "interval": wording.fmt_interval(m, kind),
            "note": m.note or "", "caution": bool(m.note and m.estimable),
            "has_interval": m.low is not None and m.high is not None,
            "estimable": m.estimable}


def _round_rows(trend: Trend) -> list[dict[str, Any]]:
    return [{
        "round": p.round_id, "issued": wording.fmt_date(p.issued), "version": p.version,
        "code": p.code, "items": p.n_items, "errors": p.errors,
        "conclusive_errors": p.conclusive_errors, "few_errors": p.few_errors,
        **{name: _cell(name, p.metrics[name]) for name in p.metrics},
    } for p in trend.points]


def _standing_rows(trend: Trend) -> list[dict[str, Any]]:
    rows = []
    for p in trend.points:
        s = p.standing
        rows.append({
            "round": p.round_id, "n": s.n_group,
            "x_star": wording.fmt_percent(s.x_star), "s_star": wording.fmt_percent(s.s_star),
            "accuracy": wording.fmt_value("accuracy", p.metrics["accuracy"]),
            "z": statements.fmt_z(s.z), "band": s.band, "classification": s.classification,
            "note": s.note or "",
            "class": {"satisfactory": "ok", "unsatisfactory": "fail"}.get(s.classification,
                                                                          "neutral"),
        })
    return rows


def _change_rows(changes: Sequence[ChangeTest]) -> list[dict[str, Any]]:
    rows = []
    for c in changes:
        t = c.test
        rate = c.metric in catalogue.RATES  # differences of rates in percentage points
        fmt = trend_wording.value_format(c.metric)
        scale, digits = (100.0, 1) if rate else (1.0, 2)

        def scaled(x: float | None, scale: float = scale) -> float | None:
            return None if x is None else scale * x

        diff = wording.fmt_signed(scaled(t.difference), digits)
        rows.append({
            "label": c.label, "earlier": fmt(c.earlier.value), "latest": fmt(c.latest.value),
            "difference": diff + (" points" if rate and t.difference is not None else ""),
            "interval": wording.fmt_interval(
                Metric(scaled(t.difference), scaled(t.low), scaled(t.high)), "number",
                digits=digits),
            "p": wording.fmt_p(t.p_value),
            "stands_out": t.p_value is not None and t.p_value < ALPHA,
            "method": c.method, "reading": trend_wording.change_reading(c),
        })
    return rows


def _pooled(trend: Trend) -> dict[str, Any]:
    p = trend.pooled
    return {
        "rounds": ", ".join(p.round_ids), "n_rounds": len(p.round_ids),
        "excluded": ", ".join(p.excluded), "n_conclusive": p.n_conclusive,
        "n_errors": p.n_errors, "few_errors": p.few_errors, "threshold": p.threshold,
        "d_prime": wording.fmt_number(p.d_prime),
        "meta_d": _cell("meta_d", p.meta_d), "m_ratio": _cell("m_ratio", p.m_ratio),
        "type2_auroc": _cell("type2_auroc", p.type2_auroc),
        "expected": wording.fmt_number(p.expected_type2_auroc),
        "has_expected": p.expected_type2_auroc is not None,
        "n_boot": p.n_boot, "seed": p.seed, "reading": trend_wording.pooled_reading(p),
        "noise": list(p.noise), "signal": list(p.signal), "k": len(p.noise) // 2,
    }


def trend_context(trend: Trend, settings: Settings) -> dict[str, Any]:
    """Everything trend.html.j2 needs: the examiner's own rounds and group aggregates only."""
    provider = dict(trend.provider)
    accent = str(provider.get("accent") or "#5f6b73")
    first, last = trend.points[0], trend.points[-1]
    return {
        "lang": "en",
        "doc_title": f"Performance over time \u2014 {trend.code}",
        "report_id": trend_report_id(trend),
        "provider": {"name": provider.get("name", ""), "address": provider.get("address", ""),
                     "contact": provider.get("contact", "")},
        "accent": accent,
        "logo_uri": None,
        "version": __version__,
        "issued": wording.fmt_date(trend.issued),
        "issued_iso": trend.issued.isoformat(),
        "scheme": trend.scheme,
        "participant": {"code": trend.code, "name": trend.name,
                        "organisation": trend.organisation},
        "other_codes": [c for c in trend.recorded_codes if c != trend.code],
        "renames": [{"old": r.old, "new": r.new, "effective": wording.fmt_date(r.effective),
                     "note": r.note} for r in trend.renames],
        "span": (f"{first.round_id} to {last.round_id}" if len(trend.points) > 1
                 else first.round_id),
        "n_rounds": len(trend.points),
        "summary": list(trend_wording.summary(trend)),
        "rounds": _round_rows(trend),
        "standing": _standing_rows(trend),
        "changes": _change_rows(trend.changes),
        "change_note": "" if trend.changes else trend_wording.ONE_ROUND_NOTE,
        "latest_round": last.round_id,
        "previous_round": trend.points[-2].round_id if len(trend.points) > 1 else "",
        "pooled": _pooled(trend),
        "last_n": trend.last_n,
        "alpha": ALPHA,
        "charts": {
            "rates": charts.image(rates_chart(trend.points, accent=accent)),
            "insight": charts.image(insight_chart(trend.points, accent=accent)),
            "control": charts.image(control_chart(trend.points, accent=accent)),
        },
        "cautions": wording.CAUTIONS + TREND_CAUTIONS,
        "mixed_scales": mixed_scales(trend.points),
        "scales": [{"round": p.round_id, "scale": _scale(p.levels)} for p in trend.points],
        **html_parts.html_context(),
    }


def _scale(levels: Sequence[float]) -> str:
    return f"{min(levels):g}\u2013{max(levels):g}" if levels else wording.DASH


def render_trend_html(trend: Trend, settings: Settings) -> str:
    """The examiner's confidential trend report as one HTML document."""
    context = trend_context(trend, settings)
    try:
        return environment(settings).get_template(TREND_TEMPLATE).render(context)
    except jinja2.TemplateError as exc:
        raise BuildError(f"template {TREND_TEMPLATE!r} failed: {exc}") from exc


def render_trend_pdf(trend: Trend, settings: Settings) -> bytes:
    """The trend report as PDF, from exactly the HTML of :func:`render_trend_html`."""
    return html_to_pdf(render_trend_html(trend, settings), issued=trend.issued)
