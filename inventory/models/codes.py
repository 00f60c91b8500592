"""Label codes and the validators and defaults the registry's fields share."""

from __future__ import annotations

import math
import secrets
import zoneinfo

from django.core.exceptions import ValidationError

# Label codes avoid letters and digits that are easy to misread on a dusty label.
LABEL_ALPHABET = "23456789ABCDEFGHJKMNPQRSTUVWXYZ"


def new_label_code(prefix: str) -> str:
    return prefix + "".join(secrets.choice(LABEL_ALPHABET) for _ in range(6))


def new_unit_code() -> str:
    return new_label_code("U")


def new_component_code() -> str:
    return new_label_code("C")


def validate_time_zone(value: str) -> None:
    if value not in zoneinfo.available_timezones():
        raise ValidationError(f"time_zone={value!r} is not an IANA time zone name such as Europe/Berlin")


def validate_monthly_normals(value) -> None:
    if not isinstance(value, list) or len(value) != 12:
        raise ValidationError(f"expected 12 monthly values in °C (January to December), got {value!r}")
    for month, item in enumerate(value, start=1):
        if isinstance(item, bool) or not isinstance(item, (int, float)) or not math.isfinite(item):
            raise ValidationError(f"month {month}: {item!r} is not a number in °C")
        if not -60 <= item <= 50:
            raise ValidationError(f"month {month}: {item!r} °C is outside −60 to 50 °C")


def default_normals_min() -> list[float]:
    return [-2.0, -1.5, 1.0, 4.5, 8.5, 11.5, 13.5, 13.0, 10.0, 6.0, 2.5, -0.5]


def default_normals_max() -> list[float]:
    return [3.5, 5.0, 9.5, 14.5, 19.0, 22.0, 24.0, 23.5, 19.5, 14.0, 8.0, 4.5]
