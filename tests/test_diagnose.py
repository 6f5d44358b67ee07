"""A day's findings diagnosed in their systems, and what they say together."""

from __future__ import annotations

import json
import math

import pytest
from conftest import ROOT

from workpack.calculations import CALCULATIONS, CalcContext
from workpack.cli import main
from workpack.diagnose import (
    detector_burden_ohm,
    diagnose_day,
    insulation_tests,
    island_burden,
)
from workpack.electrical import (
    GroundHazard,
    GroundStatus,
    MeterTolerance,
    diagnose_ground,
    single_ground,
)
from workpack.loading import load_findings, load_findings_text
from workpack.model.findings import Severity
from workpack.model.package import SignalWord
from workpack.summary import island_capacitance
from workpack.topology import Topology

VESSEL = ROOT / "plants" / "demo-vessel.yaml"
FINDINGS = ROOT / "plants" / "demo-vessel-findings.yaml"

HEAD = "date: 2026-12-01\nfindings:\n"


def day(topology: Topology, standards: dict, body: str, file: str = "f.yaml"):
    findings = load_findings_text(HEAD + body if file.endswith(".yaml") else body, file,
                                  topology)
    return diagnose_day(topology.plant, topology, findings, standards)


def test_capacitance_estimate_is_cable_length_times_per_metre_plus_filters(
    demo_vessel: Topology,
) -> None:
    """The 440 V system: every listed cable × 150 pF/m, plus the three EMC filters."""
    island = demo_vessel.island_of("MSB")
    lengths = [c.length for c in demo_vessel.plant.cables
               if demo_vessel.island_of(c.id) is island]
    expected = sum(lengths) * 150e-12 + (100e-9 + 100e-9 + 47e-9)
    capacitance, basis = island_capacitance(demo_vessel.plant, demo_vessel, island)
    assert capacitance == pytest.approx(expected, rel=1e-12)
    assert basis == (f"{len(lengths)} of the {len(lengths)} cables listed in the plant file "
                     "and 3 equipment filters")


def test_demo_day_finds_the_resistive_ground_on_b_not_the_lowest_phase_c(
    demo_vessel: Topology, standards: dict,
) -> None:
    findings = load_findings(FINDINGS, demo_vessel)
    result = diagnose_day(demo_vessel.plant, demo_vessel, findings, standards)
    voltages = next(d for d in result.diagnoses if d.kind == "phase_voltages")
    assert voltages.ground is not None and voltages.ground.phase == "B"
    assert voltages.detail.lowest_reading_phase == "C"
    # The demo readings were made from a 5.62 kΩ ground with the plant's capacitance
    # (derived: Rf = x / (3ωC0) for x = 2.5); the reported interval, with the emergency
    # board's 200 kΩ voltmeters in the model, must hold it.
    c0 = voltages.capacitance_per_phase_f
    made_with = 2.5 / (3 * 2 * math.pi * 60 * c0)
    low, high = voltages.detail.fault_resistance_interval_ohm
    assert low <= made_with <= high
    assert voltages.detail.burden_ohm == pytest.approx(200e3)
    assert voltages.severity is Severity.high
    [second] = [n for n in voltages.cautions if n.kind is GroundHazard.second_ground]
    assert second.signal_word is SignalWord.danger and "second ground" in second.text


def test_bolted_grounds_on_two_phases_of_one_system_are_urgent(
    demo_vessel: Topology, standards: dict,
) -> None:
    """Bolted ground: faulted phase ~0 V, others at line voltage (Mitolo, ch. 9, 9.11-9.13)."""
    result = day(demo_vessel, standards, """
  - {kind: phase_voltages, at: 2026-12-01T07:00, by: x, where: GD-MSB,
     volts: {A: 1 V, B: 440 V, C: 440 V}}
  - {kind: lamps, at: 2026-12-01T08:00, by: x, where: GD-ESB,
     lamps: {A: bright, B: bright, C: dark}}
""")
    phases = sorted(g.phase for g in result.grounds)
    assert phases == ["A", "C"]
    urgent = [c for c in result.conclusions if c.severity is Severity.urgent]
    assert len(urgent) == 1
    assert "grounds on phases A and C of the MSB system" in urgent[0].text
    assert urgent[0].findings == ("F1", "F2")


