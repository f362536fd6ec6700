"""Refused cases: a broken round.toml, and responses in a missing or unsupported file."""

from __future__ import annotations

from pathlib import Path

from scripts.hostile.base_round import ROUND_TOML, base, toml, toml_table
from scripts.hostile.registry import refused
from scripts.hostile.workbooks import ole_file, responses_xlsx

# round.toml ---------------------------------------------------------------------------------

@refused
def toml_missing(f: Path) -> None:
    base(f, round__toml=None)


@refused
def toml_syntax_unclosed_string(f: Path) -> None:
    base(f, round__toml=toml('title = "Tiny round"', 'title = "Tiny round'))


@refused
def toml_syntax_duplicate_key(f: Path) -> None:
    base(f, round__toml=toml('id = "H-1"', 'id = "H-1"\nid = "H-2"'))


@refused
def toml_not_utf8(f: Path) -> None:
    base(f, round__toml=toml("Tiny round", "Petit résumé").encode("latin-1"))


@refused
def toml_too_large(f: Path) -> None:
    base(f, round__toml=ROUND_TOML + ("# padding\n" * 110_000))


@refused
def toml_nested_too_deeply(f: Path) -> None:
    base(f, round__toml=ROUND_TOML + "x = " + "[" * 50_000 + "]" * 50_000 + "\n")


@refused
def toml_wrong_type(f: Path) -> None:
    base(f, round__toml=toml("min = 1", 'min = "one"'))


@refused
def toml_unknown_key(f: Path) -> None:
    base(f, round__toml=toml("max = 5", "max = 5\ncolour = 3"))


@refused
def toml_missing_round_table(f: Path) -> None:
    start, end = ROUND_TOML.index("[round]"), ROUND_TOML.index("[provider]")
    base(f, round__toml=ROUND_TOML[:start] + ROUND_TOML[end:])


@refused
def toml_dates_out_of_order(f: Path) -> None:
    base(f, round__toml=toml("closed = 2026-01-20", "closed = 2025-12-20"))


@refused
def toml_decision_to_undeclared_class(f: Path) -> None:
    base(f, round__toml=toml_table('[decisions]\nsame = "same"\ndifferent = "different"\n'
                                   'inconclusive = "inconclusive"\nmaybe = "perhaps"'))


@refused
def toml_class_without_decision(f: Path) -> None:
    base(f, round__toml=toml_table('[decisions]\nsame = "same"\ninconclusive = "inconclusive"'))


@refused
def toml_blank_decision_label(f: Path) -> None:
    base(f, round__toml=toml_table('[decisions]\nsame = "same"\ndifferent = "different"\n'
                                   '"" = "inconclusive"'))


@refused
def toml_decision_labels_differ_by_case(f: Path) -> None:
    base(f, round__toml=toml_table('[decisions]\nsame = "same"\nSame = "different"\n'
                                   'different = "different"'))


@refused
def toml_positive_not_a_class(f: Path) -> None:
    base(f, round__toml=toml_table('[classes]\nlabels = ["same", "different"]\n'
                                   'positive = "match"'))


@refused
def toml_criterion_unknown_metric(f: Path) -> None:
    base(f, round__toml=toml('metric = "accuracy"', 'metric = "acuracy"'))


@refused
def toml_criterion_contradictory_bounds(f: Path) -> None:
    base(f, round__toml=toml("at_least = 0.5", "at_least = 0.9\nat_most = 0.5"))


@refused
def toml_criterion_duplicate_ids(f: Path) -> None:
    base(f, round__toml=toml('id = "C2"', 'id = "C1"'))


@refused
def toml_scale_min_equals_max(f: Path) -> None:
    base(f, round__toml=toml("max = 5", "max = 1"))


@refused
def toml_scale_min_above_max(f: Path) -> None:
    base(f, round__toml=toml("min = 1\nmax = 5", "min = 5\nmax = 1"))


@refused
def toml_scale_infinite(f: Path) -> None:
    base(f, round__toml=toml("max = 5", "max = inf"))


@refused
def toml_probability_scale_beyond_percent(f: Path) -> None:
    base(f, round__toml=toml('kind = "ordinal"\nmin = 1\nmax = 5\nprobability_map = "linear"',
                             'kind = "probability"\nmin = 50\nmax = 150'))


@refused
def toml_negative_seed(f: Path) -> None:
    base(f, round__toml=toml_table("[scoring]\nseed = -1"))


@refused
def toml_accent_not_a_colour(f: Path) -> None:
    base(f, round__toml=toml('name = "Test Provider"', 'name = "Test Provider"\naccent = "red"'))


@refused
def toml_columns_shared(f: Path) -> None:
    base(f, round__toml=toml_table('[columns]\ndecision = "confidence"'))


@refused
def toml_limits_out_of_range(f: Path) -> None:
    base(f, round__toml=toml_table("[limits]\nmax_rows = 0"))


@refused
def toml_file_outside_folder(f: Path) -> None:
    base(f, round__toml=toml_table('[files]\nitems = "../items.csv"'))


@refused
def toml_file_name_with_nul(f: Path) -> None:
    base(f, round__toml=toml_table('[files]\nitems = "items\\u0000.csv"'))


@refused
def toml_file_name_too_long(f: Path) -> None:
    base(f, round__toml=toml_table(f'[files]\nitems = "{"i" * 300}.csv"'))


@refused
def toml_logo_outside_folder(f: Path) -> None:
    base(f, round__toml=toml('name = "Test Provider"',
                             'name = "Test Provider"\nlogo = "../logo.png"'))


@refused
def toml_logo_missing(f: Path) -> None:
    base(f, round__toml=toml('name = "Test Provider"', 'name = "Test Provider"\nlogo = "logo.png"'))


@refused
def toml_wide_columns_not_found(f: Path) -> None:
    base(f, round__toml=toml_table('[files]\nlayout = "wide"\n\n[wide]\n'
                                   'decision = "{item}_{x}"'))


# which file, which format ---------------------------------------------------------------------

@refused
def missing_responses(f: Path) -> None:
    base(f, responses__csv=None)


@refused
def responses_both_csv_and_xlsx(f: Path) -> None:
    base(f, responses__xlsx=responses_xlsx())


@refused
def responses_xls(f: Path) -> None:
    base(f, responses__csv=None, responses__xls=ole_file(encrypted=False))


@refused
def responses_ods(f: Path) -> None:
    base(f, responses__csv=None, responses__ods=b"PK\x03\x04 not read")


@refused
def responses_numbers(f: Path) -> None:
    base(f, responses__csv=None, responses__numbers=b"PK\x03\x04 not read")


@refused
def csv_is_a_workbook(f: Path) -> None:
    base(f, responses__csv=responses_xlsx())
