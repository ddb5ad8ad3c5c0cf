"""Safety cautions every report shows when a design declares hazards (RULES-REFERENCE section 6)."""

from __future__ import annotations

from collections.abc import Iterable

GENERAL: tuple[str, ...] = (
    "afecheck is a review aid, not a sign-off: a clean report does not mean the design is safe or compliant "
    "with any safety standard.",
    "Insulation, creepage and clearance, isolation barriers, leakage currents and surge, ESD and fault energy "
    "cannot be verified from a netlist; they need separate verification.",
    "Defer to local codes, the applicable safety standards and licensed professional practice; testing of "
    "hazardous prototypes belongs to qualified people with suitable equipment.",
)

BY_HAZARD: dict[str, str] = {
    "mains": "Mains-connected inputs: a resistor divider is not isolation; resistor voltage ratings, insulation "
    "and creepage/clearance need expert review.",
    "high-voltage": "High-voltage nets: resistor voltage and pulse ratings, stored energy and bleed paths need "
    "expert review; simulated margins are not a test result.",
    "patient-connected": "Patient-connected front end: leakage and patient auxiliary currents, DC through "
    "electrodes and defibrillation/ESD protection are governed by the applicable medical standards and are "
    "out of scope here.",
    "hazardous-area": "Hazardous-area equipment: energy limits and protection concepts are governed by the "
    "applicable explosive-atmosphere standards and are out of scope here.",
}


def cautions(hazards: Iterable[str]) -> tuple[str, ...]:
    """The caution lines for the declared ``hazards`` (empty when none are declared)."""
    found = sorted(set(hazards))
    if not found:
        return ()
    return GENERAL + tuple(BY_HAZARD[h] for h in found if h in BY_HAZARD)
