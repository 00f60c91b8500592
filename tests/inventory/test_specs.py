"""Spec validation per component kind: bad values, missing required fields, unknown fields."""

import pytest
from django.core.exceptions import ValidationError

from inventory.specs import SPECS, SpecErrors, validate_specs
from tests.factories.inventory import FILTER_SPECS, make_full_unit

GOOD = {
    "intake_screen": {"free_area_m2": 1.2, "mesh_mm": 12},
    "damper": {"role": "outdoor", "actuator": "spring_return", "stroke_time_s": 90},
    "filter_bank": dict(FILTER_SPECS),
    "coil": {"duty": "heating", "fluid": "water", "design_capacity_w": 60000},
    "fan": {
        "role": "supply",
        "fan_type": "plug",
        "drive": "direct",
        "motor_power_w": 5500,
        "design_flow_m3s": 3.0,
        "design_pressure_pa": 800,
    },
    "electric_preheater": {"power_w": 12000, "stages": 2, "switch_on_c": -5},
    "sensor": {"measures": "co2", "location": "return duct", "range_low": 0, "range_high": 2000},
    "heat_recovery": {"recovery_type": "wheel", "design_effectiveness_pct": 75},
    "humidifier": {"humidifier_type": "steam", "capacity_kg_h": 10},
    "drain_pan": {"has_trap": True, "trap_depth_mm": 80},
}

# (kind, field, bad value, text the message must contain: the allowed range with its unit, or the choices)
BAD_VALUES = [
    ("intake_screen", "mesh_mm", 0.2, "1 to 50 mm"),
    ("damper", "stroke_time_s", 900, "1 to 600 s"),
    ("damper", "actuator", "pneumatic", "one of modulating, two_position, spring_return, manual"),
    ("filter_bank", "final_dp_pa", 5000, "20 to 1000 Pa"),
    ("filter_bank", "count", 2.5, "whole number"),
    ("coil", "design_capacity_w", -5, "100 to 5e+06 W"),
    ("coil", "fluid", "milk", "one of water, glycol, steam, refrigerant"),
    ("fan", "design_flow_m3s", "fast", "0.01 to 100 m³/s"),
    ("fan", "drive", "chain", "one of belt, direct"),
    ("electric_preheater", "switch_on_c", 40, "-30 to 15 °C"),
    ("sensor", "last_calibrated", "last spring", "YYYY-MM-DD"),
    ("heat_recovery", "design_effectiveness_pct", 99, "10 to 95 %"),
    ("humidifier", "capacity_kg_h", float("nan"), "finite"),
    ("drain_pan", "has_trap", "perhaps", "true or false"),
]


def test_good_specs_pass_for_every_kind():
    """The reference spec of each kind is accepted (and every kind has one)."""
    assert set(GOOD) == set(SPECS)
    for kind, specs in GOOD.items():
        validate_specs(kind=kind, specs=specs)


@pytest.mark.parametrize(("kind", "field", "value", "allowed"), BAD_VALUES)
def test_bad_value_message_names_field_value_and_allowed(kind, field, value, allowed):
    """A bad value is refused with a message naming the field, the value and what is allowed (with unit)."""
    with pytest.raises(SpecErrors) as exc:
        validate_specs(kind=kind, specs={**GOOD[kind], field: value})
    message = exc.value.errors[field]
    label = next(f.label for f in SPECS[kind] if f.name == field)
    assert message.startswith(f"{label}: ")  # the field as a person knows it, not its key
    assert repr(value) in message
    assert allowed in message


def test_every_kind_has_a_bad_value_case():
    assert {k for k, *_ in BAD_VALUES} == set(SPECS)


@pytest.mark.parametrize("kind", [k for k, fields in SPECS.items() if any(f.required for f in fields)])
def test_missing_required_field_is_named(kind):
    """Leaving out a required field names it and says what is expected."""
    required = next(f for f in SPECS[kind] if f.required)
    specs = {k: v for k, v in GOOD[kind].items() if k != required.name}
    with pytest.raises(SpecErrors) as exc:
        validate_specs(kind=kind, specs=specs)
    assert "is required" in exc.value.errors[required.name]
    assert required.allowed() in exc.value.errors[required.name]


def test_intake_screen_has_no_required_field():
    """A screen with no specs at all is accepted: nothing about a screen is essential to the schedule."""
    assert validate_specs(kind="intake_screen", specs={}) == {}


@pytest.mark.parametrize("kind", list(SPECS))
def test_unknown_field_is_refused_listing_the_allowed_ones(kind):
    """A field the kind does not have is refused, listing the fields it does have."""
    with pytest.raises(SpecErrors) as exc:
        validate_specs(kind=kind, specs={**GOOD[kind], "colour": "blue"})
    assert f"not a field of a {kind}" in exc.value.errors["colour"]
    assert SPECS[kind][0].name in exc.value.errors["colour"]


