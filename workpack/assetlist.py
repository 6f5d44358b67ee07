"""The plant inventory as an asset list: its fields by shape, and the plant as tables. Pure.

``plant_tables`` lays a ``Plant`` out as tables, one per section, one column
per field (a nested field as ``detector.alarm``), and per-element lists
(``routine``, ``auxiliaries``) as tables of their own whose ``element`` column
names the owner. Quantities are written with a unit ("450 V", "625 kVA"), as
``plant_document`` writes them for YAML. ``assetimport`` reads such tables back.

Everything walks the pydantic model's fields rather than a list of names: a
field added to ``model/plant.py`` flows through with no change here. A field of
a shape a table cannot hold plainly (a mapping, a union of models, a list
inside a list) travels as JSON text in one cell.
"""

from __future__ import annotations

import datetime as dt
import json
import types
from dataclasses import dataclass
from enum import Enum
from functools import cache
from typing import Annotated, Any, Literal, Union, get_args, get_origin

from pydantic import BaseModel, TypeAdapter, ValidationError
from pydantic_core import PydanticUndefined, to_jsonable_python

from workpack.grid import CellValue, Table
from workpack.model.plant import Plant
from workpack.units import KINDS, UnitProblem, to_si

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
    for kind, spec in KINDS.items():
        for probe in probes:
            try:
                read = adapter.validate_python(f"{probe!r} {spec.si}")
            except (ValidationError, ValueError, TypeError):
                continue
            if isinstance(read, float) and read == probe:
                return kind
    return None


def quantity_kind(model: type[BaseModel], name: str, value: float | None = None) -> str | None:
    """The kind of quantity (``units.KINDS``) a field holds, or None for a plain field.

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
    "real_power": (("W", 1.0, 0.0), ("kW", 1e3, 1e3), ("MW", 1e6, 1e6)),
    "apparent_power": (("VA", 1.0, 0.0), ("kVA", 1e3, 1e3), ("MVA", 1e6, 1e6)),
    "reactive_power": (("var", 1.0, 0.0), ("kvar", 1e3, 1e3), ("Mvar", 1e6, 1e6)),
    "time": (("s", 1.0, 0.0),),
    "temperature": (("°C", 1.0, 0.0),),
}
# A power field named for its unit is written in it: rated_kva in kVA, rated_kw in kW.
_POWER_SUFFIX = {
    "apparent_power": {"_kva": ("kVA", 1e3), "_mva": ("MVA", 1e6), "_va": ("VA", 1.0)},
    "real_power": {"_kw": ("kW", 1e3), "_mw": ("MW", 1e6), "_w": ("W", 1.0)},
}


def format_quantity(value: float, kind: str, key: str = "") -> str:
    """An SI value as a person writes it ("625 kVA", "150 pF/m"); reads back exactly."""
    unit, scale = _display_unit(value, kind, key)
    mantissa = value / scale
    candidates = [f"{number} {unit}" for number in (f"{mantissa:.12g}", repr(mantissa))
                  if "e" not in number and "n" not in number]
    candidates.append(f"{value!r} {KINDS[kind].si}")  # SI: always exact
    for text in candidates:
        try:
            if to_si(text, kind) == value:
                return text
        except UnitProblem:
            continue
    return repr(value)  # a bare number is read in SI


def unit_example(kind: str) -> str:
    """The unit a quantity of ``kind`` is usually written in, for messages ("V")."""
    return _DISPLAY.get(kind, ((KINDS[kind].si, 1.0, 0.0),))[0][0]


def _display_unit(value: float, kind: str, key: str) -> tuple[str, float]:
    for suffix, chosen in _POWER_SUFFIX.get(kind, {}).items():
        if key.endswith(suffix):
            return chosen
    choices = _DISPLAY.get(kind, ((KINDS[kind].si, 1.0, 0.0),))
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
