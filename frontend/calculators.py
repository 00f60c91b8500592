"""The field calculator: each figure names its inputs (quantity, SI range) and calls one engineering function.

Formulas live in engineering/ only; this module converts the user's units at
the edges and shapes the answer for the page and the API. An input's range in the person's units and the check
of a typed number are ``frontend.calculator_inputs``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from engineering import airside, filters, outdoor_air
from engineering import validate as limits
from engineering.errors import EngineeringInputError
from engineering.formatting import format_number, number_text
from engineering.psychro import STANDARD_PRESSURE_PA, pressure_from_altitude
from engineering.units import SYSTEMS, UnitSystem, unit_label
from inspections.display import plain_message
from inspections.reasons import q, render

from .calculator_inputs import Input, allowed_text, bounds, check_number, typed_text


@dataclass(frozen=True)
class Place:
    """Air at a site's atmospheric pressure: the standard atmosphere at its altitude, as the checklist's coil
    check takes it (engineering.psychro.pressure_from_altitude, ASHRAE Handbook—Fundamentals ch.1 eq. 3)."""

    key: str
    name: str
    altitude_m: float
    pressure_pa: float


SEA_LEVEL = Place("sea-level", "", 0.0, STANDARD_PRESSURE_PA)


def places_for(user) -> list[Place]:
    """The person's sites by name (each at its altitude), then sea level: the first is the default."""
    from inventory.selectors import sites_visible_to

    out = []
    for site in sites_visible_to(user=user).order_by("name", "pk").only("pk", "name", "altitude_m"):
        try:
            pressure = pressure_from_altitude(altitude_m=site.altitude_m)
        except EngineeringInputError:
            continue  # an altitude stored out of range (manage.py check_data names it): not offered
        out.append(Place(f"site:{site.pk}", site.name, site.altitude_m, pressure))
    return [*out, SEA_LEVEL]


def _altitude(place: Place, system: str) -> str:
    unit = unit_label(quantity="length", system=system)
    return f"{number_text(place.altitude_m, quantity='length', system=system, decimals=0)} {unit}"


def place_words(place: Place, system: str) -> str:
    """How a place reads in the choice: "Harbour House (350 m)", "sea level (101.325 kPa)"."""
    if not place.name:
        return "sea level"
    return f"{place.name} ({_altitude(place, system)})"


def air_assumed(place: Place, system: str) -> str:
    """What the figure assumed of the air, in the person's units: "dry air at 97.2 kPa, the standard atmosphere
    at 350 m (Harbour House)"."""
    d = 1 if system == UnitSystem.SI else 2  # kPa to 0.1, in. Hg to 0.01 as barometers read (common practice)
    pressure = number_text(place.pressure_pa, quantity="absolute_pressure", system=system, decimals=d)
    where = "at sea level" if not place.name else f"at {_altitude(place, system)} ({place.name})"
    return (
        f"dry air at {pressure} {unit_label(quantity='absolute_pressure', system=system)}, "
        f"the standard atmosphere {where}"
    )


@dataclass(frozen=True)
class Calculator:
    name: str
    title: str
    help: str
    inputs: tuple[Input, ...]
    compute: Callable[..., list[dict]]

    def help_in(self, system: str) -> str:
        """The help in the reader's units: "{min_dt}" is the least temperature difference the outdoor-air
        fraction takes (engineering.outdoor_air), as a difference (3.0 K, 5.4 Δ°F), in one system only."""
        least = render([q(outdoor_air.MIN_DIFFERENCE_K, "temperature_difference")], system)
        return self.help.replace("{min_dt}", least)


def _row(label: str, value: float, quantity: str, system: str) -> dict:
    """A figure in the reader's unit at the quantity's usual precision (as the checklist's reasons show it)."""
    return {
        "label": label,
        "value": number_text(value, quantity=quantity, system=system),
        "unit": unit_label(quantity=quantity, system=system),
    }


def _fraction_rows(result: outdoor_air.OaFraction, system: str) -> list[dict]:
    # Said as the checklist's reasons say it: whole percent, the ± in percentage points.
    return [
        {
            "label": "Outdoor-air fraction",
            "value": outdoor_air.fraction_words(result.fraction, result.uncertainty),
            "unit": "",
        },
        {"label": "Likely range", "value": f"{result.low * 100:.0f}–{result.high * 100:.0f}", "unit": "%"},
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
            "value": format_number(filters.loading_percent(result.fraction_of_span), decimals=0),
            "unit": "%",
        },
        {"label": "Verdict", "value": result.verdict.value, "unit": "", "verdict": result.verdict.value},
        # In the reader's units, every pressure at its usual precision (the checklist's reasons do the same).
        {"label": "Reason", "value": render(list(result.parts), system), "unit": ""},
    ]


