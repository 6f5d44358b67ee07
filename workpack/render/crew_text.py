"""The crew register as terminal text (`workpack crew check`)."""

from __future__ import annotations

import datetime as dt

from workpack.crew import PersonSummary, utc_text
from workpack.model.crew import CrewRegister
from workpack.numbers import format_number


def crew_summary(register: CrewRegister, people: list[PersonSummary], at: dt.datetime) -> str:
    """One line for the register, then each person: role, hours, what they hold, keys."""
    left = sum(1 for p in people if p.left_on is not None and p.left_on < at.date())
    keys = sum(len(p.keys) for p in register.people)
    revoked = sum(p.keys_revoked for p in people)
    lines = [f"{register.crew.name}: {len(people)} people ({left} left), {keys} keys "
             f"({revoked} revoked), as of {utc_text(at)}",
             f"  qualifications as the employer's scheme gives them: {register.crew.scheme}"]
    if register.crew.plants:
        lines.append("  for: " + ", ".join(register.crew.plants))
    for person in people:
        gone = f", left on {person.left_on}" if person.left_on is not None else ""
        lines.append(f"{person.id}  {person.name}  {person.role.replace('_', ' ')}  "
                     f"{format_number(person.hours_per_day)} h/day{gone}")
        lines.append("  holds: " + ("; ".join(person.qualifications) or "nothing current"))
        lines.append("  signs with: " + (", ".join(person.keys_valid) or "no key valid now"))
    return "\n".join(lines) + "\n"
