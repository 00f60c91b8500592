"""The field calculator: each figure names its inputs (quantity, SI range) and calls one engineering function.

Formulas live in engineering/ only; this module converts the user's units at
the edges and shapes the answer for the page and the API.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from engineering import _validate as limits
from engineering import airside, filters, outdoor_air
from engineering.errors import EngineeringInputError
from engineering.units import from_display, to_display, unit_label
from inspections.display import plain_message
from inspections.reasons import display_number, render


@dataclass(frozen=True)
class Input:
    name: str  # the engineering keyword argument
    label: str
    quantity: str
    low_si: float | None
    high_si: float | None
    default_si: float | None = None
    # A choice instead of a number: (value, plain words) pairs, the first the default.
    choices: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class Calculator:
    name: str
    title: str
    help: str
    inputs: tuple[Input, ...]
    compute: Callable[..., list[dict]]


def _row(label: str, value: float, quantity: str, system: str) -> dict:
    """A figure in the reader's unit at the quantity's usual precision (as the checklist's reasons show it)."""
    return {
        "label": label,
        "value": display_number(value, quantity, system),
        "unit": unit_label(quantity=quantity, system=system),
    }


def _fraction_rows(result: outdoor_air.OaFraction, system: str) -> list[dict]:
    return [
        {"label": "Outdoor-air fraction", "value": round(result.fraction * 100, 1), "unit": "%"},
        {"label": "Uncertainty (±)", "value": round(result.uncertainty * 100, 1), "unit": "%"},
        {"label": "Likely range", "value": f"{result.low * 100:.1f}–{result.high * 100:.1f}", "unit": "%"},
    ]


def _oa_temperatures(system: str, **si) -> list[dict]:
    return _fraction_rows(outdoor_air.oa_fraction_from_temperatures(**si), system)


def _oa_co2(system: str, **si) -> list[dict]:
    return _fraction_rows(outdoor_air.oa_fraction_from_co2(**si), system)


def _filter_loading(system: str, **si) -> list[dict]:
    result = filters.filter_loading(**si)
    return [
        _row("Pressure drop at design airflow", result.corrected_dp_pa, "pressure", system),
        {
            "label": "Loading (clean = 0 %, final = 100 %)",
            "value": round(result.fraction_of_span * 100, 1),
            "unit": "%",
        },
        {"label": "Verdict", "value": result.verdict.value, "unit": "", "verdict": result.verdict.value},
        {"label": "Reason", "value": result.reason, "unit": ""},
    ]


def _sensible_heat(system: str, **si) -> list[dict]:
    # The checklist's coil check calls the same function: the air's density is taken at the state where
    # the airflow was measured (a supply fan after the coil measures leaving air).
    return [_row("Sensible heat added to the air", airside.sensible_heat_w(**si), "heat_rate", system)]


AIRFLOW_AT = (
    ("leaving", "leaving air (e.g. measured at a supply fan after the coil)"),
    ("entering", "entering air (e.g. measured before the coil, or a coil's rated airflow)"),
)


T = limits.AIR_TEMPERATURE_C
DP = filters.FILTER_DP_PA
Q = (0.0, airside.AIRFLOW_MAX_M3S)

CALCULATORS: dict[str, Calculator] = {
    c.name: c
    for c in (
        Calculator(
            "oa-temperatures",
            "Outdoor-air fraction from three temperatures",
            "Needs at least 3 K (5.4 Δ°F) between outdoor and return air.",
            (
                Input("t_outdoor_c", "Outdoor air", "temperature", *T),
                Input("t_return_c", "Return air", "temperature", *T),
                Input("t_mixed_c", "Mixed air", "temperature", *T),
            ),
            _oa_temperatures,
        ),
        Calculator(
            "oa-co2",
            "Outdoor-air fraction from three CO2 readings",
            "Needs at least 100 ppm between outdoor and return air; the supply reading serves for the mixed one.",
            (
                Input("co2_outdoor_ppm", "Outdoor CO2", "co2", *limits.CO2_PPM),
                Input("co2_return_ppm", "Return CO2", "co2", *limits.CO2_PPM),
                Input("co2_supply_or_mixed_ppm", "Supply or mixed CO2", "co2", *limits.CO2_PPM),
            ),
            _oa_co2,
        ),
        Calculator(
            "filter-loading",
            "Filter loading corrected to design airflow",
            "Pressure drop is corrected to the design airflow before it is compared with the clean and final values.",
            (
                Input("dp_pa", "Measured pressure drop", "pressure", *DP),
                Input("airflow_m3s", "Airflow now", "airflow", *Q),
                Input("design_airflow_m3s", "Design airflow", "airflow", *Q),
                Input("clean_dp_pa", "Clean pressure drop", "pressure", *DP),
                Input("final_dp_pa", "Final pressure drop", "pressure", *DP),
            ),
            _filter_loading,
        ),
        Calculator(
            "sensible-heat",
            "Sensible heat of an airstream",
            "Dry air at sea level (101.325 kPa), its density taken at the state where the airflow was measured"
            " (as the checklist's coil check does); positive when the air is heated.",
            (
                Input("airflow_m3s", "Airflow", "airflow", *Q),
                Input("t_in_c", "Entering air", "temperature", *T),
                Input("t_out_c", "Leaving air", "temperature", *T),
                Input("airflow_at", "Airflow measured at", "", None, None, choices=AIRFLOW_AT),
            ),
            _sensible_heat,
        ),
    )
}


def _display(value_si: float | None, quantity: str, system: str) -> float | None:
    if value_si is None:
        return None
    return round(to_display(value=value_si, quantity=quantity, system=system), 2)


def input_fields(calc: Calculator, system: str) -> list[dict]:
    """Inputs with their display unit and allowed range, for the form and the offline checks."""
    return [
        {
            "name": i.name,
            "label": i.label,
            "unit": unit_label(quantity=i.quantity, system=system) if i.quantity else "",
            "min": _display(i.low_si, i.quantity, system) if i.quantity else None,
            "max": _display(i.high_si, i.quantity, system) if i.quantity else None,
            "id": f"{calc.name}-{i.name}",
            "choices": [{"value": k, "label": words} for k, words in i.choices],
        }
        for i in calc.inputs
    ]


class CalcError(Exception):
    def __init__(self, errors: dict[str, list[str]]):
        super().__init__("; ".join(f"{k}: {' '.join(v)}" for k, v in errors.items()))
        self.errors = errors


def _restate(exc: EngineeringInputError, inputs: dict[str, Input], typed: dict, system: str) -> str:
    spec = inputs.get(exc.field)
    if exc.parts:  # its numbers as quantities: restated in the reader's units
        text = render(exc.parts, system)
        return f"{spec.label}: {text}" if spec is not None else text[:1].upper() + text[1:]
    if spec is None or (exc.low is None and exc.high is None):
        return plain_message(exc)
    unit = unit_label(quantity=spec.quantity, system=system)
    lo = _display(exc.low, spec.quantity, system)
    hi = _display(exc.high, spec.quantity, system)
    allowed = (
        f"from {lo} to {hi} {unit}"
        if lo is not None and hi is not None
        else (f"at least {lo} {unit}" if lo is not None else f"at most {hi} {unit}")
    )
    return f"{spec.label}: {typed.get(exc.field)} {unit} is not allowed; allowed {allowed}"


def calculate(*, name: str, values: dict, system: str) -> list[dict]:
    """Run one calculator on values typed in the user's units; CalcError names each bad field."""
    calc = CALCULATORS[name]
    by_name = {i.name: i for i in calc.inputs}
    si, errors = {}, {}
    for spec in calc.inputs:
        raw = values.get(spec.name)
        if spec.choices:
            keys = [k for k, _ in spec.choices]
            picked = keys[0] if raw in (None, "") else raw
            if picked in keys:
                si[spec.name] = picked
            else:
                words = " or ".join(w for _, w in spec.choices)
                errors[spec.name] = [f"{spec.label}: choose {words}"]
            continue
        unit = unit_label(quantity=spec.quantity, system=system)
        try:
            number = float(str(raw).replace(",", "."))
        except (TypeError, ValueError):
            errors[spec.name] = [f"{spec.label}: {raw!r} is not a number in {unit}"]
            continue
        try:
            si[spec.name] = from_display(value=number, quantity=spec.quantity, system=system)
        except EngineeringInputError as exc:
            errors[spec.name] = [f"{spec.label}: {number} {unit} is not allowed ({exc.allowed})"]
    if errors:
        raise CalcError(errors)
    try:
        return calc.compute(system, **si)
    except EngineeringInputError as exc:
        raise CalcError(
            {exc.field if exc.field in by_name else "non_field_errors": [_restate(exc, by_name, values, system)]}
        )


def calculator_context() -> dict:
    """What calc.js needs to work every figure offline with the same numbers: the inputs of each
    calculator (name, label, quantity, SI range), the display-unit factors and the thresholds."""
    from inspections.phone import constants, unit_table
    from inspections.reasons import DECIMALS

    return {
        "calculators": {
            c.name: [
                {
                    "name": i.name,
                    "label": i.label,
                    "quantity": i.quantity,
                    "low": i.low_si,
                    "high": i.high_si,
                    **({"choices": [[k, w] for k, w in i.choices]} if i.choices else {}),
                }
                for i in c.inputs
            ]
            for c in CALCULATORS.values()
        },
        "units": unit_table(),
        "decimals": {q: list(d) for q, d in DECIMALS.items()},
        "constants": constants(),
    }
