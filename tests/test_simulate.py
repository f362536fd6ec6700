"""The seeded simulator and the committed sample rounds it generates (scripts/simulator/)."""

from __future__ import annotations

import functools
import tomllib
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from python_calamine import CalamineWorkbook

from reportgen.rounds.schema import RoundConfig
from scripts.simulator import (
    NEVER_ERRS,
    SAMPLE_LAYOUTS,
    SAMPLE_YEARS,
    Layout,
    ResponsesFormat,
    SimulatedRound,
    round_toml,
    sample_rounds,
    simulate_round,
    write_round,
    write_sample_rounds,
)

SAMPLES = Path(__file__).resolve().parent.parent / "sample_rounds"
CSV_FILES = ("items.csv", "participants.csv", "estimates.csv")
LABELS = {"same", "different", "inconclusive"}


def _csv(path: Path) -> pd.DataFrame:
    """Every cell as text, blanks as '' - so leading zeros and empty cells survive."""
    return pd.read_csv(path, dtype=str, keep_default_na=False)


@functools.cache
def _xlsx_rows(path: Path) -> list[tuple[object, ...]]:
    """Cell values of the first sheet; whole numbers as int (calamine reads numbers as float)."""
    rows = CalamineWorkbook.from_path(str(path)).get_sheet_by_index(0).to_python()
    return [tuple(int(v) if isinstance(v, float) and v.is_integer() else v for v in row)
            for row in rows]


def _responses_file(folder: Path) -> Path:
    found = [p for p in (folder / "responses.csv", folder / "responses.xlsx") if p.exists()]
    assert len(found) == 1, found
    return found[0]


def _long_responses(folder: Path) -> pd.DataFrame:
    """The canonical long table (text cells) from any of the three sample layouts."""
    return _long_responses_cached(folder).copy()


@functools.cache
def _long_responses_cached(folder: Path) -> pd.DataFrame:
    path = _responses_file(folder)
    if path.suffix == ".xlsx":
        rows = _xlsx_rows(path)
        table = pd.DataFrame(rows[1:], columns=list(rows[0])).astype(str)
    else:
        table = _csv(path)
    if "item" in table.columns:
        return table
    items = [c.removesuffix("_decision") for c in table.columns if c.endswith("_decision")]
    parts = [pd.DataFrame({"participant": table["participant"], "item": item,
                           "decision": table[f"{item}_decision"],
                           "confidence": table[f"{item}_confidence"]}) for item in items]
    order = {item: k for k, item in enumerate(items)}
    long = pd.concat(parts, ignore_index=True)
    long = long.sort_values(["participant", "item"], key=lambda s: s.map(order)
                            if s.name == "item" else s, kind="stable")
    return long.reset_index(drop=True)


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("sample_rounds")
    write_sample_rounds(out)
    return out


@pytest.fixture(scope="module")
def sims() -> dict[int, SimulatedRound]:
    return sample_rounds()


# --- the committed files are exactly what the simulator makes -----------------------------------


@pytest.mark.parametrize("year", SAMPLE_YEARS)
def test_committed_round_matches_regeneration(regenerated: Path, year: int) -> None:
    committed, fresh = SAMPLES / f"fic-{year}", regenerated / f"fic-{year}"
    fmt, _layout = SAMPLE_LAYOUTS[year]
    expected = {"round.toml", *CSV_FILES, f"responses.{fmt}"}
    assert {p.name for p in committed.iterdir()} == expected
    assert {p.name for p in fresh.iterdir()} == expected
    assert (committed / "round.toml").read_text("utf-8") == (fresh / "round.toml").read_text(
        "utf-8")
    for name in CSV_FILES:
        pd.testing.assert_frame_equal(_csv(committed / name), _csv(fresh / name))
    if fmt == "csv":
        pd.testing.assert_frame_equal(_csv(committed / "responses.csv"),
                                      _csv(fresh / "responses.csv"))
    else:
        assert _xlsx_rows(committed / "responses.xlsx") == _xlsx_rows(fresh / "responses.xlsx")


