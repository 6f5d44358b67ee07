"""The signed close-out PDF: a PAdES signature that pyHanko's validator, an independent
implementation of the PDF and CMS signature checks, finds intact and names the signer of;
the same file edited with another PDF tool (pypdf, an incremental update) or by a byte
edit fails that validation. Invented people and records."""

from __future__ import annotations

import datetime as dt
import hashlib
import io
import re
from pathlib import Path
from typing import Any

import pytest
from asn1crypto import x509 as asn1_x509
from crewdata import key, person, register
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey
from cryptography.hazmat.primitives.serialization import Encoding, PublicFormat
from pyhanko.pdf_utils.reader import PdfFileReader
from pyhanko.sign.validation import validate_pdf_signature
from pyhanko.sign.validation.status import PdfSignatureStatus
from pyhanko_certvalidator import ValidationContext
from pypdf import PdfReader, PdfWriter
from test_closeout import job, pdf  # noqa: F401  (fixtures: a stored, failed IR job)
from test_record import AT, filled_sheet, packages, windlass  # noqa: F401  (fixtures)

from workpack.cli import main
from workpack.crew_shell import key_file_bytes, write_key_file
from workpack.render.pdf_signature import sign_pdf, signer_certificate
from workpack.signing import public_key_text

SIGNER = Ed25519PrivateKey.from_private_bytes(hashlib.sha256(b"supervisor").digest())
REGISTER = register(person("P-3", "D. Three", role="supervisor",
                           keys=[key("P-3-K1", SIGNER, "2026-01-01T00:00:00Z")]))
SIGNED_AT = dt.datetime(2026, 12, 3, 9, 30, tzinfo=dt.UTC)


def certificate() -> Any:
    holder = REGISTER.people[0]
    return signer_certificate(SIGNER, holder, holder.keys[0], REGISTER.crew.name)


def validated(data: bytes, trusted: bool = True) -> PdfSignatureStatus:
    """pyHanko's verdict on the file's one signature, trusting the signer's certificate
    (as an auditor who checked it against the crew register would)."""
    root = asn1_x509.Certificate.load(certificate().public_bytes(Encoding.DER))
    signatures = PdfFileReader(io.BytesIO(data)).embedded_signatures
    assert len(signatures) == 1
    context = ValidationContext(trust_roots=[root] if trusted else [])
    return validate_pdf_signature(signatures[0], context)


@pytest.fixture(scope="module")
def signed(pdf: bytes) -> bytes:  # noqa: F811
    return sign_pdf(pdf, SIGNER, certificate(), signed_at=SIGNED_AT,
                    reason="close-out of record 2 of WP-TEST: failed", location="MV Test")


def test_the_signature_is_intact_valid_and_names_the_signer(signed: bytes) -> None:
    status = validated(signed)
    assert status.intact and status.valid and status.trusted and status.bottom_line
    assert status.coverage.name == "ENTIRE_FILE"
    assert status.signing_cert.subject.native["common_name"] == "D. Three"
    assert status.signing_cert.subject.native["serial_number"] == "P-3"
    assert status.signer_reported_dt == SIGNED_AT
    assert status.md_algorithm == "sha512"  # RFC 8419: Ed25519 in CMS digests with SHA-512


def test_an_untrusted_reader_still_sees_it_intact_and_who_signed(signed: bytes) -> None:
    """A reader that does not know the certificate: intact, signer named, not trusted."""
    status = validated(signed, trusted=False)
    assert status.intact and status.valid and not status.trusted
    assert status.signing_cert.subject.native["common_name"] == "D. Three"


def test_it_is_a_pades_signature_over_the_unchanged_original(pdf: bytes,  # noqa: F811
                                                             signed: bytes) -> None:
    assert signed.startswith(pdf)  # an incremental update: the record's bytes stay first
    embedded = PdfFileReader(io.BytesIO(signed)).embedded_signatures[0]
    assert embedded.sig_object["/SubFilter"] == "/ETSI.CAdES.detached"


def test_the_certificate_holds_the_registers_public_key() -> None:
    """The PDF signature is bound to the crew register as a record signature is."""
    raw = certificate().public_key().public_bytes(Encoding.Raw, PublicFormat.Raw)
    assert REGISTER.people[0].keys[0].public_bytes() == raw
    assert public_key_text(SIGNER) == REGISTER.people[0].keys[0].public_key


def test_the_same_inputs_give_the_same_bytes(pdf: bytes, signed: bytes) -> None:  # noqa: F811
    again = sign_pdf(pdf, SIGNER, certificate(), signed_at=SIGNED_AT,
                     reason="close-out of record 2 of WP-TEST: failed", location="MV Test")
    assert again == signed


