"""Hostile results PDFs, built from a real package PDF (for tests and the fuzz run)."""

from __future__ import annotations

import zlib
from pathlib import Path

from pypdf import PdfReader, PdfWriter
from pypdf.generic import NameObject, TextStringObject


def renamed_field(package_pdf: Path, out: Path, old: str, new: str, value: str = "x") -> Path:
    """The package PDF with form field ``old`` renamed ``new`` and filled with ``value``."""
    writer = PdfWriter(clone_from=PdfReader(package_pdf))
    for page in writer.pages:
        for annotation in page.get("/Annots") or []:
            field = annotation.get_object()
            if field.get("/T") == old:
                field[NameObject("/T")] = TextStringObject(new)
                field[NameObject("/V")] = TextStringObject(value)
    writer.write(out)
    return out


def password_protected(package_pdf: Path, out: Path) -> Path:
    writer = PdfWriter(clone_from=PdfReader(package_pdf))
    writer.encrypt(user_password="secret", owner_password="owner", algorithm="RC4-128")
    writer.write(out)
    return out


def public_key_encrypted(package_pdf: Path, out: Path) -> Path:
    """A PDF whose /Encrypt entry names the public-key security handler (/Adobe.PubSec,
    ISO 32000-1 section 7.6.4): only the standard (password) handler can be opened, with or
    without a cryptography library installed. (An AES-labelled file made with RC4 keys no
    longer serves: with the cryptography library present, the reader decrypts it, to
    nonsense.)"""
    writer = PdfWriter(clone_from=PdfReader(package_pdf))
    writer.encrypt(user_password="", owner_password="owner", algorithm="RC4-128")
    entry = writer._encrypt_entry
    assert entry is not None
    entry[NameObject("/Filter")] = NameObject("/Adobe.PubSec")
    writer._encryption = None  # objects in clear; the /Encrypt entry names the handler
    writer.write(out)
    return out


def decompression_bomb(out: Path, expands_to: int = 200 * 1024 * 1024) -> Path:
    """A PDF whose cross-reference stream expands to ``expands_to`` bytes of zeros."""
    bomb = zlib.compress(b"\0" * expands_to, 9)
    head = b"%PDF-1.5\n"
    body = (b"1 0 obj\n<< /Type /XRef /Size 2 /W [1 2 1] /Root 1 0 R /Filter /FlateDecode "
            b"/Length %d >>\nstream\n" % len(bomb) + bomb + b"\nendstream\nendobj\n")
    out.write_bytes(head + body + b"startxref\n%d\n%%%%EOF\n" % len(head))
    return out


def broken_startxref(package_pdf: Path, out: Path) -> Path:
    """The package PDF with its startxref pointer wrong: pypdf warns and repairs."""
    data = bytearray(package_pdf.read_bytes())
    at = data.rfind(b"startxref")
    end = data.find(b"%%EOF", at)
    data[at:end] = b"startxref\n12345\n"
    out.write_bytes(bytes(data))
    return out
