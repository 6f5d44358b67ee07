"""A standard PDF digital signature on a close-out record: PAdES baseline B-B (ETSI EN 319
142-1), made with pyHanko, so an auditor's ordinary PDF reader shows who signed and
whether the file changed since.

The signer's certificate
    A PDF signature names its signer by an X.509 certificate. We issue none from a
    certificate authority: the certificate is *self-issued* from the person's own Ed25519
    signing key (the key the crew register holds, the one that signs records), made with
    ``cryptography`` and signed by that same key. So the PDF signature is bound to the
    register exactly as a record signature is: the certificate's public key is the
    register's entry for that key id. Nothing else is needed, no network is used, and the
    certificate is the same bytes every time for the same register entry (Ed25519 is
    deterministic; serial number and validity come from the entry):

    - subject and issuer: CN = the person's name, serialNumber = their register id,
      OU = the key id, O = the crew register's name;
    - serial number: the first 19 bytes of SHA-256 over the key id and public key;
    - valid from the key's ``valid_from`` until its revocation, else ten years on;
    - key usage: digital signature and non-repudiation; not a CA.

    A reader that does not trust the certificate (none will, by default) still shows the
    signer's name and whether the document was changed; to see it as trusted, an auditor
    imports the certificate (``certificate_pem``) or checks its public key against the
    crew register.

Same bytes for the same inputs: the signing time is the one given (the CMS signing-time
attribute and the signature dictionary's /M), and the file identifier's second half is
derived from its first instead of drawn at random.
"""

from __future__ import annotations

import datetime as dt
import hashlib
from io import BytesIO
from typing import Any

from asn1crypto import keys as asn1_keys
from asn1crypto import x509 as asn1_x509
from cryptography import x509
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
from cryptography.hazmat.primitives.serialization import Encoding, NoEncryption, PrivateFormat
from cryptography.x509.oid import NameOID
from pyhanko.pdf_utils import generic
from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
from pyhanko.pdf_utils.metadata.model import DocumentMetadata
from pyhanko.sign import fields, signers
from pyhanko.sign.signers.pdf_signer import PdfSigningSession
from pyhanko_certvalidator.registry import SimpleCertificateStore

from workpack.model.crew import Person, SigningKey

FIELD_NAME = "Closeout-Signature"
CERTIFICATE_YEARS = 10


def signer_certificate(private_key: Ed25519PrivateKey, person: Person, key: SigningKey,
                       crew_name: str) -> x509.Certificate:
    """The self-issued certificate of ``person``'s key (see the module docstring)."""
    name = x509.Name([
        x509.NameAttribute(NameOID.COMMON_NAME, person.name),
        x509.NameAttribute(NameOID.SERIAL_NUMBER, person.id),
        x509.NameAttribute(NameOID.ORGANIZATIONAL_UNIT_NAME, key.id),
        x509.NameAttribute(NameOID.ORGANIZATION_NAME, crew_name),
    ])
    public = private_key.public_key()
    serial = int.from_bytes(hashlib.sha256(key.id.encode() + b"\x00" +
                                           key.public_bytes()).digest()[:19], "big") or 1
    valid_from = key.valid_from.astimezone(dt.UTC)
    until = key.revoked_at.astimezone(dt.UTC) if key.revoked_at is not None else \
        valid_from.replace(year=valid_from.year + CERTIFICATE_YEARS)
    builder = (x509.CertificateBuilder()
               .subject_name(name).issuer_name(name).public_key(public)
               .serial_number(serial).not_valid_before(valid_from).not_valid_after(until)
               .add_extension(x509.BasicConstraints(ca=False, path_length=None), critical=True)
               .add_extension(x509.KeyUsage(digital_signature=True, content_commitment=True,
                                            key_encipherment=False, data_encipherment=False,
                                            key_agreement=False, key_cert_sign=False,
                                            crl_sign=False, encipher_only=False,
                                            decipher_only=False), critical=True)
               .add_extension(x509.SubjectKeyIdentifier.from_public_key(public),
                              critical=False))
    return builder.sign(private_key, None)  # Ed25519 takes no separate hash


def certificate_pem(certificate: x509.Certificate) -> bytes:
    return certificate.public_bytes(Encoding.PEM)


class _PinnedMetadata(DocumentMetadata):
    """Document metadata whose modification date stays the signing time: pyHanko sets it
    to "now" (the clock) just before writing, which made two signings differ."""

    def __setattr__(self, name: str, value: Any) -> None:
        if name == "last_modified" and value == "now":
            value = self.__dict__.get("last_modified", value)
        super().__setattr__(name, value)


class _FixedIdWriter(IncrementalPdfFileWriter):
    """The second half of the file identifier derived from the first, not random; the
    document's modification date is the signing time, not the clock's."""

    def __init__(self, stream: BytesIO, *, modified_at: dt.datetime):
        super().__init__(stream)
        self._meta = _PinnedMetadata(last_modified=modified_at)

    @classmethod
    def _handle_id(cls, prev: Any) -> generic.ArrayObject:
        found = super()._handle_id(prev)
        first = bytes(found[0])
        second = hashlib.sha256(b"workpack-closeout-signature\x00" + first).digest()[:16]
        return generic.ArrayObject([found[0], generic.ByteStringObject(second)])


class _SignerAt(signers.PdfSigner):
    """pyHanko's signer with the signing time given, not read from the clock."""

    def __init__(self, *args: Any, signed_at: dt.datetime, **options: Any):
        super().__init__(*args, **options)
        self._signed_at = signed_at

    def init_signing_session(self, pdf_out: Any,
                             existing_fields_only: bool = False) -> PdfSigningSession:
        session = super().init_signing_session(pdf_out, existing_fields_only)
        session.system_time = self._signed_at
        return session


def sign_pdf(pdf: bytes, private_key: Ed25519PrivateKey, certificate: x509.Certificate, *,
             signed_at: dt.datetime, reason: str, location: str | None = None) -> bytes:
    """``pdf`` with a PAdES B-B signature by ``private_key`` appended as an incremental
    update (the original bytes stay as they were, first in the file)."""
    cert = asn1_x509.Certificate.load(certificate.public_bytes(Encoding.DER))
    # pyHanko takes the key as asn1crypto's PKCS#8 structure; it stays in memory.
    key = asn1_keys.PrivateKeyInfo.load(private_key.private_bytes(
        Encoding.DER, PrivateFormat.PKCS8, NoEncryption()))
    signer = signers.SimpleSigner(signing_cert=cert, signing_key=key,
                                  cert_registry=SimpleCertificateStore.from_certs([cert]),
                                  signature_mechanism=None)
    meta = signers.PdfSignatureMetadata(
        field_name=FIELD_NAME, subfilter=fields.SigSeedSubFilter.PADES,
        reason=reason, location=location, name=str(certificate.subject.get_attributes_for_oid(
            NameOID.COMMON_NAME)[0].value),
        md_algorithm="sha512")  # RFC 8419: Ed25519 in CMS digests with SHA-512
    writer = _FixedIdWriter(BytesIO(pdf), modified_at=signed_at.astimezone(dt.UTC))
    out = _SignerAt(meta, signer, signed_at=signed_at.astimezone(dt.UTC)).sign_pdf(writer)
    return bytes(out.getvalue())