def test_same_phase_twice_is_not_a_second_ground(demo_vessel: Topology, standards) -> None:
    result = day(demo_vessel, standards, """
  - {kind: phase_voltages, at: 2026-12-01T07:00, by: x, where: GD-MSB,
     volts: {A: 1 V, B: 440 V, C: 440 V}}
  - {kind: lamps, at: 2026-12-01T08:00, by: x, where: GD-ESB,
     lamps: {A: dark, B: bright, C: bright}}
""")
    assert not [c for c in result.conclusions if "phase-to-phase" in c.text]


def test_grounds_on_both_sides_of_a_normally_open_tie_forbid_closing_it(
    demo_vessel: Topology, standards: dict,
) -> None:
    result = day(demo_vessel, standards, """
  - {kind: lamps, at: 2026-12-01T07:00, by: x, where: GD-LP,
     lamps: {A: dark, B: bright, C: bright}}
  - {kind: lamps, at: 2026-12-01T07:10, by: x, where: GD-ELP,
     lamps: {A: bright, B: dark, C: bright}}
""")
    assert any(c.text.startswith("do not close CB-LTIE") and c.severity is Severity.urgent
               for c in result.conclusions)


def test_open_delta_over_capacity_says_how_much_to_shed(demo_vessel, standards) -> None:
    """Three 25 kVA units: open delta carries 75/√3 = 43.3 kVA (SOURCES.md: 57.7 %)."""
    result = day(demo_vessel, standards, """
  - {kind: transformer_unit, at: 2026-12-01T10:00, by: x, where: T1, unit: BC, state: failed,
     load: 48 kVA}
""")
    diagnosis = result.diagnoses[0]
    capacity = 75e3 / math.sqrt(3)
    assert diagnosis.detail.open_delta_capacity_va == pytest.approx(capacity)
    assert diagnosis.detail.load_to_shed_va == pytest.approx(48e3 - capacity)
    assert diagnosis.severity is Severity.urgent
    assert "shed 4.7 kVA" in diagnosis.summary


def test_open_delta_within_capacity_uses_connected_load_when_not_measured(
    demo_vessel, standards,
) -> None:
    result = day(demo_vessel, standards, """
  - {kind: transformer_unit, at: 2026-12-01T10:00, by: x, where: T1, unit: AB, state: failed}
""")
    diagnosis = result.diagnoses[0]
    # Loads behind T1 in the demo: 2.4 + 2.4 + 3 + 4 + 3 + 3 kW, taken as kVA (no diversity).
    assert diagnosis.detail.load_va == pytest.approx(17.8e3)
    assert diagnosis.detail.load_fits and diagnosis.severity is Severity.high


def test_low_megger_reading_on_a_motor_is_corrected_and_fails(demo_vessel, standards) -> None:
    """IEEE 43 halving rule: 1.2 MΩ at 30 °C is 0.6 MΩ at 40 °C; minimum 5 MΩ for a
    random-wound stator (IEEE Std 43-2013, 12.3)."""
    result = day(demo_vessel, standards, """
  - {kind: insulation_resistance, at: 2026-12-01T09:40, by: x, where: WL-1,
     test_voltage: 500 V, reading: 1.2 MΩ, temperature: 30 °C}
""")
    judgement = result.diagnoses[0].detail
    assert judgement.value_ohm == pytest.approx(0.6e6)
    assert judgement.minimum.minimum_ohm == pytest.approx(5e6)
    assert not judgement.passes and result.diagnoses[0].severity is Severity.high


