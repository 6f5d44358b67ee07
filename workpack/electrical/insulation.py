"""Insulation-resistance tests: test voltage, minimum, temperature correction, PI, trend.

Every limit comes from a ``CodeSet`` (see ``tables.load_code_set``): IEEE Std 43 for
rotating machines, ANSI/NETA MTS Table 100.5 for transformer windings (liquid-filled and
dry-type minimums) and Table 100.1 for other apparatus, an IEC 60364-6 style table for
low-voltage installation circuits. A correction to the reference temperature is made only
inside its stated range (the correction table's span; 10–60 °C for the IEEE 43 halving
rule); outside it the reading cannot be judged and the test is repeated nearer the
reference temperature. ``correct_to_reference`` is the one place that decides this, for
the diagnosis, the printed package and the judging of results alike.
Units: volts, ohms, °C, seconds, dates.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date
from enum import StrEnum

from workpack.electrical.standards import (
    Citation,
    CodeSet,
    SpecialCircuit,
    TemperatureCorrection,
    TransformerWindingBand,
    VoltageBand,
    WindingMinimum,
)
from workpack.errors import did_you_mean
from workpack.numbers import format_quantity

# Which code set a kind of equipment is normally tested to; a plant may choose another.
DEFAULT_CODE_SET_BY_KIND: dict[str, str] = {
    "rotating_machine": "ieee43-2013",
    "installation_circuit": "iec60364-6",
    "selv_pelv": "iec60364-6",
    "cable": "neta-mts-2019",
    "switchgear": "neta-mts-2019",
    "transformer": "neta-mts-2019",
    "other_apparatus": "neta-mts-2019",
}

_DAYS_PER_MONTH = 365.25 / 12.0

# Trend thresholds: a fact of the trade, not a published limit.
TRANSFORMER_INSULATION = ("liquid_filled", "dry_type")

TREND_CITATION = Citation(
    document="trend thresholds",
    edition="-",
    clause="corrected IR falling by more than the stated fraction, or a fitted rate reaching "
    "the minimum within the stated horizon, calls for investigation",
    strength="common practice",
)


def default_code_set(kind: str) -> str:
    """Name of the code set normally used for an equipment kind (see DEFAULT_CODE_SET_BY_KIND)."""
    try:
        return DEFAULT_CODE_SET_BY_KIND[kind]
    except KeyError:
        raise ValueError(
            f"unknown equipment kind {kind!r}{did_you_mean(kind, DEFAULT_CODE_SET_BY_KIND)}; "
            f"known: {', '.join(sorted(DEFAULT_CODE_SET_BY_KIND))}"
        ) from None


def _check_positive(name: str, value: float) -> None:
    """ValueError unless ``value`` is positive and finite."""
    if not math.isfinite(value) or value <= 0:
        raise ValueError(f"{name} must be a positive finite number (got {value!r})")


def _band(code_set: CodeSet, rated_voltage_v: float) -> VoltageBand:
    """The table row covering a rated voltage (V); ValueError outside the table."""
    _check_positive("rated voltage", rated_voltage_v)
    if not code_set.voltage_bands:
        raise ValueError(f"code set {code_set.name!r} has no table by rated voltage")
    if rated_voltage_v < code_set.voltage_from_v:
        raise ValueError(
            f"rated voltage {rated_voltage_v:g} V is below the {code_set.name} table, which "
            f"starts at {code_set.voltage_from_v:g} V"
        )
    for band in code_set.voltage_bands:
        if band.up_to_v is None:
            return band
        if rated_voltage_v < band.up_to_v or (
            band.up_to_inclusive and rated_voltage_v == band.up_to_v
        ):
            return band
    last = code_set.voltage_bands[-1]
    raise ValueError(
        f"rated voltage {rated_voltage_v:g} V is above the {code_set.name} table, which ends "
        f"at {last.up_to_v:g} V"
    )


def _transformer_band(code_set: CodeSet, rated_voltage_v: float) -> TransformerWindingBand:
    """The transformer-winding row covering a winding's rated voltage (V)."""
    _check_positive("rated voltage", rated_voltage_v)
    if not code_set.transformer_windings:
        raise ValueError(f"code set {code_set.name!r} has no transformer-winding table")
    for band in code_set.transformer_windings:
        if band.up_to_v is None or rated_voltage_v < band.up_to_v or (
            band.up_to_inclusive and rated_voltage_v == band.up_to_v
        ):
            return band
    last = code_set.transformer_windings[-1]
    raise ValueError(f"winding voltage {rated_voltage_v:g} V is above the {code_set.name} "
                     f"transformer table, which ends at {last.up_to_v:g} V")


