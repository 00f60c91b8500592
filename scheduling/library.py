"""The default task library for air handling units, shipped as data.

Each task says where its default frequency comes from. "Std 180" below is
ANSI/ASHRAE/ACCA Standard 180, *Standard Practice for Inspection and
Maintenance of Commercial Building HVAC Systems*, whose tables list tasks and
frequencies for air handling units. The frequencies quoted from it here are
from memory, not checked line by line against a copy of the current edition;
they are marked so. Where the standard is not the source, the value is
"common practice". An organisation can change any frequency (see
``task_definition_override``); local codes, the manufacturer's instructions
and licensed practice take precedence over every default here.

``checklist_code`` equals the task code: the inspections app keys its
checklist templates by these codes.
"""

from __future__ import annotations

STD180 = "ANSI/ASHRAE/ACCA Standard 180, air-handling-unit inspection table (from memory)"
PRECEDENCE = "Local codes, the manufacturer's instructions and licensed practice take precedence."
LOTO_FAN = (
    "Lock out and tag out the fan motor at its isolator and prove it dead before opening any access door; "
    "wait for the impeller to stop — it can freewheel in a draught. " + PRECEDENCE
)
LOTO_HEATER = (
    "Lock out and tag out the electric preheater and the fan before opening the section; heater elements stay "
    "hot after switch-off. " + PRECEDENCE
)
HOT_COILS = (
    "Hot-water and steam coils and their pipework can burn: isolate and let them cool, and lock out the fan "
    "before reaching into the unit. " + PRECEDENCE
)
# A water coil's valve held shut with cold outdoor air flowing through the coil can freeze it within minutes (the
# leak-by test shuts the valve with the fan running). About 5 °C is the preheat threshold of engineering.freeze
# (DEFAULT_FREEZE_THRESHOLD_C, common practice). The checklist shows the same words (inspections.cautions).
SHUT_COIL_FREEZE = (
    "Freeze risk: do not shut a preheat coil's valve (or any water coil's) while outdoor air below about 5 °C "
    "flows through it, unless the outdoor-air damper is closed or the unit runs on recirculation; watch the "
    "frost thermostat and the air leaving the coil throughout, and open the valve at once if it nears the trip."
)
ELECTRICAL = "Live-circuit tests only by a competent person with the right PPE; otherwise lock out first. " + PRECEDENCE

