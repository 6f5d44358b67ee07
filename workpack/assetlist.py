"""The plant inventory as an asset list (rows and columns), both ways. Pure.

Out: ``plant_tables`` lays a ``Plant`` out as tables, one per section, one
column per field (a nested field as ``detector.alarm``), and per-element lists
(``routine``, ``auxiliaries``) as tables of their own whose ``element`` column
names the owner. Quantities are written with a unit ("450 V", "625 kVA").

In: ``inventory_from_sheets`` reads sheets through an ``AssetMap`` into plain
inventory data, and remembers the cell each value came from, so the loader's
validation and checks can name ``assets.xlsx:Loads!D14``.

Both walk the pydantic model's fields rather than a list of names: a field
added to ``model/plant.py`` flows through with no change here. A field of a
shape a table cannot hold plainly (a mapping, a union of models, a list inside
a list) travels as JSON text in one cell.
"""

from __future__ import annotations

import datetime as dt
import json
import re
import types
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from enum import Enum
from functools import cache
from typing import Annotated, Any, Literal, Union, get_args, get_origin

from pydantic import BaseModel, TypeAdapter, ValidationError
from pydantic_core import PydanticUndefined, to_jsonable_python

from workpack.errors import InputError, Problem, did_you_mean
from workpack.grid import CellError, CellValue, Formula, Sheet, Table
from workpack.model.assetmap import AssetMap, ColumnSpec, SheetMap
from workpack.model.plant import Plant
from workpack.units import DIMENSIONS, UnitProblem, to_si

Path = tuple[str | int, ...]
OWNER_COLUMN = "element"  # names the element a per-element list row belongs to

# --- the model's fields, by shape ---------------------------------------------------------

Shape = Literal["value", "list", "model", "models", "json"]


@dataclass(frozen=True)
class FieldShape:
    """One field of a model, as a table sees it."""

    name: str  # attribute name
    key: str  # as written in the inventory (the alias: "from")
    shape: Shape  # value: one cell; list: one cell, items separated; model: dotted
    # columns; models: a table of its own; json: JSON text in one cell
    model: type[BaseModel] | None  # the nested model of "model" and "models"
    text: bool  # a text field: a number typed in a cell becomes text ("101")
    date: bool  # a date field: a spreadsheet date-time at midnight becomes a date
    required: bool
    default: Any


_SCALARS = (str, int, float, bool, dt.date, dt.datetime)


def _strip(annotation: Any) -> Any:
    """The type without Annotated[...] and without ``| None``."""
    while True:
        origin = get_origin(annotation)
        if origin is Annotated:
            annotation = get_args(annotation)[0]
        elif origin in (Union, types.UnionType):
            args = [a for a in get_args(annotation) if a is not type(None)]
            if len(args) != 1:
                return annotation
            annotation = args[0]
        else:
            return annotation


def _is_scalar(annotation: Any) -> bool:
    annotation = _strip(annotation)
    if get_origin(annotation) is Literal:
        return True
    if get_origin(annotation) in (Union, types.UnionType):
        return all(_is_scalar(a) for a in get_args(annotation) if a is not type(None))
    return isinstance(annotation, type) and (issubclass(annotation, _SCALARS + (Enum,)))


def _is_text(annotation: Any) -> bool:
    annotation = _strip(annotation)
    if get_origin(annotation) is Literal:
        return all(isinstance(a, str) for a in get_args(annotation))
    return isinstance(annotation, type) and issubclass(annotation, str)


def _is_model(annotation: Any) -> bool:
    return isinstance(annotation, type) and issubclass(annotation, BaseModel)


def _shape(annotation: Any) -> tuple[Shape, type[BaseModel] | None]:
    annotation = _strip(annotation)
    origin = get_origin(annotation)
    if _is_model(annotation):
        return "model", annotation
    if origin in (tuple, list, set, frozenset):
        items = [_strip(a) for a in get_args(annotation) if a is not Ellipsis]
        if items and all(_is_scalar(a) for a in items):
            return "list", None
        if len(items) == 1 and _is_model(items[0]):
            return "models", items[0]
        return "json", None
    if _is_scalar(annotation):
        return "value", None
    return "json", None


