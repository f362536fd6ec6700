"""The trend of one examiner (reportgen.archive.trend) and its report (reportgen.render.trend).

Reference checks name their source: statsmodels for the two-proportion test and Newcombe's
interval, the Gourevitch–Galanter formula written out for the d′ difference, a fit on the summed
table for pooled meta-d′.
"""

from __future__ import annotations

import datetime as dt
import difflib
import math
import re
from pathlib import Path

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.proportion import confint_proportions_2indep, proportions_ztest

from reportgen import archive as history
from reportgen.archive.trend import (
    Trend,
    build_trend,
    d_prime_difference,
    standing,
    trend_from_history,
    two_proportion_test,
)
from reportgen.errors import InputError
from reportgen.metrics.metad import fit_meta_d, meta_d_interval
from reportgen.render.trend import render_trend_html, render_trend_pdf, trend_context
from reportgen.render.wording.statements import criterion_detail
from reportgen.render.wording.trend import (
    ONE_ROUND_NOTE,
    change_reading,
    moved_sentence,
    pooled_reading,
)
from reportgen.settings import Settings
from tests.test_history import record_all, sample_results

GOLDEN = Path(__file__).resolve().parent / "golden" / "trend.html"
GOLDEN_CODE = "0012"
GOLDEN_SEED = 2026
GOLDEN_BOOT = 200
_DATA_URI = re.compile(r"data:(image/[a-z+.-]+);base64,[A-Za-z0-9+/=]+")
_STYLE = re.compile(r"<style>.*?</style>", re.DOTALL)


def render_trend_golden(workdir: Path) -> str:
    """The golden trend report: the three sample rounds archived (bootstrap=0 at scoring), the
    trend of participant 0012 with a seeded pooled bootstrap, chart images replaced by a
    placeholder (their bytes depend on the vl-convert build) and the shared stylesheet left out
    (the certificate's golden file covers it)."""
    path = workdir / "golden-archive.sqlite"
    if not path.exists():
        record_all(path, sample_results())
    trend = build_trend(path, GOLDEN_CODE, last_n=None, seed=GOLDEN_SEED, n_boot=GOLDEN_BOOT)
    html = render_trend_html(trend, Settings())
    html = _STYLE.sub("<style>/* report.css: see tests/golden/certificate.html */</style>", html)
    return _DATA_URI.sub(r"data:\1;base64,IMAGE", html)


