"""Asset lists in: spreadsheets and CSV files through a map into a validated inventory.

The workbooks here are built with openpyxl the way a supervisor's would be (their own
headers, units in a header or a unit column, a formula left in by mistake); every name
and number is invented. Each bad sheet is refused with one line naming the sheet, row
and column (or the map line), exit status 2, and nothing written.
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path
from typing import Any

import pytest
from conftest import ROOT
from imports import forbidden_in
from openpyxl import Workbook
from pydantic import BaseModel

from workpack.assetlist import fields_of, format_quantity, plant_tables, quantity_kind
from workpack.cli import main
from workpack.errors import InputError
from workpack.loading import load_plant
from workpack.model.assetmap import AssetMap
from workpack.model.quantities import Volts
from workpack.sheets import import_assets, read_sheets, tables_to_files, xlsx_bytes

PLANTS = ROOT / "plants"
SHIPPED_MAP = PLANTS / "asset-map.yaml"


# --- a supervisor's own workbook ----------------------------------------------------------

SUPPLY = [["Tag", "Description", "Type", "Volts", "kVA"],
          ["G1", "main generator", "generator", 440, 250]]
BOARDS = [["Tag", "Description", "Fed from", "Volts", "Earthing", "Detector", "Detector type"],
          ["SWB", "main switchboard", "CB-G1", 440, "insulated", "GD-1", "lamps"]]
BREAKERS = [["Tag", "Fed from", "Amps", "Normally"],
            ["CB-G1", "G1", 400, "closed"],
            ["CB-P1", "SWB", 63, None],
            ["CB-P2", "SWB", 63, None]]
LOADS = [["Tag", "Description", "Fed from", "Power (kW)", "Voltage", "Unit"],
         ["P-1", "cooling pump 1", "CB-P1", 15, 440, "V"],
         ["P-2", "cooling pump 2", "CB-P2", 15, 0.44, "kV"]]
TESTS = [["Tag", "Test", "Interval", "Last done"],
         ["P-1", "insulation_resistance", "6 months", dt.datetime(2026, 5, 4)],
         ["SWB", "detector_test", "1 month", dt.datetime(2026, 11, 2)]]

MAP = """\
plant: {code: FX, name: Demo Tug Harrow (invented), kind: vessel, frequency: 60 Hz}
sheets:
  - sheet: Supply
    section: sources
    columns: {id: Tag, name: Description, kind: Type, voltage: {column: Volts, unit: V},
              rated_kva: {column: kVA, unit: kVA}}
  - sheet: Boards
    section: buses
    columns:
      id: Tag
      name: Description
      from: Fed from
      voltage: {column: Volts, unit: V}
      earthing: Earthing
      detector.id: Detector
      detector.kind: Detector type
    defaults: {kind: switchboard}
  - sheet: Breakers
    section: devices
    columns: {id: Tag, from: Fed from, rating: {column: Amps, unit: A}, normally: Normally}
    defaults: {kind: circuit_breaker}
  - sheet: Loads
    section: loads
    columns:
      id: Tag
      name: Description
      from: Fed from
      rated_kw: {column: Power (kW), unit: kW}
      rated_voltage: {column: Voltage, unit_column: Unit}
    defaults: {kind: motor}
  - sheet: Tests
    section: routine
    owner_column: Tag
    columns: {test: Test, every: Interval, last_done: Last done}
