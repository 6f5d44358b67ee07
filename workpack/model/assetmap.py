"""The asset map: which sheet and column of an asset list fill which inventory field.

Written by hand beside a supervisor's spreadsheet; ``workpack import-assets``
reads the spreadsheet through it into a plant inventory. Field names are the
inventory's own (``workpack schema plant``); a nested field is written with a
dot (``detector.alarm``).
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import Field, model_validator

from workpack.model.plant import Strict


class ColumnSpec(Strict):
    """One column and how to read its cells."""

    column: str = Field(min_length=1, description="the column's header, as written in the "
                        "header row", examples=["Rated power"])
    unit: str | None = Field(
        default=None, min_length=1,
        description="unit of bare numbers in this column; a cell that carries its own unit "
                    "keeps it", examples=["kW"])
    unit_column: str | None = Field(
        default=None, min_length=1,
        description="header of another column that holds each row's unit",
        examples=["Unit"])
    separator: str | None = Field(
        default=None, min_length=1,
        description="between the items of a list cell (default: the sheet's separator)",
        examples=[";"])

    @model_validator(mode="after")
    def _one_unit_source(self) -> ColumnSpec:
        if self.unit is not None and self.unit_column is not None:
            raise ValueError("give unit or unit_column, not both")
        return self


class SectionChoice(Strict):
    """Where the rows with one value in the kind column go."""

    section: str = Field(min_length=1, description="inventory section for these rows",
                         examples=["loads"])
    defaults: dict[str, Any] = Field(
        default_factory=dict,
        description="values for fields these rows leave empty (field → value)",
        examples=[{"kind": "motor"}])


class SectionsBy(Strict):
    """One sheet of mixed assets: a column says which section each row belongs to."""

    column: str = Field(min_length=1, description="header of the column naming the kind",
                        examples=["Type"])
    values: dict[str, SectionChoice] = Field(
        min_length=1, description="each value of that column (as written) → its section",
        examples=[{"Generator": {"section": "sources", "defaults": {"kind": "generator"}}}])


class SheetMap(Strict):
    """One sheet (or CSV file) of the asset list."""

    sheet: str | None = Field(
        default=None, min_length=1,
        description="sheet name (a CSV file's name without .csv); may be left out when "
                    "the input has one sheet", examples=["Loads"])
    optional: bool = Field(default=False,
                           description="a missing sheet is no error", examples=[True])
    header_row: int = Field(default=1, ge=1, description="row holding the column headers",
                            examples=[1])
    section: str | None = Field(
        default=None, min_length=1,
        description="inventory section every row goes to (plant, cable_types, sources, "
                    "buses, devices, transformers, cables, loads), or a list kept per "
                    "element (routine, auxiliaries) whose rows name their element in "
                    "owner_column", examples=["loads"])
    sections_by: SectionsBy | None = Field(
        default=None, description="instead of section: a column whose value picks each "
                                  "row's section",
        examples=[{"column": "Type", "values": {
            "Breaker": {"section": "devices", "defaults": {"kind": "circuit_breaker"}}}}])
    owner_column: str = Field(
        default="element", min_length=1,
        description="for a per-element list: header of the column naming the element",
        examples=["element"])
    fields_from_headers: bool = Field(
        default=False,
        description="a column whose header is a field name fills that field; any other "
                    "column must be mapped or ignored", examples=[True])
    columns: dict[str, str | ColumnSpec] = Field(
        default_factory=dict,
        description="field → column header, or field → {column, unit | unit_column, "
                    "separator}", examples=[{"id": "Tag", "rated_kw": {
                        "column": "Power", "unit": "kW"}}])
    defaults: dict[str, Any] = Field(
        default_factory=dict,
        description="values for fields the rows leave empty or no column holds",
        examples=[{"vitality": "non_essential"}])
    ignore_columns: tuple[str, ...] = Field(
        default=(), description="columns to leave out (with fields_from_headers)",
        examples=[["Remarks"]])
    separator: str = Field(default=",", min_length=1,
                           description="between the items of a list cell ('from', "
                                       "'environment')", examples=[","])
    empty_rows: Literal["refuse", "skip"] = Field(
        default="refuse",
        description="an empty row between assets: refuse (it may hide a cut-off list) or "
                    "skip", examples=["skip"])

    @model_validator(mode="after")
    def _one_way_to_a_section(self) -> SheetMap:
        if (self.section is None) == (self.sections_by is None):
            raise ValueError("give section (every row goes there) or sections_by "
                             "(a column picks the section), one of the two")
        return self


class AssetMap(Strict):
    """How an asset list (workbook or CSV files) becomes a plant inventory."""

    plant: dict[str, Any] = Field(
        default_factory=dict,
        description="the plant's own details (name, kind, frequency…) where no sheet "
                    "holds them", examples=[{"name": "MV Example", "kind": "vessel",
                                             "frequency": "60 Hz"}])
    sheets_by_name: bool = Field(
        default=False,
        description="also read every sheet named like an inventory section (sources, loads…) "
                    "or a per-element list (routine, auxiliaries…) that no entry of sheets "
                    "names, its headers being field names; the layout `workpack export "
                    "--what assets` writes, new fields and lists included", examples=[True])
    sheets: tuple[SheetMap, ...] = Field(
        default=(), description="the sheets read, in order",
        examples=[[{"sheet": "Loads", "section": "loads",
                    "columns": {"id": "Tag", "rated_kw": {"column": "Power", "unit": "kW"}}}]])

    @model_validator(mode="after")
    def _something_to_read(self) -> AssetMap:
        if not self.sheets and not self.sheets_by_name:
            raise ValueError("name the sheets to read (sheets), or read them by their "
                             "names (sheets_by_name: true)")
        return self
