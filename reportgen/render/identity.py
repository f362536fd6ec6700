"""Which report id and amendment notice a document carries (`issue --replace`).

Every report id stands for one content forever. A document is fingerprinted by the SHA-256 of
its HTML rendered under the round's base id with no notice. When a round is amended, a document
whose fingerprint equals that of its current archived version is reissued unchanged (same id,
same notice, same bytes); any other gets the next free id ``<base>-A<n>`` and a first-page notice
"Amended report: replaces <old id> issued <date>. Reason: …".
"""

from __future__ import annotations

import datetime as dt
import hashlib
from collections.abc import Callable, Collection
from dataclasses import dataclass
from typing import Any

from reportgen.render import wording
from reportgen.results.model import Amendment, IssuedDocument


@dataclass(frozen=True)
class Identity:
    """What a document says about itself: its report id and, when amended, the notice."""

    report_id: str
    issued: dt.date
    replaces: str | None = None
    replaced_issued: dt.date | None = None
    reason: str | None = None

    def notice(self) -> dict[str, Any] | None:
        """The template's ``amendment`` block, or None for an original report."""
        if self.replaces is None:
            return None
        return {"replaces": self.replaces,
                "replaced_issued": wording.fmt_date(self.replaced_issued)
                if self.replaced_issued is not None else wording.DASH,
                "amended_on": wording.fmt_date(self.issued), "reason": self.reason or ""}


@dataclass(frozen=True)
class Signed:
    """The PDF will carry the provider's digital signature; ``demo``: made with a throwaway
    demonstration key (the report says so)."""

    demo: bool = False


def identity_context(identity: Identity | None, signed: Signed | None) -> dict[str, Any]:
    """The template keys a document's identity and signature set (nothing for the defaults)."""
    out: dict[str, Any] = {}
    if identity is not None:
        out["report_id"] = identity.report_id
        out["amendment"] = identity.notice()
    if signed is not None:
        out["signed"] = {"demo": signed.demo}
    return out


def next_id(base: str, taken: Collection[str]) -> str:
    n = 1
    while f"{base}-A{n}" in taken:
        n += 1
    return f"{base}-A{n}"


def identify(render: Callable[[Identity], str], *, code: str, base_id: str, issued: dt.date,
             current: IssuedDocument | None, amendment: Amendment | None,
             taken: Collection[str]) -> tuple[str, IssuedDocument]:
    """Render a document under the right identity; return its HTML and its archive record."""
    original = Identity(base_id, issued)
    html = render(original)
    fingerprint = hashlib.sha256(html.encode("utf-8")).hexdigest()
    if current is not None and current.content_sha256 == fingerprint:
        if current.report_id == base_id and current.replaces is None:
            return html, current
        kept = Identity(current.report_id, current.issued, current.replaces,
                        current.replaced_issued, current.reason)
        return render(kept), current
    if amendment is None or (current is None and base_id not in taken):
        # not an amendment, or a document that was never issued under this round's ids
        return html, IssuedDocument(code, base_id, fingerprint, issued)
    replaces = current.report_id if current is not None else base_id
    replaced_issued = current.issued if current is not None else issued
    new = Identity(next_id(base_id, taken), amendment.amended_on, replaces, replaced_issued,
                   amendment.reason)
    return render(new), IssuedDocument(code, new.report_id, fingerprint, new.issued,
                                       new.replaces, new.replaced_issued, new.reason)
