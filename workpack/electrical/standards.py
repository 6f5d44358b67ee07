"""Standards tables as plain data: what the calculations take, and where each value came from.

The tables themselves live in ``workpack/data/standards/*.yaml``; ``tables.load_code_set``
reads them into these dataclasses. Nothing here reads a file. Values are SI (volts, ohms,
metres, °C); the YAML keeps the units the source prints (MΩ, m) and the loader converts.

Each table carries a ``Citation`` with a ``strength``:
  published        the value is in the named document (or a page reproducing it);
  common practice  a fact of the trade with no single source;
  from memory      recalled, not confirmed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

Strength = Literal["published", "common practice", "from memory"]
STRENGTHS: tuple[Strength, ...] = ("published", "common practice", "from memory")


@dataclass(frozen=True)
class Citation:
    """Where a table or value comes from, and how sure we are of it."""

    document: str
    edition: str
    clause: str  # table or clause number as the source prints it
    strength: Strength
    note: str = ""

    def __str__(self) -> str:
        """'Document (edition), clause [strength]' for a printed reference."""
        text = f"{self.document} ({self.edition}), {self.clause}"
        if self.strength != "published":
            text += f" [{self.strength}]"
        return text


@dataclass(frozen=True)
class VoltageBand:
    """One row of a table entered by rated voltage (V).

    Rows are contiguous: a row covers ratings above the previous row's ``up_to_v`` and up to
    its own (inclusive, or exclusive when ``up_to_inclusive`` is False). ``up_to_v`` None:
    no upper limit. ``from_v`` is the first row's lower limit.
    """

    label: str  # the row as the source prints it, e.g. "1000–2500 V"
    up_to_v: float | None
    up_to_inclusive: bool
    dc_test_min_v: float
    dc_test_max_v: float
    minimum_ir_ohm: float | None
    citation: Citation


@dataclass(frozen=True)
class SpecialCircuit:
    """A row entered by circuit kind rather than voltage (e.g. SELV/PELV)."""

    kind: str
    label: str
    dc_test_min_v: float
    dc_test_max_v: float
    minimum_ir_ohm: float
    citation: Citation


@dataclass(frozen=True)
class WindingMinimum:
    """Minimum one-minute IR of a machine winding at the reference temperature.

    ``rule`` "kv_plus_1": (rated kV + 1) MΩ; "fixed": ``minimum_ir_ohm``. ``below_rated_v``
    limits the row to windings rated below that voltage (None: any rating).
    """

    winding: str
    rule: Literal["kv_plus_1", "fixed"]
    minimum_ir_ohm: float | None
    below_rated_v: float | None
    description: str
    citation: Citation


@dataclass(frozen=True)
class TemperatureCorrection:
    """How a reading at T °C is brought to the reference temperature.

    "halving": R_ref = R_T · 0.5^((ref - T)/interval). "factors": R_ref = R_T · k(T), with
    k interpolated between ``points`` (°C, factor). Readings outside ``valid_from_c`` to
    ``valid_to_c`` (°C) are not corrected: the package asks for a retest nearer the
    reference temperature. ``column`` names the table column when the table has several
    (e.g. "oil", "solid").
    """

    method: Literal["halving", "factors"]
    reference_c: float
    halving_interval_c: float | None
    points: tuple[tuple[float, float], ...]
    citation: Citation
    valid_from_c: float | None = None
    valid_to_c: float | None = None
    range_citation: Citation | None = None  # where the valid range comes from
    column: str | None = None
    column_label: str = ""

    @property
    def valid_range_c(self) -> tuple[float, float] | None:
        """(lowest, highest) temperature (°C) a reading is corrected from, or None."""
        if self.points:
            return (max(self.points[0][0], self.valid_from_c or -math.inf),
                    min(self.points[-1][0], self.valid_to_c or math.inf))
        if self.valid_from_c is None or self.valid_to_c is None:
            return None
        return (self.valid_from_c, self.valid_to_c)


@dataclass(frozen=True)
class TransformerWindingBand:
    """One row of a transformer-winding insulation table, by the winding's rated voltage.

    Minimums (Ω) at the code set's reference temperature, for liquid-filled and dry-type
    transformers. Rows are contiguous as in ``VoltageBand``.
    """

    label: str
    up_to_v: float | None
    up_to_inclusive: bool
    dc_test_min_v: float
    dc_test_max_v: float
    minimum_liquid_filled_ohm: float
    minimum_dry_type_ohm: float
    citation: Citation


@dataclass(frozen=True)
class PolarizationIndexRule:
    """Minimum polarization index (10-min / 1-min) by insulation thermal class."""

    minimum_by_class: dict[str, float]
    waiver_above_ohm: float | None  # PI may be disregarded above this 1-min IR at reference
    citation: Citation
    waiver_citation: Citation | None


@dataclass(frozen=True)
class ApproachBoundary:
    """Shock-protection approach boundaries for one phase-to-phase voltage row (m)."""

    label: str
    from_v: float
    up_to_v: float
    limited_movable_m: float
    limited_movable_text: str
    limited_fixed_m: float
    limited_fixed_text: str
    restricted_m: float | None  # None: "avoid contact"
    restricted_text: str
    citation: Citation


@dataclass(frozen=True)
class GuideValue:
    """A single sourced figure (a guide value, not a limit): value in SI with its unit."""

    name: str
    value: float
    unit: str
    low: float | None
    high: float | None
    description: str
    citation: Citation


@dataclass(frozen=True)
class CodeSet:
    """The tables one document (and edition) contributes, selectable by ``name``."""

    name: str
    title: str
    document: str
    edition: str
    voltage_from_v: float = 0.0
    voltage_bands: tuple[VoltageBand, ...] = ()
    special_circuits: tuple[SpecialCircuit, ...] = ()
    winding_minimums: tuple[WindingMinimum, ...] = ()
    temperature_correction: TemperatureCorrection | None = None
    polarization_index: PolarizationIndexRule | None = None
    approach_boundaries: tuple[ApproachBoundary, ...] = ()
    guide_values: dict[str, GuideValue] = field(default_factory=dict)
    transformer_windings: tuple[TransformerWindingBand, ...] = ()
    # Every column of a correction table with several; a code set named "<name>/<column>"
    # has that one as its temperature_correction.
    temperature_columns: dict[str, TemperatureCorrection] = field(default_factory=dict)

    def guide(self, name: str) -> GuideValue:
        """One guide value by name; ValueError naming the known ones if absent."""
        try:
            return self.guide_values[name]
        except KeyError:
            known = ", ".join(sorted(self.guide_values)) or "none"
            raise ValueError(
                f"code set {self.name!r} has no guide value {name!r} (known: {known})"
            ) from None
