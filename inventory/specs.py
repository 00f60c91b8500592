"""Specifications of each component kind: fields, SI units and allowed ranges.

One table, used by every way into the registry (admin, API, CSV), so a spec
that is refused in one is refused in all. Values are stored in SI; a message
names the field, the value, the unit and what is allowed.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field
from typing import Any

from accounts.inputs import control_characters, shown
from engineering.registry_checks import SIZE_ALLOWED, filter_size_parse, motor_power_below_air_power


@dataclass(frozen=True)
class SpecField:
    name: str
    kind: str  # "number" | "integer" | "choice" | "text" | "date" | "bool" | "size" (W×H×D mm)
    label: str
    unit: str = ""
    minimum: float | None = None
    maximum: float | None = None
    choices: tuple[str, ...] = ()
    required: bool = False

    def allowed(self) -> str:
        if self.kind == "choice":
            return "one of " + ", ".join(self.choices)
        if self.kind in {"number", "integer"}:
            unit = f" {self.unit}" if self.unit else ""
            whole = "whole " if self.kind == "integer" else ""
            return f"a {whole}number from {self.minimum:g} to {self.maximum:g}{unit}"
        if self.kind == "date":
            return "a date as YYYY-MM-DD"
        if self.kind == "bool":
            return "true or false"
        if self.kind == "size":
            return SIZE_ALLOWED
        return "text up to 200 characters without control characters"


@dataclass
class SpecErrors(Exception):
    """All problems found in one spec dict, keyed by field name."""

    errors: dict[str, str] = field(default_factory=dict)

    def __str__(self) -> str:
        return "; ".join(f"{k}: {v}" for k, v in self.errors.items())


def _n(name, label, unit, lo, hi, required=False):
    return SpecField(name=name, kind="number", label=label, unit=unit, minimum=lo, maximum=hi, required=required)


def _i(name, label, lo, hi, required=False, unit=""):
    return SpecField(name=name, kind="integer", label=label, unit=unit, minimum=lo, maximum=hi, required=required)


def _c(name, label, choices, required=False):
    return SpecField(name=name, kind="choice", label=label, choices=tuple(choices), required=required)


def _t(name, label, required=False):
    return SpecField(name=name, kind="text", label=label, required=required)


def _z(name, label, required=False):
    return SpecField(name=name, kind="size", label=label, required=required)


def _d(name, label, required=False):
    return SpecField(name=name, kind="date", label=label, required=required)


def _b(name, label, required=False):
    return SpecField(name=name, kind="bool", label=label, required=required)


# MERV classes of ASHRAE 52.2 run 1–16; ISO 16890 groups are ePM1, ePM2.5, ePM10 and coarse.
MERV_CLASSES = tuple(str(n) for n in range(1, 17))
ISO_16890_GROUPS = ("ePM1", "ePM2.5", "ePM10", "ISO coarse")

SPECS: dict[str, tuple[SpecField, ...]] = {
    "intake_screen": (
        _n("free_area_m2", "Free area", "m²", 0.01, 50),
        _n("mesh_mm", "Mesh opening", "mm", 1, 50),
        _b("has_louvre", "Has weather louvre"),
    ),
    "damper": (
        _c("role", "Role", ["outdoor", "return", "exhaust", "mixing"], required=True),
        _n("width_mm", "Width", "mm", 100, 5000),
        _n("height_mm", "Height", "mm", 100, 5000),
        _c("actuator", "Actuator", ["modulating", "two_position", "spring_return", "manual"], required=True),
        _n("stroke_time_s", "Rated stroke time", "s", 1, 600, required=True),
        _c("fail_position", "Fail-safe position", ["open", "closed", "last"]),
    ),
    "filter_bank": (
        _c("stage", "Stage", ["pre", "final"], required=True),
        _c("merv", "MERV class (ASHRAE 52.2)", MERV_CLASSES),
        _c("iso_16890", "ISO 16890 group", ISO_16890_GROUPS),
        _i("iso_16890_pct", "ISO 16890 efficiency", 0, 100, unit="%"),
        _z("size", "Nominal size (W×H×D mm)", required=True),
        _i("count", "Number of filters", 1, 200, required=True),
        _n("clean_dp_pa", "Clean (initial) pressure drop", "Pa", 5, 500, required=True),
        _n("final_dp_pa", "Final (change) pressure drop", "Pa", 20, 1000, required=True),
        _n("design_airflow_m3s", "Design airflow", "m³/s", 0.01, 100, required=True),
        _t("pressure_sensor", "Pressure sensor / gauge"),
    ),
    "coil": (
        _c("duty", "Duty", ["heating", "cooling", "preheat"], required=True),
        _c("fluid", "Fluid", ["water", "glycol", "steam", "refrigerant"], required=True),
        _i("glycol_pct", "Glycol concentration", 0, 60, unit="%"),
        _c("glycol_kind", "Glycol kind", ["ethylene", "propylene"]),
        _n("design_capacity_w", "Design capacity", "W", 100, 5_000_000, required=True),
        _n("design_airflow_m3s", "Design airflow", "m³/s", 0.01, 100),
        _n("design_water_flow_m3s", "Design fluid flow", "m³/s", 0.00001, 1),
        _n("entering_air_c", "Design entering air", "°C", -40, 60),
        _n("leaving_air_c", "Design leaving air", "°C", -40, 60),
        _n("entering_water_c", "Design entering fluid", "°C", -20, 200),
        _n("leaving_water_c", "Design leaving fluid", "°C", -20, 200),
        _i("rows", "Rows", 1, 16),
    ),
    "fan": (
        _c("role", "Role", ["supply", "return", "exhaust"], required=True),
        _c("fan_type", "Fan type", ["centrifugal", "plug", "axial"], required=True),
        _c("drive", "Drive", ["belt", "direct"], required=True),
        _b("vsd", "Variable-speed drive"),
        _n("motor_power_w", "Motor rated power", "W", 50, 1_000_000, required=True),
        _n("design_flow_m3s", "Design airflow", "m³/s", 0.01, 100, required=True),
        _n("design_pressure_pa", "Design total pressure", "Pa", 10, 10_000, required=True),
        _n("design_speed_rpm", "Design speed", "rpm", 50, 10_000),
        _n("motor_full_load_a", "Motor full-load current", "A", 0.1, 2000),
        _t("belt_size", "Belt size"),
        _i("belt_count", "Number of belts", 1, 12),
    ),
    "electric_preheater": (
        _n("power_w", "Rated power", "W", 500, 2_000_000, required=True),
        _i("stages", "Stages", 1, 12, required=True),
        _n("switch_on_c", "Switch-on threshold (outdoor/entering air)", "°C", -30, 15, required=True),
        _n("high_limit_c", "High-limit cut-out", "°C", 30, 150),
        _n("voltage_v", "Supply voltage", "V", 100, 1000),
    ),
    "sensor": (
        _c("measures", "Measures", ["co2", "temperature", "pressure", "humidity", "airflow"], required=True),
        _t("location", "Where it measures", required=True),
        _n("range_low", "Range low (SI unit of the quantity)", "", -1_000_000, 1_000_000),
        _n("range_high", "Range high (SI unit of the quantity)", "", -1_000_000, 1_000_000),
        _n("accuracy", "Stated accuracy (SI unit of the quantity)", "", 0, 100_000),
        _d("last_calibrated", "Last calibration"),
        _i("calibration_interval_days", "Calibration interval", 1, 3650, unit="days"),
    ),
    "heat_recovery": (
        _c("recovery_type", "Type", ["wheel", "plate", "run_around"], required=True),
        _n("design_effectiveness_pct", "Design effectiveness", "%", 10, 95),
        _b("has_bypass", "Has bypass damper"),
    ),
    "humidifier": (
        _c("humidifier_type", "Type", ["steam", "evaporative", "spray", "ultrasonic"], required=True),
        _n("capacity_kg_h", "Capacity", "kg/h", 0.5, 1000, required=True),
    ),
    "drain_pan": (
        _c("material", "Material", ["stainless", "galvanised", "plastic", "aluminium"]),
        _b("has_trap", "Has trap", required=True),
        _n("trap_depth_mm", "Trap seal depth", "mm", 10, 500),
    ),
}

# Ranges whose units depend on what the sensor measures (SI): a CO2 range in ppm,
# a temperature range in °C and so on.
SENSOR_PLAUSIBLE = {
    "co2": (0, 50_000, "ppm"),
    "temperature": (-60, 200, "°C"),
    "pressure": (-10_000, 10_000, "Pa"),
    "humidity": (0, 100, "%"),
    "airflow": (0, 200, "m³/s"),
}


def _coerce(spec: SpecField, raw: Any) -> Any:
    """Return the value in its stored type or raise ValueError with the reason."""
    if spec.kind in {"number", "integer"}:
        if isinstance(raw, bool):
            raise ValueError("is not a number")
        try:
            value = float(raw)
        except (TypeError, ValueError):
            raise ValueError("is not a number") from None
        if not math.isfinite(value):
            raise ValueError("is not a finite number")
        if spec.kind == "integer":
            if value != int(value):
                raise ValueError("is not a whole number")
            value = int(value)
        if value < spec.minimum or value > spec.maximum:
            raise ValueError("is out of range")
        return value
    if spec.kind == "choice":
        value = str(raw).strip()
        if value not in spec.choices:
            raise ValueError("is not one of the choices")
        return value
    if spec.kind == "date":
        if isinstance(raw, dt.date):
            return raw.isoformat()
        try:
            return dt.date.fromisoformat(str(raw).strip()).isoformat()
        except ValueError:
            raise ValueError("is not a date") from None
    if spec.kind == "bool":
        if isinstance(raw, bool):
            return raw
        text = str(raw).strip().lower()
        if text in {"true", "1", "yes"}:
            return True
        if text in {"false", "0", "no"}:
            return False
        raise ValueError("is not true or false")
    value = str(raw).strip()
    found = control_characters(value)
    if found:
        raise ValueError(f"contains control characters (such as NUL): {found}")
    if len(value) > 200:
        raise ValueError("is too long")
    if spec.kind == "size":
        return filter_size_parse(value).text()
    return value


def spec_fields(kind: str) -> tuple[SpecField, ...]:
    return SPECS.get(kind, ())


def validate_specs(*, kind: str, specs: dict[str, Any] | None) -> dict[str, Any]:
    """Check and normalise a component's specs; raise SpecErrors listing every problem."""
    if kind not in SPECS:
        raise SpecErrors({"kind": f"kind={kind!r} is not a component kind; allowed: {', '.join(SPECS)}"})
    if specs is None:
        specs = {}
    if not isinstance(specs, dict):
        raise SpecErrors({"specs": f"specs must be an object of field: value, got {type(specs).__name__}"})
    fields = {f.name: f for f in SPECS[kind]}
    errors: dict[str, str] = {}
    cleaned: dict[str, Any] = {}
    for key in specs:
        if key not in fields:
            errors[key] = f"{key} is not a field of a {kind}; allowed: {', '.join(fields)}"
    for name, spec in fields.items():
        raw = specs.get(name)
        if raw is None or raw == "":
            if spec.required:
                errors[name] = f"{spec.label} is required for this part; allowed: {spec.allowed()}"
            continue
        try:
            cleaned[name] = _coerce(spec, raw)
        except ValueError as exc:
            errors[name] = f"{spec.label}: {_said(spec, raw, str(exc))} {exc}; allowed: {spec.allowed()}"
    # The cross-field rules run on the fields that could be read, so a row's every problem is said at once.
    given = {k for k, v in specs.items() if v not in (None, "")}
    for key, message in _cross_checks(kind, cleaned, given=given).items():
        errors.setdefault(key, message)
    if errors:
        raise SpecErrors(errors)
    return cleaned