def test_generation_is_byte_identical(regenerated: Path, tmp_path: Path) -> None:
    write_sample_rounds(tmp_path)
    for year in SAMPLE_YEARS:
        for path in sorted((regenerated / f"fic-{year}").iterdir()):
            again = tmp_path / f"fic-{year}" / path.name
            assert path.read_bytes() == again.read_bytes(), path.name


def test_csv_files_are_utf8_with_lf(regenerated: Path) -> None:
    for path in sorted(regenerated.glob("*/*.csv")):
        data = path.read_bytes()
        assert b"\r" not in data
        data.decode("utf-8")
        assert data.endswith(b"\n")


def test_workbook_properties_are_fixed() -> None:
    path = SAMPLES / "fic-2025" / "responses.xlsx"
    with zipfile.ZipFile(path) as zf:
        core = zf.read("docProps/core.xml").decode("utf-8")
        stamps = {info.date_time for info in zf.infolist()}
    assert stamps == {(2025, 5, 16, 0, 0, 0)}
    assert '<dcterms:created xsi:type="dcterms:W3CDTF">2025-05-16T00:00:00Z<' in core
    assert '<dcterms:modified xsi:type="dcterms:W3CDTF">2025-05-16T00:00:00Z<' in core
    wb = openpyxl.load_workbook(path, read_only=True)
    try:
        head = list(wb.worksheets[0].iter_rows(min_row=1, max_row=2, values_only=True))
    finally:
        wb.close()
    assert head[0] == ("participant", "item", "decision", "confidence")
    first_code = head[1][0]
    assert isinstance(first_code, str) and first_code.startswith("0")  # text, zeros kept
    assert isinstance(head[1][3], int)


# --- round.toml ----------------------------------------------------------------------------------


@pytest.mark.parametrize("year", SAMPLE_YEARS)
def test_round_toml_validates(year: int) -> None:
    with (SAMPLES / f"fic-{year}" / "round.toml").open("rb") as fh:
        cfg = RoundConfig.model_validate(tomllib.load(fh))
    assert cfg.round.id == f"FIC-{year}"
    assert cfg.round.issued.year == year and cfg.round.issued.month == 5
    assert cfg.provider.name == "Harbourline Proficiency Services"
    assert cfg.files.layout == SAMPLE_LAYOUTS[year][1]
    assert cfg.classes.labels == ("same", "different") and cfg.classes.positive == "same"
    assert set(cfg.decisions) == LABELS
    assert (cfg.confidence.kind, cfg.confidence.min, cfg.confidence.max) == ("ordinal", 1, 5)
    assert cfg.confidence.probability_map == "linear"


# --- contents ------------------------------------------------------------------------------------


@pytest.mark.parametrize("year", SAMPLE_YEARS)
def test_round_contents(year: int) -> None:
    folder = SAMPLES / f"fic-{year}"
    items = _csv(folder / "items.csv")
    assert list(items.columns) == ["item", "truth", "quality", "age_gap_years", "pose"]
    assert items["item"].is_unique and len(items) == 60
    assert list(items["item"]) == [f"P{k:02d}" for k in range(1, 61)]
    counts = items["truth"].value_counts()
    assert set(counts.index) == {"same", "different"}
    assert abs(counts["same"] - counts["different"]) <= 2
    assert set(items["quality"]) == {"good", "fair", "poor"}
    assert set(items["pose"]) == {"frontal", "three-quarter", "profile"}
    same = items[items["truth"] == "same"]
    assert same["age_gap_years"].map(lambda v: v.isdigit() and 0 <= int(v) <= 20).all()
    different = items[items["truth"] == "different"]
    assert (different["age_gap_years"] == "").any()

    long = _long_responses(folder)
    participants = _csv(folder / "participants.csv")
    codes = list(participants["participant"])
    assert codes == sorted(codes) and participants["participant"].is_unique
    assert 100 <= len(codes) <= 140
    # Complete: every participant answers every item once, sorted by code then key order.
    assert list(long["participant"]) == list(np.repeat(codes, len(items)))
    assert list(long["item"]) == list(items["item"]) * len(codes)
    assert set(long["decision"]) == LABELS
    conf = long["confidence"].astype(int)
    assert conf.between(1, 5).all() and set(conf) == {1, 2, 3, 4, 5}
    share = long["decision"].value_counts(normalize=True)
    assert 0.05 < share["inconclusive"] < 0.35

    estimates = _csv(folder / "estimates.csv")
    assert list(estimates.columns) == ["participant", "estimate", "when"]
    assert set(estimates["participant"]) <= set(codes)
    assert len(estimates) >= 0.8 * len(codes)
    assert estimates["estimate"].astype(int).between(0, 100).all()
    assert set(estimates["when"]) == {"after"}

    orgs = participants["organisation"].value_counts()
    assert 12 <= len(orgs) <= 15 and (orgs < 5).sum() >= 2