def test_insulation_monitor_below_its_alarm_is_an_alarm(demo_site: Topology, standards) -> None:
    result = day(demo_site, standards, """
  - {kind: insulation_monitor, at: 2026-12-01T05:00, by: x, where: IMD-MSB, reading: 18 kΩ}
""")
    diagnosis = result.diagnoses[0]
    assert diagnosis.detail.severity.value == "alarm"
    assert diagnosis.ground is not None and diagnosis.ground.phase is None


def test_rounds_log_csv_gives_the_same_diagnosis_as_yaml(demo_vessel, standards) -> None:
    # The MSB system as the plant describes it: its capacitance and the emergency board's
    # 200 kΩ voltmeters wired to earth all the time.
    readings = single_ground(440, 60, 0.393e-6, "A", 2000.0,
                             burden_ohm=200e3).phase_to_earth_magnitude_v
    volts = {k: round(v) for k, v in readings.items()}
    csv_text = ("at,by,where,kind,A,B,C\n"
                f"2026-12-01T07:00,x,GD-MSB,phase_voltages,{volts['A']},{volts['B']},"
                f"{volts['C']}\n")
    from_csv = day(demo_vessel, standards, csv_text, file="rounds.csv")
    from_yaml = day(demo_vessel, standards, f"""
  - {{kind: phase_voltages, at: 2026-12-01T07:00, by: x, where: GD-MSB,
     volts: {{A: {volts['A']}, B: {volts['B']}, C: {volts['C']}}}}}
""")
    assert from_csv.diagnoses[0].summary == from_yaml.diagnoses[0].summary
    assert from_csv.diagnoses[0].ground.phase == "A"


def test_csv_errors_name_row_and_column(demo_vessel: Topology) -> None:
    from workpack.errors import InputError

    with pytest.raises(InputError) as caught:
        load_findings_text("at,by,where,kind,A,B,C\n2026-12-01T07:00,x,GD-MSB,phase_voltages,"
                           "400,60 A,470\n", "rounds.csv", demo_vessel)
    assert caught.value.format_message() == (
        "rounds.csv:2:46: findings[0].volts.B: 'A' is not a unit of voltage: it is a unit "
        "of current (expected something like V)")


def test_findings_naming_unknown_places_and_phases_are_refused(demo_vessel) -> None:
    from workpack.errors import InputError

    with pytest.raises(InputError) as caught:
        load_findings_text(HEAD + """
  - {kind: lamps, at: 2026-12-01T07:00, by: x, where: GD-MBS, lamps: {A: dark}}
  - {kind: lamps, at: 2026-12-01T07:00, by: x, where: GD-MSB, lamps: {A: dark, B: dim}}
  - {kind: breaker_tripped, at: 2026-12-01T07:00, by: x, where: MSB}
""", "f.yaml", demo_vessel)
    assert caught.value.format_message().splitlines() == [
        "f.yaml:4:55: findings[0].where: unknown element or detector 'GD-MBS' "
        "(did you mean 'GD-MSB' or 'GD-ESB'?)",
        "f.yaml:5:70: findings[1].lamps: phases ['A', 'B'] do not match the plant's phase "
        "labels ['A', 'B', 'C']; give one value for each",
        "f.yaml:6:65: findings[2].where: 'MSB' is not a switching device",
    ]


def test_diagnose_command_prints_conclusions_first(capsys) -> None:
    assert main(["diagnose", str(VESSEL), str(FINDINGS)]) == 0
    out = capsys.readouterr().out
    assert out.index("Taken together:") < out.index("F1 ")
    assert "[URGENT] T1 (main lighting bank) in open delta" in out


def test_quick_mode_json_has_the_promised_keys(capsys) -> None:
    """The issue's example: 440 V, 60 Hz, C0 2.2 µF, A=400 B=60 C=470."""
    assert main(["diagnose", "--volts", "440", "--hertz", "60", "--capacitance-per-phase",
                 "2.2e-6", "--reading", "A=400", "--reading", "B=60", "--reading", "C=470",
                 "--json"]) == 0
    answer = json.loads(capsys.readouterr().out)
    assert {"grounded_phase", "fault_resistance_ohm", "neutral_shift_v", "fault_current_a",
            "consistent"} <= set(answer)
    # Derived: C = 470 V exceeds (1+√7)/2 × 254 V = 463 V, the most one ground can
    # give, so no single ground fits and nothing is claimed.
    assert answer["consistent"] is False
    assert answer["grounded_phase"] is None and answer["fault_resistance_ohm"] is None


