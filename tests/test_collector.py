"""Loading pauses the garbage collector and always turns it back on."""

import gc

import pytest

from workpack.errors import InputError
from workpack.loading import load_plant_text


def test_collector_is_back_on_after_a_plant_loads_or_fails() -> None:
    text = ("plant: {code: FX, name: test, kind: vessel, frequency: 60 Hz}\n"
            "sources:\n  - {id: G1, kind: generator, voltage: 440 V}\n"
            "buses:\n  - {id: MSB, kind: switchboard, voltage: 440 V, earthing: insulated,"
            " from: G1}\n")
    assert gc.isenabled()
    load_plant_text(text, "ok.yaml")
    assert gc.isenabled()
    with pytest.raises(InputError):
        load_plant_text(text.replace("from: G1", "from: G9"), "bad.yaml")
    assert gc.isenabled()
    gc.disable()
    try:
        load_plant_text(text, "ok.yaml")
        assert not gc.isenabled()  # left as the caller had it
    finally:
        gc.enable()
