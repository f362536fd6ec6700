"""Signing: PDFs as PAdES baseline B-B, manifest.json as a detached CMS signature."""

from __future__ import annotations

import asyncio
import datetime as dt
from collections.abc import Awaitable
from typing import TypeVar

from reportgen.signing.keys import (
    DIGEST,
    FIELD_NAME,
    Signer,
    check_certificate,
    pyhanko_modules,
    require_aware,
)

_T = TypeVar("_T")


# --- signing --------------------------------------------------------------------------------------


def sign_pdf(pdf: bytes, signer: Signer, *, when: dt.datetime) -> bytes:
    """``pdf`` with a PAdES baseline B-B signature appended as an incremental update.

    ``when`` (timezone-aware; the round's issue date, midnight UTC) is the claimed signing time
    (/M) and the new modification date; it must lie inside the certificate's validity, else
    :class:`InputError`. The bytes of ``pdf`` are kept unchanged at the start of the result.
    """
    when = require_aware(when)
    check_certificate(str(signer.source), signer.certificate, when, "the issue date")
    hanko = pyhanko_modules()
    meta = hanko.signers.PdfSignatureMetadata(
        field_name=FIELD_NAME, md_algorithm=DIGEST,
        subfilter=hanko.fields.SigSeedSubFilter.PADES,
        name=signer.common_name)
    try:
        writer = hanko.Writer(pdf, when=when, certificate=signer.certificate)
        out = hanko.PdfSigner(meta, signer.pyhanko_modules, when=when).sign_pdf(writer)
    except hanko.PdfError as exc:
        raise ValueError(f"the PDF cannot be signed: {exc}") from exc
    signed = out.getvalue()
    assert isinstance(signed, bytes)
    return signed


def sign_manifest(data: bytes, signer: Signer, *, when: dt.datetime) -> bytes:
    """A detached CMS SignedData (RFC 5652) over ``data`` (manifest.json's bytes), DER.

    The signing-time attribute is ``when`` (the issue date), not the clock; the signer's
    certificate (and any chain from the .p12) travels in the signature.
    """
    when = require_aware(when)
    check_certificate(str(signer.source), signer.certificate, when, "the issue date")
    content = run_async(signer.pyhanko_modules.async_sign_general_data(
        data, DIGEST, detached=True,
        signed_attr_settings=pyhanko_modules().PdfCMSSignedAttributes(signing_time=when)))
    der = content.dump()
    assert isinstance(der, bytes)
    return der


def run_async(coro: Awaitable[_T]) -> _T:
    """Run one pyHanko coroutine to completion (each call has its own event loop)."""
    async def main() -> _T:
        return await coro

    return asyncio.run(main())
