"""Display units: SI storage values to and from a user's SI or US display.

Conversions go through pint so every factor has one definition. Stored
values are SI (see each quantity's ``storage`` unit); only forms, screens and
PDFs call these functions.

Definitions chosen:
- in. w.c. is pint's ``inch_H2O``: the conventional inch of water,
  1000 kg/m³ × g₀ × 0.0254 m = 249.0889 Pa (about 0.1 % from the 60 °F
  inch, 248.84 Pa; the difference is below any field gauge's resolution).
- Btu is the International Table Btu (pint ``Btu_it``, 1055.05585 J), the
  one HVAC uses.
- A ton of refrigeration is 12 000 Btu/h (3516.85 W; pint defines it on
  the ISO Btu, 1055.056 J, which differs from the IT Btu by 1 in 10⁷).
- cfm and gpm are defined here because pint would read "cfm" as
  centi-fermi; gpm uses the US liquid gallon (231 in³).
- SI airflow and water flow are shown in L/s (as in ASHRAE SI practice);
  heat and power in kW.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from enum import StrEnum
from typing import Any

import pint

from engineering import validate as v

__all__ = [
    "QUANTITIES",
    "SYSTEMS",
    "DisplayUnit",
    "UnitSystem",
    "cache_clear",
    "from_display",
    "sensible_bound",
    "to_display",
    "unit_label",
    "ureg",
]

ureg: pint.UnitRegistry[Any] = pint.UnitRegistry()
ureg.define("cubic_foot_per_minute = foot ** 3 / minute = cfm")
ureg.define("gallon_per_minute = gallon / minute = gpm")
ureg.define("feet_per_minute = foot / minute = fpm")
ureg.define("grain_per_pound = grain / pound = gr_per_lb")


class UnitSystem(StrEnum):
    """The two display systems a person picks from: SI, or US customary (in. w.c., °F, cfm, Btu/h)."""

    SI = "si"
    US = "us"


SYSTEMS = tuple(s.value for s in UnitSystem)


@dataclass(frozen=True)
class DisplayUnit:
    storage: str  # pint unit of the stored SI value
    si: str
    us: str
    si_label: str
    us_label: str
    # The stored SI unit as a reading of it is labelled; empty for quantities no checklist reading keeps.
    storage_label: str = ""


QUANTITIES: dict[str, DisplayUnit] = {
    "pressure": DisplayUnit("pascal", "pascal", "inch_H2O", "Pa", "in. w.c.", "Pa"),
    "absolute_pressure": DisplayUnit("pascal", "kilopascal", "inch_Hg", "kPa", "in. Hg"),
    "temperature": DisplayUnit("degC", "degC", "degF", "°C", "°F", "°C"),
    "temperature_difference": DisplayUnit("kelvin", "kelvin", "delta_degF", "K", "Δ°F", "K"),
    "airflow": DisplayUnit("m**3/s", "L/s", "cfm", "L/s", "cfm", "m³/s"),
    "water_flow": DisplayUnit("m**3/s", "L/s", "gpm", "L/s", "gpm", "m³/s"),
    "heat_rate": DisplayUnit("watt", "kilowatt", "Btu_it/hour", "kW", "Btu/h"),
    "cooling_capacity": DisplayUnit("watt", "kilowatt", "ton_of_refrigeration", "kW", "tons"),
    "electric_power": DisplayUnit("watt", "kilowatt", "kilowatt", "kW", "kW"),
    "motor_power": DisplayUnit("watt", "kilowatt", "horsepower", "kW", "hp"),
    "energy": DisplayUnit("joule", "kilowatt_hour", "kilowatt_hour", "kWh", "kWh"),
    "co2": DisplayUnit("ppm", "ppm", "ppm", "ppm", "ppm", "ppm"),
    "relative_humidity": DisplayUnit("percent", "percent", "percent", "%", "%", "%"),
    "humidity_ratio": DisplayUnit("kg/kg", "g/kg", "gr_per_lb", "g/kg", "gr/lb"),
    "enthalpy": DisplayUnit("J/kg", "kJ/kg", "Btu_it/lb", "kJ/kg", "Btu/lb"),
    "density": DisplayUnit("kg/m**3", "kg/m**3", "lb/ft**3", "kg/m³", "lb/ft³"),
    "area": DisplayUnit("m**2", "m**2", "ft**2", "m²", "ft²"),
    "length": DisplayUnit("meter", "meter", "foot", "m", "ft", "m"),
    "velocity": DisplayUnit("m/s", "m/s", "fpm", "m/s", "fpm"),
    "rotational_speed": DisplayUnit("revolution/second", "rpm", "rpm", "rpm", "rpm", "rev/s"),
    "frequency": DisplayUnit("hertz", "hertz", "hertz", "Hz", "Hz", "Hz"),
    "run_hours": DisplayUnit("hour", "hour", "hour", "h", "h", "h"),
}


def _spec(quantity: str, system: str) -> tuple[DisplayUnit, str]:
    q = v.choice("quantity", quantity, QUANTITIES)
    s = v.choice("system", system, SYSTEMS)
    return QUANTITIES[q], s


@functools.lru_cache(maxsize=8192)
def _convert(x: float, source: str, target: str) -> float:
    """``x`` in ``source`` → ``target`` by pint, kept (callers pass −0 as 0): a form converts the same limits
    and values again and again, and one pint conversion costs about as much as a database query."""
    return float(ureg.Quantity(x, source).to(target).magnitude)


def cache_clear() -> None:
    """Forget the unit conversions kept in this process (``config.caches.clear_module_caches``)."""
    _convert.cache_clear()


def to_display(*, value: float, quantity: str, system: str = "si") -> float:
    """Stored SI value → the display unit of ``system`` (pint conversion; the
    definitions are in the module docstring)."""
    spec, s = _spec(quantity, system)
    x = v.finite("value", value)
    return _convert(x + 0.0, spec.storage, spec.si if s == "si" else spec.us)


def from_display(*, value: float, quantity: str, system: str = "si") -> float:
    """A value typed in the display unit of ``system`` → stored SI value."""
    spec, s = _spec(quantity, system)
    x = v.finite("value", value)
    return _convert(x + 0.0, spec.si if s == "si" else spec.us, spec.storage)


def unit_label(*, quantity: str, system: str = "si") -> str:
    """Short label of the display unit, e.g. "Pa", "in. w.c.", "°F", "cfm"."""
    spec, s = _spec(quantity, system)
    return spec.si_label if s == "si" else spec.us_label


def sensible_bound(value: float, *, upper: bool, figures: int = 2) -> float:
    """A limit of an allowed range as a person reads it: ``value`` to ``figures`` significant figures, rounded
    inward so that the shown bound is itself allowed (an upper bound down, a lower bound up): 10.037 in. w.c.
    (2,500 Pa) shows 10, 211,888 cfm (100 m³/s) 210,000, −40.0 °F stays −40, 0 stays 0."""
    if value == 0 or not math.isfinite(value):
        return value
    step = 10 ** (math.floor(math.log10(abs(value))) - figures + 1)
    scaled = round(value / step, 6)  # 2.0000000001 is 2, not 3
    n = math.floor(scaled) if upper else math.ceil(scaled)
    return float(n * step) if step >= 1 else round(n * step, 12)
