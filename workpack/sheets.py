"""Spreadsheets in and out: the shell around ``assetlist`` and ``exports``.

Reads workbooks (.xlsx, through openpyxl) and CSV files into ``grid.Sheet``s,
writes ``grid.Table``s as a workbook or CSV bytes, and turns an asset list into
inventory YAML that the project's own loader has read back before anyone
writes it. Workbooks are written the same byte for byte for the same tables:
fixed document dates and fixed zip entry times.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import zipfile
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from workpack.assetimport import Place, dedupe, inventory_from_sheets
from workpack.assetlist import plant_document
from workpack.checks import run_checks
from workpack.errors import InputError, Problem
from workpack.grid import CellError, CellValue, Formula, Sheet, Table
from workpack.loading import load_plant_text, read_text, validate
from workpack.model.assetmap import AssetMap
from workpack.model.plant import Plant
from workpack.yamlsource import Marks, format_path, parse_yaml

WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")
# Written into a workbook as its creation and change date, and as every zip entry's
# time: the file then depends on its tables only. 1980 is the zip format's first year.
FIXED_STAMP = dt.datetime(1980, 1, 1)

# --- reading ------------------------------------------------------------------------


def read_sheets(paths: Sequence[Path]) -> list[Sheet]:
    """Every sheet of the inputs: a workbook's sheets, a CSV file, a folder of CSV files."""
    sheets: list[Sheet] = []
    for path in paths:
        if path.is_dir():
            found = sorted(path.glob("*.csv"))
            if not found:
                raise InputError([Problem(str(path), 0, 0, "", "no .csv files in this "
                                                               "folder")])
            sheets.extend(_read_csv(p) for p in found)
        elif path.suffix.lower() in WORKBOOK_SUFFIXES:
            sheets.extend(_read_workbook(path))
        elif path.suffix.lower() == ".csv":
            sheets.append(_read_csv(path))
        else:
            raise InputError([Problem(str(path), 0, 0, "", "expected a workbook (.xlsx), a "
                                                           "CSV file or a folder of them")])
    seen: dict[str, Sheet] = {}
    for sheet in sheets:
        other = seen.setdefault(sheet.name.casefold(), sheet)
        if other is not sheet:
            raise InputError([Problem(sheet.file, 0, 0, "", f"a second sheet named "
                                      f"{sheet.name!r} (the first is in {other.file})")])
    return sheets


def _read_csv(path: Path) -> Sheet:
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise InputError([Problem(str(path), 0, 0, "", "no such file")]) from None
    except OSError as error:
        raise InputError([Problem(str(path), 0, 0, "", error.strerror or str(error))]) \
            from None
    try:
        text = raw.decode("utf-8-sig")  # spreadsheet programs often write a BOM first
    except UnicodeDecodeError as error:
        raise InputError([Problem(str(path), 0, 0, "", f"not UTF-8 text (byte {error.start}); "
                                  "save the CSV as UTF-8")]) from None
    try:
        rows = [tuple(cell if cell.strip() else None for cell in row)
                for row in csv.reader(io.StringIO(text, newline=""))]
    except csv.Error as error:
        raise InputError([Problem(str(path), 0, 0, "", f"not a readable CSV file: {error}")]) \
            from None
    return Sheet(str(path), path.stem, tuple(rows), in_workbook=False)


def _read_workbook(path: Path) -> list[Sheet]:
    from openpyxl import load_workbook

    if not path.is_file():
        read_text(path)  # raises the loader's own "no such file" / "is a folder"
    try:
        # read-only: streams the sheets, several times faster on a long asset list
        workbook = load_workbook(path, read_only=True, data_only=False)
    except Exception as error:  # openpyxl raises zip, XML and key errors for a bad file
        raise InputError([Problem(str(path), 0, 0, "", f"cannot read the workbook "
                                  f"({type(error).__name__}: {error})")]) from None
    sheets = []
    try:
        for worksheet in workbook.worksheets:
            if worksheet.max_row is None or worksheet.max_column is None:
                worksheet.reset_dimensions()  # a writer that left out the sheet's size
            rows = [tuple(_cell_value(cell) for cell in row)
                    for row in worksheet.iter_rows(min_row=1, min_col=1,
                                                   max_row=worksheet.max_row,
                                                   max_col=worksheet.max_column)]
            while rows and all(value is None for value in rows[-1]):
                rows.pop()
            sheets.append(Sheet(str(path), worksheet.title, tuple(rows)))
    except Exception as error:  # a damaged part inside the zip shows up while reading
        raise InputError([Problem(str(path), 0, 0, "", f"cannot read the workbook "
                                  f"({type(error).__name__}: {error})")]) from None
    finally:
        workbook.close()
    return sheets


