"""reportgen.render.html: content, escaping and confidentiality of the HTML documents."""

from __future__ import annotations

import datetime as dt
import re
from pathlib import Path

import pytest

from reportgen.errors import InputError
from reportgen.render import charts, html_parts, wording
from reportgen.render.appendix import appendix_context, render_appendix
from reportgen.render.certificate import render_certificate
from reportgen.render.context import logo_path, report_id
from reportgen.render.pdf import html_to_pdf
from reportgen.render.wording import statements
from reportgen.results.model import Metric, ParticipantResult, PreviousRound, RoundResults
from reportgen.settings import Settings

from .helpers import contains_token, html_text, norm, pdf_text
from .render_fixtures import HOSTILE_NAME, build_results, round_config


def _others(results: RoundResults, me: ParticipantResult) -> set[str]:
    """Every other participant's code, name and organisation (minus anything shared with me)."""
    rnd = results.round
    mine = {me.code, rnd.identity(me.code).name, rnd.identity(me.code).organisation}
    out: set[str] = set()
    for p in results.participants:
        ident = rnd.identity(p.code)
        out |= {p.code, ident.name, ident.organisation}
    return {x for x in out - mine if x}


def _identities(results: RoundResults) -> set[str]:
    rnd = results.round
    return {x for p in results.participants
            for x in (p.code, rnd.identity(p.code).name, rnd.identity(p.code).organisation) if x}


def test_untrusted_text_is_escaped(certificate_html: str) -> None:
    assert HOSTILE_NAME not in certificate_html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in certificate_html
    assert "Agency &amp; Sons &lt;Lab&gt;" in certificate_html
    assert "<script" not in certificate_html.lower()


def test_certificate_names_its_participant_and_no_other(results: RoundResults,
                                                        hostile: ParticipantResult,
                                                        certificate_html: str) -> None:
    text = html_text(certificate_html)
    assert contains_token(text, hostile.code)
    assert HOSTILE_NAME in text
    for other in _others(results, hostile):
        assert not contains_token(text, other), other


def test_every_certificate_is_confidential(results: RoundResults, settings: Settings) -> None:
    for p in results.participants[::3]:
        text = html_text(render_certificate(results, p, settings))
        for other in _others(results, p):
            assert not contains_token(text, other), (p.code, other)


def test_appendix_names_nobody(results: RoundResults, appendix_html: str) -> None:
    text = html_text(appendix_html)
    for ident in _identities(results):
        assert not contains_token(text, ident), ident


def test_appendix_context_holds_no_identity(results: RoundResults, settings: Settings) -> None:
    blob = repr({k: v for k, v in appendix_context(results, settings).items() if k != "charts"})
    for ident in _identities(results):
        assert not contains_token(blob, ident), ident


def test_certificate_carries_the_required_parts(results: RoundResults,
                                                hostile: ParticipantResult,
                                                certificate_html: str) -> None:
    text = html_text(certificate_html)
    info = results.round.config.round
    for part in (
        results.round.config.provider.name, info.scheme, info.id, info.title, info.key_statement,
        report_id(info.id, hostile.code), "15 May 2026", "final", "confidential",
        "End of report", statements.overall_text(hostile),
        *(c.label for c in results.round.config.criteria),
        *wording.CAUTIONS,
        "Hautus", "Macmillan", "Fleming", "Nelson", "Maniscalco", "Murphy", "ISO 13528",
        "ISO/IEC 17043",
    ):
        assert norm(part) in text, part
    assert '<meta name="dcterms.created" content="2026-05-15">' in certificate_html
    # Every rate shows its interval.
    accuracy = hostile.metrics["accuracy"]
    assert norm(wording.fmt_interval(accuracy, "percent")) in text
    # Each item appears in the item-by-item table.
    for item in results.round.items:
        assert contains_token(text, item)


def test_few_errors_and_not_estimable_are_flagged(results: RoundResults,
                                                  settings: Settings) -> None:
    perfect = results.participants[0]
    assert perfect.counts["errors"] == 0
    text = html_text(render_certificate(results, perfect, settings))
    assert "Not estimable for you in this round (no errors)." in text
    unstable = next(p for p in results.participants
                    if p.metrics["type2_auroc"].note == "few errors: unstable")
    text = html_text(render_certificate(results, unstable, settings))
    assert "Caution: few errors: unstable." in text


def test_report_id_is_deterministic_and_distinct() -> None:
    assert report_id("FIC-2026", "P001") == report_id("FIC-2026", "P001")
    assert report_id("FIC-2026", "P001") != report_id("FIC-2026", "P002")
    assert report_id("FIC-2026", "P001").startswith("FIC-2026-")


def test_previous_rounds_slot_is_optional(results: RoundResults, hostile: ParticipantResult,
                                          settings: Settings, certificate_html: str) -> None:
    assert "Your previous rounds" not in certificate_html
    earlier = PreviousRound("FIC-2025", dt.date(2025, 5, 16), Metric(0.81, 0.7, 0.9),
                            Metric(0.66), "all criteria met")
    html = render_certificate(results, hostile, settings, previous_rounds=[earlier])
    assert "Your previous rounds" in html
    assert "FIC-2025" in html


