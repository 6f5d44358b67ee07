"""Transformer banks: vector groups (IEC 60076-1 notation), ratios, currents, open delta.

Units: volts, amperes, volt-amperes, degrees. Transformers are treated as ideal (no losses,
no magnetising current, no impedance drop): these are the nameplate relations a supervisor
checks a bank against, not a load-flow.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass

from workpack.electrical.threephase import SQRT3, PhaseSequence

_GROUP = re.compile(r"^(?P<hv>[DYZ])(?P<hvn>N?)(?P<lv>[dyz])(?P<lvn>n?)(?P<clock>\d{1,2})$")


def _check_positive(name: str, value: float) -> None:
    """ValueError unless ``value`` is positive and finite."""
    if not math.isfinite(value) or value <= 0:
        raise ValueError(f"{name} must be a positive finite number (got {value!r})")


@dataclass(frozen=True)
class VectorGroup:
    """An IEC 60076-1 vector group such as Dyn11: HV connection, LV connection, clock number.

    Clock number × 30° is the angle by which the LV phasors lag the HV phasors
    (IEC 60076-1; Dd0 0°, Dyn11 LV leads 30°, Dy1 LV lags 30°, YNd5 LV lags 150°).
    """

    hv: str  # "D", "Y" or "Z"
    hv_neutral: bool
    lv: str  # "d", "y" or "z"
    lv_neutral: bool
    clock: int

    @classmethod
    def parse(cls, text: str) -> VectorGroup:
        """Read a group string such as "Dyn11", "YNd5", "Yy0" or "Dzn0"."""
        match = _GROUP.match(text.strip())
        if match is None:
            raise ValueError(
                f"vector group {text!r} must be HV letter D/Y/Z (N for a brought-out "
                "neutral), LV letter d/y/z (n), then a clock number 0-11, such as 'Dyn11'"
            )
        hv, lv = match["hv"], match["lv"]
        clock = int(match["clock"])
        if clock > 11:
            raise ValueError(f"vector group {text!r}: clock number must be 0-11 (got {clock})")
        if hv == "D" and match["hvn"]:
            raise ValueError(f"vector group {text!r}: a delta winding has no neutral (DN)")
        if lv == "d" and match["lvn"]:
            raise ValueError(f"vector group {text!r}: a delta winding has no neutral (dn)")
        # A wye against a delta or zigzag shifts by an odd multiple of 30°; like against
        # like (or delta against zigzag) by an even multiple.
        odd = (hv == "Y") != (lv == "y")
        if odd != (clock % 2 == 1):
            parity = "odd" if odd else "even"
            raise ValueError(
                f"vector group {text!r}: a {hv}{lv} connection needs an {parity} clock number"
            )
        return cls(hv, bool(match["hvn"]), lv, bool(match["lvn"]), clock)

    def __str__(self) -> str:
        """The group as IEC 60076-1 writes it, e.g. 'Dyn11'."""
        return (
            f"{self.hv}{'N' if self.hv_neutral else ''}"
            f"{self.lv}{'n' if self.lv_neutral else ''}{self.clock}"
        )

    @property
    def lv_lag_deg(self) -> float:
        """Angle (°) by which LV lags HV for positive (ABC) sequence: clock × 30°."""
        return 30.0 * self.clock

    def lv_angle_deg(self, sequence: PhaseSequence | str = "ABC") -> float:
        """LV phasor angle relative to HV (°, in (-180, 180]); mirrored for the opposite rotation.

        The clock number is defined for the terminals energised in their marked order; with
        the opposite phase rotation the same bank shows the mirror-image displacement.
        """
        seq = PhaseSequence.parse(sequence)
        angle = -self.lv_lag_deg
        if not seq.follows_label_order:
            angle = -angle
        angle = (angle + 180.0) % 360.0 - 180.0
        return 180.0 if angle == -180.0 else angle

    @property
    def lv_grounded_neutral_possible(self) -> bool:
        """True when the LV side has a brought-out neutral (an 'n'): earthing it makes
        that island a grounded system, not an insulated one."""
        return self.lv_neutral


def _winding_voltage(line_voltage_v: float, connection: str) -> float:
    """Voltage (V) across one winding for a line voltage (V) and connection."""
    return line_voltage_v if connection in ("D", "d") else line_voltage_v / SQRT3


def _line_from_winding(winding_voltage_v: float, connection: str) -> float:
    """Line voltage (V) from one winding's voltage (V) and connection."""
    return winding_voltage_v if connection in ("D", "d") else winding_voltage_v * SQRT3


def _winding_current(line_current_a: float, connection: str) -> float:
    """Current (A) in one winding for a line current (A) and connection."""
    return line_current_a / SQRT3 if connection in ("D", "d") else line_current_a


@dataclass(frozen=True)
class BankRatings:
    """Secondary voltages and, for a balanced load, currents of a three-phase bank."""

    vector_group: str
    primary_line_v: float
    primary_winding_v: float
    secondary_winding_v: float
    secondary_line_v: float
    secondary_line_to_neutral_v: float  # V_LL/√3: phase-to-earth on a healthy insulated system
    lv_angle_deg: float  # LV relative to HV, positive = LV leads
    load_va: float
    primary_line_a: float
    primary_winding_a: float
    secondary_line_a: float
    secondary_winding_a: float
    unit_load_va: float  # each of the three windings (or single-phase units)
    unit_loading_fraction: float | None  # unit_load_va / unit rating, when a rating is given


