"""Bits shared by the documents: the reader's units, number formatting, unit systems."""

from __future__ import annotations

import math

from django.core.exceptions import ValidationError

from engineering.units import to_display, unit_label

UNIT_SYSTEMS = ("si", "us")
# Decimals shown per quantity and unit system: a gauge's resolution, not more.
DECIMALS = {
    ("pressure", "si"): 0,
    ("pressure", "us"): 2,
    ("temperature", "si"): 1,
    ("temperature", "us"): 1,
    ("temperature_difference", "si"): 1,
    ("temperature_difference", "us"): 1,
    ("airflow", "si"): 0,
    ("airflow", "us"): 0,
    ("water_flow", "si"): 2,
    ("water_flow", "us"): 1,
    ("heat_rate", "si"): 1,
    ("heat_rate", "us"): 0,
}


def unit_system(parameters: dict, user) -> str:
    raw = parameters.get("unit_system") or getattr(user, "unit_system", "si") or "si"
    if not isinstance(raw, str) or raw not in UNIT_SYSTEMS:
        raise ValidationError({"unit_system": f"unit_system={raw!r}: allowed are si, us"})
    return raw


def shown(value_si: float | None, quantity: str, system: str, *, decimals: int | None = None) -> str:
    """A stored SI value in the reader's unit with its label, e.g. "0.84 in. w.c."; "—" when there is none."""
    if value_si is None or (isinstance(value_si, float) and not math.isfinite(value_si)):
        return "—"
    try:
        value = to_display(value=value_si, quantity=quantity, system=system)
        label = unit_label(quantity=quantity, system=system)
    except (KeyError, ValueError):
        return f"{value_si:g}"
    places = decimals if decimals is not None else DECIMALS.get((quantity, system), 1)
    return f"{value:.{places}f} {label}"


def percent(share: float | None, places: int = 0) -> str:
    return "—" if share is None else f"{share * 100:.{places}f} %"