def test_codes_stable_across_years_and_leading_zeros_kept() -> None:
    tables = {y: _csv(SAMPLES / f"fic-{y}" / "participants.csv") for y in SAMPLE_YEARS}
    for table in tables.values():
        codes = table["participant"]
        assert codes.str.fullmatch(r"E?\d{4}").all()
        assert (codes.str.fullmatch(r"0\d{3}")).sum() >= 3  # purely numeric, leading zero
    identity = pd.concat(tables.values()).drop_duplicates()
    assert identity["participant"].is_unique  # same name and organisation every year
    in_all = set.intersection(*(set(t["participant"]) for t in tables.values()))
    assert sum(c.isdigit() for c in in_all) >= 3
    # The responses files keep the leading zeros too, in every layout.
    for year in SAMPLE_YEARS:
        long = _long_responses(SAMPLES / f"fic-{year}")
        assert list(long["participant"].unique()) == list(tables[year]["participant"])


def test_some_join_and_some_leave() -> None:
    sets = [set(_csv(SAMPLES / f"fic-{y}" / "participants.csv")["participant"])
            for y in SAMPLE_YEARS]
    assert sets[1] - sets[0] and sets[2] - sets[1]  # joiners
    assert sets[0] - sets[1] and sets[1] - sets[2]  # leavers
    assert (sets[0] & sets[2]) - sets[1]  # skipped a year
    assert len(sets[0] & sets[1] & sets[2]) >= 90


def test_the_examiner_who_never_errs() -> None:
    for year in SAMPLE_YEARS:
        folder = SAMPLES / f"fic-{year}"
        items = _csv(folder / "items.csv")
        key = dict(zip(items["item"], items["truth"], strict=True))
        long = _long_responses(folder)
        decisive = long["decision"] != "inconclusive"
        wrong = decisive & (long["decision"] != long["item"].map(key))
        errors = wrong.groupby(long["participant"]).sum()
        assert errors[NEVER_ERRS] == 0
        assert (errors > 0).mean() > 0.8  # errors are otherwise common
        mine = long[long["participant"] == NEVER_ERRS]
        assert (mine["decision"] != "inconclusive").sum() >= 40
        assert NEVER_ERRS in set(_csv(folder / "estimates.csv")["participant"])


def test_weak_examiners_overestimate(sims: dict[int, SimulatedRound]) -> None:
    sim = sims[2026]
    key = dict(zip(sim.items["item"], sim.items["truth"], strict=True))
    r = sim.responses
    accuracy = (r["decision"] == r["item"].map(key)).astype(float).groupby(
        r["participant"]).mean()
    est = sim.estimates.set_index("participant")["estimate"] / 100.0
    acc = accuracy.loc[est.index].astype(float)
    assert np.corrcoef(acc, est)[0, 1] > 0.5
    gap = est - acc
    assert gap[acc <= acc.quantile(0.25)].mean() > gap[acc >= acc.quantile(0.75)].mean() + 0.03


