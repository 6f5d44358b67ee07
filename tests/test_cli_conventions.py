"""Command-line conventions (issue 14, point 5): --version, --json on every command that
reports (each output valid against the schema shipped for it), settings from the
environment and workpack.toml in a stated order, and exit statuses 0 / 1 / 2."""

from __future__ import annotations

import argparse
import json
import shutil
import tomllib
from pathlib import Path
from typing import Any

import pytest

from workpack import __version__
from workpack.cli import build_parser, main
from workpack.output_schemas import OUTPUTS, file_name, schema_text
from workpack.settings import resolve
from workpack.shipped import shipped

jsonschema = pytest.importorskip("jsonschema")

ROOT = Path(__file__).resolve().parent.parent
VESSEL = ROOT / "plants" / "demo-vessel.yaml"
FINDINGS = ROOT / "plants" / "demo-vessel-findings.yaml"
SITE = ROOT / "plants" / "demo-site.yaml"
CREW = ROOT / "plants" / "demo-vessel-crew.yaml"
AT = "2026-12-02T16:30+00:00"

# Commands that report nothing a program would read as JSON, and why.
NO_JSON = {
    "schema": "prints a JSON Schema already",
    "key create": "prints the register lines to paste (YAML) and writes a key file",
    "key rotate": "prints the register lines to paste (YAML) and writes a key file",
    "key revoke": "prints the register lines to paste (YAML)",
    "anchor": "prints the anchor file itself, which is JSON",
}


def commands(parser: argparse.ArgumentParser | None = None,
             prefix: str = "") -> dict[str, argparse.ArgumentParser]:
    """Every command and sub-command (``store init``) with its parser, from the parser
    itself: a command added later is covered without being listed here."""
    parser = parser or build_parser()
    found: dict[str, argparse.ArgumentParser] = {}
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            for name, sub in action.choices.items():
                inner = commands(sub, f"{prefix}{name} ")
                found.update(inner or {f"{prefix}{name}": sub})
    return found


def test_version_is_the_packages_version(capsys) -> None:
    with pytest.raises(SystemExit) as leaving:
        main(["--version"])
    assert leaving.value.code == 0
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert capsys.readouterr().out == f"workpack {project['project']['version']}\n"
    assert __version__ == project["project"]["version"]


@pytest.mark.parametrize("command", sorted(commands()))
def test_every_help_states_the_settings_order_and_the_exit_statuses(command, capsys) -> None:
    with pytest.raises(SystemExit):
        main([*command.split(), "--help"])
    text = " ".join(capsys.readouterr().out.split())  # unwrapped
    order = ["the command line", "the environment (WORKPACK_DB, WORKPACK_PAGE_SIZE, "
             "WORKPACK_CREW_HOURS)", "workpack.toml beside the plant file",
             "$XDG_CONFIG_HOME/workpack/workpack.toml", "the built-in default"]
    places = [text.find(words) for words in order]
    assert -1 not in places and places == sorted(places), command
    for status in ("0 done", "1 judged and found wanting", "2 bad input"):
        assert status in text, command


def test_every_command_that_reports_has_json_and_a_shipped_schema() -> None:
    """A new command must either report JSON with a schema (output_schemas.OUTPUTS) or
    say here why it has none."""
    for command, parser in commands().items():
        options = {o for action in parser._actions for o in action.option_strings}
        if command in NO_JSON:
            assert "--json" not in options, command
            continue
        assert "--json" in options, f"{command}: no --json (or list it in NO_JSON)"
        assert command in OUTPUTS, f"{command}: --json without a schema in OUTPUTS"
        assert shipped("output-schemas", file_name(command)).is_file()


@pytest.mark.parametrize("command", sorted(OUTPUTS))
def test_the_shipped_output_schemas_are_those_the_types_give(command) -> None:
    shipped_text = shipped("output-schemas", file_name(command)).read_text(encoding="utf-8")
    assert shipped_text == schema_text(command), (
        f"{command}: the shipped schema is out of date with {OUTPUTS[command]}; run "
        "python -m workpack.output_schemas")
    jsonschema.Draft202012Validator.check_schema(json.loads(shipped_text))


