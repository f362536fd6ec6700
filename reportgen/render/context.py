"""What every report shares: report ids, the provider's logo, criterion and scale texts, the
common template context and template rendering.

The certificate (:mod:`.certificate`) and the appendix (:mod:`.appendix`) only assemble their
own context on top of :func:`common_context` (plain values, formatted text, chart data URIs).
The PDF renderer (:mod:`reportgen.render.pdf`) takes exactly the HTML rendered here.
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import jinja2

from reportgen import __version__, catalogue
from reportgen.errors import BuildError, InputError
from reportgen.render import charts, html_parts, wording
from reportgen.render.environment import environment
from reportgen.render.wording import scale as scale_words
from reportgen.results.model import (
    Metric,
    RoundResults,
)
from reportgen.rounds.schema import Criterion, RoundConfig
from reportgen.scoring.scale import calibration_applies
from reportgen.settings import Settings

LOGO_TYPES = {".png": "image/png", ".jpg": "image/jpeg", ".jpeg": "image/jpeg",
              ".svg": "image/svg+xml", ".gif": "image/gif"}


def report_id(round_id: str, code: str) -> str:
    """Deterministic certificate id: the round id and 10 hex digits of SHA-256(round id, code)."""
    digest = hashlib.sha256(f"{round_id}\x1f{code}".encode()).hexdigest()[:10].upper()
    return f"{round_id}-{digest}"


def appendix_id(round_id: str) -> str:
    return f"{round_id}-GROUP"


def logo_data_uri(results: RoundResults) -> str | None:
    """The provider's logo (relative to the round folder) as a data: URI, or None."""
    logo = results.round.config.provider.logo
    if not logo:
        return None
    path = logo_path(results)
    mime = LOGO_TYPES.get(path.suffix.lower()) if path is not None else None
    if path is None or mime is None:
        raise InputError.single("round.toml", "the provider logo must be a .png, .jpg, .svg or "
                                ".gif file inside the round folder", column="provider.logo",
                                value=logo)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputError.single("round.toml", f"cannot read the provider logo: {exc.strerror}",
                                column="provider.logo", value=logo) from exc
    return charts.data_uri(data, mime)


def logo_path(results: RoundResults) -> Path | None:
    """The logo file, resolved; None when none is configured or it lies outside the folder."""
    logo = results.round.config.provider.logo
    if not logo:
        return None
    folder = results.round.folder.resolve()
    path = (folder / logo).resolve()
    return path if path.is_relative_to(folder) else None


def rule_text(c: Criterion, cfg: RoundConfig) -> str:
    name = catalogue.label(c.metric)
    if c.kind == "z":
        side = "low" if c.worse == "low" else "high"
        return (f"{name}: robust z-score in the group (ISO 13528, Algorithm A); |z| \u2264 2 "
                f"satisfactory, 2 < |z| < 3 questionable, |z| \u2265 3 unsatisfactory; only "
                f"a {side} value counts against you")
    parts = []
    if c.at_least is not None:
        parts.append(f"at least {_limit(c.metric, c.at_least)}")
    if c.at_most is not None:
        parts.append(f"at most {_limit(c.metric, c.at_most)}")
    return f"{name}: " + " and ".join(parts)


def _limit(metric: str, x: float) -> str:
    return wording.fmt_percent(x, 0) if metric in catalogue.RATES else f"{x:g}"


def criterion_value(metric: str, x: float | None) -> str:
    """A criterion's metric value: rates in percent, counts as whole numbers."""
    if x is None:
        return wording.DASH
    if metric in catalogue.RATES:
        return wording.fmt_percent(x)
    if metric in catalogue.COUNT_NAMES:
        return f"{x:.0f}"
    return wording.fmt_number(x)


