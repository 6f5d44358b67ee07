"""Load a code set (one document's tables) from ``workpack/data/standards/<name>.yaml``.

The only module of ``workpack.electrical`` that reads files: the calculation modules take
the loaded ``CodeSet`` (plain frozen data) as an argument. The YAML is validated with
pydantic models that forbid unknown keys, so a misspelled key in a table fails loudly.
"""

from __future__ import annotations

from dataclasses import replace
from functools import cache
from pathlib import Path
from typing import Literal

from pydantic import BaseModel, ConfigDict, ValidationError

from workpack.electrical.standards import (
    ApproachBoundary,
    Citation,
    CodeSet,
    GuideValue,
    PolarizationIndexRule,
    SpecialCircuit,
    Strength,
    TemperatureCorrection,
    TransformerWindingBand,
    VoltageBand,
    WindingMinimum,
)
from workpack.errors import did_you_mean
from workpack.shipped import standards_folder

_MEGOHM = 1e6


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class _CitationIn(_Strict):
    clause: str
    strength: Strength
    note: str = ""
    document: str | None = None
    edition: str | None = None


class _BandIn(_Strict):
    label: str
    up_to_v: float | None
    up_to_inclusive: bool = True
    dc_test_v: tuple[float, float]
    minimum_ir_megohm: float | None = None


class _TestVoltageIn(_Strict):
    citation: _CitationIn
    from_v: float = 0.0
    bands: list[_BandIn]


class _SpecialIn(_Strict):
    kind: str
    label: str
    dc_test_v: tuple[float, float]
    minimum_ir_megohm: float


class _WindingRowIn(_Strict):
    winding: str
    rule: Literal["kv_plus_1", "fixed"]
    minimum_ir_megohm: float | None = None
    below_rated_v: float | None = None
    description: str
    strength: Strength | None = None
    note: str = ""


class _WindingIn(_Strict):
    citation: _CitationIn
    rows: list[_WindingRowIn]


class _ColumnIn(_Strict):
    name: str
    label: str
    points: list[tuple[float, float]]


class _TemperatureIn(_Strict):
    method: Literal["halving", "factors"]
    reference_c: float
    halving_interval_c: float | None = None
    points: list[tuple[float, float]] = []
    columns: list[_ColumnIn] = []
    valid_from_c: float | None = None
    valid_to_c: float | None = None
    range_citation: _CitationIn | None = None
    citation: _CitationIn


class _TransformerBandIn(_Strict):
    label: str
    up_to_v: float | None
    up_to_inclusive: bool = True
    dc_test_v: tuple[float, float]
    liquid_filled_megohm: float
    dry_type_megohm: float


class _TransformerIn(_Strict):
    citation: _CitationIn
    bands: list[_TransformerBandIn]


class _PolarizationIn(_Strict):
    minimum_by_class: dict[str, float]
    citation: _CitationIn
    waiver_above_megohm: float | None = None
    waiver_citation: _CitationIn | None = None


class _DistanceIn(_Strict):
    m: float | None
    text: str


class _BoundaryRowIn(_Strict):
    label: str
    from_v: float
    up_to_v: float
    limited_movable: _DistanceIn
    limited_fixed: _DistanceIn
    restricted: _DistanceIn


class _BoundariesIn(_Strict):
    citation: _CitationIn
    rows: list[_BoundaryRowIn]


class _GuideIn(_Strict):
    name: str
    value: float
    unit: str
    low: float | None = None
    high: float | None = None
    description: str
    citation: _CitationIn


class _CodeSetIn(_Strict):
    name: str
    title: str
    document: str
    edition: str
    test_voltage: _TestVoltageIn | None = None
    special_circuits: list[_SpecialIn] = []
    winding_minimums: _WindingIn | None = None
    temperature_correction: _TemperatureIn | None = None
    transformer_windings: _TransformerIn | None = None
    polarization_index: _PolarizationIn | None = None
    approach_boundaries: _BoundariesIn | None = None
    guide_values: list[_GuideIn] = []


def _folder() -> Path:
    """The folder of shipped standards tables inside the package."""
    return standards_folder()


