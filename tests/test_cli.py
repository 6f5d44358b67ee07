"""The command line as a user meets it: output, JSON, exit codes, no tracebacks."""

import json

import pytest
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


SITE = str(ROOT / "plants" / "demo-site.yaml")


@pytest.mark.parametrize(("args", "message"), [
    (["plan", VESSEL, "f.yaml", "--out", "o", "--crew-hours", "0"],
     "--crew-hours 0: must be a number above zero"),
    (["plan", VESSEL, "f.yaml", "--out", "o", "--crew-hours", "nan"],
     "--crew-hours nan: must be a number above zero"),
    (["plan", VESSEL, "f.yaml", "--out", "o", "--crew-hours", "many"],
     "--crew-hours many: must be a number above zero"),
    (["plan", VESSEL, "f.yaml", "--out", "o", "--date", "2026-13-01"],
     "--date 2026-13-01: expected YYYY-MM-DD"),
    (["locate", VESSEL, "GD-MSB", "--date", "tomorrow"], "--date tomorrow: expected YYYY-MM-DD"),
    (["record", "p.json", "r.yaml", "--db", "d.sqlite", "--at", "noon"],
     "--at noon: expected a date and time such as 2026-12-02T16:30+00:00"),
    (["audit", "--db", "d", "--packages", "p", "--out", "o", "--from", "2026-1-1"],
     "--from 2026-1-1: expected YYYY-MM-DD"),
    (["export", "--what", "due", "--plant", VESSEL, "--days", "-1", "--out", "x.csv"],
     "--days -1: give 0 or more days"),
    (["export", "--what", "due", "--plant", VESSEL, "--days", "2.5", "--out", "x.csv"],
     "--days 2.5: expected a whole number of days"),
    (["draw", VESSEL, "--out", "vessel.png"],
     "--out vessel.png: expected a .pdf or .svg file name"),
    (["diagnose", "--volts", "-440", "--reading", "A=1"], "--volts -440: must be above zero"),
    (["diagnose", "--volts", "440", "--tolerance", "-1", "--reading", "A=1"],
     "--tolerance -1: expected a percentage, 0 or more"),
    (["diagnose", "--volts", "440", "--reading", "A=-3"],
     "--reading A=-3: a voltmeter reads no negative volts"),
    (["diagnose", "--volts", "440", "--reading", "A=1", "--reading", "A=2"],
     "--reading A=2: phase A given twice"),
])
def test_a_bad_option_value_is_refused_before_anything_is_read(args, message, capsys) -> None:
    """Parse time: one line naming the option and the value as typed, exit 2, even where
    the files named beside it do not exist."""
    assert main(args) == 2
    assert capsys.readouterr() == ("", message + "\n")


def test_an_unknown_search_place_is_one_line_with_a_suggestion(capsys) -> None:
    assert main(["locate", VESSEL, "GD-MBS"]) == 2
    assert capsys.readouterr().err == (
        f"ISLAND_OR_DETECTOR: no system, bus or detector 'GD-MBS' in {VESSEL} "
        "(did you mean 'GD-MSB' or 'GD-ESB'?)\n")


def test_no_search_on_a_solidly_grounded_system(capsys) -> None:
    """A ground on a solidly grounded (TN) board trips it: nothing stands to be searched."""
    assert main(["locate", SITE, "DB-1"]) == 2
    assert capsys.readouterr().err == (
        "DB-1: the DB-1 system is solidly grounded: a ground there trips its protection; "
        "there is no standing indication to search for\n")


def test_a_plan_that_would_replace_an_issued_package_is_refused_before_planning(
        demo_plan, tmp_path, capsys, monkeypatch) -> None:
    """The refusal comes before the day is planned (no waiting on a big plant for it), and
    the folder is left as it was."""
    import datetime as dt
    import shutil

    from workpack.loading import load_package
    from workpack.store import open_store

    out = tmp_path / "out"
    shutil.copytree(demo_plan, out)
    twin = sorted(out.glob("WP-*.json"))[0]
    package, digest = load_package(twin)
    db = tmp_path / "records.sqlite"
    with open_store(db) as store:
        store.append(package_id=package.id, package_sha256=digest, results={"results": {}},
                     recorded_by="x", recorded_at=dt.datetime(2026, 12, 2, 16, tzinfo=dt.UTC),
                     verdict="passed")
    before = {p.name: p.read_bytes() for p in out.iterdir()}

    def no_planning(*args, **kwargs):
        raise AssertionError("planned although the folder refuses the plan")

    monkeypatch.setattr("workpack.plan.plan_day", no_planning)
    assert main(["plan", VESSEL, str(ROOT / "plants" / "demo-vessel-findings.yaml"), "--out",
                 str(out), "--db", str(db)]) == 2
    assert f"package {package.id} was issued and has record 1" in capsys.readouterr().err
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
