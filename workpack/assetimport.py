"""An asset list in: sheets read through an ``AssetMap`` into inventory data. Pure.

``inventory_from_sheets`` matches each map entry to its sheet and columns,
reads every row into plain inventory data (the shape of each field comes from
the model, see ``assetlist.fields_of``), and remembers the cell each value came
from, so the loader's validation and checks can name ``assets.xlsx:Loads!D14``.
Problems with the map are placed on the map's own lines.
"""

from __future__ import annotations

import datetime as dt
import json
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cache
from typing import Any

from pydantic import BaseModel

from workpack.assetlist import (
    FieldShape,
    Path,
    element_lists,
    fields_of,
    quantity_kind,
    sections,
    unit_example,
)
from workpack.errors import InputError, Problem, did_you_mean
from workpack.grid import CellError, CellValue, Formula, Sheet
from workpack.model.assetmap import AssetMap, ColumnSpec, SheetMap
from workpack.units import UnitProblem, to_si


@dataclass(frozen=True)
class Place:
    """Where a value came from: a cell of a sheet, or a line of the map (a default).

    A cell's text ("assets.xlsx:Loads!D14") is made only when a message needs it: an
    asset list has a hundred thousand cells and few mistakes."""

    label: str = ""  # the field path shown with a message at this place
    sheet: Sheet | None = None
    row: int = 0
    column: int = 0  # of the cell; of the map line when there is no sheet
    map_file: str = ""
    line: int = 0  # of the map

    @property
    def file(self) -> str:
        return self.sheet.where(self.row, self.column) if self.sheet else self.map_file

    @property
    def short(self) -> str:
        """The place in a message about the same input: "Loads!D14", or "map.yaml:7"."""
        return (self.sheet.short(self.row, self.column) if self.sheet
                else f"{self.map_file}:{self.line}")

    def problem(self, message: str, rest: str = "") -> Problem:
        label = self.label + (rest if rest.startswith("[") or not self.label else f".{rest}") \
            if rest else self.label
        if self.sheet is None:
            return Problem(self.map_file, self.line, self.column, label, message)
        return Problem(self.file, 0, 0, label, message)


def _cell(sheet: Sheet, row: int, column: int, label: str = "") -> Place:
    return Place(label, sheet, row, column)


class _Refused(ValueError):
    """A cell that cannot be read at all (formula, error, bad JSON, bare number)."""


_BARE_NUMBER = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$")


def _number_text(value: int | float) -> str:
    if isinstance(value, float) and value.is_integer() and abs(value) < 1e15:
        return str(int(value))
    return repr(value) if isinstance(value, float) else str(value)


def _as_text(cell: CellValue) -> str:
    if isinstance(cell, bool):
        return "true" if cell else "false"
    if isinstance(cell, int | float):
        return _number_text(cell)
    if isinstance(cell, dt.datetime):
        return cell.date().isoformat() if cell.time() == dt.time() else cell.isoformat()
    if isinstance(cell, dt.date):
        return cell.isoformat()
    return str(cell).strip()


def _label_text(cell: CellValue) -> str:
    """A cell that names something (a kind, an element, a unit) as text."""
    if isinstance(cell, Formula):
        raise _Refused(f"the cell holds a formula ({cell.text}); the import reads typed "
                       "values only: copy the column and paste it as values")
    if isinstance(cell, CellError):
        raise _Refused(f"the cell shows the error {cell.code}; correct it in the sheet")
    return _as_text(cell)


def _is_empty(cell: CellValue) -> bool:
    return cell is None or (isinstance(cell, str) and not cell.strip())


