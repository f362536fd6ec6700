"""Signing keys: loading a provider's PKCS#12 file and making a throwaway demonstration key."""

from __future__ import annotations

import datetime as dt
import functools
import hashlib
import io
import os
import secrets
import types
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TypeVar

from cryptography import x509
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import rsa
from cryptography.hazmat.primitives.asymmetric.padding import PKCS1v15
from cryptography.hazmat.primitives.serialization import pkcs12
from cryptography.x509.oid import ExtendedKeyUsageOID, NameOID

from reportgen.errors import InputError
from reportgen.output import MANIFEST_SIGNATURE as MANIFEST_SIGNATURE

#: The environment variable the passphrase of ``--sign KEY.p12`` is read from.
PASSPHRASE_ENV = "REPORTGEN_SIGN_PASSPHRASE"
#: The variable :func:`make_demo_key` puts its throwaway passphrase in (apart from the real one,
#: so a demo run never overwrites a provider's passphrase).
DEMO_PASSPHRASE_ENV = "REPORTGEN_DEMO_SIGN_PASSPHRASE"
#: The subject common name of every demonstration certificate; :attr:`Signer.is_demo` and
#: :attr:`SignatureCheck.is_demo` look for it.
DEMO_COMMON_NAME = "reportgen demonstration key — not for real reports"
DEMO_ORGANISATION = "reportgen demonstration (no real provider)"
#: The signature field each signed PDF gets (invisible: no widget on the page).
FIELD_NAME = "ReportgenSignature"
DIGEST = "sha256"

PDF_STANDARD = "PAdES baseline B-B (ETSI EN 319 142-1)"
CMS_STANDARD = "CMS detached signature (RFC 5652)"




_T = TypeVar("_T")


# --- the key --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Signer:
    """A loaded signing key and its certificate. Make one with :func:`load_signer`.

    Pickles as "load ``source`` again with the passphrase in ``passphrase_env``", so it can be
    handed to worker processes (which inherit the environment) without the key leaving the file.
    """

    source: Path
    passphrase_env: str
    certificate: x509.Certificate
    pyhanko_modules: Any = field(repr=False, compare=False)  # a pyhanko SimpleSigner

    @property
    def common_name(self) -> str | None:
        return name_part(self.certificate, NameOID.COMMON_NAME)

    @property
    def organisation(self) -> str | None:
        return name_part(self.certificate, NameOID.ORGANIZATION_NAME)

    @property
    def fingerprint(self) -> str:
        """SHA-256 of the certificate (DER), lowercase hex."""
        return self.certificate.fingerprint(hashes.SHA256()).hex()

    @property
    def is_demo(self) -> bool:
        """A throwaway demonstration key from :func:`make_demo_key`: the certificate must say so."""
        return is_demo_certificate(self.certificate)

    @property
    def deterministic(self) -> bool:
        """Whether the same input and time give the same signature bytes (RSA PKCS#1 v1.5)."""
        return isinstance(self.certificate.public_key(), rsa.RSAPublicKey)

    def check_at(self, when: dt.datetime) -> None:
        """Raise :class:`InputError` (naming the key file) unless the certificate is valid at
        ``when``: call it with the issue date before rendering, so nothing is rendered for
        nothing. :func:`sign_pdf` and :func:`sign_manifest` check it again."""
        check_certificate(str(self.source), self.certificate, require_aware(when),
                           "the issue date")

    def __reduce__(self) -> tuple[Any, tuple[Path, str]]:
        return (load_signer, (self.source, self.passphrase_env))


