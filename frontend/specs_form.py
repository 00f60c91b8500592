"""Component spec fields as form rows, from the one spec table (inventory.specs), in the user's units."""

from __future__ import annotations

import math

from accounts.inputs import (
    FieldErrors,
    check_integer,
    comma_words,
    exponent_words,
    number_allowed,
    number_problem,
    parse_number,
)
from engineering.errors import EngineeringInputError
from engineering.fans import fan_air_power_w
from engineering.formatting import bound_text, quantity_text
from engineering.registry_checks import motor_power_below_air_power
from engineering.units import from_display, to_display, unit_label
from inventory.specs import SpecField, spec_fields

# The longest text spec inventory.specs takes (its validator refuses longer; the input says so with maxlength).
SPEC_TEXT_MAX = 200

# Spec units that have a display quantity; the others (rpm, mm, V, A, s, %) read the same in both systems.
QUANTITY_OF_UNIT = {"Pa": "pressure", "m³/s": "airflow", "°C": "temperature", "W": "heat_rate", "m²": "area"}


# Powers by what they are: a motor's in hp and an electric heater's in kW in a US view (as nameplates give them);
# a coil's capacity is a heat rate (Btu/h). All read kW in SI.
QUANTITY_OF_FIELD = {"motor_power_w": "motor_power", "power_w": "electric_power"}


def _quantity(spec: SpecField) -> str | None:
    return QUANTITY_OF_FIELD.get(spec.name) or QUANTITY_OF_UNIT.get(spec.unit)


def _bound(s: SpecField, value: float, system: str) -> str:
    """A range bound in the person's units as plain digits (never an exponent: ``bound_text``)."""
    return bound_text(_shown(s, value, system))


def _shown(spec: SpecField, value, system: str):
    q = _quantity(spec)
    if q is None or value is None or isinstance(value, bool) or not isinstance(value, (int, float)):
        return value
    return round(to_display(value=value, quantity=q, system=system), 4)


def spec_initial(*, component, system: str) -> dict:
    return {s.name: _shown(s, component.specs.get(s.name), system) for s in spec_fields(component.kind)}


def keep_typed_choice(choices: list[tuple[str, str]], value) -> list[tuple[str, str]]:
    """The choices of a select, with a refused value sent back kept as a marked, selected option: the form
    shows what was chosen (and why it was refused) instead of falling back to '—'."""
    value = "" if value is None or isinstance(value, bool) else str(value)
    if value and value not in {v for v, _ in choices}:
        return [*choices, (value, f"{value[:40]} (not one of the choices)")]
    return choices


def spec_rows(*, fields, values: dict, errors: dict, system: str) -> list[dict]:
    rows = []
    for s in fields:
        q = _quantity(s)
        unit = unit_label(quantity=q, system=system) if q else s.unit
        allowed = s.allowed()
        if q and s.minimum is not None and s.maximum is not None:
            allowed = f"a number from {_bound(s, s.minimum, system)} to {_bound(s, s.maximum, system)} {unit}"
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
                "choices": keep_typed_choice([(c, c) for c in s.choices], value) if s.kind == "choice" else [],
                # Numbers are typed as text and read by the one reader (accounts.typed_numbers), its refusal
                # naming the value: a browser number field drops letters and commas unseen. Text has a length.
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
            typed = parse_number(raw, exponent=False)
            if typed is None:  # "12,075": which number? "1e5": typed in full, within the field's range
                ambiguous = comma_words(raw) or exponent_words(raw, f"allowed: {allowed}")
                errors[s.name] = [
                    f"{s.label}: {ambiguous}"
                    if ambiguous
                    else f"{s.label}: {raw[:40]!r} is not a finite number; allowed: {allowed}"
                ]
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
        elif s.kind == "choice" and raw not in s.choices:
            errors[s.name] = [f"{s.label}: {raw[:40]!r} is not one of the choices; allowed: {s.allowed()}"]
        else:
            specs[s.name] = raw
    errors.update(_plain_checks(kind=kind, specs=specs, errors=errors, system=system))
    return specs, errors


def _plain_checks(*, kind: str, specs: dict, errors: dict, system: str) -> dict:
    """What the registry's validator would refuse, said beside the field in the person's units: a required
    value left empty, and the cross-field rules a person meets on a form (inventory.specs._cross_checks)."""
    out: dict[str, list[str]] = {}
    fields = {s.name: s for s in spec_fields(kind)}
    for s in fields.values():
        if s.required and s.kind != "bool" and s.name not in specs and s.name not in errors:
            out[s.name] = [f"{s.label} is required for this part; allowed: {_allowed_shown(s, system)}"]
    if kind == "filter_bank":
        clean, final = specs.get("clean_dp_pa"), specs.get("final_dp_pa")
        if clean is not None and final is not None and final <= clean:
            unit = unit_label(quantity="pressure", system=system)
            out["clean_dp_pa"] = [
                f"{fields['clean_dp_pa'].label}: {_shown(fields['clean_dp_pa'], clean, system):g} {unit} is not below "
                f"the final (change) pressure drop of {_shown(fields['final_dp_pa'], final, system):g} {unit}; "
                "allowed: a clean filter's pressure drop below the one at which filters are changed"
            ]
        if not specs.get("merv") and not specs.get("iso_16890") and "merv" not in errors:
            out["merv"] = ["MERV class or ISO 16890 group: neither is given; allowed: one of them, or both"]
    if kind == "fan" and "motor_power_w" not in errors:
        out.update(_motor_below_air_power(specs, system))
    return out