def read_cell(cell: CellValue, shape: FieldShape, model: type[BaseModel], unit: str | None,
              separator: str) -> Any:
    """A cell's value as inventory data for ``shape``; _Refused for what cannot be read."""
    if isinstance(cell, Formula | CellError):
        _label_text(cell)
    if shape.shape == "list":
        return [part.strip() for part in _as_text(cell).split(separator) if part.strip()]
    if shape.shape in ("json", "models", "model"):
        try:
            return json.loads(_as_text(cell))
        except json.JSONDecodeError as error:
            raise _Refused(f"expected JSON text here ({error.msg} at character "
                           f"{error.pos + 1})") from None
    number = isinstance(cell, int | float) and not isinstance(cell, bool)
    bare = number or (isinstance(cell, str) and _BARE_NUMBER.match(cell) is not None)
    if bare and (unit is not None or quantity_kind(model, shape.name) is not None):
        text = _number_text(cell) if number else str(cell).strip()  # type: ignore[arg-type]
        if unit is None:
            kind = quantity_kind(model, shape.name)
            example = unit_example(kind) if kind else ""
            raise _Refused(f"a bare number ({text}): say its unit, in the cell ('{text} "
                           f"{example}') or for the whole column in the map (unit: …)")
        return f"{text} {unit}"
    if shape.text:
        return _as_text(cell)
    if shape.date and isinstance(cell, dt.datetime) and cell.time() == dt.time():
        return cell.date()
    return cell.strip() if isinstance(cell, str) else cell


@dataclass(frozen=True)
class _Target:
    """A field path of a model: ("detector", "alarm") of a bus."""

    path: tuple[FieldShape, ...]
    model: type[BaseModel]  # the model holding the last field


@cache
def _resolve(model: type[BaseModel], dotted: str) -> _Target | None:
    shapes: list[FieldShape] = []
    owner = model
    parts = dotted.split(".")
    for position, part in enumerate(parts):
        shape = next((f for f in fields_of(owner) if f.key == part or f.name == part), None)
        if shape is None:
            return None
        shapes.append(shape)
        if position < len(parts) - 1:
            if shape.shape != "model" or shape.model is None:
                return None
            owner = shape.model
    return _Target(tuple(shapes), owner)


def _paths(model: type[BaseModel], prefix: str = "") -> list[str]:
    found = []
    for shape in fields_of(model):
        if shape.shape == "model" and shape.model is not None:
            found.extend(_paths(shape.model, f"{prefix}{shape.key}."))
        found.append(prefix + shape.key)
    return found


def _normal(header: str) -> str:
    return " ".join(header.split()).casefold()


@dataclass
class _SheetPlan:
    """A map entry matched to its sheet: which column fills which field."""

    index: int
    spec: SheetMap
    sheet: Sheet
    where: Path  # the entry in the map: ("sheets", 2), or ("sheets_by_name",)
    targets: dict[str, list[str]]  # section or per-element list → kind-column values
    # that send rows there (empty when every row goes there)
    columns: dict[str, tuple[int, ColumnSpec]] = field(default_factory=dict)  # field → column
    unit_columns: dict[str, int] = field(default_factory=dict)  # field → its unit column
    kind_column: int | None = None
    owner_column: int | None = None


@dataclass
class _Reader:
    sheets: Sequence[Sheet]
    asset_map: AssetMap
    map_problem: Callable[[Path, str], Problem]
    problems: list[Problem] = field(default_factory=list)
    places: dict[Path, Place] = field(default_factory=dict)

    def map_place(self, path: Path) -> Place:
        found = self.map_problem(path, "")
        return Place(found.path, map_file=found.file, line=found.line, column=found.column)

    def refuse_map(self, path: Path, message: str) -> None:
        self.problems.append(self.map_problem(path, message))


@cache
def _target_model(target: str) -> type[BaseModel] | None:
    for section in sections():
        if section.key == target:
            return section.model
    for entry in element_lists():
        if target in (entry.key, f"{entry.section}.{entry.key}"):
            return entry.model
    return None


def _target_names() -> list[str]:
    return [s.key for s in sections()] + sorted(
        {e.key for e in element_lists()} | {f"{e.section}.{e.key}" for e in element_lists()})


