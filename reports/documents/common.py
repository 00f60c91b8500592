"""Bits shared by the documents: the reader's unit system, a value in it (through engineering.formatting)."""

from __future__ import annotations

import math

from django.core.exceptions import ValidationError

from engineering.errors import EngineeringInputError
from engineering.formatting import quantity_text, significant_text
from engineering.units import SYSTEMS, UnitSystem


def unit_system(parameters: dict, user) -> str:
    raw = parameters.get("unit_system") or getattr(user, "unit_system", UnitSystem.SI) or UnitSystem.SI
    if not isinstance(raw, str) or raw not in SYSTEMS:
        raise ValidationError({"unit_system": f"unit_system={raw!r}: allowed are {', '.join(SYSTEMS)}"})
    return raw


def shown(value_si: float | None, quantity: str, system: str, *, decimals: int | None = None) -> str:
    """A stored SI value in the reader's unit with its label (engineering.formatting.quantity_text), e.g.
    "0.84 in. w.c."; "—" when there is none."""
    if value_si is None or (isinstance(value_si, float) and not math.isfinite(value_si)):
        return "—"
    try:
        return quantity_text(value_si, quantity=quantity, system=system, decimals=decimals)
    except EngineeringInputError:
        return significant_text(value_si, figures=6)


def percent(share: float | None, places: int = 0) -> str:
    return "—" if share is None else f"{share * 100:.{places}f} %"
