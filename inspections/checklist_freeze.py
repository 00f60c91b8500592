"""The freeze-protection test's words and items beyond the electric preheater's limits: how to make its stages
call on a mild day, a preheat coil's valve and pump, a glycol coil's freezing point (``inspections.checklists``).

The stage test's practice (a lowered set point, a simulated sensor input or the controller's test mode; each
contactor seen to pull in and its current read with a clamp meter) is the manufacturers' usual commissioning
instructions: common practice, no published source. Lockout of the heater's own disconnecting means before its
panel is opened: NFPA 70 (NEC) 424.19 and 424.65 (a disconnecting means for a duct heater, lockable open) and
IEC 60204-1 5.3 (a supply-disconnecting device lockable in the off position), from memory; live work only as the
local rules for it allow (NFPA 70E in the US, EN 50110-1 in Europe), from memory.
"""

from __future__ import annotations

from typing import Any

from .checklist_items import AIR_T_PHYSICAL, check, item

CP = "common practice, no published source"

STAGE_ON_HELP = (
    "Outdoor air milder than the threshold: at the controller, simulate the entering-air sensor (its override, or a "
    "calibrated resistance in place of the sensor) and bring it down slowly; note the value at which stage 1's "
    "contactor pulls in. A lowered set point proves the stages, not the threshold: say so in the note."
)
STAGES_HELP = (
    "Lock out and tag out the heater's own disconnect before opening its panel. Then, panel closed or with the "
    "protection live work needs, call each stage in turn (the controller's test mode or a lowered set point): "
    "its contactor pulls in, a clamp meter on each phase reads about the stage's rated current "
    "(stage power ÷ (√3 × voltage) on three phases). Never bypass a limit or the airflow interlock."
)
STAGES_SOURCE = (
    "manufacturers' commissioning practice (" + CP + "); lockout of the heater's disconnecting means: NFPA 70 "
    "424.19, 424.65 and IEC 60204-1 5.3 (from memory)"
)

# Within 200 characters, so the item still fits a database at a migration before 0014 (the migration tests write
# today's library onto older schemas); the freezing points themselves are in engineering.glycol with their sources.
GLYCOL_SOURCE = (
    "design concentration's freezing point, e.g. propylene glycol 30 % −12.8 °C, 40 % −20.6 °C (Melinder via "
    "CoolProp; Lange's 5.13): ok to 2 K warmer, watch to 4 K; 8 K colder a watch (common practice)"
)
GLYCOL_HELP = (
    "Take a sample at the coil's drain or vent cock (the loop may be hot and under pressure: open it slowly, "
    "gloves and eye protection). Read the freezing point on the refractometer's scale for this glycol "
    "(propylene or ethylene), not the other's."
)


def glycol_freeze_point(*, duty: str | list[str]) -> dict[str, Any]:
    """A glycol coil's freezing point read on a refractometer, judged against its design concentration's."""
    return item(
        "glycol_freeze_point",
        "number",
        "Glycol freezing point by refractometer",
        quantity="temperature",
        per="coil",
        where={"fluid": "glycol", "duty": duty},
        physical=(AIR_T_PHYSICAL[0], 0.0),
        plausible=(-55.0, 0.0),
        limits_from="glycol_freeze_point",
        required=True,
        source=GLYCOL_SOURCE,
        help=GLYCOL_HELP,
    )


# A preheat coil in freezing air: its valve fails open to the coil and its pump runs, so water keeps moving
# (common practice; ASHRAE Guideline 36-2021 5.16.12 opens the heating valves at a freeze stage, from memory).
VALVE_SOURCE = "fails open to the coil in freezing air: " + CP + "; Guideline 36-2021 5.16.12 from memory"
PREHEAT_COIL_ITEMS = [
    check(
        "coil_valve_fail_open",
        "Preheat coil valve goes fully open to the coil on loss of power and on loss of its control signal",
        per="coil",
        where={"duty": "preheat"},
        required=True,
        source=VALVE_SOURCE,
        help="Switch off the actuator's supply, then its signal only: watch the stem or the position indicator.",
    ),
    check(
        "coil_pump_runs",
        "Coil circulation pump runs and is proven whenever the outdoor air is below the preheat threshold "
        "and on a freeze trip (n.a. if the coil has no pump)",
        per="coil",
        where={"duty": "preheat"},
        source=CP,
    ),
    glycol_freeze_point(duty="preheat"),
]