@cache
def _is_list_target(target: str) -> bool:
    return target not in {s.key for s in sections()}


def inventory_from_sheets(sheets: Sequence[Sheet], asset_map: AssetMap,
                          map_problem: Callable[[Path, str], Problem],
                          input_name: str) -> tuple[dict[str, Any], dict[Path, Place]]:
    """Inventory data from the sheets through the map, and the place of every value.

    ``map_problem(path, message)`` locates a problem in the map file; ``input_name``
    names the input in messages ("assets.xlsx"). Raises InputError naming the cell (or
    the map line) of every problem found before validation.
    """
    reader = _Reader(sheets, asset_map, map_problem)
    plans = _plan_sheets(reader, input_name)
    if reader.problems:
        raise InputError(reader.problems)
    data: dict[str, Any] = {}
    lists: list[tuple[str, str, Place, dict[str, Any], dict[Path, Place]]] = []
    for plan in plans:
        _read_rows(reader, plan, data, lists)
    _plant_constants(reader, data)
    _attach_lists(reader, data, lists)
    if reader.problems:
        raise InputError(dedupe(reader.problems))
    ordered = {s.key: data[s.key] for s in sections() if s.key in data}
    return ordered, reader.places


def _entries(asset_map: AssetMap, sheets: Sequence[Sheet]) -> list[SheetMap]:
    """The map's sheets, then (``sheets_by_name``) every other sheet named like a section
    or a per-element list, in the inventory's order."""
    entries = list(asset_map.sheets)
    if asset_map.sheets_by_name:
        taken = {_normal(e.sheet) for e in entries if e.sheet is not None}
        present = {_normal(s.name): s.name for s in sheets}
        for target in _target_names():
            name = present.get(_normal(target))
            if name is not None and _normal(target) not in taken:
                entries.append(SheetMap(sheet=name, section=target, fields_from_headers=True))
    return entries


def _plan_sheets(reader: _Reader, input_name: str) -> list[_SheetPlan]:
    by_name = {_normal(s.name): s for s in reader.sheets}
    plans = []
    written = len(reader.asset_map.sheets)
    for index, spec in enumerate(_entries(reader.asset_map, reader.sheets)):
        where: Path = ("sheets", index) if index < written else ("sheets_by_name",)
        targets: dict[str, list[str]] = {}
        if spec.section is not None:
            targets[spec.section] = []
        else:
            assert spec.sections_by is not None
            for value, choice in spec.sections_by.values.items():
                targets.setdefault(choice.section, []).append(value)
        bad = [t for t in targets if _target_model(t) is None]
        for target in bad:
            path = (*where, "section") if spec.section else (
                *where, "sections_by", "values", targets[target][0], "section")
            reader.refuse_map(path, f"no section {target!r} in a plant inventory; expected "
                                    f"one of {', '.join(_target_names())}"
                                    f"{did_you_mean(target, _target_names())}")
        if bad:
            continue
        if spec.sheet is None:
            if len(reader.sheets) != 1:
                reader.refuse_map(where, f"name the sheet: {input_name} has "
                                         f"{len(reader.sheets)} sheets")
                continue
            sheet: Sheet | None = reader.sheets[0]
        else:
            sheet = by_name.get(_normal(spec.sheet))
        if sheet is None:
            if not spec.optional:
                names = [s.name for s in reader.sheets]
                reader.refuse_map((*where, "sheet"), f"no sheet {spec.sheet!r} in "
                                  f"{input_name} (it has: {', '.join(names)})"
                                  f"{did_you_mean(spec.sheet or '', names)}")
            continue
        plan = _SheetPlan(index, spec, sheet, where, targets)
        _match_columns(reader, plan)
        plans.append(plan)
    return plans


def _sheet_label(sheet: Sheet) -> str:
    return f"{sheet.file}:{sheet.name}" if sheet.in_workbook else sheet.file