@cache
def fields_of(model: type[BaseModel]) -> tuple[FieldShape, ...]:
    """The model's fields in the order a person reads them: id, name, kind, from first."""
    shapes = []
    for name, info in model.model_fields.items():
        shape, nested = _shape(info.annotation)
        default = info.get_default(call_default_factory=True) if not info.is_required() \
            else PydanticUndefined
        shapes.append(FieldShape(name, info.alias or name, shape, nested,
                                 shape in ("value", "list") and _is_text(
                                     _list_item(info.annotation) if shape == "list"
                                     else info.annotation),
                                 _strip(info.annotation) is dt.date, info.is_required(),
                                 default))
    first = ("id", "name", "kind", "from")
    return tuple(sorted(shapes, key=lambda s: (
        s.shape == "models", first.index(s.key) if s.key in first else len(first))))


def _list_item(annotation: Any) -> Any:
    items = [a for a in get_args(_strip(annotation)) if a is not Ellipsis]
    return items[0] if items else Any


def _has_id(model: type[BaseModel]) -> bool:
    return any(f.key == "id" and f.shape == "value" for f in fields_of(model))


@dataclass(frozen=True)
class Section:
    """A top-level part of the inventory: ``plant`` (one row) or a list of items."""

    key: str
    model: type[BaseModel]
    single: bool


@dataclass(frozen=True)
class ElementList:
    """A list kept per item of a section (``routine`` of every element), as its own table."""

    key: str  # the field: "routine"
    section: str  # the section whose items hold it
    model: type[BaseModel]  # one entry


@cache
def sections() -> tuple[Section, ...]:
    return tuple(Section(f.key, f.model, f.shape == "model")
                 for f in fields_of(Plant) if f.model is not None)


@cache
def element_lists() -> tuple[ElementList, ...]:
    found = []
    for section in sections():
        if section.single or not _has_id(section.model):
            continue
        for shape in fields_of(section.model):
            if shape.shape == "models" and shape.model is not None:
                found.append(ElementList(shape.key, section.key, shape.model))
    return tuple(found)


def list_table_name(item: ElementList) -> str:
    """``routine`` when every section keeps the same kind of entry, else ``loads.routine``."""
    models = {other.model for other in element_lists() if other.key == item.key}
    return item.key if len(models) == 1 else f"{item.section}.{item.key}"


# --- quantities: which fields carry a unit, and how to write one ------------------------

_PROBES = (1.0, 1e-3, 1e-6, 1e-9, 1e-12, 1e3, 1e6)
_KINDS: dict[tuple[type[BaseModel], str], str | None] = {}  # settled by a valid value
_GUESSED: dict[tuple[type[BaseModel], str], str | None] = {}  # from the probes alone


@cache
def _adapter(model: type[BaseModel], name: str) -> TypeAdapter[Any]:
    info = model.model_fields[name]
    annotation: Any = info.annotation
    if info.metadata:
        annotation = Annotated[annotation, *info.metadata]  # type: ignore[valid-type]
    return TypeAdapter(annotation)


def _try_kinds(model: type[BaseModel], name: str, probes: tuple[float, ...]) -> str | None:
    adapter = _adapter(model, name)
    for kind, (_, pint_unit) in DIMENSIONS.items():
        for probe in probes:
            try:
                read = adapter.validate_python(f"{probe!r} {pint_unit}")
            except (ValidationError, ValueError, TypeError):
                continue
            if isinstance(read, float) and read == probe:
                return kind
    return None


def quantity_kind(model: type[BaseModel], name: str, value: float | None = None) -> str | None:
    """The kind of quantity (``units.DIMENSIONS``) a field holds, or None for a plain field.

    Asked of the field itself: a quantity field takes "1 V" (or "1 F"…) in its own kind
    and refuses every other; a plain number or text field takes none of them as the
    number. ``value`` (a valid value of the field) settles it; without one, a few
    magnitudes are tried (a field whose bounds refuse them all reads as plain, and
    its numbers are then taken in SI, as a bare number in the YAML is).
    """
    key = (model, name)
    if key in _KINDS:
        return _KINDS[key]
    if value is None:
        if key not in _GUESSED:
            _GUESSED[key] = _try_kinds(model, name, _PROBES)
        return _GUESSED[key]
    _KINDS[key] = _try_kinds(model, name, (value,))
    return _KINDS[key]


