"""Refused cases of codes and labels that changed on the way; accepted awkward but valid files."""

from __future__ import annotations

import codecs
import unicodedata
from pathlib import Path

from scripts.hostile.base_round import (
    ANSWERS,
    ITEMS,
    TRUTH,
    Rows,
    base,
    csv_text,
    items_rows,
    participants_rows,
    replace_line,
    replace_once,
    responses_csv,
    responses_rows,
    swap,
    toml_table,
)
from scripts.hostile.registry import accepted, refused
from scripts.hostile.workbooks import responses_xlsx, workbook

# codes and labels ---------------------------------------------------------------------------

@refused
def item_lost_leading_zeros(f: Path) -> None:
    base(f, responses__csv=responses_csv(replace_line("B3,0003,", "B3,3,")))


@refused
def participant_number_lost_leading_zeros(f: Path) -> None:
    rows = responses_rows()
    for row in range(2, 8):  # 0042 typed into a number cell: 42
        rows = swap(rows, row, 0, 42)
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


@refused
def participant_codes_differ_by_leading_zeros(f: Path) -> None:
    base(f, responses__csv=responses_csv(replace_line("0042,0006,", "42,0006,")))


@refused
def estimate_lost_leading_zeros(f: Path) -> None:
    base(f, estimates__csv="participant,estimate\n42,80\nA7,60\n")


@refused
def codes_differ_by_unicode_form(f: Path) -> None:
    nfc, nfd = "José", unicodedata.normalize("NFD", "José")
    text = csv_text(responses_rows()).replace("C9,", nfc + ",")
    text = replace_once(text, f"{nfc},0006", f"{nfd},0006")
    people = csv_text(participants_rows()).replace("C9,", nfc + ",")
    base(f, responses__csv=text, participants__csv=people)


@refused
def decision_with_trailing_space(f: Path) -> None:
    base(f, responses__csv=responses_csv(replace_line("B3,0002,same,", "B3,0002,same ,")))


@refused
def truth_label_in_capitals(f: Path) -> None:
    base(f, items__csv=replace_once(csv_text(items_rows()), "0005,different", "0005,DIFFERENT"))


@refused
def blank_decision(f: Path) -> None:
    base(f, responses__csv=responses_csv(replace_line("C9,0002,same,5", "C9,0002,,5")))


@refused
def confidence_with_decimal_comma(f: Path) -> None:
    base(f, responses__csv=responses_csv(replace_line("A7,0004,same,2", 'A7,0004,same,"2,5"')))


@refused
def participant_listed_twice(f: Path) -> None:
    base(f, participants__csv=csv_text(participants_rows()) + "B3,Odile Marsh,Lab West\n")


@refused
def participant_missing_from_participants_file(f: Path) -> None:
    base(f, participants__csv=csv_text(participants_rows()[:-1]))


# accepted: awkward but valid ------------------------------------------------------------------

NAMES = {"A7": "José Müller", "B3": "Renée Ødegård"}


def _people_text(delimiter: str = ",") -> str:
    rows = participants_rows()
    for row in rows:
        row[1] = NAMES.get(row[0], row[1])
    return csv_text(rows, delimiter)


@accepted
def accept_csv_utf8_with_bom(f: Path) -> None:
    base(f, participants__csv=codecs.BOM_UTF8 + _people_text().encode("utf-8"))


@accepted
def accept_csv_utf16_with_bom(f: Path) -> None:
    base(f, participants__csv=_people_text().encode("utf-16"))


@accepted
def accept_csv_utf16_without_bom(f: Path) -> None:
    base(f, participants__csv=_people_text().encode("utf-16-le"))


@accepted
def accept_csv_latin1(f: Path) -> None:
    base(f, participants__csv=_people_text().encode("latin-1"))


@accepted
def accept_csv_semicolons_and_crlf(f: Path) -> None:
    base(f, participants__csv=_people_text(";").replace("\n", "\r\n"),
         responses__csv=csv_text(responses_rows(), ";"))


@accepted
def accept_csv_tabs(f: Path) -> None:
    base(f, responses__csv=csv_text(responses_rows(), "\t"))


@accepted
def accept_csv_quoted_newline_and_delimiter(f: Path) -> None:
    text = _people_text().replace("Lab South", '"Lab South,\nBuilding 2"')
    base(f, participants__csv=text)


@accepted
def accept_csv_short_rows_padded(f: Path) -> None:
    rows = [row[:2] if row[0] == "C9" else row for row in participants_rows()]
    base(f, participants__csv=csv_text(rows))


@accepted
def accept_normalised_labels(f: Path) -> None:
    text = responses_csv(replace_line("B3,0002,same,", "B3,0002,Same ,"))
    base(f, round__toml=toml_table("[scoring]\nnormalise_labels = true"), responses__csv=text)


@accepted
def accept_xlsx_header_below_a_gap(f: Path) -> None:
    rows: Rows = [[], [], *[[None, *row] for row in responses_rows()]]
    base(f, responses__csv=None, responses__xlsx=responses_xlsx(rows))


@accepted
def accept_xlsx_numeric_items_and_hidden_notes(f: Path) -> None:
    rows: Rows = [["participant", "item", "decision", "confidence"]]
    rows += [[code, int(item), d, c] for code, answers in ANSWERS.items()
             for item, (d, c) in zip(ITEMS, answers, strict=True)]
    key: Rows = [["item", "truth"], *[[int(i), t] for i, t in zip(ITEMS, TRUTH, strict=True)]]
    base(f, items__csv=None, items__xlsx=workbook(("Key", key)),
         responses__csv=None,
         responses__xlsx=workbook(("Responses", rows), ("Notes", [["x"]]), hidden=["Notes"]))

