"""Writing from hostile text (issue 5): one `reportgen issue` of a round whose codes, names,
organisations and item attributes are markup, formulas, path parts and reserved names.

* HTML is autoescaped: ``<script>…`` is text in the certificate's HTML and in its PDF.
* Workbook text cells are text: formulas (= + - @) and tab/CR-prefixed values read back as the
  very same text, never as formulas (OWASP ASVS 5.0 §1.2.10, CWE-1236). reportgen writes no csv.
* File names from codes stay inside OUT/certificates, are distinct ignoring case, and the
  mapping is in manifest.json ``participant_files``.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import openpyxl
import pytest
import python_calamine

from reportgen.cli import main
from reportgen.output import verify
from reportgen.render.batch import safe_stems
from scripts.hostile import HOSTILE_ATTRIBUTES, HOSTILE_PEOPLE, hostile_text_round
from tests.render.helpers import html_text, pdf_text

pytestmark = pytest.mark.slow

CODES = [code for code, _, _ in HOSTILE_PEOPLE]


@pytest.fixture(scope="module")
def issued(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("hostile-text")
    hostile_text_round(root / "round")
    out = root / "out"
    assert main(["issue", str(root / "round"), "-o", str(out), "--jobs", "1", "--quiet"]) == 0
    return out


def _manifest(out: Path) -> dict[str, str]:
    files: dict[str, str] = json.loads((out / "manifest.json").read_text("utf-8"))[
        "participant_files"]
    return files


def test_output_is_complete_and_verifies(issued: Path) -> None:
    assert verify(issued).intact
    assert [p.relative_to(issued).as_posix() for p in issued.rglob("*.csv")] == [
        "provider/distribution.csv"]


def test_the_distribution_list_neutralises_formulas(issued: Path) -> None:
    """Text fields starting = + - @ tab or CR get a leading apostrophe (OWASP ASVS 5.0 §1.2.10,
    CWE-1236); everything else is written as it is."""
    data = (issued / "provider" / "distribution.csv").read_bytes().decode("utf-8")
    rows = list(csv.reader(io.StringIO(data, newline="")))
    assert rows[0] == ["participant", "name", "email", "file", "sha256"]
    seen = {(r[0], r[1]) for r in rows[1:]}
    for code, name, _ in HOSTILE_PEOPLE:
        shown = (code, name)
        safe = tuple("'" + v if v.startswith(("=", "+", "-", "@", "\t", "\r")) else v
                     for v in shown)
        assert safe in seen, shown
    assert all(not r[1].startswith(("=", "+", "-", "@")) for r in rows[1:])


def test_file_names_stay_inside_certificates_and_are_distinct(issued: Path) -> None:
    files = _manifest(issued)
    assert sorted(files) == sorted(CODES)
    folder = (issued / "certificates").resolve()
    written = sorted(p.name for p in folder.iterdir())
    assert len(written) == 2 * len(CODES)
    assert len({name.casefold() for name in written}) == len(written)  # case-insensitive FS
    for code, pdf in files.items():
        path = (issued / pdf).resolve()
        assert path.parent == folder, (code, pdf)
        assert path.is_file() and path.with_suffix(".html").is_file()
        assert len(path.name) <= 64 + len(".html")
        assert path.stem.split(".")[0].upper() not in {"CON", "PRN", "AUX", "NUL"}
    assert [p.name for p in issued.iterdir() if p.name not in {
        "certificates", "provider", "manifest.json", "appendix.html", "appendix.pdf",
        "archive.sqlite"}] == []
    assert sorted(p.name for p in (issued / "provider").iterdir()) == [
        "distribution.csv", "key-audit.html", "key-audit.pdf", "results.json", "results.xlsx"]


def test_codes_differing_only_by_case_get_different_names() -> None:
    """The loader refuses such codes in one round (tests/rounds/test_load.py); the file names
    stay distinct even so, and do not depend on the order of the codes."""
    stems = safe_stems(["Ab", "aB", "x"])
    assert len({s.casefold() for s in stems.values()}) == 3
    assert stems == safe_stems(["x", "aB", "Ab"])


def test_markup_in_a_name_is_text_in_html_and_pdf(issued: Path) -> None:
    files = _manifest(issued)
    pdf_path = issued / files["0042"]
    html = pdf_path.with_suffix(".html").read_text("utf-8")
    assert "<script>alert(1)</script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "<b>North</b>" not in html
    assert "<script>alert(1)</script>" in html_text(html)
    text = pdf_text(pdf_path.read_bytes())
    assert "<script>alert(1)</script>" in text
    assert "Lab <b>North</b> & Sons" in text
    for path in issued.rglob("*.html"):
        assert "<script" not in path.read_text("utf-8").lower(), path


def test_formula_like_text_is_stored_as_text(issued: Path) -> None:
    book = openpyxl.load_workbook(issued / "provider" / "results.xlsx")
    sheet = book["Participants"]
    header = [c.value for c in sheet[1]]
    rows = {row[0].value: row for row in sheet.iter_rows(min_row=2)}
    for code, name, organisation in HOSTILE_PEOPLE:
        if "\r" in code:
            continue  # see test_carriage_return_survives_the_workbook
        row = rows[code]
        for column, expected in (("participant", code), ("name", name),
                                 ("organisation", organisation)):
            cell = row[header.index(column)]
            assert cell.value == expected, (column, expected)
            assert cell.data_type == "s", (column, expected)  # text, never a formula
    items = book["Items"]
    quality = [c.value for c in items[1]].index("quality")
    cells = [row[quality] for row in items.iter_rows(min_row=2)]
    assert len(cells) == len(HOSTILE_ATTRIBUTES)
    for cell, expected in zip(cells, HOSTILE_ATTRIBUTES, strict=True):
        if expected == "-2":  # a plain number in the key is stored as a number, never a formula
            assert (cell.data_type, cell.value) == ("n", -2)
            continue
        assert cell.data_type == "s", expected
        if "\r" not in expected:
            assert cell.value == expected


def test_carriage_return_survives_the_workbook(issued: Path) -> None:
    """Read as Excel reads it (calamine, like Excel, decodes _xHHHH_ escapes)."""
    data = (issued / "provider" / "results.xlsx").read_bytes()
    book = python_calamine.CalamineWorkbook.from_filelike(io.BytesIO(data))
    texts = {v for row in book.get_sheet_by_name("Participants").to_python() for v in row
             if isinstance(v, str)}
    texts |= {v for row in book.get_sheet_by_name("Items").to_python() for v in row
              if isinstance(v, str)}
    assert "\rCR" in texts