def _said(spec: SpecField, raw: Any, reason: str) -> str:
    """The value as a message shows it: a number out of range with its unit (300 Pa), anything else as typed."""
    if reason == "is out of range":
        number = f"{float(raw):g}" if isinstance(raw, str) else shown(raw)
        return f"{number} {spec.unit}" if spec.unit else number
    return shown(raw)


def _cross_checks(kind: str, s: dict[str, Any], *, given: set[str] | None = None) -> dict[str, str]:
    """Rules between fields, each checked when the fields it needs were read (``s`` holds the readable ones;
    ``given`` names every field the person filled in, readable or not)."""
    given = set(s) if given is None else given
    errors: dict[str, str] = {}
    if kind == "filter_bank":
        if "final_dp_pa" in s and "clean_dp_pa" in s and s["final_dp_pa"] <= s["clean_dp_pa"]:
            errors["final_dp_pa"] = (
                f"Final (change) pressure drop: {s['final_dp_pa']:g} Pa is not above the clean (initial) pressure "
                f"drop of {s['clean_dp_pa']:g} Pa; allowed: a final pressure drop above the clean filter's"
            )
        if "merv" not in given and "iso_16890" not in given:
            errors["merv"] = "MERV class or ISO 16890 group: neither is given; allowed: one of them, or both"
    if kind == "fan" and {"motor_power_w", "design_flow_m3s", "design_pressure_pa"} <= set(s):
        refused = motor_power_below_air_power(
            motor_power_w=s["motor_power_w"], flow_m3s=s["design_flow_m3s"], pressure_pa=s["design_pressure_pa"]
        )
        if refused:
            errors["motor_power_w"] = refused
    if kind == "coil" and "fluid" in s:
        errors.update(_coil_fluid_checks(s))
    if kind == "sensor" and "measures" in s:
        lo, hi, unit = SENSOR_PLAUSIBLE[s["measures"]]
        labels = {f.name: f.label for f in SPECS[kind]}
        for key in ("range_low", "range_high"):
            if key in s and not lo <= s[key] <= hi:
                errors[key] = (
                    f"{labels[key]}: {s[key]:g} {unit} is outside what a {s['measures']} sensor reads; "
                    f"allowed: a number from {lo:g} to {hi:g} {unit}"
                )
        if "range_low" in s and "range_high" in s and s["range_low"] >= s["range_high"]:
            errors.setdefault(
                "range_high",
                f"Range high: {s['range_high']:g} is not above the range low of {s['range_low']:g}; "
                "allowed: a number above the range low",
            )
    return errors


def _coil_fluid_checks(s: dict[str, Any]) -> dict[str, str]:
    """A glycol coil names its glycol kind and concentration (the heat balance needs both); other fluids
    name neither."""
    errors: dict[str, str] = {}
    if s["fluid"] == "glycol":
        if not s.get("glycol_pct"):
            errors["glycol_pct"] = (
                "Glycol concentration is required when the fluid is glycol"
                if s.get("glycol_pct") is None
                else f"Glycol concentration: {shown(s['glycol_pct'])} % is not enough when the fluid is glycol"
            ) + "; allowed: a whole number from 1 to 60 %"
        if not s.get("glycol_kind"):
            errors["glycol_kind"] = (
                "Glycol kind is required when the fluid is glycol; allowed: one of ethylene, propylene"
            )
    else:
        for name, label in (("glycol_pct", "Glycol concentration"), ("glycol_kind", "Glycol kind")):
            if s.get(name) not in (None, "", 0):
                errors[name] = (
                    f"{label}: {shown(s[name])} applies only when the fluid is glycol; the fluid is "
                    f"{s['fluid']}: leave it empty or set the fluid to glycol"
                )
    return errors
