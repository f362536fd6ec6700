"""Signatures: PDFs signed as PAdES baseline B-B, manifest.json as a detached CMS signature.

Part of the foundation: it imports no stage, only :mod:`reportgen.errors`. docs/signing.md says
what is signed, where the passphrase comes from, what ``verify`` reports and what stays
byte-identical.

* **Key.** :func:`load_signer` reads a PKCS#12 file (.p12/.pfx: private key, certificate, chain).
  The passphrase comes only from an environment variable (:data:`PASSPHRASE_ENV`), never from an
  argument, so it never appears in a command line or a process list. A file that cannot be read
  or opened, a wrong passphrase, a certificate that has expired (or is not yet valid) or whose key
  usage does not allow digitalSignature: each is an :class:`~reportgen.errors.InputError` naming
  the file.
* **PDF.** :func:`sign_pdf` appends an incremental update with an invisible signature field
  (pyHanko): SubFilter ETSI.CAdES.detached, signed attributes content-type, message-digest and
  ESS signing-certificate-v2, no CMS signing-time attribute — PAdES baseline B-B,
  ETSI EN 319 142-1 §6.3 (which forbids signing-time and puts the claimed time in the signature
  dictionary's /M instead). The original bytes are kept unchanged as the first revision.
* **Manifest.** :func:`sign_manifest` returns a detached CMS SignedData (RFC 5652 §5), DER, to be
  written as ``manifest.json.p7s``: signed attributes content-type, message-digest, signing-time,
  ESS signing-certificate-v2 (RFC 5035) and CMS algorithm protection (RFC 6211).
* **Time.** Every time written (/M, the info dictionary's /ModDate, the XMP ModifyDate and the
  CMS signing-time) is the ``when`` the caller gives — the round's issue date — never the clock.
  With an RSA key (PKCS#1 v1.5 signatures are deterministic) the same input, key and ``when``
  give the same bytes; the incremental update's new /ID half is a hash of those, not random.
* **Checking.** :func:`verify_pdf` and :func:`verify_manifest` return a :class:`SignatureCheck`:
  who signed (subject common name and organisation, SHA-256 fingerprint of the certificate),
  whether the signature holds and, if not, why. Integrity is judged apart from trust: a
  self-signed certificate (e.g. :func:`make_demo_key`'s) is reported as self-signed, not as
  broken. The certificate chain is not checked against a trust list (no network, no system
  store): ``verify`` shows the fingerprint for the reader to compare with the provider's.

Libraries: pyHanko (PDF signing and validation, CMS building) on top of ``cryptography`` (keys,
certificates, the RSA/ECDSA operations) and asn1crypto. ``cryptography``'s own
``PKCS7SignatureBuilder`` was not used for the manifest: it always stamps the clock into the
signing-time attribute (or drops all signed attributes) and it cannot verify. pyHanko is
imported on first use (:func:`_pyhanko`): importing it takes about a second.
"""

from reportgen.signing.check import *  # noqa: F403
from reportgen.signing.keys import *  # noqa: F403
from reportgen.signing.sign import *  # noqa: F403
