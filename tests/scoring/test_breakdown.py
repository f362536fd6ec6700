"""Break-downs by item attribute ([attributes] breakdown, docs/round-format.md): every figure of a
level is checked against a direct count or an outside implementation named beside it."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from sklearn.metrics import roc_auc_score
from statsmodels.stats.proportion import proportion_confint

from reportgen.cli import main
from reportgen.pipeline import score_folder
from reportgen.render.appendix import render_appendix
from reportgen.render.certificate import render_certificate
from reportgen.results import reasons
from reportgen.results.model import AttributeBreakdown, RoundResults
from reportgen.rounds.model import ABSTAINED, MISSING, SAID_NEGATIVE, SAID_POSITIVE
from reportgen.settings import ReportSettings, Settings
from tests.conftest import ROUND_TOML

MakeRound = Callable[..., Path]
BANDS = ["A"] * 18 + ["B"] * 16 + ["C"] * 3 + ["D"] * 3  # C and D are small: merged at 5
N_P, N_I = 30, len(BANDS)


def settings(min_group_size: int = 5) -> Settings:
    return Settings(report=ReportSettings(bootstrap=0, min_group_size=min_group_size))


def simulated_round(make_round: MakeRound, folder: str = "round") -> Path:
    """30 participants, 40 items in four bands; participant P30 answers only half the items, so
    stays out of the group statistics."""
    rng = np.random.default_rng(7)
    truth = np.resize([1, 0], N_I)
    x = (2 * truth - 1) * rng.uniform(0.3, 2.0, (N_P, 1)) + rng.normal(size=(N_P, N_I))
    decision = np.where(x > 0.4, "same", np.where(x < -0.4, "different", "inconclusive"))
    confidence = np.clip(np.ceil(np.abs(x) * 1.5 + rng.normal(0, 0.7, (N_P, N_I))), 1, 5)
    items = "item,truth,band\n" + "".join(
        f"I{i + 1:02d},{'same' if t else 'different'},{b}\n"
        for i, (t, b) in enumerate(zip(truth, BANDS, strict=True)))
    lines = ["participant,item,decision,confidence"]
    for p in range(N_P):
        for i in range(N_I if p < N_P - 1 else N_I // 2):
            lines.append(f"P{p + 1:02d},I{i + 1:02d},{decision[p, i]},{int(confidence[p, i])}")
    toml = (ROUND_TOML + "\n[scoring]\nallow_missing = true\n"
            '\n[attributes]\nbreakdown = ["band"]\n')
    return make_round(folder, round__toml=toml, items__csv=items,
                      responses__csv="\n".join(lines) + "\n", participants__csv=None)


@pytest.fixture
def scored(make_round: MakeRound) -> RoundResults:
    return score_folder(simulated_round(make_round), settings())


def _band(results: RoundResults) -> AttributeBreakdown:
    (b,) = results.breakdowns
    assert b.attribute == "band"
    return b


def _selection(results: RoundResults, name: str) -> np.ndarray:
    merged = reasons.merged_levels(5)
    bands = np.array(results.round.item_attributes["band"])
    return np.isin(bands, ["C", "D"]) if name == merged else bands == name


def test_levels_and_merging(scored: RoundResults) -> None:
    b = _band(scored)
    assert [(lv.name, lv.n_items, lv.merged) for lv in b.levels] == [
        ("A", 18, ()), ("B", 16, ()), ("other (fewer than 5 items each)", 6, ("C", "D"))]
    assert b.withheld == ()


def test_accuracy_and_rates_equal_direct_counts(scored: RoundResults) -> None:
    rnd = scored.round
    truth = rnd.truth == 1
    in_group = np.array([p.counts["in_group"] == 1 for p in scored.participants])
    assert in_group.sum() == N_P - 1  # P30 answered half the items
    for level in _band(scored).levels:
        sel = _selection(scored, level.name)
        dec = rnd.decision[:, sel]
        right = ((dec == SAID_POSITIVE) & truth[sel]) | ((dec == SAID_NEGATIVE) & ~truth[sel])
        fp = (dec == SAID_POSITIVE) & ~truth[sel]
        answered_diff = ((dec != MISSING) & ~truth[sel]).sum(axis=1)
        for p, code in enumerate(rnd.participants):
            own = level.participants[code]
            assert own.accuracy.value == pytest.approx(right[p].sum() / sel.sum())
            # Wilson interval: statsmodels.stats.proportion.proportion_confint(method="wilson")
            low, high = proportion_confint(right[p].sum(), sel.sum(), alpha=0.05,
                                           method="wilson")
            assert (own.accuracy.low, own.accuracy.high) == pytest.approx((low, high))
            if answered_diff[p]:
                assert own.false_positive_rate.value == pytest.approx(
                    fp[p].sum() / answered_diff[p])
        # The group pools the answers of the participants in the group only.
        k, n = right[in_group].sum(), in_group.sum() * sel.sum()
        assert level.group.accuracy.value == pytest.approx(k / n)
        low, high = proportion_confint(k, n, alpha=0.05, method="wilson")  # statsmodels
        assert (level.group.accuracy.low, level.group.accuracy.high) == pytest.approx((low, high))


def test_type2_area_equals_sklearn(scored: RoundResults) -> None:
    rnd = scored.round
    truth = rnd.truth == 1
    in_group = np.array([p.counts["in_group"] == 1 for p in scored.participants])
    for level in _band(scored).levels:
        sel = _selection(scored, level.name)
        dec, conf = rnd.decision[:, sel], rnd.confidence[:, sel]
        right = ((dec == SAID_POSITIVE) & truth[sel]) | ((dec == SAID_NEGATIVE) & ~truth[sel])
        conclusive = (dec == SAID_POSITIVE) | (dec == SAID_NEGATIVE)
        checked = 0
        for p, code in enumerate(rnd.participants):
            y, score = right[p][conclusive[p]], conf[p][conclusive[p]]
            area = level.participants[code].type2_auroc
            if 0 < y.sum() < y.size:
                # sklearn.metrics.roc_auc_score of confidence for right (1) against wrong (0)
                assert area.value == pytest.approx(roc_auc_score(y, score))
                checked += 1
            else:
                assert area.value is None and area.note
        assert checked > 5
        y, score = right[in_group][conclusive[in_group]], conf[in_group][conclusive[in_group]]
        assert level.group.type2_auroc.value == pytest.approx(roc_auc_score(y, score))
        assert level.group.type2_auroc.low is not None
        assert level.group.type2_auroc.low < level.group.type2_auroc.value


def test_abstentions_are_neither_right_nor_errors(scored: RoundResults) -> None:
    assert (scored.round.decision == ABSTAINED).any()


def test_small_levels_withheld_when_too_few_to_merge(make_round: MakeRound) -> None:
    results = score_folder(simulated_round(make_round), settings(min_group_size=7))
    b = _band(results)
    assert [lv.name for lv in b.levels] == ["A", "B"]
    assert b.withheld == ("C", "D")
    # Small levels that reach the size together are merged, whatever their own sizes.
    results = score_folder(simulated_round(make_round, "second"), settings(min_group_size=17))
    b = _band(results)
    assert [(lv.name, lv.n_items, lv.merged) for lv in b.levels] == [
        ("A", 18, ()), ("other (fewer than 17 items each)", 22, ("B", "C", "D"))]
    assert b.withheld == ()


def test_one_small_level_is_withheld_not_merged_alone() -> None:
    from reportgen.scoring.breakdown import level_items

    levels, withheld = level_items(("x", "x", "y", "x"), 2)
    assert [(name, mask.tolist(), merged) for name, mask, merged in levels] == [
        ("x", [True, True, False, True], ())]
    assert withheld == ("y",)
    levels, withheld = level_items(("x", " ", "y", "x", ""), 2)  # blank cells: one level
    assert [(name, mask.tolist()) for name, mask, _ in levels] == [
        (reasons.BLANK_LEVEL, [False, True, False, False, True]),
        ("x", [True, False, False, True, False])]
    assert withheld == ("y",)


def test_no_breakdown_by_default(make_round: MakeRound) -> None:
    assert score_folder(make_round(), settings()).breakdowns == ()


def test_unknown_column_is_a_located_error(make_round: MakeRound,
                                           capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(round__toml=ROUND_TOML + '\n[attributes]\nbreakdown = ["qualty"]\n')
    assert main(["check", str(folder)]) == 2
    assert ("error: round.toml, column 'attributes.breakdown': [attributes] breakdown names a "
            "column that is not in the items file items.csv (value 'qualty'); allowed: "
            "quality") in capsys.readouterr().err


def test_certificate_and_appendix_show_the_tables(scored: RoundResults) -> None:
    cert = render_certificate(scored, scored.participants[0], settings())
    assert "Your results by item band" in cert
    assert '<th scope="row">other (fewer than 5 items each)</th>' in cert
    assert "The levels C, D have fewer than 5 items each and are shown merged" in cert
    own = _band(scored).levels[0].participants[scored.participants[0].code].accuracy
    assert f"{100 * (own.value or 0):.1f}" in cert
    appendix = render_appendix(scored, settings())
    assert "The group by item band" in appendix
    assert '<th scope="row">A</th><td class="num">18</td>' in appendix


def test_results_json_carries_the_breakdown_and_validates(scored: RoundResults) -> None:
    import json

    import jsonschema

    from reportgen.render.results_json import results_json
    from reportgen.results.records import results_schema

    doc = json.loads(results_json(scored))
    jsonschema.Draft202012Validator(results_schema()).validate(doc)
    (group,) = doc["group"]["breakdowns"]
    level = _band(scored).levels[0]
    assert group["levels"][0]["accuracy"] == level.group.accuracy.value
    assert group["levels"][2]["merged"] == ["C", "D"]
    first = doc["participants"][0]
    assert first["breakdowns"][0]["levels"][0]["accuracy"] == \
        level.participants[first["participant"]].accuracy.value