def load_signer(p12: Path, passphrase_env: str = PASSPHRASE_ENV) -> Signer:
    """Open a PKCS#12 key file with the passphrase in the environment variable ``passphrase_env``.

    Raises :class:`InputError` (naming the file) when the variable is not set, the file is missing
    or unreadable, the passphrase is wrong, the certificate has expired or is not yet valid, or
    its key usage does not allow digital signatures.
    """
    name = str(p12)
    if passphrase_env not in os.environ:
        raise InputError.single(
            name, f"the passphrase of the signing key is not set: put it in the environment "
            f"variable {passphrase_env} (reportgen never takes a passphrase on the command line)")
    passphrase = os.environ[passphrase_env].encode("utf-8") or None
    try:
        data = p12.read_bytes()
    except FileNotFoundError:
        raise InputError.single(name, "the signing key file does not exist") from None
    except IsADirectoryError:
        raise InputError.single(name, "the signing key is a folder, not a .p12 file") from None
    except OSError as exc:
        raise InputError.single(name, f"the signing key file cannot be read: {exc.strerror}"
                                ) from None
    try:
        bundle = pkcs12.load_pkcs12(data, passphrase)
    except ValueError:
        if _looks_like_pkcs12(data):
            message = (f"the passphrase in {passphrase_env} does not open this key file "
                       "(wrong passphrase)")
        else:
            message = "this is not a PKCS#12 key file (.p12 or .pfx holding a key and certificate)"
        raise InputError.single(name, message) from None
    except Exception as exc:  # an unsupported algorithm inside the file, for instance
        raise InputError.single(name, f"the key file cannot be opened: {exc}") from None
    if bundle.key is None or bundle.cert is None:
        raise InputError.single(
            name, "the key file must hold both a private key and its certificate; this one "
            f"has {'no private key' if bundle.key is None else 'no certificate'}")
    certificate = bundle.cert.certificate
    check_certificate(name, certificate, dt.datetime.now(dt.UTC), "today")
    if bundle.key.public_key() != certificate.public_key():
        raise InputError.single(name, "the private key in the file does not belong to its "
                                "certificate")
    hanko = pyhanko_modules()
    try:
        loaded = hanko.signers.SimpleSigner.load_pkcs12_data(data, [], passphrase=passphrase)
        simple = hanko.KeptKeySigner(bundle.key, signing_cert=loaded.signing_cert,
                                     signing_key=loaded.signing_key,
                                     cert_registry=loaded.cert_registry)
    except (ValueError, hanko.SigningError) as exc:
        raise InputError.single(name, f"the key file cannot be used for signing: {exc}"
                                ) from None
    return Signer(source=p12, passphrase_env=passphrase_env, certificate=certificate,
                  pyhanko_modules=simple)


HASHES: dict[str, type[hashes.HashAlgorithm]] = {
    "sha256": hashes.SHA256, "sha384": hashes.SHA384, "sha512": hashes.SHA512}


def _looks_like_pkcs12(data: bytes) -> bool:
    """Whether ``data`` parses as a PKCS#12 PFX structure (so a failure to open it is the
    passphrase, not the file)."""
    from asn1crypto import pkcs12 as asn1_pkcs12

    try:
        pfx = asn1_pkcs12.Pfx.load(data, strict=True)
        pfx["auth_safe"]["content_type"].native  # noqa: B018  (parses the outer layer)
    except (ValueError, TypeError, KeyError):
        return False
    return True


def check_certificate(name: str, cert: x509.Certificate, at: dt.datetime, when: str) -> None:
    start, end = cert.not_valid_before_utc, cert.not_valid_after_utc
    if at > end:
        raise InputError.single(
            name, f"the signing certificate expired on {end:%Y-%m-%d} ({when} is {at:%Y-%m-%d}); "
            "a report cannot be signed with it", value=_describe(cert))
    if at < start:
        raise InputError.single(
            name, f"the signing certificate is valid only from {start:%Y-%m-%d} ({when} is "
            f"{at:%Y-%m-%d}); a report cannot be signed with it", value=_describe(cert))
    try:
        usage = cert.extensions.get_extension_for_class(x509.KeyUsage).value
    except x509.ExtensionNotFound:
        raise InputError.single(
            name, "the signing certificate states no key usage; a certificate for signing "
            "reports must allow digitalSignature", value=_describe(cert)) from None
    if not usage.digital_signature:
        raise InputError.single(
            name, "the certificate does not allow digital signatures (its key usage lacks "
            "digitalSignature); ask the issuer for a signing certificate",
            value=_describe(cert))
    try:
        extended = cert.extensions.get_extension_for_class(x509.ExtendedKeyUsage).value
    except x509.ExtensionNotFound:
        return
    if not any(oid in extended for oid in _SIGNING_PURPOSES):
        raise InputError.single(
            name, "the certificate's extended key usage does not cover document signing "
            "(allowed: document signing, e-mail protection, Adobe authentic documents, any)",
            value=_describe(cert))


_SIGNING_PURPOSES = (
    ExtendedKeyUsageOID.ANY_EXTENDED_KEY_USAGE,
    ExtendedKeyUsageOID.EMAIL_PROTECTION,
    x509.ObjectIdentifier("1.3.6.1.5.5.7.3.36"),  # id-kp-documentSigning (RFC 9336)
    x509.ObjectIdentifier("1.2.840.113583.1.1.5"),  # Adobe Authentic Documents Trust
)


