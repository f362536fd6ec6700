"""reportgen.signing: PDFs signed as PAdES baseline B-B (ETSI EN 319 142-1), manifest.json as a
detached CMS signature (RFC 5652); keys from PKCS#12 with the passphrase from the environment.

Every key here is made in the test with ``cryptography`` (or by :func:`make_demo_key`); none is
committed.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import json
import os
import pickle
import shutil
import stat
import subprocess
import sys
from pathlib import Path

import pikepdf
import pytest
from asn1crypto import cms
from cryptography import x509
from cryptography.hazmat.primitives import hashes, serialization
from cryptography.hazmat.primitives.asymmetric import rsa
from cryptography.hazmat.primitives.serialization import pkcs12
from cryptography.x509.oid import NameOID
from pyhanko.pdf_utils import generic
from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
from pyhanko.pdf_utils.reader import PdfFileReader

from reportgen import signing
from reportgen.errors import InputError
from reportgen.render.pdf import html_to_pdf

ISSUED = dt.date(2026, 2, 1)
WHEN = dt.datetime(2026, 2, 1, tzinfo=dt.UTC)  # the issue date, midnight UTC
assert signing.signing_time(ISSUED) == WHEN
ENV = "REPORTGEN_TEST_SIGN_PASSPHRASE"
PASSPHRASE = "correct horse battery staple"
TITLE = "Certificate AAAA"


# --- keys made in the test ------------------------------------------------------------------------

_KEYS: dict[int, rsa.RSAPrivateKey] = {}


def _key(n: int = 0) -> rsa.RSAPrivateKey:
    """RSA-2048 keys, made once per test session (key generation is the slow part)."""
    if n not in _KEYS:
        _KEYS[n] = rsa.generate_private_key(public_exponent=65537, key_size=2048)
    return _KEYS[n]


def _usage(**allowed: bool) -> x509.KeyUsage:
    flags = dict.fromkeys(("digital_signature", "content_commitment", "key_encipherment",
                           "data_encipherment", "key_agreement", "key_cert_sign", "crl_sign",
                           "encipher_only", "decipher_only"), False)
    flags.update(allowed)
    return x509.KeyUsage(**flags)


def _name(cn: str, org: str = "Test Provider Ltd") -> x509.Name:
    return x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, cn),
                      x509.NameAttribute(NameOID.ORGANIZATION_NAME, org)])


def _certificate(key: rsa.RSAPrivateKey, *, subject: x509.Name, issuer: x509.Name | None = None,
                 issuer_key: rsa.RSAPrivateKey | None = None,
                 usage: x509.KeyUsage | None = None,
                 start: dt.datetime = dt.datetime(2025, 1, 1, tzinfo=dt.UTC),
                 end: dt.datetime = dt.datetime(2099, 1, 1, tzinfo=dt.UTC),
                 ca: bool = False) -> x509.Certificate:
    builder = (x509.CertificateBuilder()
               .subject_name(subject).issuer_name(issuer or subject)
               .public_key(key.public_key()).serial_number(x509.random_serial_number())
               .not_valid_before(start).not_valid_after(end)
               .add_extension(x509.BasicConstraints(ca=ca, path_length=None), critical=True))
    if usage is not None:
        builder = builder.add_extension(usage, critical=True)
    return builder.sign(issuer_key or key, hashes.SHA256())


def _p12(folder: Path, cert: x509.Certificate, key: rsa.RSAPrivateKey, *,
         name: str = "provider.p12", chain: list[x509.Certificate] | None = None) -> Path:
    path = folder / name
    path.write_bytes(pkcs12.serialize_key_and_certificates(
        b"test", key, cert, chain,
        serialization.BestAvailableEncryption(PASSPHRASE.encode())))
    return path


@pytest.fixture
def passphrase(monkeypatch: pytest.MonkeyPatch) -> str:
    monkeypatch.setenv(ENV, PASSPHRASE)
    return ENV


@pytest.fixture
def provider_p12(tmp_path: Path) -> Path:
    """A provider-style key: self-signed, digitalSignature + nonRepudiation, valid 2025-2099."""
    cert = _certificate(_key(), subject=_name("Wren Talbot"),
                        usage=_usage(digital_signature=True, content_commitment=True))
    return _p12(tmp_path, cert, _key())


@pytest.fixture
def signer(provider_p12: Path, passphrase: str) -> signing.Signer:
    return signing.load_signer(provider_p12, passphrase)


@pytest.fixture(scope="module")
def pdf() -> bytes:
    """A tiny tagged PDF/A-3b from WeasyPrint, as the certificates are made."""
    html = (f'<html lang="en"><head><title>{TITLE}</title></head>'
            "<body><h1>Certificate</h1><p>Participant P-001: 12 of 56 correct.</p></body></html>")
    return html_to_pdf(html, issued=ISSUED)


MANIFEST = (json.dumps({"format": "reportgen-manifest/1", "round": "T-1", "outputs": [
    {"path": "certificates/P-001.pdf", "sha256": hashlib.sha256(b"certificate").hexdigest()},
    {"path": "results.json", "sha256": hashlib.sha256(b"results").hexdigest()},
]}, indent=2) + "\n").encode()


# --- PDF: PAdES baseline B-B, ETSI EN 319 142-1 ---------------------------------------------------


def test_pdf_sign_verify_round_trip(pdf: bytes, signer: signing.Signer) -> None:
    signed = signing.sign_pdf(pdf, signer, when=WHEN)
    assert signed.startswith(pdf), "an incremental update: the unsigned PDF is revision 1"
    check = signing.verify_pdf(signed)
    assert check.valid, check.reason
    assert check.signed
    assert check.standard == "PAdES baseline B-B (ETSI EN 319 142-1)"
    assert (check.common_name, check.organisation) == ("Wren Talbot", "Test Provider Ltd")
    assert check.fingerprint == signer.fingerprint
    assert check.fingerprint == hashlib.sha256(
        signer.certificate.public_bytes(serialization.Encoding.DER)).hexdigest()
    assert check.signed_at == WHEN
    # Self-signed is reported as such, and is not a failure of integrity.
    assert check.self_signed and not check.is_demo
    assert "self-signed" in check.trust
    assert check.describe().startswith("signature valid; signed on 2026-02-01 by Wren Talbot")


def test_pdf_signature_is_pades_baseline_b(pdf: bytes, signer: signing.Signer) -> None:
    """ETSI EN 319 142-1 §6.3 (PAdES-B-B): SubFilter ETSI.CAdES.detached; signed attributes
    content-type, message-digest and ESS signing-certificate-v2; no CMS signing-time (the
    claimed time is the signature dictionary's /M)."""
    signed = signing.sign_pdf(pdf, signer, when=WHEN)
    sig = PdfFileReader(io.BytesIO(signed)).embedded_signatures[0]
    assert sig.sig_object["/SubFilter"] == "/ETSI.CAdES.detached"
    assert sig.sig_object["/M"] == "D:20260201000000Z"
    attrs = {a["type"].native for a in sig.signer_info["signed_attrs"]}
    assert {"content_type", "message_digest", "signing_certificate_v2"} <= attrs
    assert "signing_time" not in attrs


def test_signed_pdf_keeps_pdfa_metadata_consistent(pdf: bytes, signer: signing.Signer) -> None:
    """The PDF/A-3b claim stays, and the info dictionary agrees with the XMP (ISO 19005-3
    §6.6.2.3): pyHanko names itself as producer in both, and both dates are the issue date."""
    with pikepdf.open(io.BytesIO(signing.sign_pdf(pdf, signer, when=WHEN))) as doc:
        meta = doc.open_metadata()
        assert (meta.get("pdfaid:part"), meta.get("pdfaid:conformance")) == ("3", "B")
        assert str(doc.docinfo["/Producer"]) == meta.get("pdf:Producer")
        assert str(doc.docinfo["/ModDate"]) == "D:20260201000000Z"
        assert meta.get("xmp:ModifyDate") == "2026-02-01T00:00:00+00:00"
        assert doc.Root.MarkInfo.Marked, "still tagged"


def test_pdf_changed_inside_the_signed_bytes_fails(pdf: bytes, signer: signing.Signer) -> None:
    signed = signing.sign_pdf(pdf, signer, when=WHEN)
    assert signed.count(TITLE.encode()) == 1
    edited = signed.replace(TITLE.encode(), TITLE.replace("AAAA", "BBBB").encode())
    check = signing.verify_pdf(edited)
    assert not check.valid
    assert check.reason.startswith("the file was changed after it was signed")
    assert check.common_name == "Wren Talbot", "who signed is still reported"
    assert "NOT valid" in check.describe()


def test_pdf_changed_by_an_update_after_signing_fails(pdf: bytes,
                                                      signer: signing.Signer) -> None:
    """A later incremental update leaves the signed revision intact, but the signature no
    longer covers the whole file: that is a change too."""
    signed = signing.sign_pdf(pdf, signer, when=WHEN)
    writer = IncrementalPdfFileWriter(io.BytesIO(signed))
    writer.root["/Lang"] = generic.TextStringObject("fr")
    writer.update_root()
    out = io.BytesIO()
    writer.write(out)
    assert len(out.getvalue()) > len(signed)
    check = signing.verify_pdf(out.getvalue())
    assert not check.valid
    assert "added after the signature" in check.reason


def test_unsigned_or_broken_pdf_is_reported_not_raised(pdf: bytes) -> None:
    unsigned = signing.verify_pdf(pdf)
    assert (unsigned.signed, unsigned.valid) == (False, False)
    assert unsigned.describe() == "not signed: the PDF carries no signature"
    broken = signing.verify_pdf(b"not a pdf at all")
    assert (broken.signed, broken.valid) == (False, False)
    assert "cannot be read as a PDF" in broken.reason


def test_pdf_signing_is_deterministic(pdf: bytes, signer: signing.Signer) -> None:
    """Same PDF, key (RSA, PKCS#1 v1.5) and issue date: the same bytes — the /M, /ModDate, XMP
    ModifyDate and the new /ID half come from the inputs, not the clock or a random source."""
    first = signing.sign_pdf(pdf, signer, when=WHEN)
    assert signer.deterministic
    assert signing.sign_pdf(pdf, signer, when=WHEN) == first
    later = signing.sign_pdf(pdf, signer, when=WHEN + dt.timedelta(days=1))
    assert later != first
    assert signing.verify_pdf(later).signed_at == WHEN + dt.timedelta(days=1)
    ids = [pikepdf.open(io.BytesIO(b)).trailer.ID for b in (pdf, first, later)]
    assert bytes(ids[1][0]) == bytes(ids[0][0]), "the document's permanent /ID half is kept"
    assert bytes(ids[1][1]) != bytes(ids[2][1])


def test_signing_time_must_carry_a_time_zone(pdf: bytes, signer: signing.Signer) -> None:
    with pytest.raises(ValueError, match="time zone"):
        signing.sign_pdf(pdf, signer, when=dt.datetime(2026, 2, 1))


# --- manifest: detached CMS, RFC 5652 -------------------------------------------------------------


def test_manifest_sign_verify_round_trip(signer: signing.Signer) -> None:
    signature = signing.sign_manifest(MANIFEST, signer, when=WHEN)
    info = cms.ContentInfo.load(signature)  # DER ContentInfo, RFC 5652 §3
    assert info["content_type"].native == "signed_data"
    assert info["content"]["encap_content_info"]["content"].native is None, "detached (§5.2)"
    check = signing.verify_manifest(MANIFEST, signature)
    assert check.valid, check.reason
    assert check.standard == "CMS detached signature (RFC 5652)"
    assert check.common_name == "Wren Talbot"
    assert check.fingerprint == signer.fingerprint
    assert check.signed_at == WHEN, "signing-time is the issue date (RFC 5652 §11.3)"


def test_manifest_signed_attributes(signer: signing.Signer) -> None:
    """RFC 5652 §5.3 signed attributes: content-type, message-digest, signing-time; plus ESS
    signing-certificate-v2 (RFC 5035, id-aa-signingCertificateV2 1.2.840.113549.1.9.16.2.47) and
    CMS algorithm protection (RFC 6211)."""
    info = cms.ContentInfo.load(signing.sign_manifest(MANIFEST, signer, when=WHEN))
    [signer_info] = info["content"]["signer_infos"]
    attrs = {a["type"].dotted for a in signer_info["signed_attrs"]}
    assert attrs == {"1.2.840.113549.1.9.3", "1.2.840.113549.1.9.4", "1.2.840.113549.1.9.5",
                     "1.2.840.113549.1.9.16.2.47", "1.2.840.113549.1.9.52"}
    assert signer_info["digest_algorithm"]["algorithm"].native == "sha256"


@pytest.mark.skipif(shutil.which("openssl") is None, reason="the openssl command is not installed")
def test_manifest_signature_checks_with_openssl(tmp_path: Path, signer: signing.Signer) -> None:
    """A second, independent CMS implementation agrees (-noverify: no chain, as in verify)."""
    (tmp_path / "manifest.json").write_bytes(MANIFEST)
    (tmp_path / "manifest.json.p7s").write_bytes(
        signing.sign_manifest(MANIFEST, signer, when=WHEN))
    command = ["openssl", "cms", "-verify", "-binary", "-inform", "DER", "-noverify",
               "-in", "manifest.json.p7s", "-content", "manifest.json", "-out", os.devnull]
    assert subprocess.run(command, cwd=tmp_path, capture_output=True).returncode == 0
    (tmp_path / "manifest.json").write_bytes(MANIFEST.replace(b"T-1", b"T-2"))
    assert subprocess.run(command, cwd=tmp_path, capture_output=True).returncode != 0


def test_manifest_signing_is_deterministic(signer: signing.Signer) -> None:
    first = signing.sign_manifest(MANIFEST, signer, when=WHEN)
    assert signing.sign_manifest(MANIFEST, signer, when=WHEN) == first
    assert signing.sign_manifest(MANIFEST, signer, when=WHEN + dt.timedelta(days=1)) != first


def test_manifest_edited_and_rehashed_fails(signer: signing.Signer) -> None:
    """The attack `verify` alone cannot see: a certificate edited and its new SHA-256 written
    into manifest.json. The folder agrees with its manifest; the manifest's signature does not."""
    signature = signing.sign_manifest(MANIFEST, signer, when=WHEN)
    doc = json.loads(MANIFEST)
    doc["outputs"][0]["sha256"] = hashlib.sha256(b"certificate, edited").hexdigest()
    rehashed = (json.dumps(doc, indent=2) + "\n").encode()
    check = signing.verify_manifest(rehashed, signature)
    assert not check.valid
    assert check.reason.startswith("manifest.json was changed after it was signed")
    assert check.common_name == "Wren Talbot"


def test_manifest_signed_by_someone_else_shows_another_fingerprint(
        tmp_path: Path, signer: signing.Signer, passphrase: str) -> None:
    """Anyone can sign an edited manifest with their own key: the check holds, and the
    fingerprint (and name) is what tells the reader it is not the provider's."""
    other = _certificate(_key(1), subject=_name("Wren Talbot"),
                         usage=_usage(digital_signature=True))
    forger = signing.load_signer(_p12(tmp_path, other, _key(1), name="other.p12"), passphrase)
    check = signing.verify_manifest(MANIFEST, signing.sign_manifest(MANIFEST, forger, when=WHEN))
    assert check.valid
    assert check.fingerprint != signer.fingerprint


def test_unreadable_manifest_signature_is_reported_not_raised() -> None:
    check = signing.verify_manifest(MANIFEST, b"\x30\x03garbage")
    assert not check.valid
    assert "not a readable CMS signature" in check.reason


def test_certificate_issued_by_a_ca_is_not_called_self_signed(
        tmp_path: Path, passphrase: str) -> None:
    ca_key, leaf_key = _key(2), _key(3)
    ca_name = _name("Test Accreditation CA", "Test CA")
    ca = _certificate(ca_key, subject=ca_name, ca=True,
                      usage=_usage(key_cert_sign=True, crl_sign=True))
    leaf = _certificate(leaf_key, subject=_name("Wren Talbot"), issuer=ca_name, issuer_key=ca_key,
                        usage=_usage(digital_signature=True))
    signer = signing.load_signer(_p12(tmp_path, leaf, leaf_key, chain=[ca]), passphrase)
    check = signing.verify_manifest(MANIFEST, signing.sign_manifest(MANIFEST, signer, when=WHEN))
    assert check.valid and not check.self_signed and not check.is_demo
    assert "chain is not checked" in check.trust


# --- the demonstration key ------------------------------------------------------------------------


def test_demo_key_is_marked_and_private(tmp_path: Path, pdf: bytes,
                                        monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv(signing.DEMO_PASSPHRASE_ENV, "replaced by make_demo_key")
    path = signing.make_demo_key(tmp_path / "key")
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    demo = signing.load_signer(path, signing.DEMO_PASSPHRASE_ENV)
    assert demo.is_demo
    assert demo.common_name == "reportgen demonstration key — not for real reports"
    check = signing.verify_pdf(signing.sign_pdf(pdf, demo, when=WHEN))
    assert check.valid and check.is_demo and check.self_signed
    assert "demonstration key" in check.describe()


def test_provider_key_is_not_a_demo(signer: signing.Signer) -> None:
    assert not signer.is_demo


def test_importing_signing_does_not_load_pyhanko() -> None:
    """pyHanko takes about a second to import: only signing or checking a signature loads it."""
    code = "import sys, reportgen.signing; sys.exit('pyhanko' in sys.modules)"
    assert subprocess.run([sys.executable, "-c", code], capture_output=True).returncode == 0


def test_signer_pickles_as_a_reload_from_file_and_environment(signer: signing.Signer) -> None:
    """Worker processes get the file name and the variable's name, never the key bytes."""
    data = pickle.dumps(signer)
    assert b"PRIVATE" not in data and len(data) < 1000
    assert pickle.loads(data).fingerprint == signer.fingerprint


# --- bad keys and passphrases: each a plain InputError naming the file ----------------------------


def _single_problem(exc: pytest.ExceptionInfo[InputError], path: Path) -> str:
    [problem] = exc.value.problems
    assert problem.file == str(path)
    text = str(problem)
    assert "Traceback" not in text and "ValueError" not in text
    return text


def test_missing_passphrase_variable(provider_p12: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv(ENV, raising=False)
    with pytest.raises(InputError) as exc:
        signing.load_signer(provider_p12, ENV)
    text = _single_problem(exc, provider_p12)
    assert ENV in text and "never takes a passphrase on the command line" in text


def test_wrong_passphrase(provider_p12: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv(ENV, "wrong")
    with pytest.raises(InputError) as exc:
        signing.load_signer(provider_p12, ENV)
    assert "wrong passphrase" in _single_problem(exc, provider_p12)


def test_missing_key_file(tmp_path: Path, passphrase: str) -> None:
    path = tmp_path / "absent.p12"
    with pytest.raises(InputError) as exc:
        signing.load_signer(path, passphrase)
    assert "does not exist" in _single_problem(exc, path)


def test_unreadable_key_file(tmp_path: Path, passphrase: str) -> None:
    with pytest.raises(InputError) as exc:
        signing.load_signer(tmp_path, passphrase)
    assert "is a folder" in _single_problem(exc, tmp_path)


def test_file_that_is_not_pkcs12(tmp_path: Path, passphrase: str) -> None:
    path = tmp_path / "key.p12"
    path.write_text("-----BEGIN CERTIFICATE-----\nnot really\n", encoding="ascii")
    with pytest.raises(InputError) as exc:
        signing.load_signer(path, passphrase)
    assert "not a PKCS#12 key file" in _single_problem(exc, path)


@pytest.mark.parametrize(("usage", "expected"), [
    (_usage(key_encipherment=True, data_encipherment=True), "does not allow digital signatures"),
    (None, "states no key usage"),
])
def test_certificate_that_may_not_sign(tmp_path: Path, passphrase: str,
                                       usage: x509.KeyUsage | None, expected: str) -> None:
    cert = _certificate(_key(), subject=_name("Encryption only"), usage=usage)
    path = _p12(tmp_path, cert, _key())
    with pytest.raises(InputError) as exc:
        signing.load_signer(path, passphrase)
    assert expected in _single_problem(exc, path)


def test_expired_certificate(tmp_path: Path, passphrase: str) -> None:
    cert = _certificate(_key(), subject=_name("Expired"), usage=_usage(digital_signature=True),
                        start=dt.datetime(2020, 1, 1, tzinfo=dt.UTC),
                        end=dt.datetime(2021, 1, 1, tzinfo=dt.UTC))
    path = _p12(tmp_path, cert, _key())
    with pytest.raises(InputError) as exc:
        signing.load_signer(path, passphrase)
    assert "expired on 2021-01-01" in _single_problem(exc, path)


def test_issue_date_outside_the_certificate(tmp_path: Path, pdf: bytes,
                                            passphrase: str) -> None:
    """The claimed signing time (the issue date) must lie inside the certificate's validity, or
    a validator that checks at the claimed time would reject it."""
    cert = _certificate(_key(), subject=_name("Late"), usage=_usage(digital_signature=True),
                        start=WHEN + dt.timedelta(days=1))
    path = _p12(tmp_path, cert, _key())
    late = signing.load_signer(path, passphrase)
    with pytest.raises(InputError) as exc:
        late.check_at(signing.signing_time(ISSUED))
    assert "valid only from 2026-02-02 (the issue date is 2026-02-01)" in _single_problem(
        exc, path)
    for sign in (signing.sign_pdf, signing.sign_manifest):
        with pytest.raises(InputError) as exc:
            sign(pdf, late, when=WHEN)
        assert "valid only from 2026-02-02" in _single_problem(exc, path)