def _cell_value(cell: Any) -> CellValue:
    value = getattr(cell, "value", None)
    if value is None:
        return None
    if cell.data_type == "f":
        return Formula(str(getattr(value, "text", None) or value))
    if cell.data_type == "e":
        return CellError(str(value))
    if isinstance(value, dt.time | dt.timedelta):
        return str(value)
    if isinstance(value, str | int | float | bool | dt.date):
        return value
    return str(value)


# --- writing --------------------------------------------------------------------------


def _write_value(value: CellValue) -> Any:
    if isinstance(value, Formula | CellError):  # never produced for output; kept as text
        return str(value)
    return value


def xlsx_bytes(tables: Sequence[Table], stamp: dt.datetime = FIXED_STAMP) -> bytes:
    """The tables as one workbook, a sheet each; the same tables give the same bytes."""
    from openpyxl import Workbook
    from openpyxl.styles import Font
    from openpyxl.utils import get_column_letter
    from openpyxl.writer.excel import ExcelWriter

    workbook = Workbook()
    workbook.remove(workbook.active)
    bold = Font(bold=True)
    for table in tables:
        sheet = workbook.create_sheet(title=table.name[:31])
        sheet.append(list(table.columns))
        for cell in sheet[1]:
            cell.font = bold
        for row in table.rows:
            sheet.append([_write_value(v) for v in row])
        for column, header in enumerate(table.columns, start=1):
            widest = max([len(header)] + [len(_shown(row[column - 1])) for row in table.rows])
            sheet.column_dimensions[get_column_letter(column)].width = min(widest + 2, 60)
            for row_number in range(2, len(table.rows) + 2):
                cell = sheet.cell(row=row_number, column=column)
                if isinstance(cell.value, dt.date):
                    cell.number_format = "yyyy-mm-dd"
                elif isinstance(cell.value, str) and cell.value.startswith("="):
                    cell.data_type = "s"  # text that looks like a formula stays text
        sheet.freeze_panes = "A2"
    workbook.properties.creator = "workpack"
    workbook.properties.created = stamp
    workbook.properties.modified = stamp
    buffer = io.BytesIO()
    # openpyxl's own save stamps the current time as "modified"; its writer does not.
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        ExcelWriter(workbook, archive).save()
    return _fixed_zip_times(buffer.getvalue(), stamp)


def _shown(value: CellValue) -> str:
    return "" if value is None else str(value)


def _fixed_zip_times(data: bytes, stamp: dt.datetime) -> bytes:
    """The same zip with every entry's time set to ``stamp`` (zip keeps local times)."""
    when = (stamp.year, stamp.month, stamp.day, stamp.hour, stamp.minute, stamp.second)
    out = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(data)) as source, \
            zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as target:
        for entry in source.infolist():
            fixed = zipfile.ZipInfo(entry.filename, date_time=when)
            fixed.compress_type = zipfile.ZIP_DEFLATED
            fixed.external_attr = 0o644 << 16
            target.writestr(fixed, source.read(entry.filename))
    return out.getvalue()


def csv_bytes(table: Table) -> bytes:
    """One table as CSV: UTF-8 with a byte-order mark (spreadsheet programs then read
    Ω and ° right), header first, dates as YYYY-MM-DD."""
    out = io.StringIO(newline="")
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(table.columns)
    for row in table.rows:
        writer.writerow([_csv_text(v) for v in row])
    return ("\ufeff" + out.getvalue()).encode("utf-8")


def _csv_text(value: CellValue) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float) and value.is_integer() and abs(value) < 1e15:
        return str(int(value))
    if isinstance(value, dt.date):
        return value.isoformat()
    return str(value)


def tables_to_files(tables: Sequence[Table], out: Path,
                    stamp: dt.datetime = FIXED_STAMP) -> dict[str, bytes]:
    """File name → bytes for ``out``: one workbook, one CSV file, or CSV files in a folder."""
    suffix = out.suffix.lower()
    if suffix in WORKBOOK_SUFFIXES:
        return {out.name: xlsx_bytes(tables, stamp)}
    if suffix == ".csv":
        if len(tables) != 1:
            names = ", ".join(t.name for t in tables)
            raise InputError([Problem(str(out), 0, 0, "", f"a CSV file holds one table, and "
                                      f"this export has {len(tables)} ({names}); name a "
                                      "folder (one CSV each) or a .xlsx workbook")])
        return {out.name: csv_bytes(tables[0])}
    if suffix:
        raise InputError([Problem(str(out), 0, 0, "", "expected a .xlsx workbook, a .csv "
                                                      "file or a folder")])
    return {f"{table.name}.csv": csv_bytes(table) for table in tables}


