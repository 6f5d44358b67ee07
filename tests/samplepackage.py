"""A hand-built work package for renderer and store tests (layout data, not check values).

The planner builds real packages; this one exists so the renderer and the
records store can be tested on their own. Numbers in it come from the
electrical functions where they stand for a reading or a limit.
"""

from __future__ import annotations

import datetime as dt

from workpack.electrical import line_to_neutral
from workpack.model.package import (
    ApproachBoundaries,
    Caution,
    IsolationPoint,
    Limit,
    Origin,
    Phasor,
    ProvingDead,
    Reading,
    SignalWord,
    Sketch,
    SketchNode,
    Step,
    WorkPackage,
)

PAIRS = ("A-B", "B-C", "C-A", "A-E", "B-E", "C-E")


def sample_package(number: int = 1, steps: int = 6) -> WorkPackage:
    v_ln = line_to_neutral(440.0)
    healthy = Limit(low=0.9 * v_ln, high=1.1 * v_ln,
                    basis="computed: 440 V / √3 = 254 V, ±10 % (common practice)")
    work_steps = [
        Step(number=1, text="Tell the bridge and the engine-room watch that the windlass is "
                            "out of service.", check_only=True),
        Step(number=2, text="Megger each phase of WL-1 to earth at 500 V DC for one minute.",
             readings=(
                 Reading(id=f"S2.R{i}", what=f"phase {p} to earth", unit="MΩ",
                         limit=Limit(low=5e6, basis="IEEE Std 43 (2013), 12.3: 5 MΩ",
                                     temperature_corrected_to_c=40.0),
                         needs_temperature=True)
                 for i, p in enumerate("ABC", start=1)),
             cautions=(Caution(signal_word=SignalWord.warning,
                               text="The winding holds charge after the test: discharge it "
                                    "to earth for at least 4 minutes."),)),
    ]
    for n in range(3, steps + 1):
        work_steps.append(Step(number=n, text=f"Work step {n}: inspect the terminal box, "
                                              "glands and heater for water and tracking.",
                               check_only=True))
    return WorkPackage(
        id=f"WP-2026-12-02-{number:02d}", plant="MV Skerry Lantern", date=dt.date(2026, 12, 2),
        title="Insulation test and dry-out of the anchor windlass motor WL-1",
        job_kind="insulation_test", priority=2, priority_reason="insulation below minimum",
        duration_h=3.0, crew=2, permits=("electrical isolation",), item="WL-1",
        item_label="WL-1 (anchor windlass)", system="MSB",
        origin=Origin(rule="low-insulation-motor", findings=("F4",)),
        hazard_facts=("Phase B of the 440 V MSB system is grounded: phases A and C stand at "
                      "up to 348 V to earth.",),
        cautions=(
            Caution(signal_word=SignalWord.danger, text="A second ground on another phase of "
                    "the 440 V system is a phase-to-phase short through earth."),
            Caution(signal_word=SignalWord.warning, text="The windlass heater is fed from the "
                    "115 V deck panel: it stays live unless CB-DK-H-WL1 is locked open."),
        ),
        approach=ApproachBoundaries(entered_at_v=440.0, limited_movable="3.0 m (10 ft 0 in)",
                                    limited_fixed="1.0 m (3 ft 6 in)",
                                    restricted="0.3 m (1 ft 0 in)",
                                    source="NFPA 70E (2021), Table 130.4(E)(a)"),
        ppe=("insulating gloves rated for the voltage", "safety glasses", "arc-rated clothing"),
        isolation=(
            IsolationPoint(order=1, device="CB-WL1", device_kind="circuit_breaker",
                           location="MCC-2 bucket 1", cuts="normal supply from SSG-1, SSG-2",
                           voltage_v=440.0, already_open=False),
            IsolationPoint(order=2, device="CB-DK-H-WL1", device_kind="circuit_breaker",
                           location="deck panel way 2",
                           cuts="anti condensation heater supply into WL-1",
                           voltage_v=115.0, already_open=False),
        ),
        stored_energy=("cable C-WL1 is 20 m long",),
        proving_dead=(ProvingDead(where="supply terminals of WL-1", voltage_v=440.0,
                                  pairs=PAIRS),),
        steps=tuple(work_steps),
        acceptance=("Each phase-to-earth insulation resistance, corrected to 40 °C, at least "
                    "5 MΩ (IEEE Std 43 (2013), 12.3).",),
        restoration=(Step(number=1, text="Remove locks in reverse order; close CB-WL1.",
                          readings=tuple(
                              Reading(id=f"X1.R{i}", what=f"phase {p} to earth at MCC-2",
                                      unit="V", expected=v_ln, tolerance=0.1 * v_ln,
                                      limit=healthy, basis="computed: 440 V / √3")
                              for i, p in enumerate("ABC", start=1))),),
        phasor=Phasor(line_voltage_v=440.0, sequence=("A", "B", "C"),
                      readings_v={"A": 348.0, "B": 236.0, "C": 209.0},
                      # From diagnose_ground of these readings (5.6 kΩ on B, 0.393 µF).
                      earth_point_v=(-93.7, 13.7), grounded_phase="B"),
        sketch=Sketch(
            nodes=(SketchNode(id="SSG-1", label="SSG-1", kind="source"),
                   SketchNode(id="MSB", label="MSB 440 V", kind="bus"),
                   SketchNode(id="CB-WL1", label="CB-WL1", kind="device", isolate=True),
                   SketchNode(id="WL-1", label="WL-1", kind="item"),
                   SketchNode(id="LP-DECK", label="LP-DECK 115 V", kind="bus"),
                   SketchNode(id="CB-DK-H-WL1", label="CB-DK-H-WL1", kind="device",
                              isolate=True)),
            edges=(("SSG-1", "MSB"), ("MSB", "CB-WL1"), ("CB-WL1", "WL-1"),
                   ("LP-DECK", "CB-DK-H-WL1"), ("CB-DK-H-WL1", "WL-1"))),
    )