def _describe(cert: x509.Certificate) -> str:
    return cert.subject.rfc4514_string()


def name_part(cert: x509.Certificate, oid: x509.ObjectIdentifier) -> str | None:
    values = cert.subject.get_attributes_for_oid(oid)
    if not values:
        return None
    value = values[0].value
    return value if isinstance(value, str) else value.decode("utf-8", "replace")


def is_demo_certificate(cert: x509.Certificate) -> bool:
    return name_part(cert, NameOID.COMMON_NAME) == DEMO_COMMON_NAME


def is_self_signed(cert: x509.Certificate) -> bool:
    if cert.issuer != cert.subject:
        return False
    try:
        cert.verify_directly_issued_by(cert)
    except Exception:  # InvalidSignature, or a key type that cannot check it
        return False
    return True


def make_demo_key(folder: Path, *, passphrase_env: str = DEMO_PASSPHRASE_ENV) -> Path:
    """Create a throwaway self-signed demonstration key as ``folder/demo-signing-key.p12``.

    The subject says "reportgen demonstration key — not for real reports". The passphrase is new
    random text, put in the environment variable ``passphrase_env`` (:data:`DEMO_PASSPHRASE_ENV`
    unless given) for :func:`load_signer`; the file is readable by its owner only. RSA-2048, so
    signatures made with it are deterministic; valid from 2000-01-01 (so any past issue date lies
    inside it) until 30 days from now. Make ``folder`` a temporary folder outside OUT: the key is
    never part of an output, nor committed.
    """
    key = rsa.generate_private_key(public_exponent=65537, key_size=2048)
    subject = x509.Name([
        x509.NameAttribute(NameOID.COMMON_NAME, DEMO_COMMON_NAME),
        x509.NameAttribute(NameOID.ORGANIZATION_NAME, DEMO_ORGANISATION),
    ])
    now = dt.datetime.now(dt.UTC)
    usage = x509.KeyUsage(digital_signature=True, content_commitment=True,
                          key_encipherment=False, data_encipherment=False, key_agreement=False,
                          key_cert_sign=False, crl_sign=False, encipher_only=False,
                          decipher_only=False)
    cert = (x509.CertificateBuilder()
            .subject_name(subject).issuer_name(subject)
            .public_key(key.public_key())
            .serial_number(x509.random_serial_number())
            .not_valid_before(dt.datetime(2000, 1, 1, tzinfo=dt.UTC))
            .not_valid_after(now + dt.timedelta(days=30))
            .add_extension(x509.BasicConstraints(ca=False, path_length=None), critical=True)
            .add_extension(usage, critical=True)
            .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()),
                           critical=False)
            .sign(key, hashes.SHA256()))
    passphrase = secrets.token_urlsafe(24)
    data = pkcs12.serialize_key_and_certificates(
        b"reportgen demonstration key", key, cert, None,
        serialization.BestAvailableEncryption(passphrase.encode("utf-8")))
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "demo-signing-key.p12"
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    with os.fdopen(fd, "wb") as fh:
        fh.write(data)
    os.environ[passphrase_env] = passphrase
    return path


def signing_time(day: dt.date) -> dt.datetime:
    """The signing time of a round issued on ``day``: midnight UTC (as the PDFs' other dates)."""
    return dt.datetime(day.year, day.month, day.day, tzinfo=dt.UTC)


def require_aware(when: dt.datetime) -> dt.datetime:
    if when.tzinfo is None or when.utcoffset() is None:
        raise ValueError("the signing time must carry a time zone (e.g. midnight UTC of the "
                         "issue date)")
    return when.astimezone(dt.UTC).replace(microsecond=0)


