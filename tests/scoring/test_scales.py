"""Response scales (docs/round-format.md, "Response scales"): graded conclusion scales read from
strength, continuous confidence with bins, errors by strength. Each reference check names its
outside source beside the expected value."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest
from sklearn.metrics import brier_score_loss, roc_auc_score

from reportgen.cli import main
from reportgen.metrics.binning import bin_index, row_levels
from reportgen.pipeline import score_folder
from reportgen.results.model import RoundResults
from reportgen.rounds.model import ABSTAINED, SAID_NEGATIVE, SAID_POSITIVE
from reportgen.settings import ReportSettings, Settings
from tests.conftest import ROUND_TOML

MakeRound = Callable[..., Path]

LEVELS = {  # label -> (class, strength)
    "same, strong": ("same", 3), "same, moderate": ("same", 2), "same, limited": ("same", 1),
    "no conclusion": ("inconclusive", 0),
    "different, limited": ("different", 1), "different, moderate": ("different", 2),
    "different, strong": ("different", 3),
}


def graded_toml(probabilities: dict[int, float] | None = None, extra: str = "") -> str:
    lines = []
    for label, (cls, s) in LEVELS.items():
        if cls == "inconclusive":
            lines.append(f'"{label}" = "inconclusive"')
            continue
        p = f", probability = {probabilities[s]}" if probabilities else ""
        lines.append(f'"{label}" = {{ class = "{cls}", strength = {s}{p} }}')
    head = ROUND_TOML.split("[confidence]")[0]
    return (head + "[decisions]\n" + "\n".join(lines) + '\n\n[confidence]\nsource = "strength"\n'
            + extra)


def simulated(n_p: int, n_i: int, seed: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Truth (I,), decision codes (P, I: 1 same, 0 different, 2 inconclusive), evidence depth."""
    rng = np.random.default_rng(seed)
    truth = np.resize([1, 0], n_i)
    x = (2 * truth - 1) * rng.uniform(0.5, 2.5, (n_p, 1)) / 2 + rng.normal(size=(n_p, n_i))
    dec = np.where(x > 0.3, 1, np.where(x < -0.3, 0, 2))
    return truth, dec, np.abs(x) + 0.5 * np.abs(rng.normal(size=(n_p, n_i)))


def items_csv(truth: np.ndarray) -> str:
    return "item,truth\n" + "".join(f"I{i + 1},{'same' if t else 'different'}\n"
                                    for i, t in enumerate(truth))


def graded_round(make_round: MakeRound, n_p: int = 30, n_i: int = 40, seed: int = 1,
                 probabilities: dict[int, float] | None = None, extra: str = "") -> Path:
    truth, dec, depth = simulated(n_p, n_i, seed)
    strength = 1 + (depth > 0.9).astype(int) + (depth > 1.8).astype(int)
    words = {(cls, s): label for label, (cls, s) in LEVELS.items()}
    rows = ["participant,item,decision"]
    for p in range(n_p):
        for i in range(n_i):
            label = ("no conclusion" if dec[p, i] == 2 else
                     words[("same" if dec[p, i] == 1 else "different", int(strength[p, i]))])
            rows.append(f"P{p:02d},I{i + 1},\"{label}\"")
    return make_round(round__toml=graded_toml(probabilities, extra), items__csv=items_csv(truth),
                      responses__csv="\n".join(rows) + "\n", participants__csv=None)


SLIDER_TOML = ROUND_TOML.replace(
    'kind = "ordinal"\nmin = 1\nmax = 5\nprobability_map = "linear"\n',
    'kind = "probability"\nmin = 0\nmax = 100\n{bins}')


def slider_round(make_round: MakeRound, bins: str = "bins = [0, 50, 60, 70, 80, 90, 100]\n",
                 n_p: int = 30, n_i: int = 40, seed: int = 2) -> Path:
    truth, dec, depth = simulated(n_p, n_i, seed)
    conf = np.clip(np.round(100 * (1 - 0.5 * np.exp(-depth)), 2), 0, 100)
    conf[0, :5] = [0, 50, 60, 100, 99.99]  # on the edges: a value opens its bin, 100 closes
    words = {1: "same", 0: "different", 2: "inconclusive"}
    rows = ["participant,item,decision,confidence"]
    for p in range(n_p):
        for i in range(n_i):
            rows.append(f"P{p:02d},I{i + 1},{words[int(dec[p, i])]},{conf[p, i]:g}")
    return make_round(round__toml=SLIDER_TOML.replace("{bins}", bins),
                      items__csv=items_csv(truth), responses__csv="\n".join(rows) + "\n",
                      participants__csv=None)