def _motor_below_air_power(specs: dict, system: str) -> dict:
    """The registry's refusal of a motor rated below its fan's air power Q·p
    (engineering.registry_checks.motor_power_below_air_power), said in the person's units."""
    motor, flow, pressure = (specs.get(k) for k in ("motor_power_w", "design_flow_m3s", "design_pressure_pa"))
    if None in (motor, flow, pressure) or not motor_power_below_air_power(
        motor_power_w=motor, flow_m3s=flow, pressure_pa=pressure
    ):
        return {}
    air = fan_air_power_w(flow_m3s=flow, pressure_pa=pressure)

    def said(value: float, quantity: str) -> str:
        # A motor's power to two decimals: the limit is the air power itself, not a rounding of it.
        return quantity_text(value, quantity=quantity, system=system, decimals=2 if quantity == "motor_power" else None)

    return {
        "motor_power_w": [
            f"Motor rated power: {said(motor, 'motor_power')} is below the fan's air power of "
            f"{said(air, 'motor_power')} ({said(flow, 'airflow')} at {said(pressure, 'pressure')}, fan air power "
            f"Q·p); no fan runs its design point on it; allowed: a motor rated at least {said(air, 'motor_power')}"
        ]
    }


def _allowed_shown(s: SpecField, system: str) -> str:
    q = _quantity(s)
    if q and s.minimum is not None and s.maximum is not None:
        unit = unit_label(quantity=q, system=system)
        return f"a number from {_bound(s, s.minimum, system)} to {_bound(s, s.maximum, system)} {unit}"
    return s.allowed()


# What the unit page says of each part: the few values a technician or supervisor looks for first.
KEY_SPECS = {
    "filter_bank": ("stage", "merv", "iso_16890", "clean_dp_pa", "final_dp_pa", "count", "size"),
    # The design speed is what the first fan law scales from when a visit reads the fan's speed.
    "fan": ("role", "motor_power_w", "design_flow_m3s", "design_pressure_pa", "design_speed_rpm", "vsd"),
    "electric_preheater": ("stages", "power_w", "switch_on_c", "high_limit_c"),
    "coil": ("duty", "fluid", "design_capacity_w", "glycol_pct"),
    "damper": ("role", "actuator", "fail_position"),
    "heat_recovery": ("recovery_type", "design_effectiveness_pct"),
    "humidifier": ("humidifier_type", "capacity_kg_h"),
    "sensor": ("measures", "location", "last_calibrated"),
    "drain_pan": ("material", "has_trap"),
    "intake_screen": ("free_area_m2", "mesh_mm"),
}
PLAIN_LABELS = {
    "stage": "stage",
    "merv": "MERV",
    "iso_16890": "ISO 16890",
    "clean_dp_pa": "clean pressure drop",
    "final_dp_pa": "change at",
    "count": "filters",
    "size": "size",
    "motor_power_w": "motor",
    "design_flow_m3s": "design airflow",
    "design_pressure_pa": "design pressure",
    "design_speed_rpm": "design speed",
    "vsd": "variable-speed drive",
    "stages": "stages",
    "power_w": "rated power",
    "switch_on_c": "switches on at",
    "high_limit_c": "high-limit cut-out",
}


def plain_number(value: float) -> str:
    """A number as read aloud: whole above 100, one decimal above 10, else two (6357 cfm, 62.6 °F, 0.25)."""
    if abs(value) >= 100:
        return f"{value:.0f}"
    return f"{round(value, 1 if abs(value) >= 10 else 2):g}"


def spec_summary(*, component, system: str) -> list[str]:
    """A part's key specs in plain words in the person's units, e.g. ['stage final', 'MERV 14',
    'clean pressure drop 90 Pa', 'change at 250 Pa']."""
    fields = {s.name: s for s in spec_fields(component.kind)}
    out = []
    for name in KEY_SPECS.get(component.kind, ()):
        s, value = fields.get(name), component.specs.get(name)
        if s is None or value is None or value == "":
            continue
        label = PLAIN_LABELS.get(name, s.label.lower())
        if s.kind == "bool":
            out.append(f"{label}: {'yes' if value else 'no'}")
            continue
        if s.kind in {"number", "integer"} and isinstance(value, int | float):
            q = _quantity(s)
            unit = unit_label(quantity=q, system=system) if q else s.unit
            shown = to_display(value=value, quantity=q, system=system) if q else value
            out.append(f"{label} {plain_number(shown)}{f' {unit}' if unit else ''}")
            continue
        out.append(f"{label} {str(value).replace('_', ' ')}")
    return out