def test_quick_mode_recovers_a_forward_model_ground(capsys) -> None:
    readings = single_ground(440, 60, 2.2e-6, "B", 98.0).phase_to_earth_magnitude_v
    args = ["diagnose", "--volts", "440", "--hertz", "60", "--capacitance-per-phase", "2.2uF"]
    for phase, value in readings.items():
        args += ["--reading", f"{phase}={value:.0f}"]
    assert main([*args, "--json"]) == 0
    answer = json.loads(capsys.readouterr().out)
    assert answer["grounded_phase"] == "B" and answer["consistent"] is True
    low, high = answer["fault_resistance_interval_ohm"]
    assert low <= 98.0 <= high


@pytest.mark.parametrize(("args", "message"), [
    (["--volts", "440", "--reading", "A=1"], "give one reading for each of three phases"),
    (["--volts", "440", "--reading", "A=1", "--reading", "B=2", "--reading", "C=x"],
     "--reading C=x: expected a number with a unit"),
    (["--volts", "zero", "--reading", "A=1"], "--volts zero"),
    (["--volts", "440", "--capacitance-per-phase", "2uF", "--reading", "A=1",
      "--reading", "B=2", "--reading", "C=3"], "needs --hertz"),
    (["plant.yaml"], "give PLANT FINDINGS, or quick mode"),
])
def test_quick_mode_bad_options_are_one_line_exit_2(args, message, capsys) -> None:
    assert main(["diagnose", *args]) == 2
    err = capsys.readouterr().err
    assert message in err and len(err.splitlines()) == 1


def test_quick_mode_with_frequency_but_no_capacitance_gives_the_displacement(capsys) -> None:
    """The example printed in the command's own usage message must work."""
    assert main(["diagnose", "--volts", "440", "--hertz", "60", "--reading", "A=460",
                 "--reading", "B=60", "--reading", "C=400", "--json"]) == 0
    answer = json.loads(capsys.readouterr().out)
    assert answer["grounded_phase"] == "B" and answer["fault_resistance_ohm"] is None
    assert answer["neutral_shift_v"] > 0


# --- the detector's own burden --------------------------------------------------------------


def test_detector_burden_comes_from_the_inventory(demo_vessel: Topology, demo_site) -> None:
    """Lamps: R = V²/P (Ohm's law with P = V·I): 130² / 15 = 1126.7 Ω per phase. A declared
    burden is taken as given. An insulation monitor's internal impedance Z from the whole
    system to earth is three equal branches of 3Z per phase (parallel resistances)."""
    lp = demo_vessel.elements["LP-MAIN"].detector
    assert detector_burden_ohm(lp) == pytest.approx(130.0**2 / 15.0)
    assert detector_burden_ohm(demo_vessel.elements["ESB"].detector) == pytest.approx(200e3)
    assert detector_burden_ohm(demo_site.elements["ICP"].detector) == pytest.approx(3 * 120e3)


def test_lamps_load_the_system_only_while_their_button_is_pressed(demo_vessel) -> None:
    """The main board's lamps are earthed through their test button (connected:
    while_testing); the emergency board's voltmeters are wired to earth all the time."""
    island = demo_vessel.island_of("MSB")
    lamps = demo_vessel.elements["MSB"].detector
    pressed = island_burden(island, lamps, button_pressed=True)
    released = island_burden(island, lamps, button_pressed=False)
    # 6.5 kΩ ∥ 200 kΩ = 6.30 kΩ (parallel resistances); released: the voltmeters alone.
    assert pressed.ohm_per_phase == pytest.approx(1 / (1 / 6.5e3 + 1 / 200e3))
    assert released.ohm_per_phase == pytest.approx(200e3)


