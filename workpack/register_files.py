"""The instrument register at the edge: its file to a checked ``InstrumentRegister``;
every problem one ``file:line:col: field: message`` line (exit 2)."""

from __future__ import annotations

from pathlib import Path

from workpack.errors import InputError
from workpack.loading import located, read_text, validate
from workpack.model.instruments import InstrumentRegister
from workpack.recordchecks import check_instrument_register
from workpack.yamlsource import parse_yaml


def load_instruments(path: Path) -> InstrumentRegister:
    data, marks = parse_yaml(read_text(path), str(path))
    register = validate(InstrumentRegister, data, marks, "instrument register")
    found = check_instrument_register(register)
    if found:
        raise InputError(located(marks, found))
    return register
