"""The input policy's number reader, shared by the phone's sync, the forms and the registry."""

import pytest

from accounts.inputs import FieldErrors, check_number, parse_number


@pytest.mark.parametrize("raw", [10**400, -(10**400), "nan", "inf", "1e309", float("nan"), True, None, [1]])
def test_parse_number_reads_no_number_from_what_no_person_means(raw):
    """A 400-digit JSON integer, NaN, infinity and non-numbers read as no number (never an OverflowError)."""
    assert parse_number(raw) is None


def test_a_400_digit_integer_is_a_field_error_naming_what_is_allowed():
    """check_number answers a 400-digit integer with a message, not an exception."""
    errors = FieldErrors()
    assert check_number(10**400, key="x", label="Airflow", minimum=0, maximum=100, unit="m³/s", errors=errors) is None
    assert "is not a finite number; allowed: a number from 0 to 100 m³/s" in errors["x"][0]


def test_parse_number_reads_a_decimal_comma():
    """'0,84' as typed on a phone with a comma keyboard reads 0.84."""
    assert parse_number("0,84") == 0.84
