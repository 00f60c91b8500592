"""How a quantity reads: its number at the quantity's usual precision and its unit label, in SI or US.

The one formatter of stored SI values for people. Pages, reasons (``inspections.reasons``), PDFs
(``reports.documents``) and the sync answer call it; the phone gets ``DECIMALS`` and the unit labels
published in its evaluation context (``inspections.phone``) and twins ``format_number`` in
``frontend/static/frontend/js/units.js`` (formatNumber). Conversion factors and labels of the converted
quantities are ``engineering.units``'s (pint); a few plain quantities (percent, current, time) read the same
in both systems and are never converted.

Precision is that of a field instrument, not more (common practice): a gauge in Pa reads whole pascals, one
in in. w.c. two decimals; a thermometer 0.1 °C or 0.1 °F.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Context, Decimal

from engineering import units
from engineering.units import UnitSystem

__all__ = [
    "DECIMALS",
    "PLAIN_UNITS",
    "UnitSystem",
    "bound_text",
    "decimals_of",
    "display_value",
    "format_number",
    "number_text",
    "quantity_text",
    "significant_text",
    "storage_text",
    "stored_value",
    "typed_decimals",
    "unit_text",
]

# Quantities whose unit is the same in both systems and not a conversion ("" is a bare number).
PLAIN_UNITS: dict[str, str] = {"percent": "%", "current": "A", "time": "s", "": ""}

# Display precision per quantity: (SI, US) decimals. Common practice for field readings.
DECIMALS: dict[str, tuple[int, int]] = {
    "pressure": (0, 2),
    "temperature": (1, 1),
    "temperature_difference": (1, 1),
    "airflow": (0, 0),
    "water_flow": (2, 1),
    "heat_rate": (1, 0),
    "co2": (0, 0),
    "relative_humidity": (0, 0),
    "percent": (0, 0),
    "current": (1, 1),
    "time": (0, 0),
    "rotational_speed": (0, 0),
    "frequency": (1, 1),
    "run_hours": (0, 0),
    "length": (2, 1),
}
# A quantity not in the table reads to one decimal in either system.
_OTHER_DECIMALS = (1, 1)
# A value as typed shows at most this many decimals beyond none (a finer one is conversion noise, not typing).
TYPED_DECIMALS_CAP = 3
# Significant figures a value keeps when its typed decimals are counted: a value typed in one system and shown
# back in it after storage in SI (0.055 in. w.c. → 13.699… Pa → 0.05500000000000001) reads as typed.
_TYPED_FIGURES = 12


def decimals_of(*, quantity: str, system: str, si_decimals: int | None = None) -> int:
    """Decimals a value of ``quantity`` shows in ``system`` (``DECIMALS``). ``si_decimals`` (a checklist
    item's or a reason part's own precision) applies in SI only: its US unit has its own resolution (a
    whole pascal is two decimals of in. w.c.)."""
    si, us = DECIMALS.get(quantity, _OTHER_DECIMALS)
    if system == UnitSystem.US:
        return us
    return si if si_decimals is None else si_decimals


def unit_text(*, quantity: str, system: str) -> str:
    """Label of the unit a value of ``quantity`` shows in, e.g. "Pa", "in. w.c.", "%" ("" for a bare number)."""
    if quantity in PLAIN_UNITS:
        return PLAIN_UNITS[quantity]
    return units.unit_label(quantity=quantity, system=system)


def storage_text(*, quantity: str) -> str:
    """Label of the SI unit a value of ``quantity`` is stored in, e.g. "m³/s" (``engineering.units``;
    "" where no reading is kept in it)."""
    if quantity in PLAIN_UNITS:
        return PLAIN_UNITS[quantity]
    spec = units.QUANTITIES.get(quantity)
    return spec.storage_label if spec is not None else ""


def display_value(value_si: float, *, quantity: str, system: str) -> float:
    """A stored SI value in ``system``'s display unit (``engineering.units.to_display``; plain quantities
    as stored)."""
    if quantity in PLAIN_UNITS:
        return value_si
    return units.to_display(value=value_si, quantity=quantity, system=system)


def stored_value(value: float, *, quantity: str, system: str) -> float:
    """A value typed in ``system``'s display unit as stored SI (``engineering.units.from_display``; plain
    quantities as typed)."""
    if quantity in PLAIN_UNITS:
        return value
    return units.from_display(value=value, quantity=quantity, system=system)


def format_number(x: float, *, decimals: int) -> str:
    """A number as people read it: ``decimals`` places, a tie rounded half up (away from zero) on the number as
    written (its shortest text, so 12.5 → "13", 0.15 → "0.2", 2.675 → "2.68"), a true minus sign (−), never
    "−0", and no thousands separator (154000 Btu/h, 12075 h): a number a person reads may be typed back into a
    field, where a comma is a decimal comma (``accounts.inputs.parse_number``), so "12,075" would read 12.075;
    typed as shown, it reads the same number. The phone's twin is formatNumber in units.js."""
    if not math.isfinite(x):
        return f"{x:.{decimals}f}".replace("-", "−")
    exact = Decimal(repr(float(x)))
    places = max(exact.adjusted() + 1, 1) + decimals + 2
    rounded = exact.quantize(Decimal(1).scaleb(-decimals), rounding=ROUND_HALF_UP, context=Context(prec=places))
    text = f"{rounded:f}"
    if rounded == 0:
        text = text.lstrip("-")
    return text.replace("-", "−")