# --- asset list → inventory ---------------------------------------------------------------


@dataclass
class SheetMarks(Marks):
    """Places of inventory values read from sheets: a cell, or a line of the map."""

    places: dict[tuple[str | int, ...], Place] | None = None

    def place_of(self, path: tuple[str | int, ...]) -> tuple[Place | None, tuple[str | int, ...]]:
        places = self.places or {}
        known = path
        while known not in places and known:
            known = known[:-1]
        return places.get(known), path[len(known):]

    def locate(self, path: tuple[str | int, ...], at_key: bool = False) -> tuple[int, int]:
        place, _ = self.place_of(path)
        return (place.line, place.column) if place else (0, 0)

    def problem(self, path: tuple[str | int, ...], message: str,
                at_key: bool = False) -> Problem:
        place, rest = self.place_of(path)
        if place is None:
            return Problem(self.file, 0, 0, format_path(path), message)
        return place.problem(message, format_path(rest))

    def mention(self, path: tuple[str | int, ...]) -> str:
        place, _ = self.place_of(path)
        return place.short if place else format_path(path)


def read_asset_map(path: Path) -> tuple[AssetMap, Marks]:
    data, marks = parse_yaml(read_text(path), str(path))
    return validate(AssetMap, data, marks, "asset map"), marks


def import_assets(inputs: Sequence[Path], map_path: Path, out_name: str,
                  stage: Callable[[str], None] = lambda name: None) -> tuple[Plant, str]:
    """The inventory an asset list describes, and its YAML text, read back by the loader.

    InputError naming the sheet, row and column (or the map line) of every problem.
    ``stage`` hears of each of the three stages as it starts (for a progress bar).
    """
    stage("reading")
    asset_map, map_marks = read_asset_map(map_path)
    sheets = read_sheets(inputs)
    stage("mapping")
    input_name = ", ".join(str(p) for p in inputs)
    data, places = inventory_from_sheets(
        sheets, asset_map, lambda path, message: map_marks.problem(path, message), input_name)
    marks = SheetMarks(input_name, places=places)
    stage("checking")
    try:
        plant = validate(Plant, data, marks, "plant inventory")
    except InputError as error:
        raise InputError(dedupe(list(error.problems))) from None
    mismatches, _ = run_checks(plant)
    if mismatches:
        problems = []
        for mismatch in mismatches:
            message = mismatch.message
            if mismatch.related is not None:
                message += f" (first given at {marks.mention(mismatch.related)})"
            problems.append(marks.problem(mismatch.path, message))
        raise InputError(dedupe(problems))
    sources = ", ".join(Path(p).name for p in inputs)
    text = inventory_yaml(plant, f"Plant inventory written by workpack import-assets from "
                                 f"{sources} through {map_path.name}.")
    reread, _ = load_plant_text(text, out_name)
    if reread != plant:  # a bug in the writer, never in the user's sheets
        raise RuntimeError(f"{out_name}: the YAML written does not read back as the plant "
                           "the sheets describe")
    return plant, text


def inventory_yaml(plant: Plant, note: str) -> str:
    """The inventory as YAML a person reads: sections in the usual order, an element on
    one line unless it holds lists of entries (routine tests), units written out."""
    import yaml

    dumper = getattr(yaml, "CSafeDumper", yaml.SafeDumper)  # libyaml where present

    def dump(value: Any, flow: bool | None) -> str:
        return str(yaml.dump(value, Dumper=dumper, default_flow_style=flow, sort_keys=False,
                             allow_unicode=True, width=4096)).rstrip("\n")

    parts = [f"# {note}\n# `workpack schema plant` lists every field.\n"]
    for key, value in plant_document(plant).items():
        if not isinstance(value, list):
            parts.append(dump({key: value}, None) + "\n")
            continue
        lines = [f"{key}:"]
        for item in value:
            if not _nested(item):
                lines.append(f"  - {dump(item, True)}")
                continue
            block = dump(item, None).splitlines()
            lines.append(f"  - {block[0]}")
            # an entry of a nested list ("- {test: …}") one step in, under its key
            lines.extend(f"    {'  ' if line.startswith('- ') else ''}{line}"
                         for line in block[1:])
        parts.append("\n".join(lines) + "\n")
    return "\n".join(parts)


def _nested(item: Any) -> bool:
    """Whether an element holds a mapping or a list of them (then it takes a block)."""
    return isinstance(item, dict) and any(
        isinstance(v, dict) or (isinstance(v, list) and any(isinstance(i, dict) for i in v))
        for v in item.values())