def test_values_are_normalised():
    """Text from forms and CSV is stored typed: numbers as numbers, yes/no as booleans, dates as ISO text."""
    got = validate_specs(kind="sensor", specs={"measures": " temperature ", "location": "duct", "range_low": "-20",
                                               "range_high": "60", "last_calibrated": "2025-09-15"})  # fmt: skip
    assert got == {"measures": "temperature", "location": "duct", "range_low": -20.0, "range_high": 60.0,
                   "last_calibrated": "2025-09-15"}  # fmt: skip
    assert validate_specs(kind="drain_pan", specs={"has_trap": "yes"}) == {"has_trap": True}


def test_cross_checks():
    """Glycol needs a concentration; a CO2 range must be plausible ppm; MERV or ISO group is needed."""
    with pytest.raises(SpecErrors) as exc:
        validate_specs(kind="coil", specs={**GOOD["coil"], "fluid": "glycol"})
    assert "glycol_pct" in exc.value.errors
    with pytest.raises(SpecErrors) as exc:
        validate_specs(kind="sensor", specs={**GOOD["sensor"], "range_high": 90000})
    assert "ppm" in exc.value.errors["range_high"]
    specs = {k: v for k, v in FILTER_SPECS.items() if k not in ("merv", "iso_16890")}
    with pytest.raises(SpecErrors) as exc:
        validate_specs(kind="filter_bank", specs=specs)
    assert "merv" in exc.value.errors


@pytest.mark.django_db
def test_model_full_clean_refuses_bad_specs():
    """The model refuses bad specs too, so the admin and every other path agree."""
    comp = make_full_unit().components.get(name="Supply fan")
    comp.specs = {**comp.specs, "drive": "chain"}
    with pytest.raises(ValidationError) as exc:
        comp.full_clean()
    assert "drive" in str(exc.value.message_dict["specs"])


@pytest.mark.parametrize(
    ("specs", "field", "words"),
    [
        ({"fluid": "glycol", "glycol_pct": 30}, "glycol_kind", "Glycol kind is required when the fluid is glycol"),
        ({"fluid": "glycol", "glycol_kind": "propylene"}, "glycol_pct", "Glycol concentration is required when"),
        ({"fluid": "water", "glycol_pct": 30}, "glycol_pct", "applies only when the fluid is glycol"),
        ({"fluid": "water", "glycol_kind": "ethylene"}, "glycol_kind", "the fluid is water"),
    ],
)
def test_glycol_coil_names_kind_and_concentration_and_water_names_neither(specs, field, words):
    """The coil heat balance needs the glycol's kind and concentration; on a water coil they would mislead."""
    with pytest.raises(SpecErrors) as exc:
        validate_specs(kind="coil", specs={**GOOD["coil"], **specs})
    assert words in exc.value.errors[field]


def test_glycol_coil_with_kind_and_concentration_is_accepted():
    specs = validate_specs(
        kind="coil", specs={**GOOD["coil"], "fluid": "glycol", "glycol_kind": "ethylene", "glycol_pct": "35"}
    )
    assert (specs["glycol_kind"], specs["glycol_pct"]) == ("ethylene", 35)


@pytest.mark.parametrize("value", ["\x00", "20\x00x20", "24×24\x1b[2J", "a\tb"])
def test_spec_text_with_control_characters_is_refused_naming_field_value_and_allowed(value):
    """NUL and the other control characters in a spec's text (PostgreSQL cannot store NUL in JSON) are refused
    with a message naming the field, the characters written out and what is allowed; nothing is stored."""
    with pytest.raises(SpecErrors) as exc:
        validate_specs(kind="filter_bank", specs={**GOOD["filter_bank"], "size": value})
    message = exc.value.errors["size"]
    assert "Nominal size" in message
    assert "control characters (such as NUL)" in message
    bad = next(ch for ch in value if ord(ch) < 32)
    assert f'"\\x{ord(bad):02x}"' in message
    assert "width × height × depth in whole mm" in message  # the size's own allowed (a W×H×D in mm)


@pytest.mark.django_db
def test_unit_and_component_text_with_nul_is_refused_by_the_model():
    """The model's check (admin, API, CSV and staff form all call it) refuses NUL in a unit's text and a
    component's name; line breaks and tabs stay allowed in the unit's notes."""
    unit = make_full_unit()
    unit.notes = "belt changed\n\tsee photo"
    unit.full_clean()
    unit.notes = "belt\x00changed"
    unit.location = "roof\x00"
    with pytest.raises(ValidationError) as exc:
        unit.full_clean()
    assert {"notes", "location"} <= set(exc.value.message_dict)
    assert '"\\x00"' in exc.value.message_dict["notes"][0]
    comp = unit.components.get(name="Supply fan")
    comp.name = "Supply\x00fan"
    with pytest.raises(ValidationError) as exc:
        comp.full_clean()
    assert "control characters" in exc.value.message_dict["name"][0]