def test_voltmeters_wired_to_earth_must_be_in_the_model() -> None:
    """Readings made by the forward model with three 40 kΩ voltmeters to earth (a 6.75 kΩ
    ground on B, C0 0.393 µF, 60 Hz) fit no single ground within the meters' tolerance
    when the meters are left out, and give B back when they are in (the forward model
    with burden is checked against lcapy in tests/test_electrical_ground_lcapy.py)."""
    c0 = 0.39325e-6
    rf = 3.0 / (3 * 2 * math.pi * 60 * c0)
    exact = single_ground(440, 60, c0, "B", rf, burden_ohm=40e3).phase_to_earth_magnitude_v
    volts = {k: float(round(v)) for k, v in exact.items()}
    assert volts == {"A": 330.0, "B": 230.0, "C": 222.0}
    tolerance = MeterTolerance(relative=0.025, absolute_v=1.0)
    without = diagnose_ground(volts, 440, "ABC", frequency_hz=60, capacitance_f=c0,
                              tolerance=tolerance)
    with_burden = diagnose_ground(volts, 440, "ABC", frequency_hz=60, capacitance_f=c0,
                                  tolerance=tolerance, burden_ohm=40e3)
    assert without.status is GroundStatus.INCONSISTENT
    assert with_burden.status is GroundStatus.SINGLE and with_burden.grounded_phase == "B"
    low, high = with_burden.fault_resistance_interval_ohm
    assert low <= rf <= high


def test_lamp_finding_uses_the_lamps_and_the_capacitance(demo_vessel, standards) -> None:
    """The demo's lamps (A bright, B dim, C normal) fit a ground on B with the lamps' own
    6.5 kΩ and the meters' 200 kΩ in the model, over a range that holds the 5.62 kΩ the
    voltmeters show; the guidance gives each lamp's brightness from the model, and says
    that with this burden the dimmest lamp is the grounded phase (the lagging phase cannot
    read lowest once arg(G + jωC0) ≤ 60°: derived from the locus)."""
    findings = load_findings(FINDINGS, demo_vessel)
    result = diagnose_day(demo_vessel.plant, demo_vessel, findings, standards)
    lamps = next(d for d in result.diagnoses if d.kind == "lamps" and d.where == "GD-MSB")
    assert lamps.detail.suspected_phases == ("B",)
    assert lamps.ground is not None and lamps.ground.phase is None  # lamps: not certain
    assert lamps.detail.burden_ohm == pytest.approx(1 / (1 / 6.5e3 + 1 / 200e3))
    low, high = lamps.detail.ratio_range["B"]
    per_ratio = 1 / (3 * 2 * math.pi * 60 * lamps.capacitance_per_phase_f)
    assert low * per_ratio <= 5.62e3 <= high * per_ratio
    # The printed brightness ranges hold what the forward model gives each lamp (power
    # ∝ V² across it) for that ground with that burden.
    burden = lamps.detail.burden_ohm
    volts = single_ground(440, 60, lamps.capacitance_per_phase_f, "B", 5.62e3,
                          burden_ohm=burden).phase_to_earth_magnitude_v
    for phase, value in volts.items():
        power = (value / (440 / math.sqrt(3))) ** 2
        lo, hi = lamps.detail.brightness["B"][phase]
        assert lo <= power <= hi, (phase, power, lo, hi)
    assert "lamp power A 1.4–2×, B 0.37–0.7×, C 1–1.3× of normal" in lamps.summary
    assert "dimmest lamp is always the grounded phase" in lamps.summary
    assert any("GD-MSB lamps 6.5 kΩ per phase" in n for n in lamps.notes)


def test_lamps_read_with_the_button_released_cannot_show_a_ground(demo_vessel, standards):
    result = day(demo_vessel, standards, """
  - {kind: lamps, at: 2026-12-01T07:00, by: x, where: GD-MSB, test_button_pressed: false,
     lamps: {A: normal, B: normal, C: normal}}
""")
    assert any("could not show a ground" in n for n in result.diagnoses[0].notes)


