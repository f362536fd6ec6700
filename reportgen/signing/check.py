"""Checking signatures: who signed, and whether the signed bytes are unchanged."""

from __future__ import annotations

import contextlib
import datetime as dt
import io
import logging
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any, Literal, TypeVar

from asn1crypto import cms
from asn1crypto import x509 as asn1_x509
from cryptography import x509
from cryptography.hazmat.primitives import hashes
from cryptography.x509.oid import NameOID

from reportgen.signing.keys import (
    CMS_STANDARD,
    PDF_STANDARD,
    is_demo_certificate,
    is_self_signed,
    name_part,
    pyhanko_modules,
)
from reportgen.signing.sign import run_async

_T = TypeVar("_T")


# --- checking -------------------------------------------------------------------------------------


@dataclass(frozen=True)
class SignatureCheck:
    """What a signature says and whether it holds.

    ``valid`` is integrity: the signed bytes are unchanged, the signature checks with the
    certificate it carries, (for a PDF) it covers the whole file, and the certificate allowed
    signing at the claimed time. It says nothing about whether that certificate is the provider's:
    compare ``fingerprint`` with the one the provider publishes. ``reason`` is a plain sentence
    either way.
    """

    kind: Literal["pdf", "manifest"]
    standard: str
    valid: bool
    reason: str
    signed: bool = True
    common_name: str | None = None
    organisation: str | None = None
    fingerprint: str | None = None
    self_signed: bool = False
    is_demo: bool = False
    signed_at: dt.datetime | None = None

    @property
    def signer(self) -> str:
        """"<common name>, <organisation>" as the certificate gives them."""
        parts = [p for p in (self.common_name, self.organisation) if p]
        return ", ".join(parts) if parts else "an unnamed certificate"

    @property
    def trust(self) -> str:
        """How far the check vouches for the signer (integrity is not identity)."""
        if self.is_demo:
            return ("a throwaway demonstration key: it shows the file is unchanged, not who "
                    "issued it")
        if self.self_signed:
            return ("a self-signed certificate: compare its fingerprint with the one the provider "
                    "publishes")
        return ("the certificate's chain is not checked by reportgen: compare its fingerprint "
                "with the one the provider publishes")

    def describe(self) -> str:
        """One line for ``verify``: the verdict, who signed and the fingerprint."""
        if not self.signed:
            return f"not signed: {self.reason}"
        head = "signature valid" if self.valid else f"signature NOT valid: {self.reason}"
        when = f" on {self.signed_at:%Y-%m-%d}" if self.signed_at else ""
        return (f"{head}; signed{when} by {self.signer} (certificate SHA-256 {self.fingerprint}; "
                f"{self.trust})")


@contextlib.contextmanager
def _quiet() -> Iterator[None]:
    """pyHanko logs each failed trust path (a self-signed certificate, no trust list) as a warning
    with a traceback; the :class:`SignatureCheck` carries the verdict, so keep stderr clean."""
    logger = logging.getLogger("pyhanko")
    level = logger.level
    logger.setLevel(logging.CRITICAL)
    try:
        yield
    finally:
        logger.setLevel(level)


def _validation_settings() -> dict[str, Any]:
    """No trust roots and no fetching: integrity only, offline, the same on every machine."""
    hanko = pyhanko_modules()
    return {"signer_validation_context": hanko.ValidationContext(trust_roots=[],
                                                                 allow_fetching=False),
            "key_usage_settings": hanko.KeyUsageConstraints(
                key_usage={"digital_signature", "non_repudiation"},
                match_all_key_usages=False)}


def verify_pdf(pdf: bytes) -> SignatureCheck:
    """Check the signature of a PDF made by :func:`sign_pdf` (PAdES, ETSI EN 319 142-1).

    Every signature in the file must hold and the last must cover the whole file: a change
    appended after signing (an incremental update) fails as surely as a changed byte.
    """
    none = SignatureCheck(kind="pdf", standard=PDF_STANDARD, valid=False, signed=False,
                          reason="the PDF carries no signature")
    hanko = pyhanko_modules()
    try:
        reader = hanko.PdfFileReader(io.BytesIO(pdf), strict=False)
        embedded = list(reader.embedded_signatures)
    except (hanko.PdfError, ValueError, KeyError, TypeError) as exc:
        return SignatureCheck(kind="pdf", standard=PDF_STANDARD, valid=False, signed=False,
                              reason=f"the file cannot be read as a PDF ({exc})")
    if not embedded:
        return none
    check = none
    for sig in embedded:
        check = _check_embedded(sig)
        if not check.valid:
            return check
    return check


