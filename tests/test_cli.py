"""The command line as a user meets it: output, JSON, exit codes, no tracebacks."""

import json

from conftest import ROOT

from workpack.cli import main

VESSEL = str(ROOT / "plants" / "demo-vessel.yaml")


def test_check_summarizes_the_demo_vessel(capsys) -> None:
    assert main(["check", VESSEL]) == 0
    out = capsys.readouterr().out
    assert out.startswith("MV Skerry Lantern: vessel, 60 Hz")
    assert "MSB: 440 V insulated" in out and "detector: GD-MSB, GD-ESB" in out
    assert "WARNING" not in out


def test_check_json_has_the_islands(capsys) -> None:
    assert main(["check", VESSEL, "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    ids = [island["id"] for island in summary["islands"]]
    assert {"MSB", "LP-MAIN", "ELP", "DP-LDY"} <= set(ids)


def test_isolate_prints_the_plan_and_the_safety_notice(capsys) -> None:
    assert main(["isolate", VESSEL, "WL-1"]) == 0
    out = capsys.readouterr().out
    # the heater supply first: it could come on when the motor's breaker opens
    assert "1. CB-DK-H-WL1" in out and "2. CB-WL1" in out
    assert "licensed practice prevail" in out


def test_isolate_json_lists_devices_in_order(capsys) -> None:
    assert main(["isolate", VESSEL, "LP-MAIN", "--json"]) == 0
    plan = json.loads(capsys.readouterr().out)
    # the normally open tie is locked before the normal supply is switched off
    assert [p["device"] for p in plan["points"]] == ["CB-LTIE", "CB-T1S"]


def test_unknown_item_is_one_line_with_a_suggestion(capsys) -> None:
    assert main(["isolate", VESSEL, "WL1"]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err == (f"ITEM: no element 'WL1' in {VESSEL} "
                            "(did you mean 'WL-1' or 'C-WL1' or 'CB-WL1'?)\n")


def test_missing_file_is_exit_2_without_traceback(capsys) -> None:
    assert main(["check", "no-such.yaml"]) == 2
    assert capsys.readouterr() == ("", "no-such.yaml: no such file\n")


def test_schema_is_valid_json_schema_and_accepts_the_demo(capsys) -> None:
    jsonschema = __import__("pytest").importorskip("jsonschema")
    import yaml

    assert main(["schema", "plant"]) == 0
    schema = json.loads(capsys.readouterr().out)
    jsonschema.Draft202012Validator.check_schema(schema)
    with open(VESSEL, encoding="utf-8") as handle:
        document = yaml.safe_load(handle)
    document = json.loads(json.dumps(document, default=str))  # dates as text, as editors see
    jsonschema.Draft202012Validator(schema).validate(document)
