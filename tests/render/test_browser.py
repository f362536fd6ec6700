"""The reports in a real browser: Debian's Chromium driven by puppeteer-core with axe-core
(tests/browser/, installed by scripts/system-deps.sh with ``npm ci``; no browser download).

A certificate, the appendix and a trend report must have no axe-core violation of WCAG 2.1 A/AA
or of the best-practice rules at 390 px (a phone) and 1280 px, and must not overflow the page
sideways at 390 px. Printing from the browser keeps the running header and footer the PDF has.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path
from typing import Any

import pytest

from reportgen.archive.trend import build_trend
from reportgen.render.appendix import render_appendix
from reportgen.render.certificate import render_certificate
from reportgen.render.context import report_id
from reportgen.render.trend import render_trend_html
from reportgen.settings import Settings
from tests.test_history import record_all, sample_results

pytestmark = pytest.mark.slow

BROWSER_DIR = Path(__file__).resolve().parents[1] / "browser"
CHROMIUM = Path("/usr/bin/chromium")
WIDTHS = (390, 1280)


def _tools() -> str:
    node = shutil.which("node")
    if node is None or not CHROMIUM.exists():
        pytest.skip("Chromium or Node.js is not installed (scripts/system-deps.sh installs them)")
    if not (BROWSER_DIR / "node_modules" / "puppeteer-core").is_dir():
        pytest.fail("tests/browser/node_modules is missing: run scripts/system-deps.sh "
                    "(it runs `npm ci` in tests/browser)")
    return node


@pytest.fixture(scope="module")
def pages(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    work = tmp_path_factory.mktemp("browser")
    results = sample_results()[-1]
    settings = Settings()
    first = min(results.participants, key=lambda p: p.code)
    archive = work / "archive.sqlite"
    record_all(archive, sample_results())
    trend = build_trend(archive, first.code, last_n=None, seed=1, n_boot=0)
    html = {"certificate": render_certificate(results, first, settings),
            "appendix": render_appendix(results, settings),
            "trend": render_trend_html(trend, settings)}
    out = {}
    for name, text in html.items():
        out[name] = work / f"{name}.html"
        out[name].write_text(text, encoding="utf-8")
    return out


@pytest.fixture(scope="module")
def browser_run(pages: dict[str, Path]) -> dict[str, Any]:
    node = _tools()
    work = pages["certificate"].parent
    printed = work / "certificate-print.pdf"
    jobs = {"pages": [{"file": str(path), "widths": list(WIDTHS),
                       **({"pdf": str(printed)} if name == "certificate" else {})}
                      for name, path in pages.items()]}
    (work / "jobs.json").write_text(json.dumps(jobs), encoding="utf-8")
    run = subprocess.run([node, str(BROWSER_DIR / "check.mjs"), str(work / "jobs.json")],
                         capture_output=True, text=True, timeout=300, cwd=BROWSER_DIR)
    assert run.returncode == 0, run.stderr[-2000:]
    return {"results": json.loads(run.stdout), "printed": printed}


@pytest.mark.parametrize("width", WIDTHS)
@pytest.mark.parametrize("name", ["certificate", "appendix", "trend"])
def test_no_axe_violations(browser_run: dict[str, Any], pages: dict[str, Path], name: str,
                           width: int) -> None:
    (result,) = [r for r in browser_run["results"]
                 if r["file"] == str(pages[name]) and r["width"] == width]
    assert result["violations"] == []


@pytest.mark.parametrize("name", ["certificate", "appendix", "trend"])
def test_no_sideways_overflow_on_a_phone(browser_run: dict[str, Any], pages: dict[str, Path],
                                         name: str) -> None:
    (result,) = [r for r in browser_run["results"]
                 if r["file"] == str(pages[name]) and r["width"] == 390]
    assert result["scrollWidth"] <= result["innerWidth"]


def test_the_shipped_font_is_used(browser_run: dict[str, Any]) -> None:
    for result in browser_run["results"]:
        assert "Reportgen Sans Web" in result["fontsReady"], result["file"]


def test_printing_from_the_browser_keeps_header_and_footer(browser_run: dict[str, Any]) -> None:
    pdftotext = shutil.which("pdftotext")
    if pdftotext is None:
        pytest.skip("pdftotext (poppler-utils) is not installed")
    results = sample_results()[-1]
    first = min(results.participants, key=lambda p: p.code)
    page2 = subprocess.run([pdftotext, "-f", "2", "-l", "2", "-layout",
                            str(browser_run["printed"]), "-"],
                           capture_output=True, text=True, check=True).stdout
    assert results.round.config.provider.name in page2
    assert f"Report {report_id(results.round.config.round.id, first.code)}" in page2
    assert "Confidential" in page2 and "Page 2 of" in page2