def transformer_bank(
    primary_line_v: float,
    turns_ratio: float,
    vector_group: str | VectorGroup,
    load_va: float = 0.0,
    unit_rating_va: float | None = None,
    sequence: PhaseSequence | str = "ABC",
) -> BankRatings:
    """Secondary voltages (V), phase shift (°) and line/winding currents (A) of a bank.

    ``turns_ratio`` is HV winding voltage / LV winding voltage of one phase (one
    single-phase unit). For a zigzag side the "winding" is the whole zigzag phase
    (phase-to-neutral). The load (VA) is balanced three-phase; each winding carries a third.
    """
    group = VectorGroup.parse(vector_group) if isinstance(vector_group, str) else vector_group
    _check_positive("primary line voltage", primary_line_v)
    _check_positive("turns ratio", turns_ratio)
    if not math.isfinite(load_va) or load_va < 0:
        raise ValueError(f"load must be zero or positive VA (got {load_va!r})")
    if unit_rating_va is not None:
        _check_positive("unit rating", unit_rating_va)
    primary_winding_v = _winding_voltage(primary_line_v, group.hv)
    secondary_winding_v = primary_winding_v / turns_ratio
    secondary_line_v = _line_from_winding(secondary_winding_v, group.lv)
    primary_line_a = load_va / (SQRT3 * primary_line_v)
    secondary_line_a = load_va / (SQRT3 * secondary_line_v)
    unit_load_va = load_va / 3.0
    return BankRatings(
        vector_group=str(group),
        primary_line_v=primary_line_v,
        primary_winding_v=primary_winding_v,
        secondary_winding_v=secondary_winding_v,
        secondary_line_v=secondary_line_v,
        secondary_line_to_neutral_v=secondary_line_v / SQRT3,
        lv_angle_deg=group.lv_angle_deg(sequence),
        load_va=load_va,
        primary_line_a=primary_line_a,
        primary_winding_a=_winding_current(primary_line_a, group.hv),
        secondary_line_a=secondary_line_a,
        secondary_winding_a=_winding_current(secondary_line_a, group.lv),
        unit_load_va=unit_load_va,
        unit_loading_fraction=None if unit_rating_va is None else unit_load_va / unit_rating_va,
    )


@dataclass(frozen=True)
class OpenDeltaCheck:
    """A delta-delta bank running on two units after one has gone out."""

    closed_bank_va: float  # the three units' sum
    open_delta_capacity_va: float  # √3 × the smaller remaining unit
    fraction_of_closed_bank: float  # 1/√3 = 57.7 % for equal units
    fraction_of_remaining_units: float  # √3/2 = 86.6 % for equal units
    load_va: float
    load_fits: bool
    unit_load_va: tuple[float, float]  # each remaining unit carries S/√3
    unit_loading_fraction: tuple[float, float]
    load_to_shed_va: float  # 0 when the load fits


def open_delta(
    unit_ratings_va: Sequence[float],
    failed_unit: int,
    load_va: float = 0.0,
    vector_group: str | VectorGroup = "Dd0",
) -> OpenDeltaCheck:
    """Capacity (VA) of a delta-delta bank of three single-phase units with one unit out.

    In open delta each remaining unit carries the full line current, so a balanced load S
    puts S/√3 on each: the capacity is √3 × the smaller remaining rating, which for equal
    units is 1/√3 = 57.7 % of the closed bank and √3/2 = 86.6 % of the two units' sum.
    """
    group = VectorGroup.parse(vector_group) if isinstance(vector_group, str) else vector_group
    if group.hv != "D" or group.lv != "d":
        raise ValueError(
            f"open delta applies to a delta-delta bank (got {group}); a bank with a wye "
            "side has no open-delta fall-back"
        )
    ratings = [float(r) for r in unit_ratings_va]
    if len(ratings) != 3:
        raise ValueError(f"a bank has three unit ratings (got {len(ratings)})")
    for r in ratings:
        _check_positive("unit rating", r)
    if failed_unit not in (0, 1, 2):
        raise ValueError(f"failed unit must be 0, 1 or 2 (got {failed_unit!r})")
    if not math.isfinite(load_va) or load_va < 0:
        raise ValueError(f"load must be zero or positive VA (got {load_va!r})")
    remaining = [r for i, r in enumerate(ratings) if i != failed_unit]
    capacity = SQRT3 * min(remaining)
    unit_load = load_va / SQRT3
    return OpenDeltaCheck(
        closed_bank_va=sum(ratings),
        open_delta_capacity_va=capacity,
        fraction_of_closed_bank=capacity / sum(ratings),
        fraction_of_remaining_units=capacity / sum(remaining),
        load_va=load_va,
        load_fits=load_va <= capacity,
        unit_load_va=(unit_load, unit_load),
        unit_loading_fraction=(unit_load / remaining[0], unit_load / remaining[1]),
        load_to_shed_va=max(0.0, load_va - capacity),
    )