def _check_embedded(sig: Any) -> SignatureCheck:
    hanko = pyhanko_modules()
    try:
        cert = x509.load_der_x509_certificate(sig.signer_cert.dump())
    except (ValueError, KeyError, TypeError, AttributeError) as exc:
        return SignatureCheck(kind="pdf", standard=PDF_STANDARD, valid=False,
                              reason=f"the signature is damaged: its certificate cannot be "
                              f"read ({exc})")
    signed_at = sig.self_reported_timestamp
    try:
        with _quiet():
            status = hanko.validate_pdf_signature(sig, **_validation_settings())
    except (hanko.PdfError, ValueError, KeyError, TypeError) as exc:
        return _check(cert, "pdf", valid=False, signed_at=signed_at,
                      reason=f"the signature cannot be checked ({exc})")
    coverage = getattr(status.coverage, "name", None)
    if not status.intact:
        reason = "the file was changed after it was signed (the signed bytes do not match)"
    elif not status.valid:
        reason = "the signature value does not match the certificate it names"
    elif coverage != "ENTIRE_FILE":
        reason = "the file was changed after it was signed (content was added after the signature)"
    else:
        reason = _certificate_problem(cert, signed_at) or "the signed PDF is unchanged"
    return _check(cert, "pdf", valid=reason == "the signed PDF is unchanged", reason=reason,
                  signed_at=signed_at)


def verify_manifest(data: bytes, signature: bytes) -> SignatureCheck:
    """Check a detached CMS signature (RFC 5652) made by :func:`sign_manifest` over ``data``."""
    try:
        info = cms.ContentInfo.load(signature, strict=True)
        if info["content_type"].native != "signed_data":
            raise ValueError("not a CMS SignedData")
        signed_data = info["content"]
        signer_info = signed_data["signer_infos"][0]
        cert = _signer_certificate(signed_data, signer_info)
    except (ValueError, KeyError, TypeError, IndexError) as exc:
        return SignatureCheck(kind="manifest", standard=CMS_STANDARD, valid=False,
                              reason=f"the signature file is not a readable CMS signature ({exc})")
    signed_at = _signing_time(signer_info)
    try:
        with _quiet():
            status = run_async(pyhanko_modules().async_validate_detached_cms(
                data, signed_data, **_validation_settings()))
    except (ValueError, KeyError, TypeError) as exc:
        return _check(cert, "manifest", valid=False, signed_at=signed_at,
                      reason=f"the signature cannot be checked ({exc})")
    if not status.intact:
        reason = ("manifest.json was changed after it was signed (its digest does not match the "
                  "signed one)")
    elif not status.valid:
        reason = "the signature value does not match the certificate it names"
    else:
        reason = _certificate_problem(cert, signed_at) or "manifest.json is unchanged"
    return _check(cert, "manifest", valid=reason == "manifest.json is unchanged", reason=reason,
                  signed_at=signed_at)


def _signer_certificate(signed_data: Any, signer_info: Any) -> x509.Certificate:
    sid = signer_info["sid"]
    for choice in signed_data["certificates"]:
        candidate = choice.chosen
        if not isinstance(candidate, asn1_x509.Certificate):
            continue
        if sid.name == "issuer_and_serial_number":
            if (candidate.issuer == sid.chosen["issuer"]
                    and candidate.serial_number == sid.chosen["serial_number"].native):
                return x509.load_der_x509_certificate(candidate.dump())
        elif candidate.key_identifier == sid.chosen.native:
            return x509.load_der_x509_certificate(candidate.dump())
    raise ValueError("the signer's certificate is not in the signature")


def _signing_time(signer_info: Any) -> dt.datetime | None:
    for attr in signer_info["signed_attrs"]:
        if attr["type"].native == "signing_time":
            value = attr["values"][0].native
            return value if isinstance(value, dt.datetime) else None
    return None


def _certificate_problem(cert: x509.Certificate, signed_at: dt.datetime | None) -> str | None:
    """Why the certificate could not sign at the claimed time, or ``None``."""
    if signed_at is not None:
        at = signed_at if signed_at.tzinfo else signed_at.replace(tzinfo=dt.UTC)
        if not cert.not_valid_before_utc <= at <= cert.not_valid_after_utc:
            return (f"the certificate was not valid at the claimed signing time {at:%Y-%m-%d} "
                    f"(valid {cert.not_valid_before_utc:%Y-%m-%d} to "
                    f"{cert.not_valid_after_utc:%Y-%m-%d})")
    try:
        usage = cert.extensions.get_extension_for_class(x509.KeyUsage).value
    except x509.ExtensionNotFound:
        return None
    if not (usage.digital_signature or usage.content_commitment):
        return "the certificate does not allow digital signatures (key usage)"
    return None


def _check(cert: x509.Certificate, kind: Literal["pdf", "manifest"], *, valid: bool,
           reason: str, signed_at: dt.datetime | None) -> SignatureCheck:
    return SignatureCheck(
        kind=kind, standard=PDF_STANDARD if kind == "pdf" else CMS_STANDARD, valid=valid,
        reason=reason, common_name=name_part(cert, NameOID.COMMON_NAME),
        organisation=name_part(cert, NameOID.ORGANIZATION_NAME),
        fingerprint=cert.fingerprint(hashes.SHA256()).hex(), self_signed=is_self_signed(cert),
        is_demo=is_demo_certificate(cert), signed_at=signed_at)
