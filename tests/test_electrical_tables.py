"""The shipped standards tables: every file loads, names its source and strength, and
holds exactly the values SOURCES.md gives."""

from __future__ import annotations

import pytest

from workpack.electrical import available_code_sets, load_code_set
from workpack.electrical.standards import STRENGTHS, Citation, CodeSet

MEG = 1e6


def _citations(cs: CodeSet) -> list[Citation]:
    found = [b.citation for b in cs.voltage_bands]
    found += [s.citation for s in cs.special_circuits]
    found += [w.citation for w in cs.winding_minimums]
    found += [b.citation for b in cs.approach_boundaries]
    found += [g.citation for g in cs.guide_values.values()]
    if cs.temperature_correction:
        found.append(cs.temperature_correction.citation)
    if cs.polarization_index:
        found.append(cs.polarization_index.citation)
        if cs.polarization_index.waiver_citation:
            found.append(cs.polarization_index.waiver_citation)
    return found


def test_the_expected_code_sets_ship() -> None:
    """The code sets the brief names are all selectable."""
    assert {"ieee43-2013", "ieee43-2000", "neta-mts-2019", "iec60364-6", "nfpa70e-2021",
            "nfpa70e-2018", "it-system-guides"} <= set(available_code_sets())


@pytest.mark.parametrize("name", available_code_sets())
def test_every_table_names_source_edition_clause_and_strength(name: str) -> None:
    """Each value carries document, edition, clause and one of the three strengths."""
    cs = load_code_set(name)
    cites = _citations(cs)
    assert cites, f"{name} holds no table"
    for c in cites:
        assert c.document and c.edition and c.clause
        assert c.strength in STRENGTHS


def test_unknown_code_set_suggests_the_near_name() -> None:
    """A misspelled name fails with the nearest known names."""
    with pytest.raises(ValueError, match="did you mean 'ieee43-2013'"):
        load_code_set("ieee43-2031")


def test_neta_table_100_1_values() -> None:
    """ANSI/NETA MTS-2019 Table 100.1, row by row (SOURCES.md)."""
    cs = load_code_set("neta-mts-2019")
    rows = [(b.up_to_v, b.dc_test_min_v, b.minimum_ir_ohm) for b in cs.voltage_bands]
    assert rows == [
        (250, 500, 25 * MEG), (600, 1000, 100 * MEG), (1000, 1000, 100 * MEG),
        (2500, 1000, 500 * MEG), (5000, 2500, 1500 * MEG), (8000, 2500, 2500 * MEG),
        (15000, 2500, 5000 * MEG), (25000, 5000, 10000 * MEG), (None, 5000, 100000 * MEG),
    ]
    assert cs.voltage_bands[0].citation.clause == "Table 100.1"


def test_nfpa70e_boundaries() -> None:
    """NFPA 70E-2021 Table 130.4(E)(a) (SOURCES.md): limited movable / fixed / restricted."""
    cs = load_code_set("nfpa70e-2021")
    rows = [(b.label, b.limited_movable_m, b.limited_fixed_m, b.restricted_m,
             b.limited_fixed_text, b.restricted_text) for b in cs.approach_boundaries]
    assert rows == [
        ("50–150 V", 3.0, 1.0, None, "3 ft 6 in", "avoid contact"),
        ("151–750 V", 3.0, 1.0, 0.3, "3 ft 6 in", "1 ft 0 in"),
        ("751 V–15 kV", 3.0, 1.5, 0.7, "5 ft 0 in", "2 ft 2 in"),
    ]
    assert cs.approach_boundaries[0].citation.clause == "Table 130.4(E)(a)"
    assert load_code_set("nfpa70e-2018").approach_boundaries[0].citation.clause == (
        "Table 130.4(D)(a)"
    )


def test_it_system_guide_values() -> None:
    """Guide figures as SOURCES.md gives them: 150 pF/m; 10–100 nF; 50 Ω/V; 1–2 A at
    480 V; 5.5 pu example; 6–7 pu failure; 30 mA (SOLAS II-1 reg. 45.3)."""
    g = load_code_set("it-system-guides")
    assert g.guide("cable_capacitance_per_conductor").value == pytest.approx(150e-12)
    s = g.guide("suppression_capacitor")
    assert (s.low, s.high) == pytest.approx((10e-9, 100e-9))
    assert g.guide("insulation_monitor_response_per_volt").value == 50.0
    c = g.guide("charging_current_480v")
    assert (c.low, c.high) == (1.0, 2.0)
    assert g.guide("intermittent_ground_overvoltage_example").value == 5.5
    f = g.guide("insulation_failure_overvoltage")
    assert (f.low, f.high) == (6.0, 7.0)
    assert g.guide("insulation_monitor_circulating_current_max").value == pytest.approx(0.030)
    with pytest.raises(ValueError, match="known:"):
        g.guide("nonexistent")


def test_editions_differ_only_where_sources_say() -> None:
    """IEEE 43-2000 vs 2013: same test voltages and PI minima, DC armatures 100 → 5 MΩ
    (SOURCES.md: 'since 2013 also DC armatures'); 2000 rows marked from memory."""
    new, old = load_code_set("ieee43-2013"), load_code_set("ieee43-2000")
    assert [(b.dc_test_min_v, b.dc_test_max_v) for b in new.voltage_bands] == [
        (b.dc_test_min_v, b.dc_test_max_v) for b in old.voltage_bands
    ]
    assert new.polarization_index and old.polarization_index
    assert new.polarization_index.minimum_by_class == old.polarization_index.minimum_by_class
    assert all(c.strength == "from memory" for c in _citations(old))
