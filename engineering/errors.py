"""Exceptions raised by the engineering package.

Every refusal is an ``EngineeringInputError`` (a ``ValueError``) carrying the
argument name, the value given and what is allowed, so a form can show the
message beside the field it belongs to.
"""

from __future__ import annotations

from typing import Any

__all__ = [
    "EngineeringInputError",
    "IndeterminateError",
    "InsufficientDataError",
]


class EngineeringInputError(ValueError):
    """An argument is missing, not finite, or outside its plausible range.

    Attributes:
        field: the keyword argument's name, e.g. ``"rh_pct"``.
        value: the value that was given.
        allowed: plain words for what is allowed, e.g. ``"0–100 %"``.
        low, high: numeric limits when the rule is a range (else ``None``),
            in the argument's SI unit, so a caller can restate them in the
            user's display units.
        unit: the SI unit of ``value``/``low``/``high`` ("" when unitless).
        parts: the message as plain text and SI quantities, e.g.
            ``["airflow ", {"value": 0.57, "quantity": "airflow"}, " is outside ",
            {"low": 1.4, "high": 4.2, "quantity": "airflow"}]`` (the reason-part form of
            inspections/reasons.py), so a reader gets the numbers in their own units;
            empty when the message has no such numbers.
    """

    def __init__(
        self,
        *,
        field: str,
        value: object,
        allowed: str,
        message: str | None = None,
        low: float | None = None,
        high: float | None = None,
        unit: str = "",
        parts: list[Any] | None = None,
    ) -> None:
        self.field = field
        self.value = value
        self.allowed = allowed
        self.low = low
        self.high = high
        self.unit = unit
        self.parts = list(parts or [])
        if message is None:
            message = f"{field}={value_text(value)} is outside {allowed}"
        super().__init__(message)

    @property
    def message(self) -> str:
        return str(self.args[0])


class IndeterminateError(EngineeringInputError):
    """The inputs are valid but cannot determine the result (e.g. outdoor and
    return air too alike to compute an outdoor-air fraction)."""


class InsufficientDataError(EngineeringInputError):
    """Too few usable data points, or a trend with no usable slope."""


def value_text(value: object) -> str:
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)