QUICK = Settings(report=ReportSettings(bootstrap=0))


def scored(folder: Path) -> RoundResults:
    return score_folder(folder, QUICK)


def value(results: RoundResults, p: int, name: str) -> float:
    v = results.participants[p].metrics[name].value
    assert v is not None, results.participants[p].metrics[name].note
    return v


def outcomes(results: RoundResults) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Strength (P, I; 0 when inconclusive), correct and conclusive masks."""
    rnd = results.round
    strength = np.vectorize(lambda lab: LEVELS[lab][1])(rnd.raw_decision)
    correct = ((rnd.decision == SAID_POSITIVE) & (rnd.truth == 1)) | (
        (rnd.decision == SAID_NEGATIVE) & (rnd.truth == 0))
    return strength, correct, rnd.decision != ABSTAINED


# ------------------------------------------------------------------ graded conclusion scales


def test_rating_roc_area_on_the_full_graded_scale(make_round: MakeRound) -> None:
    results = scored(graded_round(make_round))
    rnd = results.round
    strength, _, _ = outcomes(results)
    # The ordered codes: -3 "different, strong" ... 0 "no conclusion" ... +3 "same, strong".
    codes = np.where(rnd.decision == SAID_POSITIVE, strength,
                     np.where(rnd.decision == SAID_NEGATIVE, -strength, 0))
    for p in range(rnd.n_participants):
        # Outside source: scikit-learn roc_auc_score on the ordered codes (trapezoidal rule,
        # Hanley & McNeil 1982).
        assert value(results, p, "auc") == pytest.approx(roc_auc_score(rnd.truth, codes[p]),
                                                         abs=1e-12)


def test_insight_reads_strength_as_confidence(make_round: MakeRound) -> None:
    results = scored(graded_round(make_round))
    strength, correct, conclusive = outcomes(results)
    assert results.round.strength_is_confidence
    assert np.array_equal(np.nan_to_num(results.round.confidence), strength)
    checked = 0
    for p in range(results.round.n_participants):
        c, s = correct[p][conclusive[p]], strength[p][conclusive[p]].astype(float)
        if 0 < c.sum() < c.size:
            # Outside source: scikit-learn roc_auc_score(correct, confidence) (Fleming & Lau
            # 2014, type-2 ROC area).
            assert value(results, p, "type2_auroc") == pytest.approx(roc_auc_score(c, s))
            assert value(results, p, "conf_gap") == pytest.approx(s[c].mean() - s[~c].mean())
            checked += 1
    assert checked > 10


def test_meta_d_with_three_levels_per_side_agrees_with_the_reference_fit(
        make_round: MakeRound) -> None:
    from reportgen.metrics.metad_reference import reference_fit_meta_d

    results = scored(graded_round(make_round, n_p=4, n_i=120, seed=5))
    checked = 0
    for p in results.participants:
        assert len(p.rating_noise) == 6  # 3 strengths a side
        fast = p.metrics["meta_d"].value
        if fast is None:
            continue
        # Outside source: the slow, independent reference fit (metrics/metad_reference.py).
        slow = reference_fit_meta_d(p.rating_noise, p.rating_signal, n_starts=5)
        assert fast == pytest.approx(slow.meta_d, abs=1e-6)
        checked += 1
    assert checked >= 3


def test_errors_by_strength_per_participant_and_group(make_round: MakeRound) -> None:
    results = scored(graded_round(make_round))
    strength, correct, conclusive = outcomes(results)
    wrong = conclusive & ~correct
    for p, res in enumerate(results.participants):
        for s in (1, 2, 3):  # counted by hand
            assert res.counts[f"errors_at_strength_{s}"] == int(
                (wrong[p] & (strength[p] == s)).sum())
        assert res.counts["strongest_errors"] == res.counts["errors_at_strength_3"]
        assert sum(r.on_same + r.on_different for r in res.conclusions) == results.round.n_items
        assert [r.label for r in res.conclusions] == list(LEVELS)  # the scale's own order
    assert results.group.error_types["errors_at_strength_2"] == sum(
        r.counts["errors_at_strength_2"] for r in results.participants)
    assert [r.label for r in results.group.conclusions] == list(LEVELS)


def test_a_criterion_may_name_the_strongest_errors(make_round: MakeRound) -> None:
    rule = ('\n[[criteria]]\nid = "S1"\nlabel = "No error at the strongest level"\n'
            'metric = "strongest_errors"\nat_most = 0\n')
    results = scored(graded_round(make_round, extra=rule))
    for p in results.participants:
        outcome = next(c for c in p.criteria if c.id == "S1")
        assert outcome.outcome == ("met" if p.counts["strongest_errors"] == 0 else "not met")


def test_calibration_is_not_estimable_without_declared_probabilities(
        make_round: MakeRound) -> None:
    brier = scored(graded_round(make_round)).participants[0].metrics["brier"]
    assert brier.value is None
    assert brier.note == "the conclusion scale declares no probability for its levels"


def test_calibration_on_declared_probabilities(make_round: MakeRound) -> None:
    declared = {1: 0.6, 2: 0.75, 3: 0.9}
    results = scored(graded_round(make_round, probabilities=declared))
    strength, correct, conclusive = outcomes(results)
    f = np.vectorize(lambda s: declared.get(int(s), np.nan))(strength)
    for p in range(results.round.n_participants):
        fp, cp = f[p][conclusive[p]], correct[p][conclusive[p]]
        # Brier (1950) by hand, and scikit-learn's brier_score_loss.
        assert value(results, p, "brier") == pytest.approx(np.mean((fp - cp) ** 2))
        assert value(results, p, "brier") == pytest.approx(brier_score_loss(cp, fp))
        assert value(results, p, "overconfidence") == pytest.approx(fp.mean() - cp.mean())


def test_a_confidence_column_wins_over_strength(make_round: MakeRound,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    folder = graded_round(make_round)
    text = (folder / "responses.csv").read_text().splitlines()
    rows = [text[0] + ",confidence"] + [
        line + ("," if "no conclusion" in line else ",4") for line in text[1:]]
    (folder / "responses.csv").write_text("\n".join(rows) + "\n")
    results = scored(folder)
    assert not results.round.strength_is_confidence
    assert set(np.unique(results.round.confidence[np.isfinite(results.round.confidence)])) == {4}
    assert main(["check", str(folder)]) == 0
    assert "is read as the confidence" in capsys.readouterr().err


# ------------------------------------------------------------------ continuous confidence


def test_binned_tables_equal_numpy_histogram(make_round: MakeRound) -> None:
    results = scored(slider_round(make_round))
    rnd = results.round
    edges = [0, 50, 60, 70, 80, 90, 100]
    conclusive = (rnd.decision == SAID_POSITIVE) | (rnd.decision == SAID_NEGATIVE)
    for p, res in enumerate(results.participants):
        # Outside source: numpy.histogram with the same edges. Bins are left-closed, [a, b),
        # and the last bin is closed, [90, 100]: numpy's rule.
        hist, _ = np.histogram(rnd.confidence[p][conclusive[p]], bins=edges)
        assert [lv.correct + lv.wrong for lv in res.levels] == hist.tolist()
    pooled, _ = np.histogram(rnd.confidence[conclusive], bins=edges)
    assert [lv.correct + lv.wrong for lv in results.group.levels] == pooled.tolist()
    first = results.participants[0].rating_noise + results.participants[0].rating_signal
    assert len(first) == 2 * 2 * 6  # meta-d′ and the rating ROC on 6 bins a side


def test_bin_index_matches_numpy_histogram_at_the_edges() -> None:
    rng = np.random.default_rng(3)
    edges = np.array([0.0, 12.5, 50, 50.5, 99, 100])
    x = np.concatenate([rng.uniform(0, 100, 5000), edges, [np.nan, -1, 101]])
    k = bin_index(x, edges)
    # Outside source: numpy.histogram (left-closed bins, the last closed on both sides).
    assert np.bincount(k[k >= 0], minlength=5).tolist() == np.histogram(x, edges)[0].tolist()
    assert k[-3:].tolist() == [-1, -1, -1]


def test_raw_value_measures_use_the_raw_values(make_round: MakeRound) -> None:
    results = scored(slider_round(make_round))
    rnd = results.round
    correct = ((rnd.decision == SAID_POSITIVE) & (rnd.truth == 1)) | (
        (rnd.decision == SAID_NEGATIVE) & (rnd.truth == 0))
    conclusive = rnd.decision != ABSTAINED
    edges = np.array([0, 50, 60, 70, 80, 90, 100])
    for p in range(rnd.n_participants):
        c, v = correct[p][conclusive[p]], rnd.confidence[p][conclusive[p]]
        if not 0 < c.sum() < c.size:
            continue
        # Outside source: scikit-learn roc_auc_score(correct, confidence) on the raw values.
        assert value(results, p, "type2_auroc") == pytest.approx(roc_auc_score(c, v),
                                                                 abs=1e-12)
        assert value(results, p, "conf_gap") == pytest.approx(v[c].mean() - v[~c].mean())
        f = v / 100
        assert value(results, p, "brier") == pytest.approx(brier_score_loss(c, f))
        assert value(results, p, "overconfidence") == pytest.approx(f.mean() - c.mean())
        b = np.digitize(v, edges[1:-1])  # left-closed bins, 100 in the last
        ece = sum(abs(f[b == k].sum() - c[b == k].sum()) for k in range(6)) / c.size
        assert value(results, p, "ece") == pytest.approx(ece)  # Naeini et al. 2015, by hand


def test_default_bins_are_five_equal_bins(make_round: MakeRound) -> None:
    results = scored(slider_round(make_round, bins=""))
    assert [lv.level for lv in results.group.levels] == [10, 30, 50, 70, 90]


def test_row_levels_are_dense_ranks_per_row() -> None:
    x = np.array([[3.0, 1, 1, np.nan, 7], [5, 5, 5, 2, 9]])
    mask = np.ones_like(x, dtype=bool)
    mask[1, 4] = False
    rows = row_levels(x, mask)
    assert rows.codes.tolist() == [[1, 0, 0, -1, 2], [1, 1, 1, 0, -1]]
    assert rows.levels.tolist() == [[1, 3, 7], [2, 5, 0]]


def test_a_long_ordinal_scale_is_accepted_with_bins(make_round: MakeRound,
                                                    capsys: pytest.CaptureFixture[str]) -> None:
    toml = SLIDER_TOML.replace('kind = "probability"\nmin = 0\nmax = 100\n{bins}',
                               'kind = "ordinal"\nmin = 1\nmax = 100\n{bins}')
    folder = slider_round(make_round)
    text = (folder / "responses.csv").read_text()
    (folder / "responses.csv").write_text(
        "\n".join(line if i == 0 else line.rsplit(",", 1)[0] + "," + str(
            max(1, round(float(line.rsplit(",", 1)[1]))))
            for i, line in enumerate(text.splitlines())) + "\n")
    (folder / "round.toml").write_text(toml.replace("{bins}", ""))
    assert main(["check", str(folder)]) == 2
    assert "an ordinal scale of more than 20 levels needs bins" in capsys.readouterr().err
    (folder / "round.toml").write_text(toml.replace("{bins}", "bins = [1, 50, 75, 90, 100]\n"))
    results = scored(folder)
    assert len(results.group.levels) == 4



def test_a_zero_to_one_scale_is_read_as_a_proportion(make_round: MakeRound) -> None:
    percent = scored(slider_round(make_round, bins=""))
    folder = slider_round(lambda **files: make_round(folder="proportions", **files), bins="")
    text = (folder / "responses.csv").read_text().splitlines()
    rows = [text[0]] + [f"{line.rsplit(',', 1)[0]},{float(line.rsplit(',', 1)[1]) / 100:g}"
                        for line in text[1:]]
    (folder / "responses.csv").write_text("\n".join(rows) + "\n")
    toml = (folder / "round.toml").read_text().replace("max = 100", "max = 1")
    (folder / "round.toml").write_text(toml)
    results = scored(folder)
    for name in ("brier", "overconfidence", "type2_auroc", "ece", "auc"):
        assert value(results, 0, name) == pytest.approx(value(percent, 0, name)), name
    assert [lv.level for lv in results.group.levels] == pytest.approx([0.1, 0.3, 0.5, 0.7, 0.9])
