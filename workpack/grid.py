"""Spreadsheet contents as plain data: sheets read in, tables written out.

A ``Sheet`` is what the shell read from a workbook or a CSV file, cell by cell,
with enough of its origin to name a cell the way a spreadsheet shows it
(``assets.xlsx:Loads!D14``). A ``Table`` is what the core hands the shell to
write. Neither knows about files; ``workpack.sheets`` reads and writes them.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass


@dataclass(frozen=True)
class Formula:
    """A cell that holds a formula: the import takes typed values only."""

    text: str


@dataclass(frozen=True)
class CellError:
    """A cell that shows a spreadsheet error such as #REF! or #DIV/0!."""

    code: str


CellValue = str | int | float | bool | dt.date | dt.datetime | Formula | CellError | None
"""What a cell holds; ``None`` is an empty cell. Dates arrive as dates or datetimes."""


def column_letter(column: int) -> str:
    """Spreadsheet column name of a 1-based column number: 1 → A, 27 → AA."""
    letters = ""
    while column > 0:
        column, remainder = divmod(column - 1, 26)
        letters = chr(ord("A") + remainder) + letters
    return letters


@dataclass(frozen=True)
class Sheet:
    """One sheet of a workbook, or one CSV file, as read.

    ``rows[0]`` is the sheet's row 1; rows may differ in length (a short row
    ends in empty cells).
    """

    file: str  # as the user named it
    name: str  # the sheet's name; a CSV file's stem
    rows: tuple[tuple[CellValue, ...], ...]
    in_workbook: bool = True  # False for CSV: one sheet per file, no sheet name in places

    def cell(self, row: int, column: int) -> CellValue:
        """Value at 1-based ``row`` and ``column``; None outside the data."""
        if row < 1 or row > len(self.rows):
            return None
        cells = self.rows[row - 1]
        return cells[column - 1] if 1 <= column <= len(cells) else None

    def where(self, row: int, column: int) -> str:
        """A cell as a person finds it: ``assets.xlsx:Loads!D14`` or ``loads.csv:D14``."""
        cell = f"{column_letter(column)}{row}"
        return f"{self.file}:{self.name}!{cell}" if self.in_workbook else f"{self.file}:{cell}"

    def short(self, row: int, column: int) -> str:
        """The same cell for a message about the same file: ``Loads!D14`` or ``D14``."""
        cell = f"{column_letter(column)}{row}"
        return f"{self.name}!{cell}" if self.in_workbook else cell


@dataclass(frozen=True)
class Table:
    """A table to write: a sheet of a workbook, or one CSV file."""

    name: str
    columns: tuple[str, ...]
    rows: tuple[tuple[CellValue, ...], ...]