# --- the in-memory API ---------------------------------------------------------------------------


def test_simulate_round_large_shapes() -> None:
    sim = simulate_round(8000, 100, seed=7)
    assert sim.items.shape == (100, 5)
    assert sim.responses.shape == (800_000, 4)
    assert list(sim.responses.columns) == ["participant", "item", "decision", "confidence"]
    assert sim.participants.shape == (8000, 3) and sim.participants["participant"].is_unique
    assert sim.participants["participant"].is_monotonic_increasing
    assert sim.latent.shape[0] == 8000
    assert sim.items["item"].iloc[0] == "P001" and sim.items["item"].iloc[-1] == "P100"
    assert set(sim.responses["decision"]) == LABELS
    assert sim.responses["confidence"].between(1, 5).all()
    assert (sim.items["truth"] == "same").sum() == 50


def test_simulate_round_is_seeded() -> None:
    a, b = simulate_round(50, 20, seed=3), simulate_round(50, 20, seed=3)
    for name in ("items", "responses", "participants", "estimates", "latent"):
        pd.testing.assert_frame_equal(getattr(a, name), getattr(b, name))
    c = simulate_round(50, 20, seed=4)
    assert not a.responses.equals(c.responses)
    assert a.round_toml == b.round_toml


def test_latent_traits_show_in_the_answers() -> None:
    sim = simulate_round(600, 80, seed=11)
    key = dict(zip(sim.items["item"], sim.items["truth"], strict=True))
    r = sim.responses
    correct = r["decision"] == r["item"].map(key)
    lat = sim.latent.set_index("participant")
    accuracy = correct.groupby(r["participant"]).mean()
    assert accuracy.corr(lat["d_prime"], method="spearman") > 0.5
    inconclusive = (r["decision"] == "inconclusive").groupby(r["participant"]).mean()
    assert inconclusive.corr(lat["band"], method="spearman") > 0.5
    decisive = r["decision"] != "inconclusive"
    conf = r["confidence"].where(decisive)
    gap = (conf.where(correct).groupby(r["participant"]).mean()
           - conf.where(decisive & ~correct).groupby(r["participant"]).mean())
    good, poor = lat["m_ratio"] >= 0.8, lat["m_ratio"] <= 0.45
    assert gap[good].mean() > gap[poor].mean() + 0.3
    harder = sim.items.set_index("item")["quality"]
    err_by_quality = (~correct & decisive).groupby(r["item"].map(harder)).mean()
    assert err_by_quality["poor"] > err_by_quality["good"]


@pytest.mark.parametrize(("fmt", "layout"), [("csv", "long"), ("csv", "wide"),
                                             ("xlsx", "long"), ("xlsx", "wide")])
def test_write_round_layouts_round_trip(tmp_path: Path, fmt: ResponsesFormat,
                                        layout: Layout) -> None:
    sim = simulate_round(30, 12, seed=5, numeric_code_share=0.3)
    folder = write_round(sim, tmp_path / "r", responses_format=fmt, layout=layout)
    assert _responses_file(folder).suffix == f".{fmt}"
    back = _long_responses(folder)
    pd.testing.assert_frame_equal(back, sim.responses.astype(str))
    assert any(c.startswith("0") for c in back["participant"])
    with (folder / "round.toml").open("rb") as fh:
        cfg = RoundConfig.model_validate(tomllib.load(fh))
    assert cfg.files.layout == layout
    assert (folder / "round.toml").read_text("utf-8") == round_toml(sim.meta, layout=layout)


def test_write_round_replaces_a_responses_file_of_the_other_format(tmp_path: Path) -> None:
    sim = simulate_round(10, 6, seed=1)
    write_round(sim, tmp_path, responses_format="xlsx")
    write_round(sim, tmp_path, responses_format="csv")
    assert not (tmp_path / "responses.xlsx").exists()
    assert (tmp_path / "responses.csv").exists()