# Units a quantity is written in, smallest first: (unit, scale to SI, used from |value|).
_DISPLAY: dict[str, tuple[tuple[str, float, float], ...]] = {
    "voltage": (("V", 1.0, 0.0), ("kV", 1e3, 1e4)),
    "current": (("A", 1.0, 0.0), ("kA", 1e3, 1e4)),
    "resistance": (("Ω", 1.0, 0.0), ("kΩ", 1e3, 1e3), ("MΩ", 1e6, 1e6), ("GΩ", 1e9, 1e9)),
    "capacitance": (("pF", 1e-12, 0.0), ("nF", 1e-9, 1e-9), ("uF", 1e-6, 1e-6),
                    ("mF", 1e-3, 1e-3)),
    "capacitance_per_length": (("pF/m", 1e-12, 0.0), ("nF/m", 1e-9, 1e-9)),
    "length": (("m", 1.0, 0.0),),
    "area": (("mm2", 1e-6, 0.0),),
    "frequency": (("Hz", 1.0, 0.0),),
    "power": (("W", 1.0, 0.0), ("kW", 1e3, 1e3), ("MW", 1e6, 1e6)),
    "time": (("s", 1.0, 0.0),),
    "temperature": (("°C", 1.0, 0.0),),
}
# A power field named for its unit is written in it: rated_kva in kVA, rated_kw in kW.
_POWER_SUFFIX = {"_kva": ("kVA", 1e3), "_mva": ("MVA", 1e6), "_va": ("VA", 1.0),
                 "_kw": ("kW", 1e3), "_mw": ("MW", 1e6), "_w": ("W", 1.0)}


def format_quantity(value: float, kind: str, key: str = "") -> str:
    """An SI value as a person writes it ("625 kVA", "150 pF/m"); reads back exactly."""
    unit, scale = _display_unit(value, kind, key)
    mantissa = value / scale
    candidates = [f"{number} {unit}" for number in (f"{mantissa:.12g}", repr(mantissa))
                  if "e" not in number and "n" not in number]
    candidates.append(f"{value!r} {DIMENSIONS[kind][1]}")  # SI: always exact
    for text in candidates:
        try:
            if to_si(text, kind) == value:
                return text
        except UnitProblem:
            continue
    return repr(value)  # a bare number is read in SI


def _display_unit(value: float, kind: str, key: str) -> tuple[str, float]:
    if kind == "power":
        for suffix, chosen in _POWER_SUFFIX.items():
            if key.endswith(suffix):
                return chosen
    choices = _DISPLAY.get(kind, ((DIMENSIONS[kind][1], 1.0, 0.0),))
    unit, scale = choices[0][0], choices[0][1]
    for candidate, candidate_scale, start in choices:
        if abs(value) >= start:
            unit, scale = candidate, candidate_scale
    return unit, scale


# --- out: a plant as tables, and as an inventory document -------------------------------


def _plain(model: type[BaseModel], shape: FieldShape, value: Any) -> Any:
    """A scalar as the inventory writes it: enums by value, quantities with their unit."""
    if isinstance(value, Enum):
        return value.value
    if isinstance(value, float) and shape.shape == "value":
        kind = quantity_kind(model, shape.name, value)
        if kind is not None:
            return format_quantity(value, kind, shape.key)
    return value


def document(item: BaseModel) -> dict[str, Any]:
    """A model as inventory data: fields in reading order, defaults left out, units kept."""
    model = type(item)
    out: dict[str, Any] = {}
    for shape in fields_of(model):
        value = getattr(item, shape.name)
        if not shape.required and value == shape.default:
            continue
        if shape.shape == "value":
            out[shape.key] = _plain(model, shape, value)
        elif shape.shape == "list":
            items = [_plain(model, shape, v) for v in value]
            out[shape.key] = items[0] if len(items) == 1 and _takes_one(
                item, shape) else items
        elif shape.shape == "model":
            out[shape.key] = document(value)
        elif shape.shape == "models":
            out[shape.key] = [document(v) for v in value]
        else:
            out[shape.key] = to_jsonable_python(value, by_alias=True)
    return out


_TAKES_ONE: dict[tuple[type[BaseModel], str], bool] = {}


def _takes_one(item: BaseModel, shape: FieldShape) -> bool:
    """Whether a list field also takes one item alone (``from: C-1``): asked of the model
    once, with this item's own values."""
    key = (type(item), shape.name)
    if key not in _TAKES_ONE:
        data = item.model_dump(by_alias=True)
        data[shape.key] = data[shape.key][0]
        try:
            _TAKES_ONE[key] = type(item).model_validate(data) == item
        except (ValidationError, ValueError, TypeError):
            _TAKES_ONE[key] = False
    return _TAKES_ONE[key]


