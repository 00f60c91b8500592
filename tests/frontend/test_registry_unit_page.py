"""The registry's unit page and part forms as a new supervisor reads them: one statement of an allowed date range,
the parts listed in airstream order, the design outdoor-air fraction in %."""

import datetime as dt
import html
import re

import pytest
import time_machine
from django.urls import reverse

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 3, 9, 9, 30, tzinfo=dt.UTC)  # any fixed moment would do


@pytest.fixture(autouse=True)
def _clock():
    with time_machine.travel(NOW, tick=False):
        yield


def _visible(response) -> str:
    """The page's words without its markup."""
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html.unescape(response.content.decode())))


def _edit_post(component, **changes):
    from frontend.specs_form import spec_initial

    post = {"name": component.name, "parent": str(component.parent_id or ""), "position": str(component.position)}
    post.update({f"spec_{k}": ("1" if v is True else "" if v in (None, False) else str(v))
                 for k, v in spec_initial(component=component, system="si").items()})  # fmt: skip
    post.update(changes)
    return post


def test_a_future_install_date_is_refused_with_one_statement_of_the_allowed_days(scenario, login):
    """The refusal names the field, the value and the allowed days, ending today on the site's clock; no second,
    coarser year span beside it (it said 'outside 1950–2026; allowed: 1950-01-01 to 2026-12-05')."""
    pan = scenario.unit_a.components.get(name="Drain pan")
    r = login(scenario.supervisor).post(
        reverse("frontend:registry_component_edit", args=[pan.pk]), _edit_post(pan, installed_on="2030-01-01")
    )
    assert r.status_code == 400
    page = _visible(r)
    assert "Installed on 2030-01-01 is out of range; allowed: 1950-01-01 to 2026-03-09" in page
    assert "1950–2026" not in page
    pan.refresh_from_db()
    assert pan.installed_on is None