@functools.cache
def pyhanko_modules() -> Any:
    """pyHanko, imported on first use and the few subclasses reportgen needs of it. Importing
    pyHanko takes about a second (it brings aiohttp for timestamp servers): `check`, unsigned
    runs and `verify` of an unsigned folder do not pay it."""
    from pyhanko.pdf_utils import generic
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
    from pyhanko.pdf_utils.metadata.model import VENDOR, DocumentMetadata
    from pyhanko.pdf_utils.misc import PdfError
    from pyhanko.pdf_utils.reader import PdfFileReader
    from pyhanko.sign import fields, signers
    from pyhanko.sign.general import SigningError
    from pyhanko.sign.signers.pdf_cms import PdfCMSSignedAttributes
    from pyhanko.sign.validation import async_validate_detached_cms, validate_pdf_signature
    from pyhanko.sign.validation.settings import KeyUsageConstraints
    from pyhanko_certvalidator import ValidationContext

    class KeptKeySigner(signers.SimpleSigner):
        """pyHanko's SimpleSigner re-parses and re-checks the DER private key for every signature
        value (about 0.1 s for RSA-2048, twice per PDF: the size estimate signs too). For RSA
        PKCS#1 v1.5, the mechanism it picks for RSA keys, sign with the key already loaded; every
        other mechanism goes to pyHanko unchanged."""

        def __init__(self, key: Any, **kwargs: Any) -> None:
            super().__init__(**kwargs)
            self._key = key

        def sign_raw(self, data: bytes, digest_algorithm: str) -> bytes:
            mechanism = self.get_signature_mechanism_for_digest(digest_algorithm)
            if (isinstance(self._key, rsa.RSAPrivateKey)
                    and mechanism.signature_algo == "rsassa_pkcs1v15"
                    and digest_algorithm in HASHES):
                value = self._key.sign(data, PKCS1v15(), HASHES[digest_algorithm]())
                assert isinstance(value, bytes)
                return value
            value = super().sign_raw(data, digest_algorithm)
            assert isinstance(value, bytes)
            return value


    class FixedModification(DocumentMetadata):
        """Document metadata whose last-modified time stays ``when``: pyHanko sets it to "now" each
        time it writes (pyhanko.pdf_utils.writer ``_update_meta``), which would put the clock in
        /ModDate and the XMP ModifyDate."""

        def __init__(self, when: dt.datetime) -> None:
            object.__setattr__(self, "_when", when)
            super().__init__(last_modified=when)

        def __setattr__(self, name: str, value: object) -> None:
            if name == "last_modified" and value == "now":
                value = object.__getattribute__(self, "_when")
            super().__setattr__(name, value)


    class Writer(IncrementalPdfFileWriter):
        """An incremental update whose times are ``when`` and whose new /ID half is derived from the
        input, the certificate and ``when`` (pyHanko draws 16 random bytes)."""

        def __init__(self, pdf: bytes, *, when: dt.datetime, certificate: x509.Certificate) -> None:
            super().__init__(io.BytesIO(pdf), strict=False)
            self._meta = FixedModification(when)
            seed = hashlib.sha256()
            for part in (b"reportgen signed revision", pdf,
                         certificate.fingerprint(hashes.SHA256()), when.isoformat().encode()):
                seed.update(hashlib.sha256(part).digest())
            first = self._document_id[0]
            self._document_id = generic.ArrayObject(
                [first, generic.ByteStringObject(seed.digest()[:16])])

        def _update_meta(self) -> None:
            """pyHanko writes itself as the XMP pdf:Producer but appends itself to the info
            dictionary's /Producer; PDF/A (ISO 19005-3 §6.6.2.3) wants the two to agree."""
            super()._update_meta()  # type: ignore[no-untyped-call]
            if self._info is not None and "/Metadata" in self.root:
                info = self._info.get_object()  # type: ignore[no-untyped-call]
                info["/Producer"] = generic.TextStringObject(VENDOR)
                self.mark_update(self._info)


    class PdfSigner(signers.PdfSigner):
        """pyHanko's PdfSigner with the signing time given, not read from the clock: the time goes
        into the signature dictionary's /M (PAdES B-B has no CMS signing-time attribute)."""

        def __init__(self, *args: Any, when: dt.datetime, **kwargs: Any) -> None:
            super().__init__(*args, **kwargs)
            self._when = when

        def init_signing_session(self, pdf_out: Any, existing_fields_only: bool = False) -> Any:
            session = super().init_signing_session(pdf_out, existing_fields_only)
            session.system_time = self._when
            return session

    return types.SimpleNamespace(
        PdfError=PdfError, PdfFileReader=PdfFileReader, SigningError=SigningError,
        fields=fields, signers=signers, PdfCMSSignedAttributes=PdfCMSSignedAttributes,
        async_validate_detached_cms=async_validate_detached_cms,
        validate_pdf_signature=validate_pdf_signature, KeyUsageConstraints=KeyUsageConstraints,
        ValidationContext=ValidationContext, KeptKeySigner=KeptKeySigner, Writer=Writer,
        PdfSigner=PdfSigner)
