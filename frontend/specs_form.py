"""Component spec fields as form rows, from the one spec table (inventory.specs), in the user's units."""

from __future__ import annotations

import math

from accounts.inputs import FieldErrors, check_integer, number_allowed, number_problem, parse_number
from engineering.errors import EngineeringInputError
from engineering.units import from_display, to_display, unit_label
from inventory.specs import SpecField, spec_fields

# The longest text spec inventory.specs takes (its validator refuses longer; the input says so with maxlength).
SPEC_TEXT_MAX = 200

# Spec units that have a display quantity; the others (rpm, mm, V, A, s, %) read the same in both systems.
QUANTITY_OF_UNIT = {"Pa": "pressure", "m³/s": "airflow", "°C": "temperature", "W": "heat_rate", "m²": "area"}


def _quantity(spec: SpecField) -> str | None:
    return QUANTITY_OF_UNIT.get(spec.unit)


def _shown(spec: SpecField, value, system: str):
    q = _quantity(spec)
    if q is None or value is None or isinstance(value, bool) or not isinstance(value, (int, float)):
        return value
    return round(to_display(value=value, quantity=q, system=system), 4)


def spec_initial(*, component, system: str) -> dict:
    return {s.name: _shown(s, component.specs.get(s.name), system) for s in spec_fields(component.kind)}


def spec_rows(*, fields, values: dict, errors: dict, system: str) -> list[dict]:
    rows = []
    for s in fields:
        q = _quantity(s)
        unit = unit_label(quantity=q, system=system) if q else s.unit
        allowed = s.allowed()
        if q and s.minimum is not None and s.maximum is not None:
            allowed = f"a number from {_shown(s, s.minimum, system):g} to {_shown(s, s.maximum, system):g} {unit}"
        value = values.get(s.name)
        rows.append(
            {
                "spec": s,
                "name": f"spec_{s.name}",
                "id": f"spec-{s.name}",
                "unit": unit,
                "allowed": allowed,
                "value": "" if value is None else value,
                "errors": errors.get(s.name, []),
                # What the browser is told: whole numbers step by 1 within the range, text has a length.
                "step": "1" if s.kind == "integer" else "any",
                "min": int(s.minimum) if s.kind == "integer" else None,
                "max": int(s.maximum) if s.kind == "integer" else None,
                "maxlength": SPEC_TEXT_MAX,
            }
        )
    return rows


def specs_from_post(*, kind: str, post, system: str) -> tuple[dict, dict]:
    """Specs in SI from the posted form; the registry's validator has the last word.

    A refusal names the value as it was typed (never a rounded one: '12.0000001' is not '12')."""
    specs, errors = {}, {}
    for s in spec_fields(kind):
        raw = post.get(f"spec_{s.name}", "").strip()
        if s.kind == "bool":
            specs[s.name] = raw in {"1", "true", "on", "yes"}
            continue
        if raw == "":
            continue
        q = _quantity(s)
        if s.kind == "integer":
            # The input policy's whole number (accounts.inputs.check_integer): '2.5' and '1e309' are not one.
            checked = FieldErrors()
            value = check_integer(
                raw, key=s.name, label=s.label, errors=checked, minimum=int(s.minimum), maximum=int(s.maximum),
                unit=s.unit,
            )  # fmt: skip
            if value is None:
                errors[s.name] = checked[s.name]
                continue
            specs[s.name] = value
        elif s.kind == "number":
            # The input policy: 'nan', 'inf' and 1e308 are refused here, with the range in the person's units.
            allowed = number_allowed(minimum=s.minimum, maximum=s.maximum, unit=s.unit, quantity=q, system=system)
            unit = unit_label(quantity=q, system=system) if q else s.unit
            typed = parse_number(raw)
            if typed is None:
                errors[s.name] = [f"{s.label}: {raw[:40]!r} is not a finite number; allowed: {allowed}"]
                continue
            try:
                value = from_display(value=typed, quantity=q, system=system) if q else typed
            except (EngineeringInputError, OverflowError):
                value = math.inf
            problem = math.isfinite(value) and number_problem(
                value, label=s.label, minimum=s.minimum, maximum=s.maximum, unit=s.unit, quantity=q, system=system
            )
            if not math.isfinite(value) or problem:  # said as typed, not rounded back to the range's edge
                errors[s.name] = [f"{s.label}: {raw[:40]} {unit} is out of range; allowed: {allowed}"]
                continue
            specs[s.name] = value
        else:
            specs[s.name] = raw
    return specs, errors
