"""A day as a person types it into a page (accounts.inputs.parse_day, check_date): ISO 2026-12-04 or the
day-first form with dots and a four-digit year, 04.12.2026 (issue 19: a European typing was refused). With
slashes a day could be read day or month first, so it is never guessed: refused, naming the forms that are read
with an example whose day cannot be a month (31 January)."""

import datetime as dt

import pytest

from accounts.inputs import FieldErrors, check_date, parse_day

TODAY = dt.date(2026, 12, 4)


@pytest.mark.parametrize(
    ("typed", "day"),
    [
        ("2026-12-04", dt.date(2026, 12, 4)),
        ("04.12.2026", dt.date(2026, 12, 4)),
        (" 4.12.2026 ", dt.date(2026, 12, 4)),
        ("31.01.2026", dt.date(2026, 1, 31)),
        (dt.date(2026, 1, 2), dt.date(2026, 1, 2)),
        (dt.datetime(2026, 1, 2, 8, 0), dt.date(2026, 1, 2)),
    ],
)
def test_iso_and_day_first_with_dots_are_read(typed, day):
    assert parse_day(typed) == day


@pytest.mark.parametrize(
    "typed", ["04/12/2026", "12/04/2026", "31.02.2026", "04.12.26", "2026-13-01", "4 Dec 2026", "", "x", 20261204]
)
def test_anything_else_is_no_day(typed):
    assert parse_day(typed) is None


def test_a_refusal_names_the_field_the_value_and_the_forms_with_an_example():
    errors = FieldErrors()
    assert check_date("04/12/2026", key="start", label="From", today=TODAY, errors=errors) is None
    assert errors["start"] == [
        "From: '04/12/2026' is not a date (with slashes it could be day or month first); allowed: a date as "
        "YYYY-MM-DD or DD.MM.YYYY (31 January 2026: 2026-01-31 or 31.01.2026) from 2000-01-01 to 2036-12-04"
    ]
    errors = FieldErrors()
    assert check_date("04.12.2026", key="start", label="From", today=TODAY, errors=errors) == dt.date(2026, 12, 4)
    assert not errors
    # The window holds for either form.
    assert check_date("01.01.1999", key="start", label="From", today=TODAY, errors=errors) is None
    assert errors["start"] == ["From 1999-01-01 is out of range; allowed: 2000-01-01 to 2036-12-04"]