def typed_decimals(x: float, *, decimals: int) -> int:
    """Decimals that show ``x`` as typed: at least ``decimals``, more where the value has them (12.5 rpm on an
    item of whole rpm reads "12.5", 21.25 °C "21.25"), up to ``TYPED_DECIMALS_CAP``; a value needing more (a
    conversion's 566.3369 L/s) reads at ``decimals``. Counted on ``x`` at ``_TYPED_FIGURES`` significant figures,
    so a value stored in SI and shown back in the unit it was typed in counts as typed."""
    if not math.isfinite(x):
        return decimals
    needed = max(0, -int(Decimal(f"{x:.{_TYPED_FIGURES}g}").normalize().as_tuple().exponent))
    return max(decimals, needed) if needed <= TYPED_DECIMALS_CAP else decimals


def number_text(
    value_si: float, *, quantity: str, system: str, decimals: int | None = None, typed: bool = False
) -> str:
    """A stored SI value as a reader sees it, without its unit label: in ``system``'s unit at the quantity's
    usual precision, or at ``decimals`` in either system; ``typed`` (a reading as its person typed it) widens
    that to the decimals the value has (``typed_decimals``), so 12.5 rpm never reads "12 rpm"."""
    d = decimals_of(quantity=quantity, system=system) if decimals is None else decimals
    x = display_value(value_si, quantity=quantity, system=system)
    return format_number(x, decimals=typed_decimals(x, decimals=d) if typed else d)


def quantity_text(
    value_si: float, *, quantity: str, system: str, decimals: int | None = None, typed: bool = False
) -> str:
    """A stored SI value with its unit label, e.g. "0.84 in. w.c.", "12000 L/s", "45 %"; precision as
    ``number_text``."""
    text = number_text(value_si, quantity=quantity, system=system, decimals=decimals, typed=typed)
    unit = unit_text(quantity=quantity, system=system)
    return f"{text} {unit}" if unit else text


# Past these a number said to a person is said in words, never with an exponent ("2.5e−07" asks for the exponent a
# typed number is refused for): at least 10^15 reads "more than 1000000000000000", a non-zero size below 10^-12
# "about 0"; between them plain digits.
PLAIN_LARGEST = 1e15
PLAIN_SMALLEST = 1e-12


def significant_text(x: float, *, figures: int = 4) -> str:
    """A typed number echoed back to its sender at ``figures`` significant figures, in plain digits without
    trailing zeros and with a true minus sign: 249.08891 → "249.1", 100000 → "100000", 1000000 → "1000000" (never
    "1e+06"), −0.5 → "−0.5", 2.5e-7 → "0.00000025". Never an exponent: from 10^15 on "more than 1000000000000000"
    ("less than −1000000000000000"), a size below 10^-12 "about 0"."""
    if not math.isfinite(x):
        return f"{x:g}".replace("-", "−")
    rounded = float(f"{x:.{figures}g}")
    if abs(rounded) >= PLAIN_LARGEST:
        return f"{'less than −' if rounded < 0 else 'more than '}{PLAIN_LARGEST:.0f}"
    if rounded and abs(rounded) < PLAIN_SMALLEST:
        return "about 0"
    text = format(Decimal(repr(rounded)), "f")
    text = text.rstrip("0").rstrip(".") if "." in text else text
    return ("0" if text in ("-0", "") else text).replace("-", "−")


def bound_text(x: float) -> str:
    """A range bound of a form as the person types it back: exact plain digits with a hyphen minus, never an
    exponent (2118880, not 2.11888e+06; -60): ``significant_text`` at 15 figures."""
    return significant_text(x, figures=15).replace("−", "-")


def count_text(n: int, noun: str, plural: str | None = None) -> str:
    """A count with its noun as people say it: "1 day", "10 days", "0 parts"; ``plural`` where adding "s" is
    wrong ("1 inspection record", "2 inspection records" need none; "1 child", "2 children" do)."""
    return f"{n} {noun if n == 1 else (plural or noun + 's')}"