def plant_document(plant: Plant) -> dict[str, Any]:
    """The whole inventory as data for YAML: sections in the inventory's order."""
    return document(plant)


@dataclass(frozen=True)
class _Column:
    header: str  # "detector.alarm"
    path: tuple[FieldShape, ...]  # the fields walked to reach the value


def _columns(model: type[BaseModel], prefix: tuple[FieldShape, ...] = (),
             lists_apart: bool = False) -> list[_Column]:
    """Columns of a model's table; nested models dotted. ``lists_apart``: lists of models
    get tables of their own (items with an id), so they have no column here."""
    columns = []
    for shape in fields_of(model):
        path = (*prefix, shape)
        if shape.shape == "model" and shape.model is not None:
            columns.extend(_columns(shape.model, path))
        elif shape.shape == "models" and lists_apart and not prefix:
            continue
        else:
            columns.append(_Column(".".join(s.key for s in path), path))
    return columns


def _cell(item: BaseModel, column: _Column, separator: str = ", ") -> CellValue:
    owner: Any = item
    for shape in column.path[:-1]:
        owner = getattr(owner, shape.name)
        if owner is None:
            return None
    last = column.path[-1]
    value = getattr(owner, last.name)
    if value is None:
        return None
    if last.shape == "value":
        plain = _plain(type(owner), last, value)
        return plain if isinstance(plain, _SCALARS) else str(plain)
    if last.shape == "list":
        return separator.join(str(_plain(type(owner), last, v)) for v in value) or None
    dumped = to_jsonable_python(value, by_alias=True)
    return json.dumps(dumped, ensure_ascii=False) if dumped not in ([], {}) else None


def plant_tables(plant: Plant) -> list[Table]:
    """The inventory as an asset list: a table per section, then per-element lists."""
    tables = []
    for section in sections():
        value = getattr(plant, _name_of(Plant, section.key))
        items = [value] if section.single else list(value)
        columns = _columns(section.model, lists_apart=not section.single
                           and _has_id(section.model))
        tables.append(Table(section.key, tuple(c.header for c in columns),
                            tuple(tuple(_cell(i, c) for c in columns) for i in items)))
    by_table: dict[str, tuple[list[_Column], list[tuple[CellValue, ...]]]] = {}
    for entry in element_lists():
        columns = _columns(entry.model)
        assert OWNER_COLUMN not in {c.header for c in columns}, (
            f"{entry.key} has a field named {OWNER_COLUMN!r}; pick another owner column")
        _, rows = by_table.setdefault(list_table_name(entry), (columns, []))
        for item in getattr(plant, _name_of(Plant, entry.section)):
            for sub in getattr(item, _name_of(type(item), entry.key)):
                rows.append((item.id, *(_cell(sub, c) for c in columns)))
    for name, (columns, rows) in by_table.items():
        tables.append(Table(name, (OWNER_COLUMN, *(c.header for c in columns)), tuple(rows)))
    return tables


def _name_of(model: type[BaseModel], key: str) -> str:
    return next(f.name for f in fields_of(model) if f.key == key)


# --- in: sheets through a map into inventory data -----------------------------------------


@dataclass(frozen=True)
class Place:
    """Where a value came from: a cell, or a line of the map (a default)."""

    file: str  # "assets.xlsx:Loads!D14", or the map file
    line: int = 0
    column: int = 0
    label: str = ""  # the field path shown with a message at this place
    short: str = ""  # the place in a message about the same input ("Loads!D14")

    def problem(self, message: str, rest: str = "") -> Problem:
        label = self.label + (rest if rest.startswith("[") or not self.label else f".{rest}") \
            if rest else self.label
        return Problem(self.file, self.line, self.column, label, message)


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


def _is_empty(cell: CellValue) -> bool:
    return cell is None or (isinstance(cell, str) and not cell.strip())