def test_the_output_schemas_are_package_data_and_nothing_else_is_there() -> None:
    """An installed workpack carries them; a stale file of a removed command is not left."""
    from fnmatch import fnmatch

    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    patterns = config["tool"]["setuptools"]["package-data"]["workpack"]
    for command in OUTPUTS:
        relative = f"data/output-schemas/{file_name(command)}"
        assert any(fnmatch(relative, pattern) for pattern in patterns), relative
    folder = shipped("output-schemas")
    assert sorted(p.name for p in folder.iterdir()) == sorted(map(file_name, OUTPUTS))


def printed_json(arguments: list[str], capsys, status: int = 0) -> Any:
    capsys.readouterr()  # what earlier steps printed
    assert main(arguments) == status, capsys.readouterr().err
    return json.loads(capsys.readouterr().out)


def valid(command: str, document: Any) -> Any:
    schema = json.loads(shipped("output-schemas", file_name(command)).read_text("utf-8"))
    validator = jsonschema.Draft202012Validator(schema,
                                                format_checker=jsonschema.FormatChecker())
    problems = [f"{'/'.join(map(str, e.absolute_path))}: {e.message}"
                for e in validator.iter_errors(document)]
    assert not problems, f"{command}: " + "; ".join(problems[:5])
    return document


def test_the_schemas_refuse_what_they_do_not_describe() -> None:
    """The validation can fail: a field too many or of the wrong type is refused."""
    schema = json.loads(shipped("output-schemas", file_name("draw")).read_text("utf-8"))
    validator = jsonschema.Draft202012Validator(schema)
    good = {"paper": "A3", "sheets": 2, "enlarged": [], "file": "x.pdf"}
    assert validator.is_valid(good)
    assert not validator.is_valid({**good, "pages": 2})
    assert not validator.is_valid({**good, "sheets": "2"})
    assert not validator.is_valid({k: v for k, v in good.items() if k != "file"})


QUICK = ["diagnose", "--volts", "440", "--hertz", "60", "--capacitance-per-phase", "2.2uF",
         "--reading", "A=460", "--reading", "B=60", "--reading", "C=400", "--json"]


@pytest.mark.parametrize(("command", "arguments"), [
    ("check", ["check", str(VESSEL), "--json"]),
    ("isolate", ["isolate", str(VESSEL), "WL-1", "--json"]),
    ("diagnose", ["diagnose", str(VESSEL), str(FINDINGS), "--json"]),
    ("diagnose quick", QUICK),
    ("locate", ["locate", str(VESSEL), "GD-MSB", "--findings", str(FINDINGS), "--json"]),
    ("crew check", ["crew", "check", str(CREW), "--at", "2026-12-02T08:00Z", "--json"]),
], ids=lambda value: value if isinstance(value, str) else "")
def test_reading_commands_print_json_their_schema_accepts(command, arguments, capsys) -> None:
    valid(command, printed_json(arguments, capsys))


