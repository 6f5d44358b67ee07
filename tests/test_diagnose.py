"""A day's findings diagnosed in their systems, and what they say together."""

from __future__ import annotations

import json
import math

import pytest
from conftest import ROOT

from workpack.cli import main
from workpack.diagnose import diagnose_day
from workpack.electrical import single_ground
from workpack.loading import load_findings, load_findings_text
from workpack.model.findings import Severity
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
    # (derived: Rf = x / (3ωC0) for x = 2.5); the reported interval must hold it.
    c0 = voltages.capacitance_per_phase_f
    made_with = 2.5 / (3 * 2 * math.pi * 60 * c0)
    low, high = voltages.detail.fault_resistance_interval_ohm
    assert low <= made_with <= high
    assert voltages.severity is Severity.high
    assert any(word == "DANGER" and "second ground" in text for word, text in voltages.cautions)


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
    readings = single_ground(440, 60, 0.393e-6, "A", 2000.0).phase_to_earth_magnitude_v
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