def _match_columns(reader: _Reader, plan: _SheetPlan) -> None:
    spec, sheet, where = plan.spec, plan.sheet, plan.where
    headers: dict[str, int] = {}
    header_cells = sheet.rows[spec.header_row - 1] if spec.header_row <= len(sheet.rows) else ()
    if not any(not _is_empty(c) for c in header_cells) and all(
        all(_is_empty(c) for c in row) for row in sheet.rows[spec.header_row:]
    ):
        return  # an empty sheet: no rows, nothing to match
    for column, cell in enumerate(header_cells, start=1):
        if _is_empty(cell):
            continue
        name = _normal(_as_text(cell))
        if name in headers:
            reader.problems.append(_cell(sheet, spec.header_row, column).problem(
                f"the header {_as_text(cell)!r} is given twice (first in column "
                f"{sheet.short(spec.header_row, headers[name])}); headers must differ"))
            continue
        headers[name] = column
    shown = [_as_text(c) for c in header_cells if not _is_empty(c)]

    def find(header: str, path: Path) -> int | None:
        column = headers.get(_normal(header))
        if column is None:
            reader.refuse_map(path, f"no column {header!r} in {_sheet_label(sheet)}"
                                    f"{did_you_mean(header, shown)}")
        return column

    models = {t: _target_model(t) for t in plan.targets}
    used: set[int] = set()
    if spec.sections_by is not None:
        plan.kind_column = find(spec.sections_by.column, (*where, "sections_by", "column"))
        used.add(plan.kind_column or 0)
    if any(_is_list_target(t) for t in plan.targets):
        plan.owner_column = find(spec.owner_column, (*where, "owner_column"))
        used.add(plan.owner_column or 0)
    for dotted, given in spec.columns.items():
        column_spec = ColumnSpec(column=given) if isinstance(given, str) else given
        path: Path = (*where, "columns", dotted)
        if not any(m is not None and _resolve(m, dotted) for m in models.values()):
            known = sorted({p for m in models.values() if m for p in _paths(m)})
            reader.refuse_map(path, f"no field {dotted!r} in {', '.join(plan.targets)}"
                                    f"{did_you_mean(dotted, known)}")
            continue
        found = find(column_spec.column, path if isinstance(given, str) else (*path, "column"))
        if found is not None:
            plan.columns[dotted] = (found, column_spec)
            used.add(found)
        if column_spec.unit_column is not None:
            unit_column = find(column_spec.unit_column, (*path, "unit_column"))
            if unit_column is not None:
                plan.unit_columns[dotted] = unit_column
                used.add(unit_column)
        if column_spec.unit is not None or column_spec.unit_column is not None:
            _check_unit(reader, models, dotted, column_spec, path)
    ignored = {_normal(name) for name in spec.ignore_columns}
    if spec.fields_from_headers:
        field_paths = sorted({p for m in models.values() if m for p in _paths(m)})
        by_normal = {_normal(p): p for p in field_paths}
        for name, column in headers.items():
            if column in used or name in ignored:
                continue
            header_field = by_normal.get(name)
            target = next((t for m in models.values() if m and header_field
                           for t in [_resolve(m, header_field)] if t), None)
            if header_field is None or target is None or target.path[-1].shape == "models":
                header = _as_text(sheet.cell(spec.header_row, column))
                why = (f"{header!r} is a list of its own: give it a sheet with section: "
                       f"{header}" if target is not None else
                       f"unknown column {header!r}: no field of that name in "
                       f"{', '.join(plan.targets)}{did_you_mean(header, field_paths)}; map it "
                       f"(columns) or leave it out (ignore_columns)")
                reader.problems.append(_cell(sheet, spec.header_row, column).problem(why))
                continue
            if header_field not in plan.columns:
                plan.columns[header_field] = (column, ColumnSpec(column=header_field))
    _check_required(reader, plan)