def test_writing_commands_print_json_their_schema_accepts(demo_plan, tmp_path, capsys,
                                                          monkeypatch) -> None:
    """One pass through the day's flow with --json at every step, settings taken from the
    environment and a workpack.toml beside the plant."""
    from test_record import filled_sheet, windlass

    plant = tmp_path / "vessel.yaml"
    shutil.copy(VESSEL, plant)
    (tmp_path / "workpack.toml").write_text('crew_hours = 30\ndb = "records.sqlite"\n')
    monkeypatch.setenv("WORKPACK_CREW_HOURS", "40")  # the environment wins over the file
    plan = valid("plan", printed_json(["plan", str(plant), str(FINDINGS), "--out",
                                       str(tmp_path / "day"), "--json"], capsys))
    assert plan["crew_hours"] == 40 and plan["date"] == "2026-12-02"
    assert sorted(plan["files"]) == sorted(p.name for p in (tmp_path / "day").iterdir())

    packages = tmp_path / "issued"
    shutil.copytree(demo_plan, packages)
    package = windlass(packages)
    sheet = tmp_path / "sheet.yaml"
    valid("results-template", printed_json(["results-template", str(package), "--out",
                                            str(sheet), "--json"], capsys))
    db = tmp_path / "records.sqlite"
    failing = filled_sheet(package, tmp_path, dry_out_mohm="6 MΩ")
    record = valid("record", printed_json(
        ["record", str(package), str(failing), "--db", str(db), "--at", AT, "--json",
         "--followups", str(tmp_path / "tomorrow.yaml")], capsys, status=1))
    assert record["verdict"] == "failed" and record["sequence"] == 1
    assert record["followups"] == str(tmp_path / "tomorrow.yaml")
    record = valid("record", printed_json(
        ["record", str(package), str(filled_sheet(package, tmp_path)), "--db", str(db),
         "--at", AT, "--supersedes", "1", "--json"], capsys))
    assert record["verdict"] == "passed" and record["evaluation"]["verdict"] == "passed"

    # --plant names the plant beside the workpack.toml that gives the store
    verify = valid("verify", printed_json(["verify", "--plant", str(plant), "--json"], capsys))
    assert verify["ok"] and verify["chains"][0]["records"] == 2
    audit = valid("audit", printed_json(["audit", "--db", str(db), "--packages",
                                         str(packages), "--as-of", "2026-12-03", "--out",
                                         str(tmp_path / "audit"), "--json"], capsys))
    assert audit["chain"]["ok"] and audit["records"] == 2
    closeout = valid("closeout", printed_json(["closeout", str(package), "--db", str(db),
                                               "--out", str(tmp_path / "c.pdf"), "--json"],
                                              capsys))
    assert closeout["sequence"] == 2 and closeout["verdict"] == "passed"
    export = valid("export", printed_json(["export", "--plant", str(plant), "--as-of",
                                           "2026-12-03", "--out", str(tmp_path / "o.xlsx"),
                                           "--json"], capsys))
    assert [t["name"] for t in export["tables"]] == ["records", "readings", "due"]
    assets = tmp_path / "assets.xlsx"
    assert main(["export", "--what", "assets", "--plant", str(VESSEL), "--out",
                 str(assets)]) == 0
    capsys.readouterr()
    imported = valid("import-assets", printed_json(["import-assets", str(assets), "--out",
                                                    str(tmp_path / "back.yaml"), "--json"],
                                                   capsys))
    assert imported["counts"]["loads"] > 0
    init = valid("store init", printed_json(["store", "init", str(tmp_path / "new.sqlite"),
                                             "--plant", "MV Test", "--json"], capsys))
    assert init["done"]
    draw = valid("draw", printed_json(["draw", str(SITE), "--out", str(tmp_path / "s.svg"),
                                       "--json"], capsys))
    assert draw["sheets"] >= 1


def test_broken_chain_is_exit_1_with_json_saying_so(demo_plan, tmp_path, capsys) -> None:
    import sqlite3

    from test_record import filled_sheet, windlass

    packages = tmp_path / "issued"
    shutil.copytree(demo_plan, packages)
    package = windlass(packages)
    db = tmp_path / "r.sqlite"
    assert main(["record", str(package), str(filled_sheet(package, tmp_path)), "--db",
                 str(db), "--at", AT]) == 0
    capsys.readouterr()
    with sqlite3.connect(db) as connection:  # tampering, as someone with the file could
        triggers = [r[0] for r in connection.execute(
            "SELECT name FROM sqlite_master WHERE type = 'trigger'")]
        for trigger in triggers:
            connection.execute(f'DROP TRIGGER "{trigger}"')
        connection.execute("UPDATE records SET recorded_by = 'someone else'")
    verify = valid("verify", printed_json(["verify", "--db", str(db), "--json"], capsys,
                                          status=1))
    assert not verify["ok"] and verify["chains"][0]["first_break"]["sequence"] == 1
    audit = valid("audit", printed_json(["audit", "--db", str(db), "--packages", str(packages),
                                         "--as-of", "2026-12-03", "--out",
                                         str(tmp_path / "audit"), "--json"], capsys, status=1))
    assert not audit["chain"]["ok"]


# --- settings: command line > environment > workpack.toml beside the plant > user's > default


def parsed(arguments: list[str], environment: dict[str, str]) -> argparse.Namespace:
    args = build_parser().parse_args(arguments)
    resolve(args, environment)
    return args


@pytest.fixture
def places(tmp_path: Path) -> dict[str, Path]:
    plant = tmp_path / "site" / "plant.yaml"
    plant.parent.mkdir()
    plant.write_text("plant: {}\n")
    user = tmp_path / "config" / "workpack" / "workpack.toml"
    user.parent.mkdir(parents=True)
    return {"plant": plant, "beside": plant.parent / "workpack.toml", "user": user,
            "config": tmp_path / "config"}


