"""Golden HTML files of the demo round: what they hold and how they are produced.

``tests/golden/certificate.html`` is the certificate of the first participant (by code) of the
newest sample round, ``tests/golden/appendix.html`` its group appendix. Chart images are replaced
by a placeholder (their bytes depend on the vl-convert build; the charts have their own tests), so
the files are readable and review-friendly. Regenerate with ``python scripts/regenerate_golden.py``
(or ``make golden``) after an intended change, and review the diff.
"""

from __future__ import annotations

import re
from pathlib import Path

from reportgen.render.appendix import render_appendix
from reportgen.render.certificate import render_certificate
from reportgen.settings import Settings

GOLDEN_DIR = Path(__file__).resolve().parents[1] / "golden"
CERTIFICATE = GOLDEN_DIR / "certificate.html"
APPENDIX = GOLDEN_DIR / "appendix.html"
_DATA_URI = re.compile(r"data:((?:image|font)/[a-z+.-]+);base64,[A-Za-z0-9+/=]+")


def normalise(html: str) -> str:
    """Chart and logo images and the embedded font replaced by ``data:<type>;base64,IMAGE``."""
    return _DATA_URI.sub(r"data:\1;base64,IMAGE", html)


def demo_round() -> Path:
    from reportgen.pipeline import newest_sample_round

    return newest_sample_round()


def render_golden(round_folder: Path | None = None) -> dict[Path, str]:
    """The golden files' expected contents, freshly rendered from the demo round."""
    from reportgen.pipeline import score_folder

    settings = Settings()
    results = score_folder(round_folder or demo_round(), settings)
    first = min(results.participants, key=lambda p: p.code)
    return {
        CERTIFICATE: normalise(render_certificate(results, first, settings)),
        APPENDIX: normalise(render_appendix(results, settings)),
    }