# Field defaults: interval tasks are fixed to the calendar with a 7-day grace unless said otherwise.
LIBRARY: list[dict] = [
    {
        "code": "filter_check",
        "name": "Filter pressure-drop check",
        "description": "Read each filter bank's pressure drop; compare with its final (change) value at design flow.",
        "category": "filters",
        "component_kind": "filter_bank",
        "trigger": "interval",
        "interval_value": 1,
        "interval_unit": "months",
        "grace_days": 7,
        "estimated_minutes": 10,
        "skill": "mechanical",
        "safety_notes": "Read the gauge from outside; " + LOTO_FAN,
        "source": f"{STD180}: filter pressure drop checked monthly.",
    },
    {
        "code": "filter_replace",
        "name": "Filter replacement",
        "description": "Replace the filters of the bank; record the clean pressure drop after replacement.",
        "category": "filters",
        "component_kind": "filter_bank",
        "trigger": "runtime",
        "run_hours": 4000,
        "condition_code": "filter_loaded",
        "grace_days": 7,
        "estimated_minutes": 45,
        "skill": "mechanical",
        "safety_notes": LOTO_FAN,
        "source": (
            "Common practice: about 4000 run-hours for final filters, or sooner when the pressure drop "
            "reaches the final value (a loaded-filter finding)."
        ),
    },
    {
        "code": "belt_drive",
        "name": "Belt and drive check",
        "description": "Check belt tension, wear and alignment of the pulleys; replace worn belts as a set.",
        "category": "belts_drives",
        "component_kind": "fan",
        "spec_filter": {"drive": ["belt"]},
        "trigger": "interval",
        "interval_value": 3,
        "interval_unit": "months",
        "grace_days": 14,
        "estimated_minutes": 30,
        "skill": "mechanical",
        "safety_notes": LOTO_FAN,
        "source": f"{STD180}: belts and sheaves quarterly.",
    },
    {
        "code": "fan_bearings",
        "name": "Fan and motor bearings",
        "description": "Listen for and feel bearing noise and heat; lubricate per the manufacturer; check mounts.",
        "category": "fan_bearings",
        "component_kind": "fan",
        "trigger": "interval",
        "interval_value": 6,
        "interval_unit": "months",
        "grace_days": 14,
        "estimated_minutes": 30,
        "skill": "mechanical",
        "safety_notes": LOTO_FAN,
        "source": f"{STD180}: fan bearings semi-annually (lubrication interval per manufacturer).",
    },
    {
        "code": "fan_proving",
        "name": "Fan proving switch test",
        "description": "Prove the airflow or current switch stops the unit (and its heater) when the fan fails.",
        "category": "fan_bearings",
        "component_kind": "fan",
        "trigger": "interval",
        "interval_value": 12,
        "interval_unit": "months",
        "grace_days": 30,
        "condition_code": "fan_not_proven",
        "estimated_minutes": 20,
        "skill": "controls",
        "safety_notes": ELECTRICAL,
        "source": "Common practice: safety interlocks proved annually.",
    },
    {
        "code": "coil_clean",
        "name": "Coil inspection and cleaning",
        "description": "Inspect fins for dirt and damage; clean; check for leaks and air in the coil.",
        "category": "coils_drain_pans",
        "component_kind": "coil",
        "trigger": "interval",
        "interval_value": 12,
        "interval_unit": "months",
        "grace_days": 30,
        "estimated_minutes": 60,
        "skill": "mechanical",
        "safety_notes": LOTO_FAN + " " + HOT_COILS,
        "source": f"{STD180}: coils inspected and cleaned annually.",
    },
    {
        "code": "drain_pan",
        "name": "Drain pan and trap",
        "description": "Check the pan drains fully, the trap is primed and there is no standing water or growth.",
        "category": "coils_drain_pans",
        "component_kind": "drain_pan",
        "trigger": "interval",
        "interval_value": 3,
        "interval_unit": "months",
        "grace_days": 14,
        "estimated_minutes": 15,
        "skill": "mechanical",
        "safety_notes": LOTO_FAN,
        "source": f"{STD180}: condensate drain pans quarterly (monthly in the cooling season is also common).",
    },
    {
        "code": "cooling_season_check",
        "name": "Cooling-season check: cooling coil and drain pan",
        "description": "Before the cooling season: clean the cooling coil, prove the pan drains, prime the trap.",
        "category": "coils_drain_pans",
        "component_kind": "coil",
        "spec_filter": {"duty": ["cooling"]},
        "trigger": "season",
        "season": "cooling",
        "lead_days": 21,
        "grace_days": 7,
        "estimated_minutes": 45,
        "skill": "mechanical",
        "safety_notes": LOTO_FAN,
        "source": "Common practice: three weeks before the first warm day of the site.",
    },
    {
        "code": "damper_actuator",
        "name": "Dampers and actuators",
        "description": "Command each damper open and closed; check it reaches position, linkages and blade seals.",
        "category": "dampers_actuators",
        "component_kind": "damper",
        "trigger": "interval",
        "interval_value": 6,
        "interval_unit": "months",
        "grace_days": 14,
        "condition_code": "damper_position",
        "estimated_minutes": 20,
        "skill": "controls",
        "safety_notes": "Keep hands clear of blades and linkages while stroking. " + LOTO_FAN,
        "source": f"{STD180}: dampers and actuators semi-annually.",
    },
    {
        "code": "preheater_freeze",
        "name": "Preheater and freeze protection",
        "description": (
            "Before the freeze season: prove the preheater stages, its high limit and the freeze-protection "
            "thermostat trip and close the outdoor-air damper."
        ),
        "category": "preheat_freeze",
        "component_kind": "electric_preheater",
        "extra_targets": [{"kind": "coil", "specs": {"duty": ["preheat"]}}],
        "trigger": "season",
        "season": "freeze",
        "lead_days": 14,
        "grace_days": 0,
        "condition_code": "freeze_protection_failed",
        "estimated_minutes": 45,
        "skill": "electrical",
        "safety_notes": LOTO_HEATER + " " + HOT_COILS,
        "source": "Common practice: two weeks before the first forecast or expected day at the preheat threshold.",
    },
    {
        "code": "sensor_calibration",
        "name": "Sensor calibration check",
        "description": "Compare each sensor with a reference instrument; recalibrate or replace when out of tolerance.",
        "category": "sensors",
        "component_kind": "sensor",
        "trigger": "interval",
        "interval_value": 12,
        "interval_unit": "months",
        "grace_days": 30,
        "condition_code": "sensor_drift",
        "estimated_minutes": 20,
        "skill": "controls",
        "safety_notes": PRECEDENCE,
        "source": f"{STD180}: sensors checked annually (CO2 sensors per manufacturer).",
    },
    {
        "code": "heat_recovery",
        "name": "Heat recovery",
        "description": "Wheel: belt, seals, purge sector. Plate: fouling, bypass damper. Run-around: pump.",
        "category": "heat_recovery",
        "component_kind": "heat_recovery",
        "trigger": "interval",
        "interval_value": 6,
        "interval_unit": "months",
        "grace_days": 14,
        "estimated_minutes": 40,
        "skill": "mechanical",
        "safety_notes": LOTO_FAN,
        "source": "Common practice: semi-annually, with the manufacturer's interval taking precedence.",
    },
    {
        "code": "intake_screen",
        "name": "Outdoor-air intake and screen",
        "description": "Clear leaves, litter and nests from the screen and louvre; look for contaminants nearby.",
        "category": "intake_screen",
        "component_kind": "intake_screen",
        "trigger": "interval",
        "interval_value": 3,
        "interval_unit": "months",
        "grace_days": 14,
        "estimated_minutes": 15,
        "skill": "mechanical",
        "safety_notes": "Roof work: follow the site's fall-protection rules. " + PRECEDENCE,
        "source": f"{STD180}: outdoor-air intake quarterly.",
    },
    {
        "code": "humidifier",
        "name": "Humidifier",
        "description": "Inspect the humidifier and its drain; descale; check for wetting downstream.",
        "category": "humidifier",
        "component_kind": "humidifier",
        "trigger": "interval",
        "interval_value": 3,
        "interval_unit": "months",
        "grace_days": 14,
        "estimated_minutes": 30,
        "skill": "mechanical",
        "safety_notes": "Steam humidifiers and their lines are hot: isolate and let cool. " + LOTO_FAN,
        "source": f"{STD180}: humidifiers quarterly.",
    },
    {
        "code": "controls_check",
        "name": "Controls check: supply temperature and duct static",
        "description": "Compare supply-air temperature and duct static pressure with their set points.",
        "category": "controls_ventilation",
        "component_kind": "",
        "trigger": "interval",
        "interval_value": 3,
        "interval_unit": "months",
        "grace_days": 14,
        "condition_code": "supply_temp_off",
        "estimated_minutes": 20,
        "skill": "controls",
        "safety_notes": PRECEDENCE,
        "source": "Common practice: quarterly.",
    },
    {
        "code": "coil_valve_leak",
        "name": "Coil valve leak-by test",
        "description": (
            "With the coil's valve commanded shut and the fan running, read the air entering and leaving the "
            "coil; a change beyond the sensors' errors and the fan's heat means water passes the shut valve."
        ),
        "category": "coils_drain_pans",
        "component_kind": "coil",
        "trigger": "condition",
        "grace_days": 14,
        "condition_code": "valve_leak",
        "estimated_minutes": 30,
        "skill": "controls",
        # The readings are taken with the fan running: no lockout while measuring, and none of the coil's
        # pipework touched. Opening the unit to look at the valve is then done under lockout. The freeze
        # caution first: the valve is held shut with the fan running, in winter too.
        "safety_notes": SHUT_COIL_FREEZE + " " + HOT_COILS + " " + LOTO_FAN,
        "source": (
            "Common practice: raised when the trends (ASHRAE Guideline 36-2018 5.16.14 FC#8, FC#14, FC#15, "
            "from memory) or a visit show a shut valve passing water."
        ),
    },
    {
        "code": "ventilation_check",
        "name": "Outdoor-air (ventilation) verification",
        "description": "Measure or derive the outdoor-air flow and compare with the ventilation requirement.",
        "category": "controls_ventilation",
        "component_kind": "",
        "trigger": "interval",
        "interval_value": 12,
        "interval_unit": "months",
        "grace_days": 30,
        "estimated_minutes": 40,
        "skill": "controls",
        "safety_notes": PRECEDENCE,
        "source": f"{STD180}: outdoor-air flow verified annually.",
    },
]

LIBRARY_CODES = frozenset(item["code"] for item in LIBRARY)
