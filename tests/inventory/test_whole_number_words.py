"""A unit's whole number stored as a fraction is named with its range, as every whole-number refusal is
(accounts.inputs.check_integer): "Design occupants: 2.5 is not a whole number; allowed: a whole number from 0 to
100000 people"."""

import datetime as dt

import pytest

from inventory.inputs import ahu_problems
from tests.factories.inventory import AHUFactory

pytestmark = pytest.mark.django_db


def test_a_fraction_of_a_whole_number_field_is_named_with_its_range():
    ahu = AHUFactory.build(design_occupants=2.5)
    problems = ahu_problems(ahu, today=dt.date(2026, 1, 5))
    assert problems["design_occupants"] == (
        "Design occupants: 2.5 is not a whole number; allowed: a whole number from 0 to 100000 people"
    )