"""


def workbook(path: Path, sheets: dict[str, list[list[Any]]]) -> Path:
    book = Workbook()
    book.remove(book.active)
    for name, rows in sheets.items():
        sheet = book.create_sheet(name)
        for row in rows:
            sheet.append(row)
    book.save(path)
    return path


def supervisor_sheets(**changed: list[list[Any]]) -> dict[str, list[list[Any]]]:
    sheets = {"Supply": SUPPLY, "Boards": BOARDS, "Breakers": BREAKERS, "Loads": LOADS,
              "Tests": TESTS}
    return {name: [list(row) for row in changed.get(name, rows)]
            for name, rows in sheets.items()}


@pytest.fixture()
def asset_map(tmp_path: Path) -> Path:
    path = tmp_path / "asset-map.yaml"
    path.write_text(MAP, encoding="utf-8")
    return path


def refused(tmp_path: Path, map_path: Path, capsys: Any, **changed: list[list[Any]]) -> str:
    """Import the workbook with ``changed`` sheets through the CLI: the one error line."""
    assets = workbook(tmp_path / "assets.xlsx", supervisor_sheets(**changed))
    out = tmp_path / "plant.yaml"
    assert main(["import-assets", str(assets), "--map", str(map_path), "--out", str(out)]) == 2
    assert not out.exists()
    captured = capsys.readouterr()
    assert captured.out == ""
    return captured.err.replace(str(tmp_path) + "/", "")


def test_a_supervisors_workbook_becomes_a_valid_inventory(tmp_path, asset_map) -> None:
    """Own headers, a unit per column, a unit column, dates as dates, defaults filled."""
    assets = workbook(tmp_path / "assets.xlsx", supervisor_sheets())
    plant, text = import_assets([assets], asset_map, "plant.yaml")
    assert plant.plant.name == "Demo Tug Harrow (invented)" and plant.plant.frequency == 60.0
    assert plant.sources[0].rated_kva == 250_000.0  # 250 in a kVA column
    bus = plant.buses[0]
    assert (bus.kind.value, bus.detector and bus.detector.id) == ("switchboard", "GD-1")
    pump1, pump2 = plant.loads
    assert pump1.rated_kw == 15_000.0 and pump1.kind.value == "motor"
    assert pump2.rated_voltage == pytest.approx(440.0)  # 0.44 with "kV" in the unit column
    assert pump1.routine[0].last_done == dt.date(2026, 5, 4)
    assert bus.routine[0].test.value == "detector_test"
    assert [d.id for d in plant.devices] == ["CB-G1", "CB-P1", "CB-P2"]
    assert text.startswith("# Plant inventory written by workpack import-assets from "
                           "assets.xlsx through asset-map.yaml.\n")
    assert "rated_kw: 15 kW" in text and "voltage: 440 V" in text


def test_the_command_writes_the_inventory_once_it_validates(tmp_path, asset_map,
                                                            capsys) -> None:
    assets = workbook(tmp_path / "assets.xlsx", supervisor_sheets())
    out = tmp_path / "plant.yaml"
    assert main(["import-assets", str(assets), "--map", str(asset_map), "--out", str(out)]) == 0
    assert capsys.readouterr().out == ("Demo Tug Harrow (invented): 1 sources, 1 buses, "
                                       f"3 devices, 2 loads\ninventory written to {out}\n")
    first = out.read_bytes()
    assert main(["import-assets", str(assets), "--map", str(asset_map), "--out", str(out)]) == 0
    assert out.read_bytes() == first  # same input, same bytes
    assert load_plant(out)[0] == import_assets([assets], asset_map, "x.yaml")[0]


# --- bad sheets: one located line each --------------------------------------------------------


def test_a_map_column_missing_from_the_sheet_names_the_map_line(tmp_path, capsys) -> None:
    map_path = tmp_path / "asset-map.yaml"
    map_path.write_text(MAP.replace("{column: Power (kW), unit: kW}",
                                    "{column: Power kW, unit: kW}"), encoding="utf-8")
    assert refused(tmp_path, map_path, capsys) == (
        "asset-map.yaml:28:26: sheets[3].columns.rated_kw.column: no column 'Power kW' in "
        "assets.xlsx:Loads (did you mean 'Power (kW)'?)\n")


def test_a_map_field_the_inventory_does_not_have_names_the_map_line(tmp_path,
                                                                    capsys) -> None:
    map_path = tmp_path / "asset-map.yaml"
    map_path.write_text(MAP.replace("rated_kw: {column", "rated_kwh: {column"),
                        encoding="utf-8")
    assert refused(tmp_path, map_path, capsys) == (
        "asset-map.yaml:28:18: sheets[3].columns.rated_kwh: no field 'rated_kwh' in loads "
        "(did you mean 'rated_kw' or 'rated_kva'?)\n")


def test_a_cell_with_a_unit_of_the_wrong_kind(tmp_path, asset_map, capsys) -> None:
    loads = [list(row) for row in LOADS]
    loads[2][4] = "22 kW"  # a power where a voltage belongs
    assert refused(tmp_path, asset_map, capsys, Loads=loads) == (
        "assets.xlsx:Loads!E3: rated_voltage: 'kW' is not a unit of voltage: it is a unit "
        "of real power (expected something like V)\n")


def test_a_bare_number_with_no_unit_anywhere_is_refused(tmp_path, capsys) -> None:
    """22 in a power column could be W or kW: a guess here is a wrong nameplate."""
    map_path = tmp_path / "asset-map.yaml"
    map_path.write_text(MAP.replace("{column: Power (kW), unit: kW}", "Power (kW)"),
                        encoding="utf-8")
    assert refused(tmp_path, map_path, capsys) == (
        "assets.xlsx:Loads!D2: rated_kw: a bare number (15): say its unit, in the cell "
        "('15 W') or for the whole column in the map (unit: …) (and in 1 more row below)\n")


def test_a_map_unit_of_the_wrong_kind_is_one_line_at_the_map(tmp_path, capsys) -> None:
    """Not one line per row: the map is what to correct."""
    map_path = tmp_path / "asset-map.yaml"
    map_path.write_text(MAP.replace("{column: Power (kW), unit: kW}",
                                    "{column: Power (kW), unit: kV}"), encoding="utf-8")
    assert refused(tmp_path, map_path, capsys) == (
        "asset-map.yaml:28:44: sheets[3].columns.rated_kw.unit: 'kV' is not a unit of real "
        "power: it is a unit of voltage (expected something like kW) (for rated_kw of "
        "loads)\n")
    map_path.write_text(MAP.replace("name: Description\n      from: Fed from\n      rated_kw",
                                    "name: {column: Description, unit: V}\n      from: Fed "
                                    "from\n      rated_kw"), encoding="utf-8")
    assert refused(tmp_path, map_path, capsys) == (
        "asset-map.yaml:26:41: sheets[3].columns.name.unit: name of loads is not a quantity; "
        "a unit applies to quantities only\n")


def test_a_missing_required_column(tmp_path, asset_map, capsys) -> None:
    breakers = [[row[0], row[2], row[3]] for row in BREAKERS]  # no "Fed from"
    map_path = tmp_path / "asset-map.yaml"
    map_path.write_text(MAP.replace("{id: Tag, from: Fed from, rating:", "{id: Tag, rating:"),
                        encoding="utf-8")
    assert refused(tmp_path, map_path, capsys, Breakers=breakers) == (
        "assets.xlsx:Breakers!A1: from: no column holds this required field of devices; "
        "add a column named 'from', or map a column or give a default in the asset map\n")


def test_a_duplicate_id_names_both_cells(tmp_path, asset_map, capsys) -> None:
    loads = [list(row) for row in LOADS]
    loads[2][0] = "P-1"
    assert refused(tmp_path, asset_map, capsys, Loads=loads) == (
        "assets.xlsx:Loads!A3: id: id 'P-1' is already used; ids must be unique "
        "(first given at Loads!A2)\n")


def test_an_empty_row_in_the_middle_is_refused_unless_the_map_skips_it(tmp_path, asset_map,
                                                                        capsys) -> None:
    breakers = [*BREAKERS[:2], [None, None, None, None], *BREAKERS[2:]]
    assert refused(tmp_path, asset_map, capsys, Breakers=breakers) == (
        "assets.xlsx:Breakers!A3: empty row inside the list (rows 2 to 5); delete it, or "
        "set empty_rows: skip for this sheet in the map\n")
    skipping = tmp_path / "skip.yaml"
    skipping.write_text(MAP.replace("defaults: {kind: circuit_breaker}",
                                    "defaults: {kind: circuit_breaker}\n    empty_rows: skip"),
                        encoding="utf-8")
    assets = workbook(tmp_path / "assets.xlsx", supervisor_sheets(Breakers=breakers))
    plant, _ = import_assets([assets], skipping, "plant.yaml")
    assert [d.id for d in plant.devices] == ["CB-G1", "CB-P1", "CB-P2"]


def test_a_formula_cell_is_refused(tmp_path, asset_map, capsys) -> None:
    loads = [list(row) for row in LOADS]
    loads[1][3] = "=D3*1"
    assert refused(tmp_path, asset_map, capsys, Loads=loads) == (
        "assets.xlsx:Loads!D2: rated_kw: the cell holds a formula (=D3*1); the import "
        "reads typed values only: copy the column and paste it as values\n")


def test_a_list_row_for_an_unknown_element(tmp_path, asset_map, capsys) -> None:
    tests = [list(row) for row in TESTS]
    tests[1][0] = "P1"
    assert refused(tmp_path, asset_map, capsys, Tests=tests) == (
        "assets.xlsx:Tests!A2: Tag: no element 'P1' in the asset list "
        "(did you mean 'P-1'?)\n")


def test_problems_in_several_cells_are_reported_together(tmp_path, asset_map, capsys) -> None:
    loads = [list(row) for row in LOADS]
    loads[1][5] = "A"  # amperes in the unit column of a voltage
    loads[2][3] = -4  # a negative power
    assert refused(tmp_path, asset_map, capsys, Loads=loads).splitlines() == [
        "assets.xlsx:Loads!D3: rated_kw: must be greater than zero (got -4000 W)",
        "assets.xlsx:Loads!E2: rated_voltage: 'A' is not a unit of voltage: it is a unit of "
        "current (expected something like V)",
    ]


def test_a_map_with_a_misspelled_key_is_located(tmp_path, capsys) -> None:
    map_path = tmp_path / "asset-map.yaml"
    map_path.write_text(MAP.replace("owner_column: Tag", "owner_colum: Tag"),
                        encoding="utf-8")
    assert refused(tmp_path, map_path, capsys) == (
        "asset-map.yaml:33:5: sheets[4].owner_colum: unknown field (check its spelling; "
        "`workpack schema` lists the fields)\n")


# --- one sheet of mixed assets, and CSV -----------------------------------------------------

MIXED_MAP = """\
plant: {code: FX, name: Demo Pump House (invented), kind: industrial_site, frequency: 50 Hz}
sheets:
  - sections_by:
      column: Type
      values:
        Supply: {section: sources, defaults: {kind: utility}}
        Board: {section: buses, defaults: {kind: distribution_panel, earthing: insulated}}
        Breaker: {section: devices, defaults: {kind: circuit_breaker}}
        Motor: {section: loads, defaults: {kind: motor}}
    columns:
      id: Tag
      from: Fed from
      voltage: Volts
      rated_voltage: Volts
      rated_kw: Power
      detector.id: Monitor
      detector.kind: Monitor kind
      detector.alarm: Alarm
    ignore_columns: [Remarks]
