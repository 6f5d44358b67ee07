"""Every problem of an input in one run, each at its place; no cascade of false ones."""

import csv

import pytest

from workpack.errors import InputError
from workpack.loading import load_findings_text, load_plant_text

PLANT = """\
plant: {code: FX, name: Fixture works, kind: industrial_site, frequency: 50 Hz}
sources:
  - {id: UT1, kind: utility, voltage: 440 V}
buses:
  - {id: MSB, kind: switchboard, voltage: 440 V, earthing: insulated, from: CB-UT1,
     detector: {id: GD-MSB, kind: lamps}}
devices:
  - {id: CB-UT1, kind: circuit_breaker, from: UT1}
  - {id: CB-P1, kind: circuit_breaker, from: MSB}
  - {id: CB-P2, kind: circuit_breaker, from: MSB}
loads:
  - {id: P1, kind: motor, from: CB-P1, rated_voltage: 440 V}
  - {id: P2, kind: heater, from: CB-P2}
"""


def at(text: str, line: int, value: str) -> str:
    """'p.yaml:LINE:COL' of the first ``value`` on ``line`` (1-based), counted here."""
    return f"p.yaml:{line}:{text.splitlines()[line - 1].index(value) + 1}"


def problems(text: str, file: str = "p.yaml") -> list[str]:
    with pytest.raises(InputError) as caught:
        load_plant_text(text, file)
    return caught.value.format_message().splitlines()


def test_the_plant_itself_is_valid() -> None:
    plant, _ = load_plant_text(PLANT, "p.yaml")
    assert len(plant.loads) == 2


def test_schema_and_reference_problems_come_in_one_run() -> None:
    """Issue 9.10: a wrong unit no longer hides a misspelled supply two lines below."""
    text = (PLANT.replace("rated_voltage: 440 V}", "rated_voltage: 440 V, rated_kw: 7 kVA}")
            .replace("{id: P2, kind: heater, from: CB-P2}", "{id: P2, kind: heater, from: CB-P3}"))
    assert problems(text) == [
        f"{at(text, 12, '7 kVA')}: loads[0].rated_kw: 'kVA' is not a unit of real power: it "
        "is a unit of apparent power (expected something like kW)",
        f"{at(text, 13, 'CB-P3')}: loads[1].from: unknown element 'CB-P3' (did you mean "
        "'CB-P2' or 'CB-P1'?)",
    ]


def test_an_element_the_schema_refused_is_still_known_by_its_id() -> None:
    """CB-P2 has a bad rating; P2, fed from it, must not be told CB-P2 is unknown."""
    text = PLANT.replace("{id: CB-P2, kind: circuit_breaker, from: MSB}",
                         "{id: CB-P2, kind: circuit_breaker, from: MSB, rating: lots}")
    assert problems(text) == [
        f"{at(text, 10, 'lots')}: devices[2].rating: expected a number with a unit, such as "
        "'63 A', got 'lots'"]


def test_a_reference_inside_an_invalid_element_is_still_checked() -> None:
    text = PLANT.replace("{id: P2, kind: heater, from: CB-P2}",
                         "{id: P2, kind: heater, from: CB-P9, vitality: sometimes}")
    found = problems(text)
    assert len(found) == 2
    assert found[0].startswith(f"{at(text, 13, 'CB-P9')}: loads[1].from: unknown element "
                               "'CB-P9'")
    assert found[1].startswith(f"{at(text, 13, 'sometimes')}: loads[1].vitality: "
                               "'sometimes' is not allowed")


def test_duplicate_ids_are_found_beside_schema_problems() -> None:
    text = (PLANT.replace("{id: P2, kind: heater", "{id: P1, kind: heater")
            .replace("voltage: 440 V}\nbuses", "voltage: 440 A}\nbuses"))
    found = problems(text)
    assert found[0].startswith(f"{at(text, 3, '440 A')}: sources[0].voltage: 'A' is not a "
                               "unit of voltage")
    assert found[1] == ("p.yaml:13:10: loads[1].id: id 'P1' is already used; ids must be "
                        "unique (first given on line 12)")


