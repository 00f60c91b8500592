"""A calculator's inputs as a person types them: each input's quantity and SI range, that range in the person's
units (rounded inward, so a bound as shown is itself allowed) and in words, and a typed number checked against it."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from accounts.inputs import comma_words, exponent_words, parse_number
from engineering.formatting import decimals_of, format_number
from engineering.units import from_display, sensible_bound, to_display, unit_label


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
    # Where the air is: one of the person's places (their sites, then sea level); gives ``pressure_pa``.
    place: bool = False


def bounds(spec: Input, system: str) -> tuple[float | None, float | None]:
    """The input's allowed range in the person's unit at the quantity's display precision, rounded inward so
    that a bound as shown, typed back, is allowed: 2,500 Pa is at most 10.03 in. w.c. (10.04 in. w.c. is
    2,500.9 Pa; 1 in. w.c. = 249.0889 Pa, engineering/units.py)."""
    d = decimals_of(quantity=spec.quantity, system=system)
    scale = 10**d

    def shown(value_si: float | None, inward: Callable[[float], float]) -> float | None:
        if value_si is None:
            return None
        x = to_display(value=value_si, quantity=spec.quantity, system=system)
        return inward(round(x * scale, 6)) / scale  # round(…, 6): 760.0000001 is 760, not 761

    return shown(spec.low_si, math.ceil), shown(spec.high_si, math.floor)


def _bound_text(value: float, *, upper: bool, decimals: int) -> str:
    """A shown limit at sensible figures (engineering.units.sensible_bound, inward, so it is itself allowed),
    with no decimals it does not need: "10", "210,000", "0.5"."""
    x = sensible_bound(value, upper=upper)
    d = 0 if float(x).is_integer() else decimals
    return format_number(x, decimals=d)


def allowed_text(spec: Input, system: str) -> str:
    """ "from 0 to 10 in. w.c.": the range as a person reads it, its limits at sensible figures rounded inward
    (the exact limits, ``bounds``, are what is accepted: 10.03 in. w.c. is still worked)."""
    lo, hi = bounds(spec, system)
    d = decimals_of(quantity=spec.quantity, system=system)
    unit = unit_label(quantity=spec.quantity, system=system)
    lo_text = _bound_text(lo, upper=False, decimals=d) if lo is not None else ""
    hi_text = _bound_text(hi, upper=True, decimals=d) if hi is not None else ""
    if lo is not None and hi is not None:
        return f"from {lo_text} to {hi_text} {unit}"
    if lo is not None:
        return f"at least {lo_text} {unit}"
    if hi is not None:
        return f"at most {hi_text} {unit}"
    return f"any number in {unit}"


def typed_text(raw: object) -> str:
    """The typed text as a message repeats it, cut short."""
    text = str(raw).strip()
    return text if len(text) <= 40 else text[:39] + "…"


def check_number(spec: Input, raw: object, system: str) -> tuple[float | None, str]:
    """A typed number inside the input's shown range, in SI; or None and the message that names the field, the
    value and the allowed range (blank: missing; text, 1e400, NaN: not a usable number; else outside)."""
    allowed = allowed_text(spec, system)
    if raw is None or (isinstance(raw, str) and not raw.strip()):
        return None, f"{spec.label}: missing; enter a number {allowed}"
    number = parse_number(raw, exponent=False)  # "1e5" typed is refused with the range (calc.js the same)
    if number is None and (ambiguous := comma_words(raw) or exponent_words(raw, f"allowed {allowed}")):
        return None, f"{spec.label}: {ambiguous}"
    if number is None:
        said = "" if isinstance(raw, float) else f"{typed_text(raw)} is "  # a lost entry (the browser's NaN)
        return None, f"{spec.label}: {said}not a usable number; allowed {allowed}"
    lo, hi = bounds(spec, system)
    if (lo is not None and number < lo) or (hi is not None and number > hi):
        unit = unit_label(quantity=spec.quantity, system=system)
        return None, f"{spec.label}: {typed_text(raw)} {unit} is outside the allowed range, {allowed}"
    return from_display(value=number, quantity=spec.quantity, system=system), ""