# --- insulation limits by equipment ------------------------------------------------------------


def test_dry_type_bank_windings_take_table_100_5_and_the_solid_column(demo_vessel,
                                                                     standards) -> None:
    """T1 is a dry-type 440/115 V bank: each winding ≤600 V takes 1000 V DC and 500 MΩ at
    20 °C (ANSI/NETA Table 100.5 as given in SOURCES.md, checked against a publicly available
    copy of the table), not Table 100.1's 100 MΩ; its reading is corrected with the solid
    column of Table 100.14."""
    tests = insulation_tests(demo_vessel, demo_vessel.elements["T1"], standards)
    assert [t.part for t in tests] == ["primary winding (440 V)", "secondary winding (115 V)"]
    for test in tests:
        assert (test.test_voltage.min_v, test.minimum.minimum_ohm) == (1000, 500e6)
        assert test.minimum.citation.clause == "Table 100.5"
        assert test.code_set.name == "neta-mts-2019/solid"
        assert "solid insulation column" in test.correction
    ctx = CalcContext(demo_vessel, standards, "S1")
    readings = CALCULATIONS["insulation_resistance"](ctx, element="T1")
    assert [r.limit.low for r in readings] == [500e6, 500e6]
    assert all(r.limit.code_set == "neta-mts-2019/solid" for r in readings)
    assert all(r.limit.temperature_corrected_to_c == 20 for r in readings)
    assert "1000 V DC" in readings[0].what and "to the other winding and earth" in readings[0].what


def test_liquid_filled_transformer_takes_the_oil_column(demo_site, standards) -> None:
    """Site T2, liquid-filled 690/400 V: the 690 V winding is in the 601–5000 V row (2500 V
    DC, 1000 MΩ) and the 400 V one in the ≤600 V row (1000 V DC, 100 MΩ), Table 100.5;
    corrected with the oil column of Table 100.14 (both as given in SOURCES.md)."""
    tests = insulation_tests(demo_site, demo_site.elements["T2"], standards)
    assert [(t.test_voltage.max_v, t.minimum.minimum_ohm) for t in tests] == [
        (2500, 1000e6), (1000, 100e6)]
    assert {t.code_set.name for t in tests} == {"neta-mts-2019/oil"}


def test_switchgear_takes_table_100_1_and_the_solid_column(demo_vessel, standards) -> None:
    """A 440 V switchboard: Table 100.1's 600 V row, 1000 V DC and 100 MΩ, corrected with
    the solid column (ANSI/NETA MTS-2019 Tables 100.1 and 100.14, SOURCES.md)."""
    (test,) = insulation_tests(demo_vessel, demo_vessel.elements["MSB"], standards)
    assert (test.test_voltage.max_v, test.minimum.minimum_ohm) == (1000, 100e6)
    assert test.minimum.citation.clause == "Table 100.1"
    assert test.code_set.name == "neta-mts-2019/solid"


def test_a_transformer_without_its_insulation_kind_is_assumed_dry_type(standards) -> None:
    """Not in the plant file: dry-type assumed (its Table 100.5 minimum is the higher), and
    said beside the limit."""
    from workpack.loading import load_plant_text

    text = (ROOT / "plants" / "demo-vessel.yaml").read_text(encoding="utf-8")
    text = text.replace("    vector_group: Dd0\n    insulation: dry_type\n    from: CB-T1\n",
                        "    vector_group: Dd0\n    from: CB-T1\n")
    _, topology = load_plant_text(text, "v.yaml")
    tests = insulation_tests(topology, topology.elements["T1"], standards)
    assert tests[0].minimum.minimum_ohm == 500e6
    assert "dry-type assumed" in tests[0].basis


