"""The Brick Schema classes Plenum uses for automation points, and the Brick equipment class of each component.

Names are the Brick Schema's own (https://brickschema.org, version 1.5 as shipped inside the ``brickschema``
package; ``tests/automation/test_vocabulary.py`` checks every name against that ontology). A supply fan's speed
command is Brick's ``Fan_Speed_Command`` that is a point of the unit's supply fan (Brick has no
``Supply_Fan_Speed_Command``); the same for dampers and valves: the point names the part it belongs to.

Units are QUDT unit names (http://qudt.org/vocab/unit/), as Brick's ``brick:hasUnit`` takes them.
"""

from __future__ import annotations

from dataclasses import dataclass

from django.db import models


class PointUnit(models.TextChoices):
    """SI units of point values, by their QUDT names."""

    DEG_C = "DEG_C", "°C"
    PA = "PA", "Pa"
    PERCENT = "PERCENT", "%"
    PPM = "PPM", "ppm"
    M3_PER_SEC = "M3-PER-SEC", "m³/s"
    UNITLESS = "UNITLESS", "on/off (1 or 0)"


@dataclass(frozen=True)
class PointClass:
    name: str  # the Brick class
    label: str
    unit: str  # PointUnit value
    # Component kinds the point may belong to; empty: the unit itself only.
    component_kinds: tuple[str, ...] = ()
    # The point must name one of those components (a fan's speed belongs to a fan).
    component_required: bool = False


_DAMPER = ("damper",)
_TEMP = ("sensor", "coil", "electric_preheater", "heat_recovery")

POINT_CLASSES: dict[str, PointClass] = {
    c.name: c
    for c in (
        PointClass("Supply_Air_Temperature_Sensor", "Supply air temperature sensor", PointUnit.DEG_C, ("sensor",)),
        PointClass("Mixed_Air_Temperature_Sensor", "Mixed air temperature sensor", PointUnit.DEG_C, ("sensor",)),
        PointClass("Return_Air_Temperature_Sensor", "Return air temperature sensor", PointUnit.DEG_C, ("sensor",)),
        PointClass("Outside_Air_Temperature_Sensor", "Outdoor air temperature sensor", PointUnit.DEG_C, ("sensor",)),
        PointClass(
            "Preheat_Supply_Air_Temperature_Sensor", "Air temperature after the preheater", PointUnit.DEG_C, _TEMP
        ),
        PointClass("Supply_Air_Temperature_Setpoint", "Supply air temperature set point", PointUnit.DEG_C),
        PointClass(
            "Filter_Differential_Pressure_Sensor",
            "Filter differential pressure sensor",
            PointUnit.PA,
            ("filter_bank",),
            component_required=True,
        ),
        PointClass("Supply_Air_Static_Pressure_Sensor", "Duct static pressure sensor", PointUnit.PA, ("sensor",)),
        PointClass("Supply_Air_Static_Pressure_Setpoint", "Duct static pressure set point", PointUnit.PA),
        PointClass("Fan_Speed_Command", "Fan speed command", PointUnit.PERCENT, ("fan",), component_required=True),
        PointClass("Fan_Status", "Fan status (proven running)", PointUnit.UNITLESS, ("fan",), component_required=True),
        PointClass("Damper_Position_Command", "Damper position command", PointUnit.PERCENT, _DAMPER, True),
        PointClass("Damper_Position_Sensor", "Damper position feedback", PointUnit.PERCENT, _DAMPER, True),
        PointClass(
            "Valve_Position_Command",
            "Coil valve position command",
            PointUnit.PERCENT,
            ("coil", "heat_recovery"),
            component_required=True,
        ),
        PointClass("CO2_Level_Sensor", "CO₂ sensor", PointUnit.PPM, ("sensor",)),
        PointClass("Supply_Air_Flow_Sensor", "Supply airflow sensor", PointUnit.M3_PER_SEC, ("sensor", "fan")),
        PointClass("Outside_Air_Flow_Sensor", "Outdoor airflow sensor", PointUnit.M3_PER_SEC, ("sensor", "damper")),
        PointClass("Freeze_Status", "Freeze protection (frost thermostat) status", PointUnit.UNITLESS, _TEMP),
    )
}

BRICK_CLASS_CHOICES = [(c.name, c.label) for c in POINT_CLASSES.values()]


def allowed_point_classes() -> str:
    return ", ".join(POINT_CLASSES)


def point_class_label(brick_class: str) -> str:
    """A Brick class in plain words ("Supply air temperature sensor"), the class name itself if unknown."""
    known = POINT_CLASSES.get(brick_class)
    return known.label if known else brick_class.replace("_", " ").capitalize()


def point_class_phrase(brick_class: str) -> str:
    """The class in running text with its article: "an outdoor air temperature sensor", "a CO₂ sensor"."""
    label = point_class_label(brick_class)
    if len(label) > 1 and label[1].islower():
        label = label[0].lower() + label[1:]
    return ("an " if label[:1].lower() in "aeiou" else "a ") + label