def plan_args(places: dict[str, Path], *extra: str) -> list[str]:
    return ["plan", str(places["plant"]), "f.yaml", "--out", "o", *extra]


def test_settings_come_from_the_first_place_that_gives_them(places) -> None:
    places["user"].write_text('crew_hours = 10\npage_size = "Letter"\ndb = "u.sqlite"\n')
    environment = {"XDG_CONFIG_HOME": str(places["config"])}
    args = parsed(plan_args(places), environment)
    assert (args.crew_hours, args.page_size) == (10, "Letter")
    assert args.db == str(places["user"].parent / "u.sqlite")  # relative to the file
    places["beside"].write_text("crew_hours = 20\n")
    args = parsed(plan_args(places), environment)
    assert (args.crew_hours, args.page_size) == (20, "Letter")
    assert args.setting_sources["crew_hours"] == str(places["beside"])
    args = parsed(plan_args(places), {**environment, "WORKPACK_CREW_HOURS": "30",
                                      "WORKPACK_PAGE_SIZE": "a4"})
    assert (args.crew_hours, args.page_size) == (30, "A4")
    assert args.setting_sources["crew_hours"] == "WORKPACK_CREW_HOURS"
    args = parsed(plan_args(places, "--crew-hours", "40"),
                  {**environment, "WORKPACK_CREW_HOURS": "30"})
    assert args.crew_hours == 40 and args.setting_sources["crew_hours"] == "the command line"


def test_without_any_setting_the_built_in_defaults_hold(places) -> None:
    args = parsed(plan_args(places), {"XDG_CONFIG_HOME": str(places["config"])})
    assert (args.crew_hours, args.page_size, args.db) == (16.0, "A4", None)
    assert set(args.setting_sources.values()) == {"the built-in default"}


@pytest.mark.parametrize(("text", "where", "message"), [
    ("crew_hours = -3\n", ":1:1: crew_hours:", "must be a number of hours above zero"),
    ('\n\npage_size = "A3"\n', ":3:1: page_size:", "expected A4 or Letter"),
    ("crew_hour = 3\n", ":1:1: crew_hour:", "unknown setting; known: db, page_size, "
                                            "crew_hours (did you mean 'crew_hours'?)"),
    ("crew_hours = = 3\n", ":1:14:", "Invalid value"),
])
def test_a_bad_workpack_toml_is_one_located_line_exit_2(places, text, where, message,
                                                        capsys, monkeypatch) -> None:
    places["beside"].write_text(text)
    monkeypatch.setenv("XDG_CONFIG_HOME", str(places["config"]))
    assert main(plan_args(places)) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith(f"{places['beside']}{where}") and message in err


def test_a_bad_environment_value_is_one_line_naming_the_variable(places, capsys,
                                                                 monkeypatch) -> None:
    monkeypatch.setenv("WORKPACK_PAGE_SIZE", "A5")
    assert main(plan_args(places)) == 2
    assert capsys.readouterr().err == ("WORKPACK_PAGE_SIZE=A5: expected A4 or Letter "
                                       "(got 'A5')\n")


def test_a_store_named_by_a_setting_need_not_exist_yet_but_one_typed_must(
        places, tmp_path) -> None:
    """A first plan with WORKPACK_DB set has no history yet; a mistyped --db is refused."""
    from types import SimpleNamespace

    from workpack.cli import _history
    from workpack.errors import UsageError
    from workpack.history import History

    plant = SimpleNamespace(plant=SimpleNamespace(name="MV Test"))
    missing = str(tmp_path / "none.sqlite")
    args = parsed(plan_args(places), {"WORKPACK_DB": missing,
                                      "XDG_CONFIG_HOME": str(places["config"])})
    assert args.db == missing and _history(args, plant) == (History(), None)
    args = parsed(plan_args(places, "--db", missing), {})
    with pytest.raises(UsageError, match="no such records store"):
        _history(args, plant)


def test_bad_input_is_exit_2(capsys) -> None:
    assert main(["check", str(ROOT / "no-such-plant.yaml")]) == 2
    assert main(["plan", str(VESSEL), str(FINDINGS), "--out", "x", "--crew-hours", "-1"]) == 2
    assert main(["results-template", "p.json", "--json"]) == 2  # --json needs --out
    capsys.readouterr()