def _check_transformer(transformer: str | None) -> None:
    """ValueError for an insulation kind that is not liquid_filled or dry_type."""
    if transformer is not None and transformer not in TRANSFORMER_INSULATION:
        raise ValueError(f"transformer insulation {transformer!r} must be one of "
                         f"{', '.join(TRANSFORMER_INSULATION)}")


def _special(code_set: CodeSet, circuit_kind: str | None) -> SpecialCircuit | None:
    """The row for a circuit kind such as SELV/PELV, if the table has one."""
    if circuit_kind is None:
        return None
    for row in code_set.special_circuits:
        if row.kind == circuit_kind:
            return row
    return None


@dataclass(frozen=True)
class TestVoltage:
    """DC test voltage (V) for an insulation-resistance test: a range when the table gives one."""

    __test__ = False  # not a pytest test class, despite the name

    min_v: float
    max_v: float
    row: str
    citation: Citation


def dc_test_voltage(
    code_set: CodeSet, rated_voltage_v: float, circuit_kind: str | None = None,
    transformer: str | None = None,
) -> TestVoltage:
    """DC test voltage (V) by rated voltage (V; line-to-line for three-phase) from the table.

    Sources: IEEE Std 43 test-voltage guideline table; ANSI/NETA MTS Table 100.1 (rated
    between rows: next row up); Table 100.5 for a transformer winding (``transformer``
    "liquid_filled" or "dry_type", ``rated_voltage_v`` that winding's); IEC 60364-6 style
    table (``circuit_kind`` "selv_pelv").
    """
    _check_transformer(transformer)
    if transformer is not None and code_set.transformer_windings:
        band_t = _transformer_band(code_set, rated_voltage_v)
        return TestVoltage(band_t.dc_test_min_v, band_t.dc_test_max_v,
                           f"winding {band_t.label}", band_t.citation)
    special = _special(code_set, circuit_kind)
    if special is not None:
        return TestVoltage(
            special.dc_test_min_v, special.dc_test_max_v, special.label, special.citation
        )
    band = _band(code_set, rated_voltage_v)
    return TestVoltage(band.dc_test_min_v, band.dc_test_max_v, band.label, band.citation)


@dataclass(frozen=True)
class MinimumIr:
    """Minimum insulation resistance (Ω) and the temperature it applies at (°C, or None)."""

    minimum_ohm: float
    reference_c: float | None
    basis: str
    citation: Citation