def read_cell(cell: CellValue, shape: FieldShape, model: type[BaseModel], unit: str | None,
              separator: str) -> Any:
    """A cell's value as inventory data for ``shape``; _Refused for what cannot be read."""
    if isinstance(cell, Formula):
        raise _Refused(f"the cell holds a formula ({cell.text}); the import reads typed "
                       "values only: copy the column and paste it as values")
    if isinstance(cell, CellError):
        raise _Refused(f"the cell shows the error {cell.code}; correct it in the sheet")
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
            kind = quantity_kind(model, shape.name) or ""
            example = _DISPLAY.get(kind, (("", 1.0, 0.0),))[0][0]
            raise _Refused(f"a bare number ({text}): say its unit, in the cell ('{text} "
                           f"{example}') or for the whole column in the map (unit: …)")
        return f"{text} {unit}"
    if shape.text:
        return _as_text(cell)
    if shape.date and isinstance(cell, dt.datetime) and cell.time() == dt.time():
        return cell.date()
    return cell.strip() if isinstance(cell, str) else cell


@dataclass
class _Target:
    """A field path of a model: ("detector", "alarm") of a bus."""

    path: tuple[FieldShape, ...]
    model: type[BaseModel]  # the model holding the last field


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
    targets: dict[str, list[str]]  # section (or "list:key") → for these rows
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
        return Place(found.file, found.line, found.column, found.path,
                     f"{found.file}:{found.line}")

    def refuse_map(self, path: Path, message: str) -> None:
        self.problems.append(self.map_problem(path, message))


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
        raise InputError(_dedupe(reader.problems))
    ordered = {s.key: data[s.key] for s in sections() if s.key in data}
    return ordered, reader.places


def _plan_sheets(reader: _Reader, input_name: str) -> list[_SheetPlan]:
    by_name = {_normal(s.name): s for s in reader.sheets}
    plans = []
    for index, spec in enumerate(reader.asset_map.sheets):
        where: Path = ("sheets", index)
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
        plan = _SheetPlan(index, spec, sheet, targets)
        _match_columns(reader, plan)
        plans.append(plan)
    return plans


def _sheet_label(sheet: Sheet) -> str:
    return f"{sheet.file}:{sheet.name}" if sheet.in_workbook else sheet.file