def _sensible_heat(system: str, *, place: Place, **si) -> list[dict]:
    # The checklist's coil check calls the same function: the air's density is taken at the state where
    # the airflow was measured (a supply fan after the coil measures leaving air), at the site's pressure.
    return [
        _row(
            "Sensible heat added to the air",
            airside.sensible_heat_w(pressure_pa=place.pressure_pa, **si),
            "heat_rate",
            system,
        ),
        {"label": "Air assumed", "value": air_assumed(place, system), "unit": ""},
    ]


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
            "Needs at least {min_dt} between outdoor and return air.",
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
            "Dry air at the atmospheric pressure of the site's altitude (standard atmosphere), its density taken at"
            " the state where the airflow was measured, as the checklist's coil check does; positive when the air"
            " is heated.",
            (
                Input("airflow_m3s", "Airflow", "airflow", *Q),
                Input("t_in_c", "Entering air", "temperature", *T),
                Input("t_out_c", "Leaving air", "temperature", *T),
                Input("airflow_at", "Airflow measured at", "", None, None, choices=AIRFLOW_AT),
                Input("place", "Site (its altitude sets the air pressure)", "", None, None, place=True),
            ),
            _sensible_heat,
        ),
    )
}


def input_fields(calc: Calculator, system: str, places: list[Place] | None = None) -> list[dict]:
    """Inputs with their display unit and allowed range, for the form and the offline checks."""
    out = []
    for i in calc.inputs:
        lo, hi = bounds(i, system) if i.quantity else (None, None)
        choices = i.choices
        if i.place:
            choices = tuple((p.key, place_words(p, system)) for p in places or [SEA_LEVEL])
        out.append(
            {
                "name": i.name,
                "label": i.label,
                "unit": unit_label(quantity=i.quantity, system=system) if i.quantity else "",
                "min": lo,
                "max": hi,
                "allowed": allowed_text(i, system) if i.quantity else "",
                "id": f"{calc.name}-{i.name}",
                "choices": [{"value": k, "label": words} for k, words in choices],
            }
        )
    return out


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
    lo = None if exc.low is None else number_text(exc.low, quantity=spec.quantity, system=system)
    hi = None if exc.high is None else number_text(exc.high, quantity=spec.quantity, system=system)
    allowed = (
        f"from {lo} to {hi} {unit}"
        if lo is not None and hi is not None
        else (f"at least {lo} {unit}" if lo is not None else f"at most {hi} {unit}")
    )
    return f"{spec.label}: {typed_text(typed.get(exc.field))} {unit} is not allowed; allowed {allowed}"


def calculate(*, name: str, values: dict, system: str, places: list[Place] | None = None) -> list[dict]:
    """Run one calculator on values typed in the user's units; CalcError names each bad field.

    ``places``: the person's places (``places_for``) for a calculator that needs the air's pressure; sea level
    when not given."""
    calc = CALCULATORS[name]
    by_name = {i.name: i for i in calc.inputs}
    si: dict = {}
    errors = {}
    for spec in calc.inputs:
        raw = values.get(spec.name)
        if spec.choices or spec.place:
            offered = {p.key: p for p in places or [SEA_LEVEL]} if spec.place else dict(spec.choices)
            picked = next(iter(offered)) if raw in (None, "") else raw
            if isinstance(picked, str) and picked in offered:
                si[spec.name] = offered[picked] if spec.place else picked
            else:
                words = " or ".join(place_words(p, system) for p in offered.values()) if spec.place else None
                words = words or " or ".join(w for _, w in spec.choices)
                errors[spec.name] = [f"{spec.label}: choose {words}"]
            continue
        number, problem = check_number(spec, raw, system)
        if problem:
            errors[spec.name] = [problem]
        else:
            si[spec.name] = number
    if errors:
        raise CalcError(errors)
    try:
        return calc.compute(system, **si)
    except EngineeringInputError as exc:
        raise CalcError(
            {exc.field if exc.field in by_name else "non_field_errors": [_restate(exc, by_name, values, system)]}
        )


def calculator_context(places: list[Place] | None = None) -> dict:
    """What calc.js needs to work every figure offline with the same numbers: the inputs of each
    calculator (name, label, quantity, SI range, its range as shown in each unit system), the person's places
    with their pressure and words, the display-unit factors and the thresholds."""
    from inspections.phone import constants, decimals_table, unit_table

    def shown(i: Input) -> dict:
        if not i.quantity:
            return {}
        return {
            "bounds": {s: list(bounds(i, s)) for s in SYSTEMS},
            "allowed": {s: allowed_text(i, s) for s in SYSTEMS},
        }

    return {
        "calculators": {
            c.name: [
                {
                    "name": i.name,
                    "label": i.label,
                    "quantity": i.quantity,
                    "low": i.low_si,
                    "high": i.high_si,
                    **shown(i),
                    **({"choices": [[k, w] for k, w in i.choices]} if i.choices else {}),
                    **({"place": True} if i.place else {}),
                }
                for i in c.inputs
            ]
            for c in CALCULATORS.values()
        },
        "places": [
            {
                "key": p.key,
                "pressure_pa": p.pressure_pa,
                "words": {s: place_words(p, s) for s in SYSTEMS},
                "assumed": {s: air_assumed(p, s) for s in SYSTEMS},
            }
            for p in places or [SEA_LEVEL]
        ],
        "units": unit_table(),
        "decimals": decimals_table(),
        "constants": constants(),
    }
