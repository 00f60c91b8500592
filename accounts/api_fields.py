"""API input fields whose errors keep the input policy: the field, the value as sent and what is allowed.

DRF's stock messages ('A valid integer is required.', 'Ensure this value is less than or equal to 365.',
'Date has wrong format.') name neither the field nor the value. These fields parse exactly as DRF's do and
replace any refusal of a value that was sent with one line in the policy's shape (``accounts.inputs``):
'Grace days: 366 is not allowed; allowed: a whole number from 0 to 365'.
"""

from __future__ import annotations

from rest_framework import serializers
from rest_framework.fields import empty

from engineering.formatting import bound_text

from .inputs import INT64_MAX, FieldErrors, check_integer, shown


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
            raise serializers.ValidationError(
                f"{_label(self)}: {shown(data)} is not allowed; allowed: {self.allowed()}"
            ) from None


def _label(field) -> str:
    """A field's name as a person reads it: its label, or its name in words ("grace_days": "Grace days")."""
    return field.label or (field.field_name or "value").replace("_", " ").capitalize()


def _range_text(kind: str, minimum, maximum) -> str:
    if minimum is not None and maximum is not None:
        return f"{kind} from {bound_text(minimum)} to {bound_text(maximum)}"
    if minimum is not None:
        return f"{kind} of at least {bound_text(minimum)}"
    if maximum is not None:
        return f"{kind} of at most {bound_text(maximum)}"
    return kind


class IntegerField(_Named, serializers.IntegerField):
    """Read by ``accounts.inputs.check_integer``, the one reader of whole numbers: a negative is a whole number,
    refused as out of range ("Estimated minutes: -1 is out of range; allowed: a whole number from 1 to 1440"), and
    text that is none is told the range too."""

    def allowed(self) -> str:
        return _range_text("a whole number", self.min_value, self.max_value)

    def run_validation(self, data=empty):
        if data is empty or data is None or (isinstance(data, str) and not data.strip()):
            return super().run_validation(data)
        errors = FieldErrors()
        value = check_integer(
            data,
            key="value",
            label=_label(self),
            minimum=-INT64_MAX - 1 if self.min_value is None else self.min_value,
            maximum=INT64_MAX if self.max_value is None else self.max_value,
            allowed=self.allowed(),
            errors=errors,
        )
        if value is None:
            raise serializers.ValidationError(errors["value"][0])
        return super().run_validation(value)


class FloatField(_Named, serializers.FloatField):
    def allowed(self) -> str:
        return _range_text("a finite number", self.min_value, self.max_value)


class DateField(_Named, serializers.DateField):
    def allowed(self) -> str:
        return "a real calendar date as YYYY-MM-DD (e.g. 2026-02-28)"