def _check_unit(reader: _Reader, models: Mapping[str, type[BaseModel] | None], dotted: str,
                column_spec: ColumnSpec, path: Path) -> None:
    """A unit for a column goes with a quantity field, and the map's unit is of its kind."""
    for target, model in models.items():
        resolved = _resolve(model, dotted) if model is not None else None
        if resolved is None:
            continue
        kind = quantity_kind(resolved.model, resolved.path[-1].name)
        if kind is None:
            where = (*path, "unit") if column_spec.unit is not None else (*path, "unit_column")
            reader.refuse_map(where, f"{dotted} of {target} is not a quantity; a unit "
                                     "applies to quantities only")
            return
        if column_spec.unit is not None:
            try:
                to_si(f"1 {column_spec.unit}", kind)
            except UnitProblem as problem:
                reader.refuse_map((*path, "unit"), f"{problem} (for {dotted} of {target})")
                return


def _check_required(reader: _Reader, plan: _SheetPlan) -> None:
    """Every required field of the rows' models has a column or a default."""
    spec, sheet = plan.spec, plan.sheet
    choices = spec.sections_by.values if spec.sections_by else {}
    for target, values in plan.targets.items():
        model = _target_model(target)
        assert model is not None
        for shape in fields_of(model):
            if not shape.required or shape.key in plan.columns or shape.key in spec.defaults:
                continue
            if target == "plant" and shape.key in reader.asset_map.plant:
                continue
            lacking = [v for v in values if shape.key not in choices[v].defaults] \
                if values else [None]
            if not lacking:
                continue
            whose = (f" (rows of {', '.join(repr(v) for v in lacking)} go to {target})"
                     if values else "")
            reader.problems.append(_cell(sheet, spec.header_row, 1, shape.key).problem(
                f"no column holds this required field of {target}{whose}; add a column "
                f"named {shape.key!r}, or map a column or give a default in the asset map"))


def _row_is_empty(row: tuple[CellValue, ...]) -> bool:
    return all(_is_empty(c) for c in row)