def test_a_misspelled_section_does_not_turn_every_reference_into_a_problem() -> None:
    """With 'devices' misspelled, every 'from: CB-…' would look unknown: not reported."""
    text = PLANT.replace("devices:", "devicse:")
    assert problems(text) == [
        "p.yaml:7:1: devicse: unknown section (did you mean 'devices'?)"]


def test_the_whole_plant_checks_wait_for_a_valid_plant() -> None:
    """A fed-from-nowhere or loop check on half a plant would report false problems."""
    text = PLANT.replace("{id: CB-UT1, kind: circuit_breaker, from: UT1}",
                         "{id: CB-UT1, kind: circuit_breaker, from: UT1, rating: -5 A}")
    assert problems(text) == [
        f"{at(text, 8, '-5 A')}: devices[0].rating: must be greater than zero (got -5 A)"]


# --- findings ------------------------------------------------------------------------------


def finding_problems(text: str, topology, file: str = "f.yaml") -> list[str]:
    with pytest.raises(InputError) as caught:
        load_findings_text(text, file, topology)
    return caught.value.format_message().splitlines()


def test_findings_schema_and_place_problems_come_in_one_run(demo_vessel) -> None:
    text = ("findings:\n"
            "  - {at: 2026-12-01T07:00, by: x, where: GD-MSB, kind: phase_voltages,"
            " volts: {A: 400 A, B: 60, C: 470}}\n"
            "  - {at: 2026-12-01T07:00, by: x, where: GD-MBS, kind: lamps,"
            " lamps: {A: dim, B: dark, C: bright}}\n"
            "  - {at: 2026-12-01T07:00, by: x, where: CB-NOPE, kind: breaker_tripped, bogus: 1}\n")
    found = finding_problems(text, demo_vessel)
    assert [line.split(": ")[0] for line in found] == [
        "f.yaml:2:83", "f.yaml:3:42", "f.yaml:4:42", "f.yaml:4:74"]
    assert "unknown element or detector 'GD-MBS' (did you mean 'GD-MSB'" in found[1]
    assert "unknown element or detector 'CB-NOPE'" in found[2]
    assert found[3].endswith("findings[2].bogus: unknown field (check its spelling; "
                             "`workpack schema` lists the fields)")


# --- CSV rounds logs ------------------------------------------------------------------------

HEADER = "at,by,where,kind,A,B,C,note\n"
ROW = "2026-12-01T07:00,x,GD-MSB,phase_voltages,400,60,470,"


@pytest.mark.parametrize(("text", "expected"), [
    # Issue 10.9: a cell spanning lines is reported at its row.
    (HEADER + ROW + '"open\nmore"\n' + ROW + "x\n",
     "r.csv:2:1: this row runs on to line 3: a quoted cell is not closed on its line, or "
     "holds a line break; keep each finding on one line of the CSV"),
    # Issue 10.7: a cell over the csv module's field limit was a _csv.Error traceback.
    (HEADER + ROW + "a" * (csv.field_size_limit() + 1) + "\n",
     f"r.csv:2: CSV: a cell is longer than {csv.field_size_limit():,} characters; a "
     "finding's cell holds a short value or note"),
    (HEADER + ROW + "x\x00y\n",
     "r.csv:2:54: character U+0000 is not allowed (a control character)"),
    (HEADER + ROW + "x,extra\n",
     "r.csv:2:55: this row has 9 cells but the header names 8 columns (a comma inside a "
     "note? put the note in double quotes)"),
    ("at,by,at\n", "r.csv:1:7: column 'at' is named twice"),
    ("", "r.csv: empty CSV file; expected a header row"),
])
def test_csv_problems_are_located(text, expected, demo_vessel) -> None:
    assert finding_problems(text, demo_vessel, "r.csv") == [expected]