# A component's Brick equipment class, by its kind and the spec that tells its job (Brick has no class for an
# intake screen, a drain pan or an electric preheater: those are HVAC_Equipment, as Brick's shapes ask of an AHU's
# parts; Plenum's kind travels with each part).
_BY_SPEC: dict[str, tuple[str, dict[str, str]]] = {
    "fan": ("role", {"supply": "Supply_Fan", "return": "Return_Fan", "exhaust": "Exhaust_Fan"}),
    "damper": (
        "role",
        {"outdoor": "Outside_Damper", "return": "Return_Damper", "exhaust": "Exhaust_Damper", "mixing": "Mixed_Damper"},
    ),
    "filter_bank": ("stage", {"pre": "Pre_Filter", "final": "Final_Filter"}),
    "coil": ("duty", {"heating": "Heating_Coil", "preheat": "Heating_Coil", "cooling": "Cooling_Coil"}),
    "heat_recovery": (
        "recovery_type",
        {"wheel": "Heat_Wheel", "plate": "Plate_Heat_Exchanger", "run_around": "Heat_Exchanger"},
    ),
}
_BY_KIND = {"fan": "Fan", "damper": "Damper", "filter_bank": "Filter", "coil": "Coil", "humidifier": "Humidifier"}


def component_brick_class(*, kind: str, specs: dict) -> str:
    """The Brick equipment class of a component of this kind and specs."""
    if kind in _BY_SPEC:
        spec, table = _BY_SPEC[kind]
        found = table.get(str(specs.get(spec, "")))
        if found:
            return found
    return _BY_KIND.get(kind, "HVAC_Equipment")


def all_brick_names() -> set[str]:
    """Every Brick class name this module uses (points, equipment, the registry's own)."""
    names = set(POINT_CLASSES) | set(_BY_KIND.values()) | {"HVAC_Equipment", "AHU"}
    for _spec, table in _BY_SPEC.values():
        names |= set(table.values())
    return names


# Values a point of each unit may plausibly hold (wider than any AHU's normal range; a value outside is a wrong
# column, a wrong unit or a sensor fault code such as -999). Common practice.
PLAUSIBLE: dict[str, tuple[float, float]] = {
    PointUnit.DEG_C: (-60.0, 200.0),
    PointUnit.PA: (-10_000.0, 10_000.0),
    PointUnit.PERCENT: (0.0, 100.0),
    PointUnit.PPM: (0.0, 50_000.0),
    PointUnit.M3_PER_SEC: (0.0, 200.0),
    PointUnit.UNITLESS: (0.0, 1.0),
}

# Narrower ranges for the point classes whose physics bounds them well below their unit's range above. Common
# practice unless a source is named: outdoor air holds about −60 to +60 °C anywhere a building is served (the
# WMO's archive of weather extremes gives 56.7 °C as the highest air temperature measured, from memory); air
# in a unit's mixing box or return duct stays within the outdoor and room range; supply air from a heating
# coil rarely exceeds 60 °C, 90 °C leaves room for an electric heater's supply; a filter's pressure drop is
# well under 2 500 Pa (final pressure drops in EN ISO 16890 / Eurovent practice are a few hundred pascals,
# from memory), a small negative value is a sensor's zero drift; CO₂ sensors in ducts measure 0–10 000 ppm.
PLAUSIBLE_BY_CLASS: dict[str, tuple[float, float]] = {
    "Outside_Air_Temperature_Sensor": (-60.0, 60.0),
    "Mixed_Air_Temperature_Sensor": (-60.0, 60.0),
    "Return_Air_Temperature_Sensor": (-20.0, 60.0),
    "Supply_Air_Temperature_Sensor": (-40.0, 90.0),
    "Preheat_Supply_Air_Temperature_Sensor": (-60.0, 90.0),
    "Supply_Air_Temperature_Setpoint": (0.0, 60.0),
    "Filter_Differential_Pressure_Sensor": (-50.0, 2_500.0),
    "Supply_Air_Static_Pressure_Sensor": (-2_500.0, 2_500.0),
    "Supply_Air_Static_Pressure_Setpoint": (0.0, 2_500.0),
    "CO2_Level_Sensor": (0.0, 10_000.0),
}

# The quantity of ``engineering.units`` each SI point unit is shown in (a person's °F, in. w.c., cfm).
UNIT_QUANTITY: dict[str, str] = {
    PointUnit.DEG_C: "temperature",
    PointUnit.PA: "pressure",
    PointUnit.M3_PER_SEC: "airflow",
}


def plausible_range(brick_class: str, unit: str) -> tuple[float, float]:
    """The values a point of this class and SI unit may plausibly hold."""
    return PLAUSIBLE_BY_CLASS.get(brick_class, PLAUSIBLE[unit])
