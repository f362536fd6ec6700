"""results.json against its JSON Schema (draft 2020-12, shipped in the package), for every sample
round, and the promises the schema cannot express: the same keys in every participant object,
the interval level stated, floats at full precision."""

from __future__ import annotations

import json
import math
from importlib import resources
from typing import Any

import jsonschema
import pytest

from reportgen import catalogue
from reportgen.pipeline import score_folder
from reportgen.render.results_json import FORMAT, SCHEMA_ID, results_json
from reportgen.resources import sample_rounds_dir
from reportgen.results.records import number, results_schema
from tests.test_history import FAST, sample_results

SAMPLE_ROUNDS = tuple(sorted(p.parent.name for p in sample_rounds_dir().glob("*/round.toml")))

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def documents() -> dict[str, dict[str, Any]]:
    """results.json of every sample round (the three FIC years come from the shared cache)."""
    cached = {r.round.folder.name: r for r in sample_results()}
    return {name: json.loads(results_json(
        cached.get(name) or score_folder(sample_rounds_dir() / name, FAST)))
        for name in SAMPLE_ROUNDS}


def test_the_schema_is_a_valid_draft_2020_12_schema_shipped_in_the_package() -> None:
    schema = results_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert schema["$id"] == SCHEMA_ID
    shipped = resources.files("reportgen.results") / "results.schema.json"
    assert json.loads(shipped.read_text(encoding="utf-8")) == schema


@pytest.mark.parametrize("name", SAMPLE_ROUNDS)
def test_every_sample_round_validates(documents: dict[str, dict[str, Any]], name: str) -> None:
    doc = documents[name]
    validator = jsonschema.Draft202012Validator(results_schema())
    errors = [f"{e.json_path}: {e.message}" for e in validator.iter_errors(doc)]
    assert not errors, errors[:5]
    assert doc["$schema"] == SCHEMA_ID
    assert doc["format"] == FORMAT
    assert doc["interval_level"] == catalogue.INTERVAL_LEVEL


def test_the_schema_rejects_what_it_should(documents: dict[str, dict[str, Any]]) -> None:
    validator = jsonschema.Draft202012Validator(results_schema())
    doc = json.loads(json.dumps(documents["fic-2026"]))
    del doc["interval_level"]
    doc["participants"][0]["accuracy"] = "78 %"
    doc["participants"][0]["accuracy_ci"] = [0.1]
    doc["participants"][1]["made_up"] = 1.0
    paths = {e.json_path for e in validator.iter_errors(doc)}
    assert {"$", "$.participants[0].accuracy", "$.participants[0].accuracy_ci",
            "$.participants[1]"} <= paths


@pytest.mark.parametrize("name", SAMPLE_ROUNDS)
def test_every_participant_object_has_the_same_keys(documents: dict[str, dict[str, Any]],
                                                    name: str) -> None:
    participants = documents[name]["participants"]
    keys = {tuple(p) for p in participants}
    assert len(keys) == 1
    first = participants[0]
    for metric in catalogue.BY_NAME:
        if metric in first and metric not in catalogue.COUNT_NAMES:
            assert f"{metric}_ci" in first and f"{metric}_note" in first, metric
    # a value that is not estimable is null with its reason beside it
    for p in participants:
        for key, value in p.items():
            if f"{key}_note" in p and value is None:
                assert p[f"{key}_note"], (p["participant"], key)


def test_the_schema_names_every_metric_of_the_catalogue() -> None:
    props = results_schema()["$defs"]["participant"]["properties"]
    missing = [n for n in (*catalogue.BY_NAME, *catalogue.COUNT_NAMES) if n not in props]
    assert not missing


def test_floats_are_written_at_full_precision() -> None:
    assert number(2 / 3) == 2 / 3
    assert number(0.1 + 0.2) == 0.1 + 0.2
    assert number(math.nan) is None and number(math.inf) is None and number(None) is None
    (results, *_) = (r for r in reversed(sample_results()))
    doc = json.loads(results_json(results))
    by_code = {p.code: p for p in results.participants}
    for obj in doc["participants"]:
        for name, m in by_code[obj["participant"]].metrics.items():
            assert obj[name] == m.value  # the very double, not a rounded one
            if obj[f"{name}_ci"] is not None:
                assert obj[f"{name}_ci"] == [m.low, m.high]


