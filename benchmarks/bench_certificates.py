"""Certificates end to end against WeasyPrint's own floor (issue 14 target: ratio ≤ 1.25).

    .venv/bin/python benchmarks/bench_certificates.py [--participants 20] [--round FOLDER]

For each of ``--participants`` certificates of the newest sample round, in one process, CPU time:

* **end to end**: certificate HTML (context, wording, the four charts: the round's shared
  backdrops, made on first use and counted where they are made, and each certificate's own
  marks) and its PDF by ``html_to_pdf``, as ``issue`` renders it;
* **text-only floor**: WeasyPrint alone (``html_to_pdf``: tagged PDF/A-3b, the same shared fonts
  and CSS) on the same HTML with every chart replaced by an empty box of the chart's size (same
  layout, same pages).

Prints both totals, the ratio, and where the end-to-end time goes (charts / HTML / PDF). A
benchmark, not a test; a warm-up certificate is rendered first (engine start-up is excluded),
then the backdrop caches are emptied, so the round's shared backdrops are made and timed within
the end-to-end loop, spread over ``--participants`` certificates as ``issue`` spreads them over
the round's.
"""

from __future__ import annotations

import argparse
import datetime as dt
import re
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from reportgen.pipeline import newest_sample_round, score_folder  # noqa: E402
from reportgen.render import certificate as certificate_module  # noqa: E402
from reportgen.render.certificate import render_certificate  # noqa: E402
from reportgen.render.certificate_charts import forget_backdrops  # noqa: E402
from reportgen.render.pdf import html_to_pdf  # noqa: E402
from reportgen.settings import Settings  # noqa: E402

IMG = re.compile(r'<img class="chart" src="[^"]+" alt="[^"]*" width="(\d+)" height="(\d+)"[^>]*>')
SVG = re.compile(r'<svg class="chart"[^>]* width="([\d.]+)" height="([\d.]+)".*?</svg>', re.S)


def text_only(html: str) -> str:
    """The same HTML with every chart (image or layered SVG) an empty box of its size."""
    def box(m: re.Match[str]) -> str:
        return f'<div style="width: {m[1]}px; height: {m[2]}px"></div>'

    return SVG.sub(box, IMG.sub(box, html))


def floor_pdf(html: str, issued: dt.date) -> bytes:
    """WeasyPrint on ``html`` as ``issue`` writes it: tagged PDF/A-3b, shared fonts and CSS."""
    return html_to_pdf(html, issued=issued)


class ChartClock:
    """CPU time spent making a certificate's charts (shared backdrops and own marks) while
    installed."""

    def __init__(self) -> None:
        self.seconds = 0.0
        self.original: Callable[..., Any] = certificate_module.certificate_charts

    def __enter__(self) -> ChartClock:
        def timed(*args: Any) -> Any:
            start = time.process_time()
            try:
                return self.original(*args)
            finally:
                self.seconds += time.process_time() - start

        certificate_module.certificate_charts = timed
        return self

    def __exit__(self, *exc: object) -> None:
        certificate_module.certificate_charts = self.original


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--participants", type=int, default=40)
    ap.add_argument("--round", type=Path, default=None)
    args = ap.parse_args()
    folder = args.round or newest_sample_round()
    results = score_folder(folder)
    settings = Settings()
    issued = results.round.config.round.issued
    people = results.participants[: args.participants]
    floor_pdf(text_only(render_certificate(results, people[0], settings)), issued)  # warm-up
    html_to_pdf(render_certificate(results, people[0], settings), issued=issued)

    plain = [text_only(render_certificate(results, p, settings)) for p in people]
    # Floor and end to end alternate certificate by certificate, so that drift in the machine's
    # speed (a noisy neighbour, frequency changes) falls on both alike.
    floor = html_cpu = pdf_cpu = 0.0
    forget_backdrops()  # the round's shared backdrops are made, and timed, in the loop below
    with ChartClock() as clock:
        for p, html_plain in zip(people, plain, strict=True):
            start = time.process_time()
            floor_pdf(html_plain, issued)
            t0 = time.process_time()
            html = render_certificate(results, p, settings)
            t1 = time.process_time()
            html_to_pdf(html, issued=issued)
            t2 = time.process_time()
            floor += t0 - start
            html_cpu += t1 - t0
            pdf_cpu += t2 - t1
    total = html_cpu + pdf_cpu
    n = len(people)
    print(f"round {folder.name}: {n} certificates, one process, CPU time")
    print(f"text-only floor (WeasyPrint, charts as empty boxes): {1000 * floor / n:6.0f} ms each")
    print(f"end to end (HTML with charts + PDF):                  {1000 * total / n:6.0f} ms each")
    print(f"   charts {1000 * clock.seconds / n:5.0f} ms, rest of the HTML "
          f"{1000 * (html_cpu - clock.seconds) / n:5.0f} ms, PDF {1000 * pdf_cpu / n:5.0f} ms")
    print(f"ratio end to end / floor: {total / floor:.2f} (target <= 1.25)")


if __name__ == "__main__":
    main()