@pytest.mark.parametrize("text", [
    "\ufeff" + HEADER + ROW + "fine\n",  # a spreadsheet's byte-order mark
    (HEADER + ROW + "fine\n").replace("\n", "\r\n"),  # Windows line ends
    HEADER + ROW + '3" conduit\n',  # a quote inside an unquoted cell is text
])
def test_csv_as_spreadsheets_write_it_is_read(text, demo_vessel) -> None:
    findings = load_findings_text(text, "r.csv", demo_vessel)
    assert findings.findings[0].where == "GD-MSB"


def test_a_file_that_is_not_utf8_is_placed_at_the_byte(tmp_path, capsys) -> None:
    """Issue 10.9: a byte offset alone sends a person counting; say the line and column."""
    from workpack.cli import main

    plant = tmp_path / "latin1.yaml"
    plant.write_bytes(b"plant: {name: Caf\xe9, kind: other}\n")
    assert main(["check", str(plant)]) == 2
    assert capsys.readouterr().err == (f"{plant}:1:18: not UTF-8 text: byte 0xE9 (save the "
                                       "file as UTF-8)\n")


def test_rule_schema_and_lint_problems_come_in_one_run(tmp_path) -> None:
    """One rule has a crew of 99 (schema), the next names an unknown caution (lint), and
    another file does not parse: all three in one run, each at its line."""
    import shutil

    from conftest import ROOT

    from workpack.loading import load_ruleset

    folder = tmp_path / "rules"
    shutil.copytree(ROOT / "rules", folder)
    text = (folder / "switchboards.yaml").read_text(encoding="utf-8")
    lines = text.splitlines()
    crews = [i for i, line in enumerate(lines) if line.strip().startswith("crew:")]
    cautions = [i for i, line in enumerate(lines) if line.strip().startswith("cautions: [")]
    assert len(crews) >= 2 and len(cautions) >= 2
    first_rule_crew = crews[0]
    later_caution = next(i for i in cautions if i > crews[1])
    lines[first_rule_crew] = lines[first_rule_crew].split("crew:")[0] + "crew: 99"
    lines[later_caution] = (lines[later_caution].split("cautions:")[0]
                            + "cautions: [no-such-caution]")
    (folder / "switchboards.yaml").write_text("\n".join(lines) + "\n", encoding="utf-8")
    (folder / "ground.yaml").write_text("rules: [\n", encoding="utf-8")
    with pytest.raises(InputError) as caught:
        load_ruleset(folder)
    found = caught.value.format_message().splitlines()
    assert len(found) == 3, found
    assert found[0] == (f"{folder / 'ground.yaml'}:2:1: YAML: did not find expected node "
                        "content (the file ends inside brackets: a '[' or '{' is not closed)")
    assert found[1].startswith(f"{folder / 'switchboards.yaml'}:{first_rule_crew + 1}:")
    assert "crew: Input should be less than or equal to 20" in found[1]
    assert found[2].startswith(f"{folder / 'switchboards.yaml'}:{later_caution + 1}:")
    assert "unknown caution 'no-such-caution'" in found[2]


def test_an_empty_set_of_lamps_is_refused_at_its_line(capsys) -> None:
    """Found by the fuzz run: `lamps: {}` slipped past the check and raised in plan."""
    from conftest import ROOT

    plant_path = ROOT / "tests" / "fuzz" / "seeds" / "small-works.yaml"
    from workpack.loading import load_plant

    _, topology = load_plant(plant_path)
    text = (ROOT / "tests" / "fuzz" / "seeds" / "small-findings.yaml").read_text(
        encoding="utf-8").replace("lamps: {L1: dim, L2: bright, L3: bright}", "lamps: {}")
    line = next(n for n, t in enumerate(text.splitlines(), start=1) if "lamps: {}" in t)
    column = text.splitlines()[line - 1].index("{}") + 1
    with pytest.raises(InputError) as caught:
        load_findings_text(text, "f.yaml", topology)
    assert caught.value.format_message() == (
        f"f.yaml:{line}:{column}: findings[0].lamps: phases [] do not match the plant's phase "
        "labels ['L1', 'L2', 'L3']; give one value for each")
