"""The input policy (accounts.inputs) applied to the registry: a unit's numbers, dates and text.

One table of a unit's numeric fields with their physical ranges (SI), read by every way in: the model's
``clean`` (admin, API, CSV, the staff form all call ``full_clean``), the staff form (messages in the
person's units where the form shows them) and ``manage.py check_data`` for rows already stored.
Component specs keep their own table, ``inventory.specs.SPECS``.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from typing import Any

from accounts.inputs import FieldErrors, check_number, equipment_date_problem, number_problem, text_problem
from engineering.formatting import bound_text, significant_text


@dataclass(frozen=True)
class NumberRange:
    label: str
    minimum: float
    maximum: float
    unit: str = ""
    whole: bool = False


# Physical ranges of a unit's numbers (SI). Where the model field carries validators these are the same
# limits; the others are common practice: no single air handler serves more than a million m² or 100,000
# people, and a number past these is a typo or a placeholder, never a design value.
AHU_NUMBERS: dict[str, NumberRange] = {
    "floor_area_m2": NumberRange("Floor area served", 0, 1_000_000, "m²"),
    "design_occupants": NumberRange("Design occupants", 0, 100_000, "people", whole=True),
    "design_supply_airflow_m3s": NumberRange("Design supply airflow", 0.01, 100, "m³/s"),
    "design_min_oa_fraction": NumberRange("Design minimum outdoor-air fraction", 0, 1),
    "occupant_diversity": NumberRange("Occupant diversity", 0.05, 1),
    "system_ventilation_efficiency": NumberRange("System ventilation efficiency", 0.1, 1),
    "supply_air_setpoint_c": NumberRange("Supply-air setpoint", 5, 45, "°C"),
    "duct_static_setpoint_pa": NumberRange("Duct static pressure setpoint", 0, 3000, "Pa"),
}
# Equipment dates (accounts.inputs.equipment_date_window: from 1950 to today); those in PLANNED_DATES may be
# planned up to ten years ahead (a unit on order gets its service start before it runs).
AHU_DATES = {"service_start": "Service start"}
COMPONENT_DATES = {"installed_on": "Installed on"}
PLANNED_DATES = {"service_start"}
# Text a person types: field -> (label, may hold tab and line breaks). No control characters (PostgreSQL cannot
# store NUL; the others are never meant), whichever way the text comes in.
AHU_TEXTS = {
    "tag": ("Tag", False),
    "location": ("Location", False),
    "area_served": ("Area served", False),
    "notes": ("Notes", True),
}
COMPONENT_TEXTS = {"name": ("Name", False)}


def text_field_problems(obj, *, texts: dict[str, tuple[str, bool]]) -> dict[str, str]:
    """Field -> what is wrong with the text of ``obj`` (control characters, too long), for ``texts``."""
    out: dict[str, str] = {}
    for name, (label, lines) in texts.items():
        value = getattr(obj, name, None)
        if isinstance(value, str):
            max_length = obj._meta.get_field(name).max_length or 100_000
            problem = text_problem(value, label=label, max_length=max_length, lines=lines)
            if problem:
                out[name] = problem
    return out


def ahu_number_check(raw: Any, *, name: str, errors: FieldErrors) -> float | None:
    """One of the unit's numbers from form text or JSON: finite and within ``AHU_NUMBERS[name]``."""
    r = AHU_NUMBERS[name]
    return check_number(raw, key=name, label=r.label, minimum=r.minimum, maximum=r.maximum, unit=r.unit, errors=errors)


def ahu_problems(ahu, *, today: dt.date) -> dict[str, str]:
    """Field → what is wrong, for a unit as it is (being saved, or stored): numbers not finite or out of range,
    text with control characters, a service start outside 1950 to ten years ahead. Empty when it keeps the
    policy."""
    out: dict[str, str] = {}
    for name, r in AHU_NUMBERS.items():
        value = getattr(ahu, name, None)
        if value is None or (isinstance(value, str) and not value):
            continue
        if isinstance(value, float) and math.isfinite(value) and r.whole and value != int(value):
            unit = f" {r.unit}" if r.unit else ""
            out[name] = (
                f"{r.label}: {significant_text(value, figures=6)} is not a whole number; "
                f"allowed: a whole number from {bound_text(r.minimum)} to {bound_text(r.maximum)}{unit}"
            )
            continue
        problem = number_problem(value, label=r.label, minimum=r.minimum, maximum=r.maximum, unit=r.unit)
        if problem:
            out[name] = problem
    out.update(text_field_problems(ahu, texts=AHU_TEXTS))
    for name, label in AHU_DATES.items():
        value = getattr(ahu, name, None)
        if isinstance(value, dt.date):
            problem = equipment_date_problem(value, label=label.lower(), today=today, planned=name in PLANNED_DATES)
            if problem:
                out[name] = problem[0].upper() + problem[1:]
    return out


def component_date_problems(component, *, today: dt.date) -> dict[str, str]:
    out: dict[str, str] = {}
    for name, label in COMPONENT_DATES.items():
        value = getattr(component, name, None)
        if isinstance(value, dt.date):
            problem = equipment_date_problem(value, label=label, today=today, planned=name in PLANNED_DATES)
            if problem:
                out[name] = problem
    return out