@pytest.fixture(scope="module")
def archive(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("trend") / "archive.sqlite"
    record_all(path, sample_results())
    return path


@pytest.fixture(scope="module")
def trend_0012(archive: Path) -> Trend:
    return build_trend(archive, "0012", last_n=None, seed=1, n_boot=100)


# ---------------------------------------------------------------------------------------------
# Pooled insight


def test_pooled_meta_d_equals_a_fit_on_the_summed_table(trend_0012: Trend) -> None:
    """Maniscalco & Lau (2012) fit of the participant's rating tables summed over the rounds,
    taken straight from the scored rounds rather than from the archive."""
    tables = [next(p for p in r.participants if p.code == "0012") for r in sample_results()]
    noise = np.sum([p.rating_noise for p in tables], axis=0)
    signal = np.sum([p.rating_signal for p in tables], axis=0)
    fit = fit_meta_d(noise, signal)
    pooled = trend_0012.pooled
    assert pooled.noise == tuple(noise) and pooled.signal == tuple(signal)
    assert pooled.meta_d.value == pytest.approx(fit.meta_d, rel=1e-12)
    assert pooled.m_ratio.value == pytest.approx(fit.m_ratio, rel=1e-12)
    assert pooled.d_prime == pytest.approx(fit.d_prime, rel=1e-12)
    ci = meta_d_interval(noise, signal, n_boot=100, seed=1)
    assert (pooled.meta_d.low, pooled.meta_d.high) == (ci.meta_d_low, ci.meta_d_high)
    assert pooled.round_ids == ("FIC-2024", "FIC-2025", "FIC-2026")
    assert pooled.n_errors == int(noise[5:].sum() + signal[:5].sum())


def test_pooled_over_the_last_n_rounds(archive: Path) -> None:
    trend = build_trend(archive, "0012", last_n=2, seed=1, n_boot=0)
    assert trend.pooled.round_ids == ("FIC-2025", "FIC-2026")
    assert len(trend.points) == 3  # the per-round view keeps every round
    assert trend.pooled.meta_d.low is None  # no bootstrap asked for
    with pytest.raises(InputError):
        build_trend(archive, "0012", last_n=0, seed=1, n_boot=0)


def test_pooling_without_errors_is_not_estimable_with_the_reason(archive: Path) -> None:
    trend = build_trend(archive, "E0107", last_n=None, seed=1, n_boot=50)  # never errs
    assert trend.pooled.meta_d.value is None
    assert trend.pooled.meta_d.note == "no errors"
    assert "cannot be estimated (no errors)" in pooled_reading(trend.pooled)


def test_relative_insight_reading_follows_the_interval(trend_0012: Trend) -> None:
    p = trend_0012.pooled
    assert p.expected_type2_auroc is not None and p.type2_auroc.high is not None
    expected_word = ("less than" if p.expected_type2_auroc > p.type2_auroc.high else
                     "more than" if p.type2_auroc.low is not None
                     and p.expected_type2_auroc < p.type2_auroc.low else "about as well as")
    assert f"separated right from wrong {expected_word}" in pooled_reading(p)


# ---------------------------------------------------------------------------------------------
# Change tests


@pytest.mark.parametrize(("k1", "n1", "k0", "n0"), [
    (10, 60, 16, 60), (2, 30, 1, 30), (15, 30, 8, 30), (0, 30, 4, 30), (59, 60, 50, 60)])
def test_two_proportion_test_matches_statsmodels(k1: int, n1: int, k0: int, n0: int) -> None:
    """statsmodels.stats.proportion.proportions_ztest (pooled, two-sided) and
    confint_proportions_2indep(method="newcomb") (Newcombe 1998, method 10)."""
    t = two_proportion_test(k1, n1, k0, n0)
    z, p = proportions_ztest([k1, k0], [n1, n0])
    assert t.statistic == pytest.approx(z, rel=1e-12)
    assert t.p_value == pytest.approx(p, rel=1e-10)
    low, high = confint_proportions_2indep(k1, n1, k0, n0, method="newcomb", compare="diff")
    assert t.low == pytest.approx(low, abs=1e-12)
    assert t.high == pytest.approx(high, abs=1e-12)
    assert t.difference == pytest.approx(k1 / n1 - k0 / n0)


def test_two_proportion_test_with_nothing_to_compare() -> None:
    t = two_proportion_test(0, 30, 0, 30)
    assert t.p_value is None and t.statistic is None and t.note == "none in either round"
    assert t.difference == 0
    low, high = confint_proportions_2indep(0, 30, 0, 30, method="newcomb", compare="diff")
    assert (t.low, t.high) == pytest.approx((low, high), abs=1e-12)


def test_d_prime_difference_uses_gourevitch_galanter_standard_errors() -> None:
    """SE² = H(1−H)/(n_S φ(z_H)²) + F(1−F)/(n_N φ(z_F)²) per round (Gourevitch & Galanter
    1967) on log-linear rates (Hautus 1995), written out here with scipy.stats.norm."""
    latest = {"correct_same": 24, "false_negatives": 4, "false_positives": 2,
              "correct_different": 27}
    earlier = {"correct_same": 18, "false_negatives": 10, "false_positives": 3,
               "correct_different": 25}

    def d_and_var(c: dict[str, int]) -> tuple[float, float]:
        n_s = c["correct_same"] + c["false_negatives"]
        n_n = c["correct_different"] + c["false_positives"]
        h = (c["correct_same"] + 0.5) / (n_s + 1)
        f = (c["false_positives"] + 0.5) / (n_n + 1)
        zh, zf = stats.norm.ppf(h), stats.norm.ppf(f)
        var = (h * (1 - h) / (n_s * stats.norm.pdf(zh) ** 2)
               + f * (1 - f) / (n_n * stats.norm.pdf(zf) ** 2))
        return zh - zf, var

    (d1, v1), (d0, v0) = d_and_var(latest), d_and_var(earlier)
    se = math.sqrt(v1 + v0)
    t = d_prime_difference(latest, earlier)
    assert t.difference == pytest.approx(d1 - d0, rel=1e-12)
    assert t.statistic == pytest.approx((d1 - d0) / se, rel=1e-10)
    assert t.p_value == pytest.approx(2 * stats.norm.sf(abs(d1 - d0) / se), rel=1e-9)
    assert t.low is not None and t.high is not None
    assert t.high - t.low == pytest.approx(2 * 1.959963984540054 * se, rel=1e-9)


def test_gourevitch_galanter_reference_value() -> None:
    """REFERENCES.md: H = .8, F = .1, 50 + 50 trials -> SE(d′) 0.3151 (checked through the
    difference test: two identical rounds have SE of the difference √2 · 0.3151)."""
    counts = {"correct_same": 40, "false_negatives": 10, "false_positives": 5,
              "correct_different": 45}
    t = d_prime_difference(counts, counts)
    assert t.difference == 0 and t.p_value == pytest.approx(1.0)
    assert t.low is not None and t.high is not None
    # Log-linear rates differ slightly from .8/.1, hence the looser tolerance.
    se = (t.high - t.low) / (2 * 1.959963984540054) / math.sqrt(2)
    assert se == pytest.approx(0.3151, abs=0.005)


def test_changes_compare_the_latest_with_the_previous_round(archive: Path,
                                                           trend_0012: Trend) -> None:
    by_round = {a.round_id: a for a in history.participant_history(archive, "0012")}
    latest, earlier = by_round["FIC-2026"], by_round["FIC-2025"]
    tests = {c.metric: c for c in trend_0012.changes}
    assert list(tests) == ["error_rate", "false_positive_rate", "false_negative_rate",
                           "d_prime"]
    fp = tests["false_positive_rate"]
    _, p = proportions_ztest([latest.counts["false_positives"], earlier.counts["false_positives"]],
                             [latest.counts["n_different"], earlier.counts["n_different"]])
    assert fp.test.p_value == pytest.approx(p, rel=1e-10)
    assert (fp.earlier_round, fp.latest_round) == ("FIC-2025", "FIC-2026")
    for change in trend_0012.changes:
        assert change.test.p_value is not None and change.test.p_value > 0.05
        reading = change_reading(change)
        assert "not evidence of a change" in reading
        assert "improv" not in reading and "worse" not in reading


def test_a_difference_beyond_chance_is_read_as_a_possible_change() -> None:
    t = two_proportion_test(1, 30, 9, 30)
    assert t.p_value is not None and t.p_value < 0.05
    text = moved_sentence("False-positive rate", "30.0 %", "3.3 %", "R1", "R2", t.difference,
                          t.p_value, t.note)
    assert "fell from 30.0 % in R1 to 3.3 % in R2" in text
    assert "may be a real change" in text and "not evidence" not in text


# ---------------------------------------------------------------------------------------------
# Standing (ISO 13528)


@pytest.mark.parametrize(("accuracy", "z", "classification", "band"), [
    (0.675, -0.25, "satisfactory", "|z| \u2264 2"),
    (0.45, -2.5, "questionable", "2 < |z| < 3"),
    (0.40, -3.0, "unsatisfactory", "|z| \u2265 3"),
    (0.55, -1.5, "satisfactory", "|z| \u2264 2"),
    (0.95, 2.5, "satisfactory", "2 < |z| < 3"),  # high accuracy never counts against
])
def test_standing_classes_z_by_iso_13528(accuracy: float, z: float, classification: str,
                                         band: str) -> None:
    s = standing(accuracy, x_star=0.70, s_star=0.10, n_group=100)
    assert s.z == pytest.approx(z)
    assert (s.classification, s.band) == (classification, band)


def test_standing_without_a_robust_sd_is_not_assessable() -> None:
    s = standing(0.8, 0.8, None, 3, "fewer than 3 estimable results in the group")
    assert s.z is None and s.classification == "not assessable"
    assert s.note == "fewer than 3 estimable results in the group"


def test_standing_uses_the_group_values_stored_at_record_time(trend_0012: Trend) -> None:
    for point, results in zip(trend_0012.points, sample_results(), strict=True):
        x_star, s_star = results.group.robust["accuracy"]
        own = next(p for p in results.participants if p.code == "0012")
        assert own.metrics["accuracy"].value is not None
        expected = (own.metrics["accuracy"].value - x_star) / s_star
        assert point.standing.z == pytest.approx(expected, rel=1e-10)
        criterion = next(c for c in own.criteria if c.id == "C3")  # the round's own z rule
        rule = next(c for c in results.round.config.criteria if c.id == "C3")
        detail = criterion_detail(criterion, rule, results.group.robust)
        assert f"z = {expected:+.2f}" in detail


# ---------------------------------------------------------------------------------------------
# Participants with few rounds, unknown codes


def test_a_participant_in_only_one_round(archive: Path) -> None:
    trend = build_trend(archive, "E0472", last_n=None, seed=1, n_boot=0)
    assert [p.round_id for p in trend.points] == ["FIC-2026"]
    assert trend.changes == ()
    assert ONE_ROUND_NOTE in render_trend_html(trend, Settings())
    assert trend.pooled.round_ids == ("FIC-2026",)
    html = render_trend_html(trend, Settings())
    assert "a change cannot be assessed" in html


def test_codes_that_joined_late_or_skipped_a_round(archive: Path) -> None:
    late = build_trend(archive, "E0404", last_n=None, seed=1, n_boot=0)
    assert [p.round_id for p in late.points] == ["FIC-2025", "FIC-2026"]
    assert {c.earlier_round for c in late.changes} == {"FIC-2025"}
    gap = build_trend(archive, "E0162", last_n=None, seed=1, n_boot=0)
    assert {c.earlier_round for c in gap.changes} == {"FIC-2024"}


def test_unknown_code_lists_similar_codes(archive: Path) -> None:
    with pytest.raises(InputError) as err:
        build_trend(archive, "E01O7", last_n=None, seed=1, n_boot=0)
    assert "similar codes: E0107" in err.value.problems[0].message


def test_a_renamed_code_is_followed(archive: Path, tmp_path: Path) -> None:
    path = tmp_path / "renamed.sqlite"
    path.write_bytes(archive.read_bytes())
    history.rename_code(path, "0012", "X12", note="merged registration",
                        effective=dt.date(2026, 6, 1))
    trend = build_trend(path, "0012", last_n=None, seed=1, n_boot=0)
    assert trend.code == "X12" and trend.recorded_codes == ("0012",)
    assert [r.note for r in trend.renames] == ["merged registration"]
    html = render_trend_html(trend, Settings())
    assert "merged registration" in html and "Rounds also taken as" in html


def test_trend_from_history_needs_rounds() -> None:
    with pytest.raises(ValueError, match="at least one"):
        trend_from_history([], code="X")


# ---------------------------------------------------------------------------------------------
# The report


def test_report_holds_no_other_participant(trend_0012: Trend) -> None:
    html = render_trend_html(trend_0012, Settings())
    others = set().union(*(r.round.participants for r in sample_results())) - {"0012"}
    names = {r.round.identity(c).name for r in sample_results() for c in r.round.participants
             if c != "0012"}
    text = _DATA_URI.sub("", html)
    assert not [c for c in others if re.search(rf"\b{re.escape(c)}\b", text)]
    assert not [n for n in names if n and n in text]
    ctx = trend_context(trend_0012, Settings())
    assert ctx["issued_iso"] == "2026-05-15"  # the latest round's date, not the clock


def test_golden_trend_html(tmp_path: Path) -> None:
    """Regenerate with ``python scripts/regenerate_trend_golden.py`` after an intended change."""
    if not GOLDEN.is_file():
        pytest.skip("no golden file yet: run scripts/regenerate_trend_golden.py")
    fresh = render_trend_golden(tmp_path)
    committed = GOLDEN.read_text(encoding="utf-8")
    if fresh != committed:
        diff = "\n".join(difflib.unified_diff(committed.splitlines(), fresh.splitlines(),
                                              str(GOLDEN), "rendered now", lineterm="", n=2))
        pytest.fail(f"trend.html differs from the golden file; if intended, run "
                    f"scripts/regenerate_trend_golden.py\n{diff[:4000]}")


def test_pdf_renders(archive: Path) -> None:
    trend = build_trend(archive, "E0107", last_n=None, seed=1, n_boot=0)
    pdf = render_trend_pdf(trend, Settings())
    assert pdf.startswith(b"%PDF-")
    assert render_trend_pdf(trend, Settings()) == pdf