def minimum_insulation_resistance(
    code_set: CodeSet,
    rated_voltage_v: float,
    winding: str | None = None,
    circuit_kind: str | None = None,
    transformer: str | None = None,
) -> MinimumIr:
    """Minimum IR (Ω) from the code set.

    Machines (IEEE Std 43 clause 12.3, one-minute value at 40 °C): ``winding`` one of
    "kv_plus_1" (kV + 1 MΩ), "form_wound", "random_wound", "dc_armature". Transformer
    windings (NETA MTS Table 100.5, at 20 °C): ``transformer`` "liquid_filled" or
    "dry_type", ``rated_voltage_v`` the winding's. Other apparatus and installations: by
    rated-voltage row (NETA MTS Table 100.1; IEC 60364-6 style).
    """
    _check_transformer(transformer)
    rule = code_set.temperature_correction
    reference = None if rule is None else rule.reference_c
    if rule is None and code_set.temperature_columns:
        reference = next(iter(code_set.temperature_columns.values())).reference_c
    if transformer is not None and code_set.transformer_windings:
        band_t = _transformer_band(code_set, rated_voltage_v)
        value = (band_t.minimum_dry_type_ohm if transformer == "dry_type"
                 else band_t.minimum_liquid_filled_ohm)
        kind = transformer.replace("_", "-")
        return MinimumIr(value, reference, f"{kind} transformer winding rated {band_t.label}",
                         band_t.citation)
    if code_set.winding_minimums:
        _check_positive("rated voltage", rated_voltage_v)
        kinds = sorted({w.winding for w in code_set.winding_minimums})
        if winding is None or winding not in kinds:
            raise ValueError(
                f"winding kind {winding!r}{did_you_mean(winding or '', kinds)} is not in "
                f"{code_set.name}; known: {', '.join(kinds)}"
            )
        row = _winding_row(code_set.winding_minimums, winding, rated_voltage_v)
        if row.rule == "kv_plus_1":
            value = (rated_voltage_v / 1000.0 + 1.0) * 1e6
            basis = f"kV + 1 = {rated_voltage_v / 1000.0:g} + 1 MΩ ({row.description})"
        else:
            assert row.minimum_ir_ohm is not None
            value = row.minimum_ir_ohm
            basis = f"{value / 1e6:g} MΩ ({row.description})"
        return MinimumIr(value, reference, basis, row.citation)
    special = _special(code_set, circuit_kind)
    if special is not None:
        return MinimumIr(special.minimum_ir_ohm, reference, special.label, special.citation)
    band = _band(code_set, rated_voltage_v)
    if band.minimum_ir_ohm is None:
        raise ValueError(f"code set {code_set.name!r} gives no minimum IR for row {band.label}")
    return MinimumIr(band.minimum_ir_ohm, reference, f"rated {band.label}", band.citation)


def _winding_row(
    rows: Sequence[WindingMinimum], winding: str, rated_voltage_v: float
) -> WindingMinimum:
    """First winding-minimum row matching the kind and the rating (V)."""
    for row in rows:
        if row.winding != winding:
            continue
        if row.below_rated_v is not None and rated_voltage_v >= row.below_rated_v:
            continue
        return row
    raise ValueError(f"no minimum for winding {winding!r} rated {rated_voltage_v:g} V")


@dataclass(frozen=True)
class CorrectedResistance:
    """An IR reading brought to the code set's reference temperature."""

    measured_ohm: float
    measured_at_c: float
    corrected_ohm: float
    reference_c: float
    factor: float  # corrected / measured
    citation: Citation


def _rule(code_set: CodeSet) -> TemperatureCorrection:
    """The code set's temperature correction; ValueError naming the columns to choose from."""
    rule = code_set.temperature_correction
    if rule is not None:
        return rule
    if code_set.temperature_columns:
        columns = sorted(code_set.temperature_columns)
        raise ValueError(
            f"code set {code_set.name!r} has one correction column per kind of insulation "
            f"({', '.join(columns)}): name one, e.g. {code_set.name}/{columns[0]}")
    raise ValueError(f"code set {code_set.name!r} has no temperature correction")


def correction_range(code_set: CodeSet) -> tuple[float, float] | None:
    """(lowest, highest) temperature (°C) from which a reading is corrected, or None."""
    return _rule(code_set).valid_range_c


def correct_to_reference(
    code_set: CodeSet, resistance_ohm: float, temperature_c: float
) -> CorrectedResistance:
    """Bring a reading (Ω at °C) to the code set's reference temperature.

    IEEE Std 43: R40 = R_T·0.5^((40 − T)/10), only for readings at 10–60 °C (our bound,
    common practice: see the table file). NETA MTS Table 100.14: R20 = R_T·k(T), k from the
    code set's column, interpolated geometrically between points; outside 0–75 °C refused.
    A reading outside the range raises ValueError asking for a retest nearer the reference.
    """
    _check_positive("insulation resistance", resistance_ohm)
    if not math.isfinite(temperature_c):
        raise ValueError(f"temperature must be a finite number of °C (got {temperature_c!r})")
    rule = _rule(code_set)
    valid = rule.valid_range_c
    if valid is not None and not valid[0] <= temperature_c <= valid[1]:
        source = rule.range_citation or rule.citation
        raise ValueError(
            f"a reading at {temperature_c:g} °C is outside {valid[0]:g}–{valid[1]:g} °C, the "
            f"range the {code_set.name} correction to {rule.reference_c:g} °C is used for "
            f"({source}): test again with the insulation nearer {rule.reference_c:g} °C"
        )
    if rule.method == "halving":
        assert rule.halving_interval_c is not None
        factor = 0.5 ** ((rule.reference_c - temperature_c) / rule.halving_interval_c)
    else:
        factor = _interpolate_factor(rule.points, temperature_c, code_set.name)
    return CorrectedResistance(
        measured_ohm=resistance_ohm,
        measured_at_c=temperature_c,
        corrected_ohm=resistance_ohm * factor,
        reference_c=rule.reference_c,
        factor=factor,
        citation=rule.citation,
    )


