"""The group views (docs/design.md §3, issue 4): self-estimates by quartile and insight against
ability in the appendix, and the participant's position in the type-2-area-against-d′ view."""

from __future__ import annotations

import json

from reportgen.render import certificate_charts, charts, wording
from reportgen.render.appendix import appendix_context, render_appendix
from reportgen.render.certificate import certificate_context, render_certificate
from reportgen.render.context import insight_points
from reportgen.render.wording import readings, statements
from reportgen.results.model import Metric, RoundResults
from reportgen.settings import Settings

from .helpers import contains_token, html_text, norm, pdf_text
from .render_fixtures import NO_ESTIMATES_NOTE, build_results


def test_appendix_shows_the_quartile_view_with_its_test(results: RoundResults,
                                                        appendix_html: str) -> None:
    se = results.group.self_estimates
    assert se is not None and se.view.glejser is not None
    text = html_text(appendix_html)
    assert norm(statements.quartile_reading(se.view)) in text
    g = se.view.glejser
    assert f"slope {norm(wording.fmt_signed(g.slope, 3))}, {wording.fmt_p(g.slope_p)}" in text
    assert f"{wording.fmt_p(g.quadratic_p)} for the curve" in text
    assert f"n = {se.view.n} participants gave an estimate" in text
    assert "from the estimates file" in text
    for row in se.view.rows:  # every quarter with its null band
        band = wording.fmt_interval(Metric(row.mean_estimate, row.null_low, row.null_high),
                                    "percent")
        assert norm(band) in text
        assert norm(wording.fmt_percent(row.fitted)) in text


def test_mean_confidence_as_estimate_is_said_plainly(settings: Settings) -> None:
    results = build_results(estimates="confidence")
    text = html_text(render_appendix(results, settings))
    assert "No estimates file was supplied for this round" in text
    assert "mean stated confidence" in text
    assert "This is not an estimate the participants made of their score." in text


def test_without_a_view_the_reason_is_printed(settings: Settings) -> None:
    results = build_results(estimates=None)
    text = html_text(render_appendix(results, settings))
    assert f"The self-estimate view cannot be drawn for this round: {NO_ESTIMATES_NOTE}." in text


def test_appendix_shows_insight_by_ability_with_n_and_no_errors(settings: Settings) -> None:
    results = build_results(n_participants=24, n_items=20)
    text = html_text(render_appendix(results, settings))
    groups = [a for a in results.group.ability_groups if a.n > 0]
    assert len(groups) == 4
    for a in groups:
        right = a.conf_correct
        assert right.mean is not None and right.low is not None and right.high is not None
        cells = (f"{a.n} {a.n - a.conf_wrong.n} {wording.fmt_number(right.mean)} "
                 f"({wording.fmt_number(right.low)}\u2013{wording.fmt_number(right.high)})")
        assert norm(cells) in text, cells
    assert any(a.n > a.conf_wrong.n for a in groups)  # participant 0 made no errors
    assert "Insight against ability" in text


def test_appendix_scatter_caption_explains_the_rising_curve(appendix_html: str) -> None:
    text = html_text(appendix_html)
    assert "The expected type-2 area rises with d\u2032" in text
    assert "rest on fewer than" in text  # few errors: unstable, flagged in the figure


def test_insight_points_and_chart_spec_carry_no_identity(results: RoundResults) -> None:
    points = insight_points(results)
    assert points and all(set(p) == {"d_prime", "type2_auroc", "few"} for p in points)
    assert points == sorted(points, key=lambda r: (r["d_prime"], r["type2_auroc"], r["few"]))
    me = results.participants[3]
    curve = [(c.d_prime, c.type2_auroc) for c in results.group.ideal_curve]
    shown = certificate_charts._insight_points(results, small_group=False)
    assert len(shown) == len(points)  # yours too: your highlighted point is drawn over it
    assert certificate_charts._insight_points(results, small_group=True) == ()
    x_domain, y_domain = charts.insight_domains(points, [
        {"d_prime": d, "type2_auroc": a} for d, a in curve])
    spec = charts._spec(certificate_charts.insight_chart(shown, curve, 5, x_domain, y_domain,
                                                         highlighted=True))
    assert me.code not in json.dumps(spec)
    blob = json.dumps(spec)
    rnd = results.round
    for p in results.participants:
        ident = rnd.identity(p.code)
        for token in (p.code, ident.name, ident.organisation):
            assert not token or not contains_token(blob, token), token
    # The ideal curve is drawn.
    assert all(json.dumps(c.type2_auroc) in blob for c in results.group.ideal_curve)
    quartiles = charts._spec(charts.self_estimate_quartiles(
        [{"quarter": "1", "score": 0.5, "estimate": 0.6, "fitted": 0.58, "null_low": 0.6,
          "null_high": 0.7}]))
    assert quartiles["config"]["font"] == charts.FONT_FAMILY


def test_certificate_shows_meta_d_with_interval_and_flag(results: RoundResults,
                                                         settings: Settings) -> None:
    p = next(q for q in results.participants if q.metrics["meta_d"].note == "few errors: unstable")
    html = render_certificate(results, p, settings)
    text = html_text(html)
    meta = p.metrics["meta_d"]
    assert norm(wording.fmt_interval(meta)) in text
    assert norm(readings.read_meta_d(meta, p.metrics["d_prime"])) in text
    ctx = certificate_context(results, p, settings)
    insight = next(s for s in ctx["sections"] if "type2_auroc" in [r["name"] for r in s["rows"]])
    names = [r["name"] for r in insight["rows"]]
    assert names.index("meta_d") + 1 == names.index("m_ratio")  # beside the M-ratio row
    flagged = {r["name"] for r in insight["rows"] if r["caution"]}
    assert {"meta_d", "m_ratio"} <= flagged
    assert insight["note"] == readings.read_relative_insight(p.metrics["type2_auroc"],
                                                            p.metrics["expected_type2_auroc"])
    assert "Your insight for your accuracy" in text
    assert ctx["charts"]["insight"] is not None


def test_certificate_without_errors_has_no_point_and_says_why(results: RoundResults,
                                                              settings: Settings) -> None:
    perfect = results.participants[0]
    text = html_text(render_certificate(results, perfect, settings))
    assert "Your type-2 ROC area is not estimable (no errors), so you have no point" in text


def test_small_groups_withhold_the_group_points(settings: Settings) -> None:
    small = build_results(n_participants=3, n_items=6)
    ctx = appendix_context(small, settings)
    assert ctx["views"]["ability"] is None
    text = html_text(render_appendix(small, settings))
    assert "too few to show accuracy groups" in text
    assert "only the curve is shown" in text
    me = next(p for p in small.participants if p.metrics["type2_auroc"].estimable)
    cert = html_text(render_certificate(small, me, settings))
    assert "points are withheld because the group is small" in cert


def test_criteria_header_cells_do_not_run_together(results: RoundResults,
                                                   certificate_pdf: bytes,
                                                   appendix_pdf: bytes) -> None:
    for pdf in (certificate_pdf, appendix_pdf):
        text = pdf_text(pdf)
        assert "Criterion Requirement" in text
        assert "CriterionRequirement" not in text


def test_appendix_renders_to_pdf_with_the_group_views(results: RoundResults,
                                                      appendix_pdf: bytes) -> None:
    text = pdf_text(appendix_pdf)
    for heading in ("Self-estimates against actual scores", "Insight against ability",
                    "Type-2 ROC area against discriminability"):
        assert heading in text