def _files() -> tuple[str, ...]:
    """Names of the shipped tables files, sorted."""
    folder = _folder()
    return tuple(
        sorted(p.name[: -len(".yaml")] for p in folder.iterdir() if p.name.endswith(".yaml"))
    )


@cache
def available_code_sets() -> tuple[str, ...]:
    """Names of the shipped code sets, sorted: one per file, and one per column of a
    correction table with several ("neta-mts-2019/oil", "neta-mts-2019/solid")."""
    names: list[str] = []
    for name in _files():
        names.append(name)
        names.extend(f"{name}/{column}" for column in load_code_set(name).temperature_columns)
    return tuple(sorted(names))


def _cite(doc: _CodeSetIn, c: _CitationIn) -> Citation:
    """A Citation, taking document and edition from the file unless given."""
    return Citation(
        document=c.document or doc.document,
        edition=c.edition or doc.edition,
        clause=c.clause,
        strength=c.strength,
        note=c.note,
    )


def _ohm(megohm: float | None) -> float | None:
    """MΩ as printed in the table to Ω."""
    return None if megohm is None else megohm * _MEGOHM


def _build(doc: _CodeSetIn) -> CodeSet:
    """Validated YAML model to plain frozen dataclasses in SI units."""
    bands: tuple[VoltageBand, ...] = ()
    from_v = 0.0
    special: list[SpecialCircuit] = []
    if doc.test_voltage is not None:
        tv = doc.test_voltage
        cite = _cite(doc, tv.citation)
        from_v = tv.from_v
        bands = tuple(
            VoltageBand(
                label=b.label,
                up_to_v=b.up_to_v,
                up_to_inclusive=b.up_to_inclusive,
                dc_test_min_v=b.dc_test_v[0],
                dc_test_max_v=b.dc_test_v[1],
                minimum_ir_ohm=_ohm(b.minimum_ir_megohm),
                citation=cite,
            )
            for b in tv.bands
        )
        for s in doc.special_circuits:
            special.append(
                SpecialCircuit(
                    kind=s.kind,
                    label=s.label,
                    dc_test_min_v=s.dc_test_v[0],
                    dc_test_max_v=s.dc_test_v[1],
                    minimum_ir_ohm=s.minimum_ir_megohm * _MEGOHM,
                    citation=cite,
                )
            )
    windings: tuple[WindingMinimum, ...] = ()
    if doc.winding_minimums is not None:
        base = doc.winding_minimums.citation
        windings = tuple(
            WindingMinimum(
                winding=r.winding,
                rule=r.rule,
                minimum_ir_ohm=_ohm(r.minimum_ir_megohm),
                below_rated_v=r.below_rated_v,
                description=r.description,
                citation=_cite(
                    doc,
                    base
                    if r.strength is None
                    else _CitationIn(clause=base.clause, strength=r.strength, note=r.note),
                ),
            )
            for r in doc.winding_minimums.rows
        )
    temperature = None
    columns: dict[str, TemperatureCorrection] = {}
    if doc.temperature_correction is not None:
        t = doc.temperature_correction

        def correction(points: list[tuple[float, float]], column: str | None = None,
                       label: str = "") -> TemperatureCorrection:
            """One column of the correction table (the only one, for most tables)."""
            return TemperatureCorrection(
                method=t.method, reference_c=t.reference_c,
                halving_interval_c=t.halving_interval_c,
                points=tuple((float(a), float(b)) for a, b in sorted(points)),
                citation=_cite(doc, t.citation), valid_from_c=t.valid_from_c,
                valid_to_c=t.valid_to_c,
                range_citation=None if t.range_citation is None
                else _cite(doc, t.range_citation),
                column=column, column_label=label)

        if t.columns:
            columns = {c.name: correction(c.points, c.name, c.label) for c in t.columns}
        else:
            temperature = correction(t.points)
    transformer: tuple[TransformerWindingBand, ...] = ()
    if doc.transformer_windings is not None:
        cite = _cite(doc, doc.transformer_windings.citation)
        transformer = tuple(
            TransformerWindingBand(
                label=b.label, up_to_v=b.up_to_v, up_to_inclusive=b.up_to_inclusive,
                dc_test_min_v=b.dc_test_v[0], dc_test_max_v=b.dc_test_v[1],
                minimum_liquid_filled_ohm=b.liquid_filled_megohm * _MEGOHM,
                minimum_dry_type_ohm=b.dry_type_megohm * _MEGOHM, citation=cite)
            for b in doc.transformer_windings.bands
        )
    pi = None
    if doc.polarization_index is not None:
        p = doc.polarization_index
        pi = PolarizationIndexRule(
            minimum_by_class=dict(p.minimum_by_class),
            waiver_above_ohm=_ohm(p.waiver_above_megohm),
            citation=_cite(doc, p.citation),
            waiver_citation=None if p.waiver_citation is None else _cite(doc, p.waiver_citation),
        )
    boundaries: tuple[ApproachBoundary, ...] = ()
    if doc.approach_boundaries is not None:
        cite = _cite(doc, doc.approach_boundaries.citation)
        rows = []
        for r in doc.approach_boundaries.rows:
            if r.limited_movable.m is None or r.limited_fixed.m is None:
                raise ValueError(f"code set {doc.name}: row {r.label} needs limited boundaries")
            rows.append(
                ApproachBoundary(
                    label=r.label,
                    from_v=r.from_v,
                    up_to_v=r.up_to_v,
                    limited_movable_m=r.limited_movable.m,
                    limited_movable_text=r.limited_movable.text,
                    limited_fixed_m=r.limited_fixed.m,
                    limited_fixed_text=r.limited_fixed.text,
                    restricted_m=r.restricted.m,
                    restricted_text=r.restricted.text,
                    citation=cite,
                )
            )
        boundaries = tuple(rows)
    guides = {
        g.name: GuideValue(
            name=g.name,
            value=g.value,
            unit=g.unit,
            low=g.low,
            high=g.high,
            description=g.description,
            citation=_cite(doc, g.citation),
        )
        for g in doc.guide_values
    }
    return CodeSet(
        name=doc.name,
        title=doc.title,
        document=doc.document,
        edition=doc.edition,
        voltage_from_v=from_v,
        voltage_bands=bands,
        special_circuits=tuple(special),
        winding_minimums=windings,
        temperature_correction=temperature,
        polarization_index=pi,
        approach_boundaries=boundaries,
        guide_values=guides,
        transformer_windings=transformer,
        temperature_columns=columns,
    )


