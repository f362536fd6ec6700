"""The certificate as the provider's document of record (issue: document of record): who
authorised it, provider-only papers kept apart from what participants receive, and an archive
that `verify` and `record` agree on. ISO/IEC 17043 asks a report to name whoever authorised it
(common practice: name and function on the first page)."""

from __future__ import annotations

import csv
import hashlib
import io
from collections.abc import Callable
from pathlib import Path

import pytest
from pypdf import PdfReader

from reportgen import cli
from tests.conftest import PARTICIPANTS, ROUND_TOML
from tests.render.helpers import html_text, norm, pdf_text

AUTHORISED = 'authorised_by = { name = "Wren Talbot", role = "Scheme coordinator" }\n'


def _tiny_round(folder: Path, people: str = PARTICIPANTS) -> Path:
    from tests.conftest import ITEMS, responses_csv

    folder.mkdir()
    for name, text in (("round.toml", ROUND_TOML), ("items.csv", ITEMS),
                       ("responses.csv", responses_csv()), ("participants.csv", people)):
        (folder / name).write_text(text, encoding="utf-8")
    return folder


@pytest.fixture(scope="module")
def issued(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("record")
    people = PARTICIPANTS.replace("organisation\n", "organisation,email\n")
    people = people.replace("Lab North\n", "Lab North,=HYPERLINK(\"x\")\n", 1)
    people = people.replace("Lab South\n", "Lab South,odile@lab.example\n")
    folder = _tiny_round(root / "round", people)
    out = root / "out"
    assert cli.main(["issue", str(folder), "-o", str(out), "--jobs", "1", "--quiet"]) == 0
    return out


def test_a_final_round_must_name_who_authorises_it(make_round: Callable[..., Path],
                                                   capsys: pytest.CaptureFixture[str]) -> None:
    folder = make_round(round__toml=ROUND_TOML.replace(AUTHORISED, ""))
    assert cli.main(["check", str(folder)]) == 2
    assert ("error: round.toml, column 'provider': authorised_by = { name = \"...\", role = "
            "\"...\" } is required when [round] status is \"final\": the name and function of "
            "who authorises the reports") in capsys.readouterr().err


def test_a_preliminary_round_may_go_without(make_round: Callable[..., Path]) -> None:
    toml = ROUND_TOML.replace(AUTHORISED, "").replace('key_statement', 'status = "preliminary"\n'
                                                      'key_statement')
    assert cli.main(["check", str(make_round(round__toml=toml))]) == 0


def test_page_one_names_who_authorised_the_report(issued: Path) -> None:
    for pdf in (issued / "certificates" / "0042.pdf", issued / "appendix.pdf"):
        first = norm(PdfReader(pdf).pages[0].extract_text() or "")
        assert "Authorised for release by Wren Talbot, Scheme coordinator, Test Provider." in first


def test_participants_receive_certificates_and_the_appendix_only(issued: Path) -> None:
    top = sorted(p.name for p in issued.iterdir())
    assert top == ["appendix.html", "appendix.pdf", "archive.sqlite", "certificates",
                   "manifest.json", "provider"]
    assert sorted(p.name for p in (issued / "provider").iterdir()) == [
        "distribution.csv", "key-audit.html", "key-audit.pdf", "results.json", "results.xlsx"]
    appendix = html_text((issued / "appendix.html").read_text("utf-8")) + pdf_text(
        (issued / "appendix.pdf").read_bytes())
    for word in ("review", "Review", "provider only", "Provider only", "key audit"):
        assert word not in appendix, word


def test_the_release_review_is_marked_provider_only(issued: Path) -> None:
    text = pdf_text((issued / "provider" / "key-audit.pdf").read_bytes())
    assert "Provider only" in text and "Release checklist" in text
    assert "T-1-REVIEW" in text


def test_the_distribution_list_names_each_file_with_its_hash(issued: Path) -> None:
    rows = list(csv.DictReader(io.StringIO(
        (issued / "provider" / "distribution.csv").read_text("utf-8"))))
    assert len(rows) == 4 * 4  # 4 participants x (own PDF, own HTML, appendix PDF, HTML)
    for row in rows:
        digest = hashlib.sha256((issued / row["file"]).read_bytes()).hexdigest()
        assert row["sha256"] == digest
        assert row["file"].startswith(("certificates/", "appendix."))
    by_code = {r["participant"]: r for r in rows}
    assert by_code["B3"]["email"] == "odile@lab.example"
    # Untrusted text cannot become a formula in a spreadsheet (OWASP ASVS 5.0 §1.2.10).
    assert by_code["0042"]["email"] == "'=HYPERLINK(\"x\")"


def test_record_into_an_issued_folder_is_refused_and_verify_stays_true(
        issued: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["verify", str(issued)]) == 0
    before = (issued / "archive.sqlite").read_bytes()
    folder = issued.parent / "round"
    assert cli.main(["record", str(folder), "--archive", str(issued / "archive.sqlite")]) == 2
    err = capsys.readouterr().err
    assert "this archive is part of the issued output folder" in err
    assert "Keep the archive outside the output folder" in err
    assert (issued / "archive.sqlite").read_bytes() == before
    assert cli.main(["verify", str(issued)]) == 0


# ---------------------------------------------------------------------------------------------
# Amended reports: every report id stands for one content forever


@pytest.fixture(scope="module")
def amended(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    root = tmp_path_factory.mktemp("amend")
    folder = _tiny_round(root / "round")
    archive = root / "archive.sqlite"
    base = ["--archive", str(archive), "--jobs", "1", "--quiet"]
    assert cli.main(["issue", str(folder), "-o", str(root / "v1"), *base]) == 0
    # Only C9's organisation is corrected: only C9's certificate changes.
    people = PARTICIPANTS.replace("Piet Salo,Lab East", "Piet Salo,Lab East Annex")
    (folder / "participants.csv").write_text(people, encoding="utf-8")
    assert cli.main(["issue", str(folder), "-o", str(root / "v2"), *base, "--replace",
                     "--reason", "Organisation of one participant corrected.",
                     "--amended-on", "2026-02-12"]) == 0
    return {"v1": root / "v1", "v2": root / "v2", "archive": archive, "round": folder}


def _report_id(out: Path, code: str) -> str:
    text = norm(PdfReader(out / "certificates" / f"{code}.pdf").pages[0].extract_text() or "")
    return text.split("Report id ")[1].split(" ")[0]


def test_a_changed_certificate_gets_a_new_id_and_a_notice(amended: dict[str, Path]) -> None:
    old, new = _report_id(amended["v1"], "C9"), _report_id(amended["v2"], "C9")
    assert new == f"{old}-A1"
    first = norm(PdfReader(amended["v2"] / "certificates" / "C9.pdf").pages[0].extract_text()
                 or "")
    assert (f"Amended report: replaces {old} issued 1 February 2026. Reason: Organisation of "
            "one participant corrected.") in first
    assert "Amended on 12 February 2026" in first


def test_an_unchanged_certificate_is_reissued_unchanged(amended: dict[str, Path]) -> None:
    for code in ("0042", "A7", "B3"):
        for ext in (".pdf", ".html"):
            name = f"certificates/{code}{ext}"
            assert (amended["v1"] / name).read_bytes() == (amended["v2"] / name).read_bytes()
    assert (amended["v1"] / "appendix.pdf").read_bytes() == (
        amended["v2"] / "appendix.pdf").read_bytes()


def test_the_archive_keeps_every_version_and_each_id_once(amended: dict[str, Path]) -> None:
    import sqlite3

    with sqlite3.connect(amended["archive"]) as conn:
        rows = conn.execute("SELECT version, code, report_id, content_sha256 FROM documents "
                            "ORDER BY version, code").fetchall()
    assert [r[0] for r in rows] == [1] * 5 + [2] * 5
    ids: dict[str, str] = {}
    for _, _, report_id, content in rows:
        assert ids.setdefault(report_id, content) == content  # one content per id, forever
    assert len(ids) == 6  # five originals and C9's amended certificate


@pytest.mark.parametrize(("extra", "messages"), [
    ([], ["error: --reason: `issue --replace` amends issued reports: say why with --reason "
          "TEXT (printed on every amended report)",
          "error: --amended-on: `issue --replace` amends issued reports: give the date of the "
          "amendment with --amended-on YYYY-MM-DD"]),
    (["--reason", "x", "--amended-on", "2026-01-31"],
     ["error: --amended-on: an amendment cannot be dated before the round was issued (value "
      "'2026-01-31'); allowed: 2026-02-01 or later"]),
])
def test_replace_needs_a_reason_and_a_date(amended: dict[str, Path], tmp_path: Path,
                                           capsys: pytest.CaptureFixture[str], extra: list[str],
                                           messages: list[str]) -> None:
    out = tmp_path / "never"
    assert cli.main(["issue", str(amended["round"]), "-o", str(out), "--archive",
                     str(amended["archive"]), "--replace", "--quiet", *extra]) == 2
    err = capsys.readouterr().err
    for message in messages:
        assert message in err
    assert not out.exists()


# ---------------------------------------------------------------------------------------------
# Signatures (PAdES for PDFs, CMS for the manifest; docs/signing.md)


@pytest.fixture(scope="module")
def signed(tmp_path_factory: pytest.TempPathFactory) -> Path:
    import os

    from reportgen import signing

    root = tmp_path_factory.mktemp("signed")
    folder = _tiny_round(root / "round")
    key = signing.make_demo_key(root)
    old = os.environ.get(signing.PASSPHRASE_ENV)
    os.environ[signing.PASSPHRASE_ENV] = os.environ[signing.DEMO_PASSPHRASE_ENV]
    try:
        assert cli.main(["issue", str(folder), "-o", str(root / "out"), "--sign", str(key),
                         "--jobs", "2", "--quiet"]) == 0
    finally:
        if old is None:
            del os.environ[signing.PASSPHRASE_ENV]
        else:
            os.environ[signing.PASSPHRASE_ENV] = old
    return root / "out"


def test_a_signed_folder_verifies_and_names_the_signer(signed: Path,
                                                       capsys: pytest.CaptureFixture[str]
                                                       ) -> None:
    assert (signed / "manifest.json.p7s").is_file()
    assert cli.main(["verify", str(signed)]) == 0
    out = capsys.readouterr().out
    assert "signature valid" in out and "reportgen demonstration key" in out
    first = norm(PdfReader(signed / "certificates" / "0042.pdf").pages[0].extract_text() or "")
    assert "demonstration key" in first


def test_an_edited_and_rehashed_file_is_caught(signed: Path, tmp_path: Path,
                                               capsys: pytest.CaptureFixture[str]) -> None:
    import json
    import shutil

    copy = tmp_path / "copy"
    shutil.copytree(signed, copy)
    html = copy / "certificates" / "0042.html"
    html.write_text(html.read_text("utf-8").replace("Ines Varga", "Someone Else"), "utf-8")
    manifest = json.loads((copy / "manifest.json").read_text("utf-8"))
    for entry in manifest["outputs"]:
        if entry["path"] == "certificates/0042.html":
            entry["sha256"] = hashlib.sha256(html.read_bytes()).hexdigest()
    (copy / "manifest.json").write_text(json.dumps(manifest, indent=1), "utf-8")
    assert cli.main(["verify", str(copy)]) == 1
    assert "signature: manifest.json:" in capsys.readouterr().out


def test_a_wrong_passphrase_is_a_plain_error(signed: Path, tmp_path: Path,
                                             monkeypatch: pytest.MonkeyPatch,
                                             capsys: pytest.CaptureFixture[str]) -> None:
    from reportgen import signing

    key = signing.make_demo_key(tmp_path)
    monkeypatch.setenv(signing.PASSPHRASE_ENV, "not the passphrase")
    out = tmp_path / "never"
    assert cli.main(["issue", str(signed.parent / "round"), "-o", str(out), "--sign", str(key),
                     "--quiet"]) == 2
    assert "passphrase" in capsys.readouterr().err
    assert not out.exists()