def correction_instruction(code_set: CodeSet) -> str:
    """How the package's reading is corrected, and where not, in few words for the page."""
    rule = _rule(code_set)
    valid = rule.valid_range_c
    source = f"{rule.citation.document} ({rule.citation.edition})"
    if rule.method == "halving":
        how = (f"correct to {rule.reference_c:g} °C by halving per "
               f"{rule.halving_interval_c:g} °C rise ({source})")
    else:
        column = f", {rule.column_label}" if rule.column_label else ""
        how = f"correct to {rule.reference_c:g} °C with {rule.citation.clause}{column} ({source})"
    if valid is None:
        return how
    strength = (f" ({rule.range_citation.strength})" if rule.range_citation is not None
                and rule.range_citation.strength != "published" else "")
    return (f"{how}, for readings at {valid[0]:g}–{valid[1]:g} °C only{strength}; outside "
            f"that, test again nearer {rule.reference_c:g} °C")


def _interpolate_factor(
    points: Sequence[tuple[float, float]], temperature_c: float, name: str
) -> float:
    """Correction factor at °C, geometric between table points."""
    lo_t, hi_t = points[0][0], points[-1][0]
    if not lo_t <= temperature_c <= hi_t:
        raise ValueError(
            f"temperature {temperature_c:g} °C is outside the {name} correction table "
            f"({lo_t:g}–{hi_t:g} °C); retest nearer the table's range"
        )
    for (t0, k0), (t1, k1) in zip(points, points[1:], strict=False):
        if t0 <= temperature_c <= t1:
            if temperature_c == t0:
                return k0
            if temperature_c == t1:
                return k1
            # Geometric: the factors grow about twofold per 10 °C, so log k is near linear.
            share = (temperature_c - t0) / (t1 - t0)
            return math.exp(math.log(k0) + share * (math.log(k1) - math.log(k0)))
    return points[-1][1]


@dataclass(frozen=True)
class PolarizationJudgement:
    """Polarization index against the minimum for the insulation's thermal class."""

    index: float
    minimum: float
    passes: bool | None  # None when the PI is waived
    waived: bool
    citation: Citation
    note: str


def polarization_index(r_1min_ohm: float, r_10min_ohm: float) -> float:
    """PI = R(10 min)/R(1 min), dimensionless."""
    _check_positive("1-minute insulation resistance", r_1min_ohm)
    _check_positive("10-minute insulation resistance", r_10min_ohm)
    return r_10min_ohm / r_1min_ohm


def judge_polarization_index(
    code_set: CodeSet,
    r_1min_ohm: float,
    r_10min_ohm: float,
    thermal_class: str,
    r_1min_at_reference_ohm: float | None = None,
) -> PolarizationJudgement:
    """PI against the class minimum (IEEE Std 43: A 1.5; B, F, H 2.0).

    The PI may be disregarded when the 1-minute value at 40 °C exceeds 5000 MΩ (IEEE Std
    43, weakly confirmed); pass ``r_1min_at_reference_ohm`` for that test.
    """
    rule = code_set.polarization_index
    if rule is None:
        raise ValueError(f"code set {code_set.name!r} has no polarization-index table")
    cls = thermal_class.strip().upper()
    if cls not in rule.minimum_by_class:
        known = sorted(rule.minimum_by_class)
        raise ValueError(
            f"thermal class {thermal_class!r}{did_you_mean(cls, known)} is not in "
            f"{code_set.name}; known: {', '.join(known)}"
        )
    index = polarization_index(r_1min_ohm, r_10min_ohm)
    minimum = rule.minimum_by_class[cls]
    waived = (
        rule.waiver_above_ohm is not None
        and r_1min_at_reference_ohm is not None
        and r_1min_at_reference_ohm > rule.waiver_above_ohm
    )
    if waived:
        assert rule.waiver_above_ohm is not None
        citation = rule.waiver_citation or rule.citation
        note = (
            f"PI {index:.2f} disregarded: 1-minute IR above "
            f"{rule.waiver_above_ohm / 1e6:g} MΩ at the reference temperature"
        )
        return PolarizationJudgement(index, minimum, None, True, citation, note)
    passes = index >= minimum
    note = f"PI {index:.2f} {'meets' if passes else 'is below'} the class {cls} minimum {minimum:g}"
    return PolarizationJudgement(index, minimum, passes, False, rule.citation, note)