@cache
def load_code_set(name: str) -> CodeSet:
    """The tables of one code set, e.g. "ieee43-2013", "neta-mts-2019/solid", "iec60364-6",
    "nfpa70e-2021" or "it-system-guides". ValueError for an unknown name.

    "<file>/<column>" is the file's tables with that column of its temperature-correction
    table as the correction (the column is chosen by the equipment tested)."""
    base, _, column = name.partition("/")
    if column:
        whole = load_code_set(base)
        if column not in whole.temperature_columns:
            known_columns = sorted(whole.temperature_columns)
            raise ValueError(
                f"code set {base!r} has no correction column {column!r}"
                f"{did_you_mean(column, known_columns)}; known: "
                f"{', '.join(known_columns) or 'none'}")
        chosen = whole.temperature_columns[column]
        return replace(whole, name=name, title=f"{whole.title} ({chosen.column_label})",
                       temperature_correction=chosen)
    known = _files()
    if name not in known:
        raise ValueError(
            f"unknown code set {name!r}{did_you_mean(name, known)}; known: {', '.join(known)}"
        )
    import yaml  # here, not above: importing the calculations must not load a parser

    text = _folder().joinpath(f"{name}.yaml").read_text(encoding="utf-8")
    try:
        doc = _CodeSetIn.model_validate(yaml.safe_load(text))
    except ValidationError as exc:
        raise ValueError(f"standards table {name}.yaml is malformed: {exc}") from exc
    if doc.name != name:
        raise ValueError(f"standards table {name}.yaml names itself {doc.name!r}")
    return _build(doc)