def test_html_is_deterministic(results: RoundResults, hostile: ParticipantResult,
                               settings: Settings, certificate_html: str) -> None:
    assert render_certificate(results, hostile, settings) == certificate_html


def test_small_groups_hide_the_distribution(settings: Settings) -> None:
    small = build_results(n_participants=3, n_items=6)
    text = html_text(render_certificate(small, small.participants[0], settings))
    assert "too few to show its distribution" in text
    assert "Of the other" not in text
    appendix = html_text(render_appendix(small, settings))
    assert "lowest and highest values are withheld" in appendix


def test_branding_is_data(tmp_path: Path, settings: Settings) -> None:
    (tmp_path / "logo.png").write_bytes(charts.png(charts.item_map([], accent="#123456")))
    config = round_config(logo="logo.png", accent="#1f5f8b")
    branded = build_results(n_participants=3, n_items=6, config=config, folder=tmp_path)
    html = render_certificate(branded, branded.participants[0], settings)
    assert "--accent: #1f5f8b;" in html
    assert '<img class="logo" src="data:image/png;base64,' in html
    logo = logo_path(branded)
    assert logo == (tmp_path / "logo.png").resolve()
    pdf = html_to_pdf(html, issued=branded.round.config.round.issued, allowed_files=[logo])
    assert pdf.startswith(b"%PDF")


def test_a_logo_outside_the_round_folder_is_refused(tmp_path: Path, settings: Settings) -> None:
    config = round_config(logo="../outside.png")
    branded = build_results(n_participants=3, n_items=6, config=config, folder=tmp_path / "r")
    with pytest.raises(InputError):
        render_certificate(branded, branded.participants[0], settings)


# ---------------------------------------------------------------------------------------------
# Readable wherever it is opened (issue 13) and small things a new provider tripped over (15)


def test_html_is_built_for_phones_screen_readers_and_print(certificate_html: str,
                                                          appendix_html: str) -> None:
    for document in (certificate_html, appendix_html):
        assert '<meta name="viewport" content="width=device-width, initial-scale=1">' in document
        assert document.count("<main>") == 1 and "<header class=\"masthead\">" in document
        assert "<footer" in document
        tables = re.findall(r"<table[^>]*>", document)
        assert tables
        assert len(re.findall(r"<caption", document)) == len(tables)
        # every table scrolls on its own on a narrow screen instead of squeezing its cells
        assert document.count('class="table-scroll"') == len(tables)
        for head in re.findall(r"<thead>.*?</thead>", document, flags=re.S):
            assert "<th>" not in head and "<th class" not in head
        assert not re.search(r"<th[^>]*>\s*</th>", document)  # no empty header cell
        assert "table-layout: auto" in document and "@media print" in document


def test_every_chart_has_its_numbers_beside_it(certificate_html: str) -> None:
    charts_shown = len(re.findall(r'<img class="chart"|<svg class="chart"', certificate_html))
    assert charts_shown >= 3
    assert certificate_html.count('<details class="chart-data">') == charts_shown


def test_the_shipped_font_is_embedded(certificate_html: str) -> None:
    assert '@font-face { font-family: "Reportgen Sans Web"' in certificate_html
    assert "data:font/woff;base64," in certificate_html
    assert "url(http" not in certificate_html and "url(file" not in certificate_html


def test_contact_e_mail_is_a_mailto_link(certificate_html: str) -> None:
    assert '<a href="mailto:rounds@harbourline.example">rounds@harbourline.example</a>' in (
        certificate_html)
    parts = html_parts.contact_parts('Ann Lee <ann@lab.example>, "x@y.example"; tel. 1')
    assert [p["email"] for p in parts if p["email"]] == ["ann@lab.example", "x@y.example"]
    assert "".join(p["text"] for p in parts) == 'Ann Lee <ann@lab.example>, "x@y.example"; tel. 1'


def test_running_header_text_cannot_break_out_of_the_stylesheet(settings: Settings) -> None:
    hostile = 'Lab "A" \\ </style><script>x</script>'
    results = build_results(config=round_config(name=hostile))
    html = render_certificate(results, results.participants[0], settings)
    style = html[html.index("<style>"):html.index("</style>")]
    assert "<script" not in style and "</" not in style
    assert 'content: "Lab \\"A\\" \\\\ \\3c /style>\\3c script>x\\3c /script>";' in style


def test_end_of_report_extracts_as_plain_text(results: RoundResults, hostile: ParticipantResult,
                                              certificate_html: str, certificate_pdf: bytes
                                              ) -> None:
    assert "letter-spacing" not in certificate_html
    ident = report_id(results.round.config.round.id, hostile.code)
    assert f"End of report {ident}" in pdf_text(certificate_pdf)