def _read_rows(reader: _Reader, plan: _SheetPlan, data: dict[str, Any],
               lists: list[tuple[str, str, Place, dict[str, Any], dict[Path, Place]]]) -> None:
    spec, sheet = plan.spec, plan.sheet
    by_column = _by_column(plan)
    resolved_for: dict[str, list[tuple[int, list[tuple[str, ColumnSpec, _Target | None]]]]] = {}
    last = max((n for n, row in enumerate(sheet.rows, start=1)
                if n > spec.header_row and not _row_is_empty(row)), default=spec.header_row)
    for row in range(spec.header_row + 1, last + 1):
        cells = sheet.rows[row - 1]
        if _row_is_empty(cells):
            if spec.empty_rows == "refuse":
                reader.problems.append(_cell(sheet, row, 1).problem(
                    f"empty row inside the list (rows {spec.header_row + 1} to {last}); "
                    "delete it, or set empty_rows: skip for this sheet in the map"))
            continue
        target, choice_defaults, choice_path = _row_target(reader, plan, row)
        if target is None:
            continue
        model = _target_model(target)
        assert model is not None
        item: dict[str, Any] = {}
        places: dict[Path, Place] = {}
        first = _first_cell(cells)
        places[()] = _cell(sheet, row, first)
        if target not in resolved_for:
            resolved_for[target] = [
                (column, [(dotted, spec_, _resolve(model, dotted)) for dotted, spec_ in fields])
                for column, fields in by_column.items()]
        for column, resolved_fields in resolved_for[target]:
            cell = sheet.cell(row, column)
            if all(r is None for _, _, r in resolved_fields):
                if not _is_empty(cell):  # no field of this row's kind takes this column
                    dotted, column_spec, _ = resolved_fields[0]
                    names = " or ".join(repr(d) for d, _, _ in resolved_fields)
                    reader.problems.append(_cell(sheet, row, column, dotted).problem(
                        f"{target} have no field {names}: leave column "
                        f"{column_spec.column!r} empty in these rows"))
                continue
            for dotted, column_spec, resolved in resolved_fields:
                if resolved is None:
                    continue
                keys = tuple(s.key for s in resolved.path)
                place = _cell(sheet, row, column, dotted)
                places[keys] = place
                if keys == ("id",):
                    places[()] = _cell(sheet, row, column)
                if _is_empty(cell):
                    continue
                unit = column_spec.unit
                try:
                    if dotted in plan.unit_columns:
                        unit_cell = sheet.cell(row, plan.unit_columns[dotted])
                        unit = None if _is_empty(unit_cell) else _label_text(unit_cell)
                    value = read_cell(cell, resolved.path[-1], resolved.model, unit,
                                      column_spec.separator or spec.separator)
                except _Refused as refused:
                    reader.problems.append(place.problem(str(refused)))
                    continue
                _put(item, keys, value)
        for defaults, origin in ((choice_defaults, choice_path),
                                 (spec.defaults, (*plan.where, "defaults"))):
            for dotted, value in defaults.items():
                resolved = _resolve(model, dotted)
                if resolved is None:
                    reader.refuse_map((*origin, dotted), f"no field {dotted!r} in {target}")
                    continue
                keys = tuple(s.key for s in resolved.path)
                if _get(item, keys) is None:
                    _put(item, keys, value)
                    places[keys] = reader.map_place((*origin, dotted))
        if _is_list_target(target):
            assert plan.owner_column is not None
            owner = sheet.cell(row, plan.owner_column)
            owner_place = _cell(sheet, row, plan.owner_column, spec.owner_column)
            try:
                owner_id = "" if _is_empty(owner) else _label_text(owner)
            except _Refused as refused:
                reader.problems.append(owner_place.problem(str(refused)))
                continue
            if not owner_id:
                reader.problems.append(owner_place.problem(
                    "empty: name the element this row belongs to"))
                continue
            lists.append((target, owner_id, owner_place, item, places))
            continue
        if target == "plant":
            if "plant" in data:
                reader.problems.append(places[()].problem(
                    "a second plant row: the plant sheet holds one row, the plant itself"))
                continue
            data["plant"] = item
            reader.places.update({("plant", *k): p for k, p in places.items()})
            continue
        rows = data.setdefault(target, [])
        reader.places.update({(target, len(rows), *k): p for k, p in places.items()})
        rows.append(item)


def _by_column(plan: _SheetPlan) -> dict[int, list[tuple[str, ColumnSpec]]]:
    """The fields each column fills: one column may fill ``voltage`` of the boards and
    ``rated_voltage`` of the motors of one mixed sheet."""
    fields: dict[int, list[tuple[str, ColumnSpec]]] = {}
    for dotted, (column, column_spec) in plan.columns.items():
        fields.setdefault(column, []).append((dotted, column_spec))
    return dict(sorted(fields.items()))


def _first_cell(cells: tuple[CellValue, ...]) -> int:
    return next((n for n, c in enumerate(cells, start=1) if not _is_empty(c)), 1)


def _row_target(reader: _Reader, plan: _SheetPlan,
                row: int) -> tuple[str | None, Mapping[str, Any], Path]:
    """The row's section, the defaults its kind brings, and where the map gives them."""
    spec, sheet = plan.spec, plan.sheet
    if spec.sections_by is None:
        return spec.section, {}, plan.where
    assert plan.kind_column is not None
    cell = sheet.cell(row, plan.kind_column)
    place = _cell(sheet, row, plan.kind_column, spec.sections_by.column)
    values = spec.sections_by.values
    try:
        text = "" if _is_empty(cell) else _label_text(cell)
    except _Refused as refused:
        reader.problems.append(place.problem(str(refused)))
        return None, {}, ()
    key = next((v for v in values if v == text), None) or next(
        (v for v in values if _normal(v) == _normal(text)), None)
    if key is None:
        message = (f"unknown kind {text!r}; the map knows {', '.join(map(repr, values))}"
                   f"{did_you_mean(text, list(values))}" if text else
                   "empty: say which kind of asset this row is")
        reader.problems.append(place.problem(message))
        return None, {}, ()
    choice = values[key]
    return (choice.section, choice.defaults,
            (*plan.where, "sections_by", "values", key, "defaults"))


