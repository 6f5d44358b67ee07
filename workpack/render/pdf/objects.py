"""Writing a document's PDF objects faster, byte for byte as reportlab writes them.

A package's form fields are hundreds of small dictionaries (rectangle, flags, colours,
appearance), and reportlab writes every key of every one by escaping its name
(``PDFName``) and encoding it again, and every number through its text encoding. The
names are a few dozen, written thousands of times: ``faster_objects`` keeps the bytes of
each key (and of each short text) once written, and writes plain numbers (``fp_str``:
digits, sign and point, the same in every encoding reportlab uses) without the codec.
The same bytes, checked in ``tests/test_render_pdf.py`` against reportlab's own writing.

Only while one of our documents is written (``PdfDocument.render``): reportlab stays as
it is for anyone else in the process. Two documents written at once on two threads can
only see the other's setting for a while, and both settings write the same bytes.
"""

from __future__ import annotations

import contextlib
import threading
from collections import OrderedDict
from collections.abc import Iterator
from typing import Any

from reportlab import rl_config
from reportlab.lib.rl_accel import fp_str
from reportlab.pdfbase import pdfdoc

_BARE_DICTIONARY = pdfdoc.PDFDictionary.format
_BARE_FORMAT = pdfdoc.format
_KEYS: dict[str, bytes] = {}  # a dictionary key → its bytes, as PDFName writes them
_PLAIN_NUMBERS = (float, int)
_TEXTS: dict[str, bytes] = {}  # a short text value → its bytes (names, colour operators)
_SHORT, _TEXTS_KEPT = 40, 4096
_lock = threading.Lock()
_users = 0


def _key(name: str) -> bytes:
    written = _KEYS.get(name)
    if written is None:
        written = _KEYS[name] = _BARE_FORMAT(pdfdoc.PDFName(name), None) + b" "
    return written


def _format(element: Any, document: Any, toplevel: int = 0) -> bytes:
    """``pdfdoc.format``, with plain numbers written without the text codec and short
    texts (names such as ``/Widget``) encoded once."""
    kind = type(element)
    if kind in _PLAIN_NUMBERS:
        text: str = fp_str(element)
        return text.encode("ascii")
    if kind is str and len(element) <= _SHORT:
        written = _TEXTS.get(element)
        if written is None:
            written = _BARE_FORMAT(element, document)
            if len(_TEXTS) < _TEXTS_KEPT:
                _TEXTS[element] = written
        return written
    result: bytes = _BARE_FORMAT(element, document, toplevel)
    return result


def _dictionary_format(self: Any, document: Any, IND: bytes = b"\n ") -> bytes:  # noqa: N803
    """``PDFDictionary.format`` with each key's bytes written once."""
    entries = self.dict
    keys = list(entries.keys())
    if not isinstance(entries, OrderedDict):
        keys.sort()
    lines = [_key(k) + _format(entries[k], document) for k in keys]
    if (self.multiline and rl_config.pdfMultiLine) or self.multiline == "forced":
        return b"<<\n" + IND.join(lines) + b"\n>>"
    for index in reversed(range(6, len(lines), 6)):  # break up every 6 entries anyway
        lines.insert(index, b"\n ")
    return b"<<\n" + b" ".join(lines) + b"\n>>"


@contextlib.contextmanager
def faster_objects() -> Iterator[None]:
    """Write PDF objects the faster way inside the block (same bytes)."""
    global _users
    with _lock:
        _users += 1
        pdfdoc.PDFDictionary.format = _dictionary_format  # type: ignore[method-assign]
        pdfdoc.format = _format
    try:
        yield
    finally:
        with _lock:
            _users -= 1
            if not _users:
                pdfdoc.PDFDictionary.format = _BARE_DICTIONARY  # type: ignore[method-assign]
                pdfdoc.format = _BARE_FORMAT
