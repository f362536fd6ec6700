"""Benchmark the rendering: chart embedding, certificate PDF cost, and worker scaling.

    python benchmarks/bench_render.py [--participants N] [--repeat R] [--round FOLDER]

Prints three tables (not a test; numbers depend on the machine and its load):

1. Chart embedding: WeasyPrint time for the same certificate with its charts as PNG (scale 2)
   and as ``<img>`` SVG data URIs.
2. Certificate cost: per-certificate ``html_to_pdf`` time, and HTML + charts + PDF end to end,
   against WeasyPrint's time for a text-only document of the same page count (the certificate
   with every chart replaced by an empty box of the same size). Target: PDF <= 1.5x text-only.
3. Workers: documents per second with ``jobs=1`` and ``jobs=2``. Target: >= 1.8x.

The round is the newest sample round scored by ``reportgen.pipeline.score_folder`` when that
works, else the synthetic round of the rendering tests.
"""

from __future__ import annotations

import argparse
import dataclasses
import io
import re
import statistics
import sys
import time
from collections.abc import Callable
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import altair as alt  # noqa: E402
import vl_convert  # noqa: E402
import weasyprint  # noqa: E402
from pypdf import PdfReader  # noqa: E402

from reportgen.render import certificate as html_mod  # noqa: E402
from reportgen.render import charts  # noqa: E402
from reportgen.render.batch import render_documents  # noqa: E402
from reportgen.render.pdf import _resources, html_to_pdf  # noqa: E402
from reportgen.results.model import RoundResults  # noqa: E402
from reportgen.settings import Settings  # noqa: E402

IMG = re.compile(r'<img class="chart" src="[^"]+" alt="[^"]*" width="(\d+)" height="(\d+)"[^>]*>')


def load_results(folder: Path | None, participants: int) -> tuple[RoundResults, str]:
    try:
        from reportgen.pipeline import newest_sample_round, score_folder

        path = folder or newest_sample_round()
        return score_folder(path), f"sample round {path.name}"
    except Exception as exc:  # the benchmark must run while scoring is in flux
        from tests.render.render_fixtures import build_results

        why = f"{type(exc).__name__}: {exc}"[:80]
        return build_results(participants, 60), f"synthetic round ({why})"


def interleaved(fns: dict[str, Callable[[], object]], repeat: int) -> dict[str, list[float]]:
    """Wall times of ``repeat`` rounds, each running every function once (after a warm-up).

    Interleaving spreads the machine's background load evenly over the candidates; report the
    minimum (least disturbed) beside the median.
    """
    for fn in fns.values():
        fn()
    times: dict[str, list[float]] = {name: [] for name in fns}
    for _ in range(repeat):
        for name, fn in fns.items():
            start = time.perf_counter()
            fn()
            times[name].append(time.perf_counter() - start)
    return times


def ms(times: list[float]) -> str:
    return f"min {1000 * min(times):6.0f} ms  median {1000 * statistics.median(times):6.0f} ms"


def weasyprint_only(html: str) -> Callable[[], bytes]:
    res = _resources()

    def run() -> bytes:
        doc = weasyprint.HTML(string=html).render(font_config=res.font_config,
                                                  stylesheets=[res.css])
        return bytes(doc.write_pdf())
    return run


def rgba_image(chart: alt.TopLevelMixin) -> charts.Image:
    """The chart as vl-convert writes it (RGBA PNG), without the opaque conversion."""
    data = bytes(vl_convert.vegalite_to_png(charts._spec(chart), scale=charts.SCALE))
    w, h = charts.png_size(data)
    return charts.Image(charts.data_uri(data), w / charts.SCALE, h / charts.SCALE)


def with_images(make: Callable[[alt.TopLevelMixin], charts.Image], render: Callable[[], str]
                ) -> str:
    original = charts.image
    charts.image = make  # type: ignore[assignment]
    try:
        return render()
    finally:
        charts.image = original


def svg_image(chart: alt.TopLevelMixin) -> charts.Image:
    """The chart as an ``<img>`` SVG data URI (the alternative to PNG being measured)."""
    text = charts.svg(chart)
    size = re.search(r'width="([\d.]+)" height="([\d.]+)"', text)
    if size is None:
        raise RuntimeError("SVG without width and height")
    return charts.Image(charts.data_uri(text.encode(), "image/svg+xml"), float(size[1]),
                        float(size[2]))


def text_only(html: str) -> str:
    """The certificate with every chart replaced by an empty box of the chart's size."""
    return IMG.sub(lambda m: f'<div style="width: {m[1]}px; height: {m[2]}px"></div>', html)


def pages(pdf: bytes) -> int:
    return len(PdfReader(io.BytesIO(pdf)).pages)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--participants", type=int, default=24,
                    help="certificates rendered in the worker test (and size of a synthetic round)")
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--round", type=Path, default=None)
    args = ap.parse_args()

    results, source = load_results(args.round, args.participants)
    settings = Settings()
    issued = results.round.config.round.issued
    p = results.participants[len(results.participants) // 2]
    print(f"round: {source}; {len(results.participants)} participants, "
          f"{results.round.n_items} items")

    # 1. Chart embedding.
    def cert() -> str:
        return html_mod.render_certificate(results, p, settings)

    variants = {"RGB PNG scale 2 (used)": cert(),
                "RGBA PNG scale 2": with_images(rgba_image, cert),
                "<img> SVG": with_images(svg_image, cert)}
    times = interleaved({k: weasyprint_only(v) for k, v in variants.items()}, args.repeat)
    print("\n1. chart embedding: WeasyPrint time per certificate")
    for name, html in variants.items():
        print(f"   {name:24s} {ms(times[name])}   HTML {len(html) / 1024:5.0f} KiB")

    # 2. Certificate against a text-only document of the same page count.
    png_html = variants["RGB PNG scale 2 (used)"]
    plain = text_only(png_html)
    n_cert = pages(html_to_pdf(png_html, issued=issued))
    n_plain = pages(weasyprint_only(plain)())
    times = interleaved({
        "plain": weasyprint_only(plain),
        "pdf": lambda: html_to_pdf(png_html, issued=issued),
        "html": cert,
        "full": lambda: html_to_pdf(cert(), issued=issued),
    }, args.repeat)
    base = min(times["plain"])
    print("\n2. certificate cost (per certificate; ratios of the minima)")
    print(f"   text-only WeasyPrint ({n_plain} pages)      {ms(times['plain'])}")
    print(f"   html_to_pdf, 3 charts ({n_cert} pages)      {ms(times['pdf'])}   "
          f"{min(times['pdf']) / base:.2f}x text-only (target <= 1.5x)")
    print(f"   HTML incl. chart export         {ms(times['html'])}")
    print(f"   end to end (HTML + PDF)         {ms(times['full'])}   "
          f"{min(times['full']) / base:.2f}x text-only")

    # 3. Worker scaling, on the first N participants (the group figures stay those of the round).
    subset = dataclasses.replace(results, participants=results.participants[:args.participants])
    n_docs = len(subset.participants) + 1
    print(f"\n3. workers ({n_docs - 1} certificates + appendix, HTML and PDF, incl. start-up)")
    walls = {}
    for jobs in (1, 2):
        start = time.perf_counter()
        for _ in render_documents(subset, settings, jobs=jobs):
            pass
        walls[jobs] = time.perf_counter() - start
        print(f"   jobs={jobs}: {walls[jobs]:6.1f} s   {n_docs / walls[jobs]:5.2f} documents/s")
    print(f"   speed-up 2 jobs / 1 job: {walls[1] / walls[2]:.2f}x (target >= 1.8x)")


if __name__ == "__main__":
    main()