def _put(item: dict[str, Any], keys: tuple[str, ...], value: Any) -> None:
    for key in keys[:-1]:
        item = item.setdefault(key, {})
    item[keys[-1]] = value


def _get(item: Mapping[str, Any], keys: tuple[str, ...]) -> Any:
    node: Any = item
    for key in keys:
        if not isinstance(node, Mapping) or key not in node:
            return None
        node = node[key]
    return node


def _plant_constants(reader: _Reader, data: dict[str, Any]) -> None:
    constants = reader.asset_map.plant
    if not constants:
        return
    model = next(s.model for s in sections() if s.key == "plant")
    item = data.setdefault("plant", {})
    for dotted, value in constants.items():
        resolved = _resolve(model, dotted)
        if resolved is None:
            reader.refuse_map(("plant", dotted), f"no field {dotted!r} in plant"
                                                 f"{did_you_mean(dotted, _paths(model))}")
            continue
        keys = tuple(s.key for s in resolved.path)
        if _get(item, keys) is None:
            _put(item, keys, value)
            reader.places[("plant", *keys)] = reader.map_place(("plant", dotted))
    reader.places.setdefault(("plant",), reader.map_place(("plant",)))


def _attach_lists(reader: _Reader, data: dict[str, Any],
                  lists: list[tuple[str, str, Place, dict[str, Any], dict[Path, Place]]]) -> None:
    """Rows of per-element lists (routine, auxiliaries) into their elements, in row order."""
    where: dict[str, tuple[str, int]] = {}  # element id → its first place
    for section in sections():
        if not section.single:
            for index, element in enumerate(data.get(section.key, [])):
                where.setdefault(str(element.get("id")), (section.key, index))
    for target, owner, owner_place, item, places in lists:
        key = target.split(".")[-1]
        holders = [e.section for e in element_lists()
                   if e.key == key and target in (e.key, f"{e.section}.{e.key}")]
        found = where.get(owner)
        if found is None or found[0] not in holders:
            candidates = [i for i, (held_in, _) in where.items() if held_in in holders]
            reason = (f"{owner!r} is not one of {' or '.join(holders)}, which keep {key}"
                      if found is not None else
                      f"no element {owner!r} in the asset list{did_you_mean(owner, candidates)}")
            reader.problems.append(owner_place.problem(reason))
            continue
        section_key, index = found
        entries = data[section_key][index].setdefault(key, [])
        base: Path = (section_key, index, key, len(entries))
        reader.places.update({(*base, *k): p for k, p in places.items()})
        entries.append(item)


_ROW_NUMBER = re.compile(r"\d+$")


def dedupe(problems: list[Problem]) -> list[Problem]:
    """One line for a mistake repeated down a column: the first row, and how many more."""
    groups: dict[tuple[str, int, int, str, str], list[Problem]] = {}
    for problem in problems:
        key = (_ROW_NUMBER.sub("", problem.file), problem.line, problem.column, problem.path,
               problem.message)
        groups.setdefault(key, []).append(problem)
    kept = []
    for group in groups.values():
        group.sort(key=_row_of)
        first, more = group[0], len({p.file for p in group}) - 1
        if more:
            first = Problem(first.file, first.line, first.column, first.path,
                            f"{first.message} (and in {more} more "
                            f"{'row' if more == 1 else 'rows'} below)")
        kept.append(first)
    return kept


def _row_of(problem: Problem) -> tuple[str, int]:
    match = _ROW_NUMBER.search(problem.file)
    return (_ROW_NUMBER.sub("", problem.file), int(match.group()) if match else 0)
