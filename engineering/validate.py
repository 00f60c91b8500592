"""The engineering functions' argument checks and plausibility bands (public: every module of
``engineering`` and the field calculator validate through these, so refusals read the same everywhere)."""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Any

from engineering.errors import EngineeringInputError, value_text

# Plausibility bands (SI). Wider values are refused rather than computed,
# because a typo (a °F value typed as °C, kPa typed as Pa) is far more likely
# than such air in an AHU.
AIR_TEMPERATURE_C = (-60.0, 80.0)
ABSOLUTE_PRESSURE_PA = (50_000.0, 110_000.0)
RH_PCT = (0.0, 100.0)
CO2_PPM = (0.0, 50_000.0)


def fmt(value: float) -> str:
    return value_text(value)


def finite(name: str, value: object, label: str = "", unit: str = "") -> float:
    """Return ``value`` as float, refusing None, bools, non-numbers, NaN and inf."""
    prefix = f"{label} " if label else ""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        try:
            # numpy scalars and Decimals are fine; strings are not.
            if isinstance(value, (str, bytes)) or value is None:
                raise TypeError
            number = float(value)  # type: ignore[arg-type]
        except (TypeError, ValueError):
            raise EngineeringInputError(
                field=name,
                value=value,
                allowed="a number",
                message=f"{prefix}{name}={value!r} is not a number",
                unit=unit,
            ) from None
    else:
        number = float(value)
    if not math.isfinite(number):
        raise EngineeringInputError(
            field=name,
            value=number,
            allowed="a finite number",
            message=f"{prefix}{name}={number} is not a finite number",
            unit=unit,
        )
    return number


# SI unit (and, where a unit serves two quantities, the label) → the display quantity of
# engineering.units, so a refusal's numbers can be restated in the reader's units.
_QUANTITY_OF_UNIT = {
    "m³/s": "airflow",
    "Pa": "pressure",
    "°C": "temperature",
    "K": "temperature_difference",
    "ppm": "co2",
    "W": "heat_rate",
}
_QUANTITY_OF_LABEL = {"absolute pressure": "absolute_pressure", "fluid flow": "water_flow"}


def quantity_of(unit: str, label: str = "") -> str | None:
    """The display quantity of a value in the SI ``unit`` (None when it has none)."""
    return _QUANTITY_OF_LABEL.get(label) or _QUANTITY_OF_UNIT.get(unit)


def range_parts(
    low: float | None,
    high: float | None,
    quantity: str,
    *,
    low_open: bool = False,
    high_open: bool = False,
) -> list[Any]:
    """What is allowed, as reason parts (see EngineeringInputError.parts)."""
    if low is not None and high is not None and not (low_open or high_open):
        return [{"low": low, "high": high, "quantity": quantity}]
    parts: list[Any] = []
    if low is not None:
        parts += ["above " if low_open else "at least ", {"value": low, "quantity": quantity}]
    if high is not None:
        bound = "below " if high_open else "at most "
        parts += [" and " if parts else "", bound, {"value": high, "quantity": quantity}]
    return [p for p in parts if p != ""] or ["any finite number"]


def in_range(
    name: str,
    value: object,
    low: float | None,
    high: float | None,
    *,
    unit: str = "",
    label: str = "",
    low_open: bool = False,
    high_open: bool = False,
) -> float:
    """Check ``low <= value <= high`` (either end may be open or absent)."""
    number = finite(name, value, label, unit)
    below = low is not None and (number <= low if low_open else number < low)
    above = high is not None and (number >= high if high_open else number > high)
    if below or above:
        allowed = describe_range(low, high, unit, low_open=low_open, high_open=high_open)
        prefix = f"{label} " if label else ""
        quantity = quantity_of(unit, label)
        parts: list[Any] = []
        if quantity:
            band = range_parts(low, high, quantity, low_open=low_open, high_open=high_open)
            # "airflow 0 L/s must be above 0 L/s and at most …"; a closed band: "… is outside 2.0–6.0 °C".
            verb = " is outside " if isinstance(band[0], dict) else " must be "
            parts = [prefix, {"value": number, "quantity": quantity}, verb, *band]
        raise EngineeringInputError(
            field=name,
            value=number,
            allowed=allowed,
            message=f"{prefix}{name}={fmt(number)} is outside {allowed}",
            low=low,
            high=high,
            unit=unit,
            parts=[p for p in parts if p != ""],
        )
    return number


def describe_range(
    low: float | None,
    high: float | None,
    unit: str,
    *,
    low_open: bool = False,
    high_open: bool = False,
) -> str:
    suffix = f" {unit}" if unit else ""
    if low is not None and high is not None and not (low_open or high_open):
        return f"{fmt(low)}–{fmt(high)}{suffix}"
    parts = []
    if low is not None:
        parts.append(f"{'above' if low_open else 'at least'} {fmt(low)}{suffix}")
    if high is not None:
        parts.append(f"{'below' if high_open else 'at most'} {fmt(high)}{suffix}")
    return " and ".join(parts) if parts else "any finite number"


def positive(name: str, value: object, *, unit: str = "", label: str = "") -> float:
    return in_range(name, value, 0.0, None, unit=unit, label=label, low_open=True)


def non_negative(name: str, value: object, *, unit: str = "", label: str = "") -> float:
    return in_range(name, value, 0.0, None, unit=unit, label=label)


def air_temperature(name: str, value: object, label: str = "air temperature") -> float:
    return in_range(name, value, *AIR_TEMPERATURE_C, unit="°C", label=label)


def pressure(name: str, value: object) -> float:
    return in_range(name, value, *ABSOLUTE_PRESSURE_PA, unit="Pa", label="absolute pressure")


def co2(name: str, value: object) -> float:
    return in_range(name, value, *CO2_PPM, unit="ppm", label="CO2 concentration")


def efficiency(name: str, value: object, label: str = "efficiency") -> float:
    return in_range(name, value, 0.0, 1.0, unit="", label=label, low_open=True)


def choice(name: str, value: object, options: Iterable[str]) -> str:
    options = list(options)
    if not isinstance(value, str) or value not in options:
        allowed = "one of " + ", ".join(options)
        raise EngineeringInputError(
            field=name,
            value=value,
            allowed=allowed,
            message=f"{name}={value!r} is not {allowed}",
        )
    return value
