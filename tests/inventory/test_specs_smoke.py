import pytest
from django.core.exceptions import ValidationError

from tests.factories import ComponentFactory, make_full_unit


@pytest.mark.django_db
def test_full_unit_builds_with_valid_specs():
    """A unit with the usual component tree passes spec validation on every component."""
    ahu = make_full_unit()
    for component in ahu.components.all():
        component.full_clean()
    assert ahu.components.count() == 12


@pytest.mark.django_db
def test_filter_final_below_clean_is_refused():
    """A filter bank whose final pressure drop is below its clean one is refused, naming both fields."""
    comp = ComponentFactory.build(ahu=make_full_unit())
    comp.specs = {**comp.specs, "final_dp_pa": 50}
    with pytest.raises(ValidationError) as exc:
        comp.full_clean()
    assert "Final (change) pressure drop: 50 Pa is not above the clean (initial) pressure drop" in str(exc.value)