"""
MIXED = """\
Tag,Type,Fed from,Volts,Power,Monitor,Monitor kind,Alarm,Remarks
UT,Supply,,400 V,,,,,
CB-UT,Breaker,UT,,,,,,
PB,Board,CB-UT,400 V,,IMD-1,insulation_monitor,20 kΩ,
CB-M1,Breaker,PB,,,,,,
M1,Motor,CB-M1,400 V,7.5 kW,,,,spare in store
"""


def test_one_csv_with_a_kind_column_fills_every_section(tmp_path) -> None:
    (tmp_path / "assets.csv").write_text(MIXED, encoding="utf-8")
    (tmp_path / "map.yaml").write_text(MIXED_MAP, encoding="utf-8")
    plant, _ = import_assets([tmp_path / "assets.csv"], tmp_path / "map.yaml", "plant.yaml")
    assert [s.id for s in plant.sources] == ["UT"]
    assert [d.id for d in plant.devices] == ["CB-UT", "CB-M1"]
    board = plant.buses[0]
    assert board.detector is not None and board.detector.alarm == 20_000.0
    assert plant.loads[0].rated_kw == 7_500.0 and plant.loads[0].rated_voltage == 400.0


def test_csv_places_read_like_spreadsheet_cells(tmp_path, capsys) -> None:
    (tmp_path / "assets.csv").write_text(MIXED.replace("M1,Motor", "M1,Moter"),
                                         encoding="utf-8")
    (tmp_path / "map.yaml").write_text(MIXED_MAP, encoding="utf-8")
    out = tmp_path / "plant.yaml"
    assert main(["import-assets", str(tmp_path / "assets.csv"), "--map",
                 str(tmp_path / "map.yaml"), "--out", str(out)]) == 2
    assert capsys.readouterr().err == (
        f"{tmp_path}/assets.csv:B6: Type: unknown kind 'Moter'; the map knows 'Supply', "
        "'Board', 'Breaker', 'Motor' (did you mean 'Motor'?)\n")


def test_a_formula_in_the_kind_column_is_refused_too(tmp_path, capsys) -> None:
    rows = [line.split(",") for line in MIXED.splitlines()]
    rows[2][1] = '="Breaker"'
    book = workbook(tmp_path / "assets.xlsx", {"Assets": [[c or None for c in r] for r in rows]})
    (tmp_path / "map.yaml").write_text(MIXED_MAP, encoding="utf-8")
    with pytest.raises(InputError) as error:
        import_assets([book], tmp_path / "map.yaml", "plant.yaml")
    assert error.value.format_message() == (
        f"{book}:Assets!B3: Type: the cell holds a formula (=\"Breaker\"); the import reads "
        "typed values only: copy the column and paste it as values")


def test_a_column_that_only_other_kinds_have_must_stay_empty(tmp_path, capsys) -> None:
    mixed = MIXED.replace("CB-M1,Breaker,PB,,,", "CB-M1,Breaker,PB,,5 kW,")
    (tmp_path / "assets.csv").write_text(mixed, encoding="utf-8")
    (tmp_path / "map.yaml").write_text(MIXED_MAP, encoding="utf-8")
    with pytest.raises(InputError) as error:
        import_assets([tmp_path / "assets.csv"], tmp_path / "map.yaml", "plant.yaml")
    assert error.value.format_message() == (
        f"{tmp_path}/assets.csv:E5: rated_kw: devices have no field 'rated_kw': leave column "
        "'Power' empty in these rows")


# --- round trip: the demo plants out as asset lists and back -------------------------------


@pytest.mark.parametrize("name", ["demo-vessel", "demo-site"])
@pytest.mark.parametrize("form", ["xlsx", "csv"])
def test_the_demo_plants_come_back_the_same_through_an_asset_list(tmp_path, name: str,
                                                                  form: str) -> None:
    """export --what assets, then import-assets with the shipped map: the same Plant."""
    plant_file = PLANTS / f"{name}.yaml"
    out = tmp_path / ("assets.xlsx" if form == "xlsx" else "assets")
    assert main(["export", "--what", "assets", "--plant", str(plant_file), "--out",
                 str(out)]) == 0
    inventory = tmp_path / "plant.yaml"
    assert main(["import-assets", str(out), "--out", str(inventory)]) == 0
    original, _ = load_plant(plant_file)
    back, _ = load_plant(inventory)
    assert back == original


def test_every_field_of_the_demo_vessel_is_a_column_or_a_list_sheet() -> None:
    """Nothing of the model is silently left out of the asset list."""
    plant, _ = load_plant(PLANTS / "demo-vessel.yaml")
    tables = {t.name: t for t in plant_tables(plant)}
    assert list(tables) == ["plant", "cable_types", "sources", "buses", "devices",
                            "transformers", "cables", "loads", "routine", "auxiliaries"]
    assert tables["buses"].columns[:4] == ("id", "name", "kind", "from")
    assert {"detector.id", "detector.alarm", "detector.meter_tolerance_percent"} <= set(
        tables["buses"].columns)
    assert tables["auxiliaries"].columns == ("element", "kind", "from", "voltage")
    assert ("WL-1", "anti_condensation_heater", "CB-DK-H-WL1", "115 V") in \
        tables["auxiliaries"].rows


def test_the_written_inventory_reads_like_the_hand_written_one() -> None:
    assets = PLANTS / "demo-vessel.yaml"
    plant, _ = load_plant(assets)
    tables = plant_tables(plant)
    assert list(tables_to_files(tables, Path("assets.xlsx"))) == ["assets.xlsx"]
    sources = next(t for t in tables if t.name == "sources")
    ssg1 = dict(zip(sources.columns, sources.rows[0], strict=True))
    assert (ssg1["voltage"], ssg1["rated_kva"]) == ("450 V", "625 kVA")


def test_the_yaml_keeps_sections_in_order_ids_and_units(tmp_path) -> None:
    assets = tmp_path / "assets.xlsx"
    plant, _ = load_plant(PLANTS / "demo-vessel.yaml")
    assets.write_bytes(xlsx_bytes(plant_tables(plant)))
    _, text = import_assets([assets], SHIPPED_MAP, "plant.yaml")
    heads = [line for line in text.splitlines() if line and not line[0].isspace()
             and not line.startswith("#")]
    assert heads == ["plant:", "cable_types:", "sources:", "buses:", "devices:",
                     "transformers:", "cables:", "loads:"]
    assert ("  - {id: C-ESB, from: CB-ESB, length: 85 m, size: 3x95 mm2, cable_type: ship-3c, "
            "installed: 2009}") in text
    assert "capacitance_to_earth: 150 pF/m" in text
    assert "equipment_capacitance: 100 nF" in text


# --- the generic parts --------------------------------------------------------------------


class _Inner(BaseModel):
    voltage: Volts
    note: str | None = None


class _Future(BaseModel):
    """Shapes a new inventory field might take."""

    id: str
    supply: Volts
    tolerance_percent: float = 2.5
    inner: _Inner | None = None
    parts: tuple[_Inner, ...] = ()
    settings: dict[str, int] = {}


def test_field_shapes_are_read_from_the_model() -> None:
    shapes = {s.key: s.shape for s in fields_of(_Future)}
    assert shapes == {"id": "value", "supply": "value", "tolerance_percent": "value",
                      "inner": "model", "parts": "models", "settings": "json"}
    assert quantity_kind(_Future, "supply") == "voltage"
    assert quantity_kind(_Future, "tolerance_percent") is None
    assert quantity_kind(_Future, "id") is None


@pytest.mark.parametrize(("text", "kind", "key"), [
    ("625 kVA", "apparent_power", "rated_kva"),
    ("0.6 kW", "real_power", "rated_kw"),
    ("150 pF/m", "capacitance_per_length", ""),
    ("100 nF", "capacitance", ""),
    ("2.2 uF", "capacitance", ""),
    ("34.5 kΩ", "resistance", ""),
    ("450 V", "voltage", ""),
    ("11 kV", "voltage", ""),
    ("3 mm2", "area", ""),
])
def test_quantities_are_written_as_people_write_them(text, kind, key) -> None:
    """What the demo plants write by hand comes out the same from its SI value."""
    from workpack.units import to_si

    assert format_quantity(to_si(text, kind), kind, key) == text


def test_a_quantity_that_no_unit_writes_exactly_falls_back_to_si() -> None:
    value = 1.0 / 3.0 * 1e-9  # a third of a nanofarad has no short exact decimal form
    text = format_quantity(value, "capacitance")
    from workpack.units import to_si

    assert to_si(text, "capacitance") == value


def test_the_mapping_core_does_no_io() -> None:
    package = ROOT / "workpack"
    for name in ("assetlist.py", "assetimport.py", "exports.py", "grid.py",
                 "model/assetmap.py"):
        assert not forbidden_in(package / name, {"os", "pathlib", "io", "shutil", "sqlite3",
                                                 "yaml", "openpyxl", "csv", "zipfile",
                                                 "workpack.loading", "workpack.sheets"})


def test_the_shipped_map_is_valid_against_its_schema(capsys) -> None:
    jsonschema = pytest.importorskip("jsonschema")
    import yaml

    assert main(["schema", "asset-map"]) == 0
    schema = json.loads(capsys.readouterr().out)
    data = yaml.safe_load(SHIPPED_MAP.read_text(encoding="utf-8"))
    jsonschema.validate(data, schema)
    AssetMap.model_validate(data)
    bad = {"sheets": [{"section": "loads", "colums": {}}]}
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(bad, schema)


def test_text_that_looks_like_a_formula_is_written_as_text(tmp_path) -> None:
    """openpyxl takes a string starting with "=" for a formula; a name is not one."""
    from workpack.grid import Table

    path = tmp_path / "t.xlsx"
    path.write_bytes(xlsx_bytes([Table("t", ("name",), (("=2+2 spare",),))]))
    (sheet,) = read_sheets([path])
    assert sheet.rows == (("name",), ("=2+2 spare",))


def test_an_unreadable_workbook_is_one_line(tmp_path, capsys) -> None:
    fake = tmp_path / "assets.xlsx"
    fake.write_text("not a zip", encoding="utf-8")
    with pytest.raises(InputError) as error:
        read_sheets([fake])
    assert error.value.format_message().startswith(f"{fake}: cannot read the workbook")