def _scale_text(cfg: RoundConfig) -> str:
    s = cfg.confidence
    if s.kind == "probability":
        return f"probability of being right, {s.min:g}\u2013{s.max:g}\u00a0%"
    text = f"ordinal, {s.min:g} (least sure) to {s.max:g} (most sure)"
    if s.probability_map == "linear":
        text += (f"; for calibration read as probability by a linear convention, {s.min:g} "
                 f"\u2192 {wording.fmt_percent(s.map_low, 0)} \u2026 {s.max:g} \u2192 100\u00a0%")
    return text


def common_context(results: RoundResults, settings: Settings) -> dict[str, Any]:
    rnd = results.round
    cfg = rnd.config
    info = cfg.round
    return {
        "lang": "en",
        "round": info,
        "provider": cfg.provider,
        "authorised_by": cfg.provider.authorised_by,
        "amendment": None,  # set by the caller for an amended report
        "signed": None,  # set by the caller when the PDF will be signed
        "accent": cfg.provider.accent,
        "logo_uri": logo_data_uri(results),
        "issued": wording.fmt_date(info.issued),
        "issued_iso": info.issued.isoformat(),
        "opened": wording.fmt_date(info.opened),
        "closed": wording.fmt_date(info.closed),
        "preliminary": info.status == "preliminary",
        "n_items": rnd.n_items,
        "n_same": int((rnd.truth == 1).sum()),
        "n_different": int((rnd.truth == 0).sum()),
        "n_participants": results.group.n_participants,
        "positive": cfg.classes.positive,
        "negative": cfg.classes.negative,
        "scale_text": scale_words.scale_text(rnd) or _scale_text(cfg),
        "scale_statement": scale_words.scale_statement(rnd),
        "calibrated": calibration_applies(rnd),
        "interval_name": "Wilson score" if cfg.scoring.interval == "wilson"
        else "Clopper\u2013Pearson",
        "inconclusive_is_error": cfg.scoring.inconclusive_is_error,
        "few_errors": cfg.scoring.few_errors,
        "criteria_rules": [{"id": c.id, "label": c.label, "rule": rule_text(c, cfg)}
                           for c in cfg.criteria],
        "cautions": wording.CAUTIONS,
        "version": __version__,
        "small_group": results.group.n_participants < settings.report.min_group_size,
        "min_group_size": settings.report.min_group_size,
        **html_parts.html_context(),
    }


def render_template(template: str, context: dict[str, Any], settings: Settings) -> str:
    try:
        return environment(settings).get_template(template).render(context)
    except jinja2.TemplateError as exc:
        raise BuildError(f"template {template!r} failed: {exc}") from exc


def value_of(m: Metric | None) -> float | None:
    return m.value if m is not None else None


def insight_points(results: RoundResults, exclude: str | None = None) -> list[dict[str, Any]]:
    """Anonymous (d′, type-2 area, few-errors flag) points, sorted by value so that their order
    says nothing about codes; ``exclude`` leaves one participant out (drawn highlighted)."""
    points = []
    for p in results.participants:
        d, a = p.metrics.get("d_prime"), p.metrics.get("type2_auroc")
        if p.code == exclude or d is None or a is None or d.value is None or a.value is None:
            continue
        points.append({"d_prime": d.value, "type2_auroc": a.value, "few": a.note is not None})
    return sorted(points, key=lambda r: (r["d_prime"], r["type2_auroc"], r["few"]))


def insight_chart(results: RoundResults, ctx: Mapping[str, Any]) -> charts.Image | None:
    """The group's type-2 area against d′ with the ideal curve (the appendix's view); the
    points are withheld in small groups (each point is one participant)."""
    points = [] if ctx["small_group"] else insight_points(results)
    curve = [{"d_prime": c.d_prime, "type2_auroc": c.type2_auroc}
             for c in results.group.ideal_curve]
    if not points and not curve:
        return None
    return charts.image(charts.insight_against_dprime(points, curve,
                                                      few_errors=ctx["few_errors"]))


def metric_values(results: RoundResults, name: str) -> list[float]:
    return [float(v) for p in results.participants
            if name in p.metrics and (v := p.metrics[name].value) is not None]
