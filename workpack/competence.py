"""What a job asks of the people who do it: the qualifications, and whether a second person
must supervise and countersign. Pure.

Derived from what the package makes people do (common practice in employers' electrical
safety rules; the employer's own rules prevail and may ask more):

- taking charge of an isolation (locking off, proving dead) needs an *authorised person*
  for the system's voltage, and a *supervisor* (somebody else) who checks the isolation
  and countersigns the record;
- testing or measuring without an isolation of the job's own needs a *competent person*;
- searching for or clearing a ground on an insulated system while the ground is present
  needs the *ground_present* competence as well.
"""

from __future__ import annotations

from dataclasses import dataclass

from workpack.model.crew import Competence, Requirement
from workpack.model.package import WorkPackage
from workpack.numbers import format_quantity

# IEC 60038: low voltage is up to 1000 V a.c. A job whose system voltage is not known is
# held to the top of the low-voltage band, so a qualification for less does not pass.
LOW_VOLTAGE_CEILING_V = 1000.0
GROUND_PRESENT_JOBS = frozenset({"locate_ground", "clear_second_ground"})


@dataclass(frozen=True)
class JobNeeds:
    """The qualifications a job's technician needs, at which voltage, and whether a
    supervisor (another person) must countersign."""

    needs: tuple[Requirement, ...]
    supervisor_needed: bool
    volts: float

    def describe(self) -> str:
        """One line for the package: "the technician: authorised person for 440 V; a
        supervisor for 440 V (another person) checks and countersigns"."""
        held = " and ".join(n.kind.value.replace("_", " ") for n in self.needs)
        parts = [f"the technician: {held} for {format_quantity(self.volts, 'V')}"
                 if held else "the technician: no qualification stated"]
        if self.supervisor_needed:
            parts.append(f"a supervisor for {format_quantity(self.volts, 'V')} (another "
                         "person) checks and countersigns")
        return "; ".join(parts)


def derive_needs(job_kind: str, isolates: bool, tests: bool,
                 volts: float | None) -> JobNeeds:
    """What a job of ``job_kind`` asks, given whether it isolates and whether it tests."""
    at = volts if volts is not None and volts > 0 else LOW_VOLTAGE_CEILING_V
    kinds: list[Competence] = []
    if isolates:
        kinds.append(Competence.authorised_person)
    elif tests:
        kinds.append(Competence.competent_person)
    if job_kind in GROUND_PRESENT_JOBS:
        kinds.append(Competence.ground_present)
    needs = tuple(Requirement(kind=kind, volts=at) for kind in kinds)
    return JobNeeds(needs, supervisor_needed=isolates, volts=at)


def package_volts(package: WorkPackage) -> float | None:
    """The highest system voltage the package names: its isolation points', else the
    phasor's line voltage."""
    points = [*package.isolation, *(p for f in package.final_tests for p in f.isolation)]
    known = [p.voltage_v for p in points if p.voltage_v]
    if known:
        return max(known)
    return package.phasor.line_voltage_v if package.phasor is not None else None


def job_needs(package: WorkPackage) -> JobNeeds:
    """What the package's job asks: as planned into it, or derived from it (a package
    planned before jobs stated their needs)."""
    if package.needs:
        return JobNeeds(package.needs, package.supervisor_needed,
                        max(n.volts for n in package.needs))
    isolates = bool(package.isolation) or any(f.isolation for f in package.final_tests)
    tests = bool(package.readings()) or bool(package.proving_dead)
    return derive_needs(package.job_kind, isolates, tests, package_volts(package))