@dataclass(frozen=True)
class IrJudgement:
    """One IR reading corrected to the reference temperature and compared with the minimum."""

    corrected: CorrectedResistance | None  # None when the code set has no correction
    value_ohm: float  # the value compared (corrected when possible)
    minimum: MinimumIr
    passes: bool


def judge_insulation(
    code_set: CodeSet,
    resistance_ohm: float,
    temperature_c: float | None,
    rated_voltage_v: float,
    winding: str | None = None,
    circuit_kind: str | None = None,
    transformer: str | None = None,
) -> IrJudgement:
    """Correct a reading (Ω at °C) where the code set has a correction, then compare (Ω)."""
    _check_positive("insulation resistance", resistance_ohm)
    minimum = minimum_insulation_resistance(code_set, rated_voltage_v, winding, circuit_kind,
                                            transformer)
    corrected = None
    value = resistance_ohm
    if code_set.temperature_correction is not None or code_set.temperature_columns:
        if temperature_c is None:
            raise ValueError(
                f"{code_set.name} compares values at {minimum.reference_c:g} °C: give the "
                "winding or apparatus temperature of the reading"
            )
        corrected = correct_to_reference(code_set, resistance_ohm, temperature_c)
        value = corrected.corrected_ohm
    return IrJudgement(corrected, value, minimum, value >= minimum.minimum_ohm)


@dataclass(frozen=True)
class DatedReading:
    """One IR reading of an item: when, what (Ω) and at what temperature (°C)."""

    taken_on: date
    resistance_ohm: float
    temperature_c: float | None


class TrendStatus(StrEnum):
    """The verdict on a series of readings of one item."""

    INSUFFICIENT = "insufficient readings"
    BELOW_MINIMUM = "below minimum"
    REACHES_MINIMUM_SOON = "projected to reach the minimum"
    FALLING = "falling"
    STEADY = "steady"


@dataclass(frozen=True)
class TrendJudgement:
    """Trend of corrected IR readings of one item (Ω, dates)."""

    status: TrendStatus
    corrected_ohm: tuple[float, ...]  # oldest first
    dates: tuple[date, ...]
    latest_ohm: float | None  # None when no reading could be corrected
    minimum_ohm: float
    drop_fraction: float | None  # fall of the latest from the best earlier value
    rate_per_year: float | None  # fitted fractional change per year (-0.3: 30 % a year down)
    projected_minimum_on: date | None
    drop_threshold: float
    horizon_months: float
    citation: Citation
    note: str
    left_out: tuple[str, ...] = ()  # readings that could not be corrected, and why