def test_megger_reading_far_from_40_c_asks_for_a_retest(demo_vessel, standards) -> None:
    """IEEE 43 halving is used only at 10–60 °C (common practice, our bound): a windlass
    read at 70 °C is not corrected; the diagnosis asks for a retest nearer 40 °C."""
    result = day(demo_vessel, standards, """
  - {kind: insulation_resistance, at: 2026-12-01T09:40, by: x, where: WL-1,
     test_voltage: 500 V, reading: 3 MΩ, temperature: 70 °C}
""")
    diagnosis = result.diagnoses[0]
    assert "cannot be judged" in diagnosis.summary and "nearer 40 °C" in diagnosis.summary
    assert diagnosis.next_steps == ("repeat the test nearer the reference temperature",)


SMALL_PLANT = """\
plant: {code: FX, name: test plant, kind: vessel, frequency: 60 Hz}
sources:
  - {id: G1, kind: generator, voltage: 440 V}
devices:
  - {id: CB-G1, kind: circuit_breaker, from: G1}
  - {id: CB-T1, kind: circuit_breaker, from: MSB}
buses:
  - id: MSB
    kind: switchboard
    voltage: 440 V
    earthing: insulated
    from: CB-G1
    detector: {id: GD, kind: DETECTOR}
  - {id: LP, kind: lighting_panel, voltage: 115 V, earthing: insulated, from: T1}
transformers:
  - id: T1
    construction: three_phase
    rated_kva: 10 kVA
    primary_voltage: 440 V
    secondary_voltage: 115 V
    vector_group: Dd0
    insulation: INSULATION
    from: CB-T1
"""


@pytest.mark.parametrize(("detector", "insulation", "where", "message"), [
    ("voltmeters, lamp_power: 15 W, lamp_voltage: 250 V", "dry_type", "{id: GD",
     "buses[0].detector: lamp_power and lamp_voltage describe lamps, not voltmeters"),
    ("lamps, burden_per_phase: 0 Ω", "dry_type", "{id: GD",
     "buses[0].detector: burden_per_phase of 0 Ω would be a bolted ground: give the "
     "detector's resistance"),
    ("lamps, burden_per_phase: 6.5 kV", "dry_type", "6.5 kV",
     "buses[0].detector.burden_per_phase: 'kV' is not a unit of resistance: it is a unit of "
     "voltage (expected something like kΩ)"),
    ("lamps, lamp_power: 15 W", "dry_type", "{id: GD",
     "buses[0].detector: give both lamp_power and lamp_voltage (R = V²/P needs both)"),
    ("insulation_monitor, alarm: 22 kΩ, burden_per_phase: 1 kΩ", "dry_type", "{id: GD",
     "buses[0].detector: give an insulation_monitor's internal_impedance, not "
     "burden_per_phase"),
    ("lamps", "oil", "oil",
     "transformers[0].insulation: 'oil' is not allowed; expected 'liquid_filled' or "
     "'dry_type'"),
])
def test_misused_burden_and_insulation_fields_are_one_located_line(
    detector: str, insulation: str, where: str, message: str,
) -> None:
    """Bad detector burdens and transformer insulation kinds: file:line:col, the field, what
    is wrong (the loader's contract for every inventory error); a good one loads."""
    from workpack.errors import InputError
    from workpack.loading import load_plant_text

    text = SMALL_PLANT.replace("DETECTOR", detector).replace("INSULATION", insulation)
    line_no, line = next((n, ln) for n, ln in enumerate(text.splitlines(), start=1)
                         if where in ln)
    with pytest.raises(InputError) as caught:
        load_plant_text(text, "p.yaml")
    assert caught.value.format_message() == f"p.yaml:{line_no}:{line.index(where) + 1}: {message}"
    good = SMALL_PLANT.replace("DETECTOR", "lamps, lamp_power: 15 W, lamp_voltage: 250 V")
    plant, _ = load_plant_text(good.replace("INSULATION", "liquid_filled"), "p.yaml")
    assert detector_burden_ohm(plant.buses[0].detector) == pytest.approx(250.0**2 / 15.0)
