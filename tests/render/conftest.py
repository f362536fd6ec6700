"""Fixtures for the rendering tests: one small synthetic round, rendered once per session."""

from __future__ import annotations

import pytest

from reportgen.render.appendix import render_appendix
from reportgen.render.certificate import render_certificate
from reportgen.render.pdf import html_to_pdf
from reportgen.results.model import ParticipantResult, RoundResults
from reportgen.settings import Settings

from .render_fixtures import build_results


@pytest.fixture(scope="session")
def results() -> RoundResults:
    return build_results()


@pytest.fixture(scope="session")
def settings() -> Settings:
    return Settings()


@pytest.fixture(scope="session")
def hostile(results: RoundResults) -> ParticipantResult:
    """The participant whose name is ``<script>alert(1)</script>``."""
    return results.participants[1]


@pytest.fixture(scope="session")
def certificate_html(results: RoundResults, hostile: ParticipantResult,
                     settings: Settings) -> str:
    return render_certificate(results, hostile, settings)


@pytest.fixture(scope="session")
def certificate_pdf(results: RoundResults, certificate_html: str) -> bytes:
    return html_to_pdf(certificate_html, issued=results.round.config.round.issued)


@pytest.fixture(scope="session")
def appendix_html(results: RoundResults, settings: Settings) -> str:
    return render_appendix(results, settings)


@pytest.fixture(scope="session")
def appendix_pdf(results: RoundResults, appendix_html: str) -> bytes:
    return html_to_pdf(appendix_html, issued=results.round.config.round.issued)