def test_the_modification_date_is_the_signing_time_not_the_clock(signed: bytes) -> None:
    """pyHanko sets the document's /ModDate to the clock when it writes; two signings a
    second apart then differed in that date (seen as a flaky byte comparison). The date
    written is the given signing time."""
    dates = re.findall(rb"/ModDate \(([^)]*)\)", signed)
    assert dates[-1] == rb"D\07220261203093000Z"  # \072 is the ':' escaped


def test_an_incremental_edit_with_another_pdf_tool_fails_validation(signed: bytes) -> None:
    """pypdf appends a changed page (a verdict stamped over it): the signed revision is
    still intact, but the file is no longer what was signed, and the verdict says so."""
    writer = PdfWriter(io.BytesIO(signed), incremental=True)
    stamp = io.BytesIO()
    from reportlab.pdfgen import canvas

    sheet = canvas.Canvas(stamp, invariant=1)
    sheet.drawString(72, 72, "VERDICT: PASSED")
    sheet.showPage()
    sheet.save()
    writer.pages[0].merge_page(PdfReader(stamp).pages[0])
    edited = io.BytesIO()
    writer.write(edited)
    assert edited.getvalue().startswith(signed)
    status = validated(edited.getvalue())
    assert status.coverage.name != "ENTIRE_FILE"
    assert not status.docmdp_ok and not status.bottom_line


def test_a_byte_edit_inside_the_signed_range_breaks_the_signature(signed: bytes) -> None:
    """One character of the signed revision (the producer named in its information
    dictionary) changed in place, the file's length and structure left alone."""
    start = signed.index(b"/Producer")
    edited = signed[:start] + signed[start:].replace(b"ReportLab", b"ReportLap", 1)
    assert len(edited) == len(signed) and edited != signed
    status = validated(edited)
    assert not status.intact and not status.bottom_line


def test_closeout_sign_as_writes_a_signed_pdf(packages: Path, tmp_path: Path,  # noqa: F811
                                              monkeypatch: pytest.MonkeyPatch,
                                              capsys: pytest.CaptureFixture[str]) -> None:
    passphrase = "a passphrase of several words"
    monkeypatch.setenv("WORKPACK_KEY_PASSPHRASE", passphrase)
    crew = tmp_path / "crew.yaml"
    crew.write_text(f"""\
crew:
  name: test crew
  scheme: test scheme
people:
  - id: P-3
    name: D. Three
    role: supervisor
    hours_per_day: 4
    keys:
      - id: P-3-K1
        public_key: "{public_key_text(SIGNER)}"
        valid_from: 2026-01-01T00:00:00Z
""", encoding="utf-8")
    key_file = tmp_path / "p3.key"
    write_key_file(key_file, key_file_bytes(SIGNER, passphrase.encode()))
    package = windlass(packages)
    db = tmp_path / "records.sqlite"
    assert main(["record", str(package), str(filled_sheet(package, tmp_path)), "--db",
                 str(db), "--at", AT]) == 0
    capsys.readouterr()
    out = tmp_path / "closeout.pdf"
    assert main(["closeout", str(package), "--db", str(db), "--out", str(out), "--sign-as",
                 str(key_file), "--crew", str(crew), "--at", "2026-12-03T09:30Z"]) == 0
    said = capsys.readouterr().out
    assert said.endswith(f"written to {out}, signed by D. Three (P-3) with key P-3-K1\n")
    status = validated(out.read_bytes())
    assert status.bottom_line and status.signer_reported_dt == SIGNED_AT
    assert status.signing_cert.subject.native["common_name"] == "D. Three"
    # A key the register does not hold signs nothing, and nothing is written.
    stranger = tmp_path / "stranger.key"
    write_key_file(stranger, key_file_bytes(Ed25519PrivateKey.generate(),
                                            passphrase.encode()))
    refused = tmp_path / "refused.pdf"
    assert main(["closeout", str(package), "--db", str(db), "--out", str(refused),
                 "--sign-as", str(stranger), "--crew", str(crew)]) == 2
    assert "this key is not in the crew register" in capsys.readouterr().err
    assert not refused.exists()


def test_signing_options_without_a_key_are_refused(tmp_path: Path, capsys) -> None:
    code = main(["closeout", str(tmp_path / "p.json"), "--db", str(tmp_path / "r.sqlite"),
                 "--out", str(tmp_path / "c.pdf"), "--crew", str(tmp_path / "crew.yaml")])
    assert code == 2
    assert capsys.readouterr().err == ("--crew: only with --sign-as KEYFILE, to sign the "
                                       "close-out\n")