def _match_columns(reader: _Reader, plan: _SheetPlan) -> None:
    spec, sheet, where = plan.spec, plan.sheet, ("sheets", plan.index)
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
            reader.problems.append(Place(sheet.where(spec.header_row, column)).problem(
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
        if column_spec.unit is not None and not _known_unit(column_spec.unit):
            reader.refuse_map((*path, "unit"), f"unknown unit {column_spec.unit!r}")
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
                reader.problems.append(Place(sheet.where(spec.header_row, column)).problem(why))
                continue
            if header_field not in plan.columns:
                plan.columns[header_field] = (column, ColumnSpec(column=header_field))
    _check_required(reader, plan)


def _known_unit(unit: str) -> bool:
    for kind in DIMENSIONS:
        try:
            to_si(f"1 {unit}", kind)
            return True
        except UnitProblem:
            continue
    return False


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
            reader.problems.append(Place(sheet.where(spec.header_row, 1),
                                         label=shape.key).problem(
                f"no column holds this required field of {target}{whose}; add a column "
                f"named {shape.key!r}, map one (sheets[{plan.index}].columns) or give a "
                f"default"))


def _row_is_empty(row: tuple[CellValue, ...]) -> bool:
    return all(_is_empty(c) for c in row)


def _read_rows(reader: _Reader, plan: _SheetPlan, data: dict[str, Any],
               lists: list[tuple[str, str, Place, dict[str, Any], dict[Path, Place]]]) -> None:
    spec, sheet = plan.spec, plan.sheet
    last = max((n for n, row in enumerate(sheet.rows, start=1)
                if n > spec.header_row and not _row_is_empty(row)), default=spec.header_row)
    for row in range(spec.header_row + 1, last + 1):
        cells = sheet.rows[row - 1]
        if _row_is_empty(cells):
            if spec.empty_rows == "refuse":
                reader.problems.append(Place(sheet.where(row, 1)).problem(
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
        places[()] = Place(sheet.where(row, first), short=sheet.short(row, first))
        for column, fields in _by_column(plan).items():
            cell = sheet.cell(row, column)
            resolved_fields = [(dotted, spec_, _resolve(model, dotted))
                               for dotted, spec_ in fields]
            if all(r is None for _, _, r in resolved_fields):
                if not _is_empty(cell):  # no field of this row's kind takes this column
                    dotted, column_spec, _ = resolved_fields[0]
                    names = " or ".join(repr(d) for d, _, _ in resolved_fields)
                    reader.problems.append(Place(sheet.where(row, column), label=dotted).problem(
                        f"{target} have no field {names}: leave column "
                        f"{column_spec.column!r} empty in these rows"))
                continue
            for dotted, column_spec, resolved in resolved_fields:
                if resolved is None:
                    continue
                keys = tuple(s.key for s in resolved.path)
                place = Place(sheet.where(row, column), label=dotted,
                              short=sheet.short(row, column))
                places[keys] = place
                if keys == ("id",):
                    places[()] = Place(place.file, short=place.short)
                if _is_empty(cell):
                    continue
                unit = column_spec.unit
                if dotted in plan.unit_columns:
                    unit_cell = sheet.cell(row, plan.unit_columns[dotted])
                    unit = None if _is_empty(unit_cell) else _as_text(unit_cell)
                try:
                    value = read_cell(cell, resolved.path[-1], resolved.model, unit,
                                      column_spec.separator or spec.separator)
                except _Refused as refused:
                    reader.problems.append(place.problem(str(refused)))
                    continue
                _put(item, keys, value)
        for defaults, origin in ((choice_defaults, choice_path),
                                 (spec.defaults, ("sheets", plan.index, "defaults"))):
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
            owner_place = Place(sheet.where(row, plan.owner_column), label=spec.owner_column,
                                short=sheet.short(row, plan.owner_column))
            if _is_empty(owner):
                reader.problems.append(owner_place.problem(
                    "empty: name the element this row belongs to"))
                continue
            lists.append((target, _as_text(owner), owner_place, item, places))
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
        return spec.section, {}, ("sheets", plan.index)
    assert plan.kind_column is not None
    cell = sheet.cell(row, plan.kind_column)
    place = Place(sheet.where(row, plan.kind_column), label=spec.sections_by.column)
    values = spec.sections_by.values
    text = "" if _is_empty(cell) else _as_text(cell)
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
            ("sheets", plan.index, "sections_by", "values", key, "defaults"))


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
    for target, owner, owner_place, item, places in lists:
        key = target.split(".")[-1]
        holders = [e.section for e in element_lists()
                   if e.key == key and target in (e.key, f"{e.section}.{e.key}")]
        found = None
        candidates: list[str] = []
        for section in holders:
            for index, element in enumerate(data.get(section, [])):
                element_id = element.get("id")
                candidates.append(str(element_id))
                if element_id == owner and found is None:
                    found = (section, index)
        if found is None:
            others = [str(e.get("id")) for s in sections() if not s.single
                      for e in data.get(s.key, []) if s.key not in holders]
            reason = (f"{owner!r} is not one of {' or '.join(holders)}, which keep {key}"
                      if owner in others else
                      f"no element {owner!r} in the asset list{did_you_mean(owner, candidates)}")
            reader.problems.append(owner_place.problem(reason))
            continue
        section, index = found
        entries = data[section][index].setdefault(key, [])
        base: Path = (section, index, key, len(entries))
        reader.places.update({(*base, *k): p for k, p in places.items()})
        entries.append(item)


_ROW_NUMBER = re.compile(r"\d+$")


def _dedupe(problems: Iterator[Problem] | list[Problem]) -> list[Problem]:
    """One line for a mistake repeated down a column: the first row, and how many more."""
    groups: dict[tuple[str, int, int, str, str], list[Problem]] = {}
    for problem in problems:
        key = (_ROW_NUMBER.sub("", problem.file), problem.line, problem.column, problem.path,
               problem.message)
        groups.setdefault(key, []).append(problem)
    kept = []
    for group in groups.values():
        group.sort(key=_row_of)
        first = group[0]
        if len(group) > 1 and first.file != group[1].file:
            first = Problem(first.file, first.line, first.column, first.path,
                            f"{first.message} (and in {len(group) - 1} more rows below)")
        kept.append(first)
    return kept


def _row_of(problem: Problem) -> tuple[str, int]:
    match = _ROW_NUMBER.search(problem.file)
    return (_ROW_NUMBER.sub("", problem.file), int(match.group()) if match else 0)


def dedupe(problems: list[Problem]) -> list[Problem]:
    """``_dedupe`` for the shell: validation problems of many rows alike."""
    return _dedupe(problems)
