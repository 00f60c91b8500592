"""API input fields whose errors keep the input policy: the field, the value as sent and what is allowed.

DRF's stock messages ('A valid integer is required.', 'Ensure this value is less than or equal to 365.',
'Date has wrong format.') name neither the field nor the value. These fields parse exactly as DRF's do and
replace any refusal of a value that was sent with one line in the policy's shape (``accounts.inputs``):
'Grace days: 366 is not allowed; allowed: a whole number from 0 to 365'.
"""

from __future__ import annotations

from rest_framework import serializers
from rest_framework.fields import empty

from .inputs import shown


class _Named:
    """Mixin: a refused value (not a missing one) is said with the field's label, the value and ``allowed()``."""

    def allowed(self) -> str:  # pragma: no cover - each field says its own
        raise NotImplementedError

    def run_validation(self, data=empty):
        try:
            return super().run_validation(data)
        except serializers.ValidationError:
            if data is empty or data is None:
                raise  # 'This field is required.' / 'may not be null' say what is wrong already
            label = self.label or (self.field_name or "value").replace("_", " ").capitalize()
            raise serializers.ValidationError(
                f"{label}: {shown(data)} is not allowed; allowed: {self.allowed()}"
            ) from None


def _range_text(kind: str, minimum, maximum) -> str:
    if minimum is not None and maximum is not None:
        return f"{kind} from {minimum:g} to {maximum:g}"
    if minimum is not None:
        return f"{kind} of at least {minimum:g}"
    if maximum is not None:
        return f"{kind} of at most {maximum:g}"
    return kind


class IntegerField(_Named, serializers.IntegerField):
    def allowed(self) -> str:
        return _range_text("a whole number", self.min_value, self.max_value)


class FloatField(_Named, serializers.FloatField):
    def allowed(self) -> str:
        return _range_text("a finite number", self.min_value, self.max_value)


class DateField(_Named, serializers.DateField):
    def allowed(self) -> str:
        return "a real calendar date as YYYY-MM-DD (e.g. 2026-02-28)"