def insulation_trend(
    code_set: CodeSet,
    readings: Sequence[DatedReading],
    minimum_ohm: float,
    drop_threshold: float = 0.5,
    horizon_months: float = 12.0,
) -> TrendJudgement:
    """Judge dated readings of one item after correcting each to the reference temperature.

    Flags a latest corrected value below ``minimum_ohm``; a fall of more than
    ``drop_threshold`` from the best earlier value; or a fitted exponential decline
    (least squares on log R against time) reaching the minimum within ``horizon_months``.
    Thresholds: common practice, not a published limit. A reading that cannot be corrected
    (no temperature, or one outside the correction's range) is left out and listed in
    ``left_out``, exactly as the judging of a package's reading leaves it unjudged.
    """
    _check_positive("minimum insulation resistance", minimum_ohm)
    if not 0 < drop_threshold < 1:
        raise ValueError(f"drop threshold must be between 0 and 1 (got {drop_threshold!r})")
    _check_positive("horizon", horizon_months)
    if not readings:
        raise ValueError("a trend needs at least one reading")
    ordered = sorted(readings, key=lambda r: r.taken_on)
    values: list[float] = []
    kept: list[date] = []
    left_out: list[str] = []
    corrects = code_set.temperature_correction is not None or bool(code_set.temperature_columns)
    for r in ordered:
        _check_positive("insulation resistance", r.resistance_ohm)
        if not corrects:
            values.append(r.resistance_ohm)
        elif r.temperature_c is None:
            left_out.append(f"{r.taken_on.isoformat()}: no temperature; {code_set.name} "
                            "compares corrected values")
            continue
        else:
            try:
                corrected = correct_to_reference(code_set, r.resistance_ohm, r.temperature_c)
            except ValueError as problem:
                left_out.append(f"{r.taken_on.isoformat()}: {problem}")
                continue
            values.append(corrected.corrected_ohm)
        kept.append(r.taken_on)
    dates = tuple(kept)
    if not values:
        return TrendJudgement(
            status=TrendStatus.INSUFFICIENT, corrected_ohm=(), dates=(), latest_ohm=None,
            minimum_ohm=minimum_ohm, drop_fraction=None, rate_per_year=None,
            projected_minimum_on=None, drop_threshold=drop_threshold,
            horizon_months=horizon_months, citation=TREND_CITATION,
            note="no reading could be corrected: no trend", left_out=tuple(left_out))
    latest = values[-1]
    drop = None
    if len(values) >= 2:
        best_before = max(values[:-1])
        drop = max(0.0, 1.0 - latest / best_before)
    rate = None
    projected: date | None = None
    span_days = (dates[-1] - dates[0]).days
    if len(values) >= 2 and span_days > 0:
        xs = [(d - dates[0]).days for d in dates]
        ys = [math.log(v) for v in values]
        mean_x = sum(xs) / len(xs)
        mean_y = sum(ys) / len(ys)
        sxx = sum((x - mean_x) ** 2 for x in xs)
        slope = sum((x - mean_x) * (y - mean_y) for x, y in zip(xs, ys, strict=True)) / sxx
        # A dry-out can multiply the resistance in days: a yearly rate of that rise is
        # past any float (and means nothing); it is left unstated.
        rate = math.expm1(slope * 365.25) if slope * 365.25 < 700 else None
        if slope < 0:
            fitted_latest = math.exp(mean_y + slope * (xs[-1] - mean_x))
            if fitted_latest > minimum_ohm:
                days = math.log(minimum_ohm / fitted_latest) / slope
                projected = date.fromordinal(dates[-1].toordinal() + math.ceil(days))
            else:
                projected = dates[-1]

    def verdict(status: TrendStatus, note: str) -> TrendJudgement:
        """The judgement with the shared figures filled in."""
        return TrendJudgement(
            status=status,
            corrected_ohm=tuple(values),
            dates=dates,
            latest_ohm=latest,
            minimum_ohm=minimum_ohm,
            drop_fraction=drop,
            rate_per_year=rate,
            projected_minimum_on=projected,
            drop_threshold=drop_threshold,
            horizon_months=horizon_months,
            citation=TREND_CITATION,
            note=note,
            left_out=tuple(left_out),
        )

    if latest < minimum_ohm:
        return verdict(
            TrendStatus.BELOW_MINIMUM,
            f"latest corrected value {format_quantity(latest, 'MΩ')} is below the minimum "
            f"{format_quantity(minimum_ohm, 'MΩ')}",
        )
    if len(values) < 2:
        return verdict(TrendStatus.INSUFFICIENT, "one reading: no trend yet")
    if projected is not None:
        months = (projected - dates[-1]).days / _DAYS_PER_MONTH
        if months <= horizon_months:
            return verdict(
                TrendStatus.REACHES_MINIMUM_SOON,
                f"fitted decline reaches the minimum in about {months:.0f} months "
                f"({projected.isoformat()})",
            )
    if drop is not None and drop > drop_threshold:
        return verdict(
            TrendStatus.FALLING,
            f"latest corrected value is {drop:.0%} below the best earlier value",
        )
    return verdict(
        TrendStatus.STEADY,
        "no fall beyond the threshold and no projected breach within the horizon",
    )
