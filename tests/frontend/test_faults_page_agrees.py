"""The faults pages agree with the other pages about the same unit.

- Freeze protection: the property manager's faults page never says no freeze event keeps a unit from being ready
  while her dashboard says the unit is not ready (a failed freeze-protection test, no trend event): both read
  ``inspections.freeze.freeze_readiness``, and the faults page says the dashboard's words.

The world is ``tests.frontend.test_fault_pages_for_a_new_reader``'s (a stuck outdoor-air damper judged from a trend
CSV at Dune Offices; final filters loading up at Wharf House), with an electric preheater on Wharf House's AHU-01
whose freeze-protection test failed on 10 Jan 2026 (the freeze-trip test judged fail), in the freeze season.
"""

import datetime as dt
import re

import pytest
import time_machine
from django.urls import reverse

from accounts.models import Role
from inventory.models import Site
from tests.factories.accounts import make_person
from tests.factories.inventory import ComponentFactory
from tests.frontend.test_fault_pages_for_a_new_reader import READ_AT, world  # noqa: F401 (the fixture)
from tests.reports import builders as b

pytestmark = pytest.mark.django_db


def _text(html: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html)).replace("&#x27;", "'").replace("&amp;", "&")


def _get(client, user, url, **params):
    client.force_login(user)
    with time_machine.travel(READ_AT, tick=False):
        return client.get(url, params)


@pytest.fixture
def failed_freeze_test(world):  # noqa: F811 (the fixture above)
    unit, wharf = world["unit"], world["wharf"]
    Site.objects.filter(pk=wharf.pk).update(freeze_season_start=dt.date(2025, 11, 1))
    heater = ComponentFactory(
        ahu=unit,
        kind="electric_preheater",
        name="Preheater",
        position=0,
        specs={"power_w": 12000, "stages": 2, "switch_on_c": 3},
    )
    tech = make_person(organisation=world["org"], role=Role.TECHNICIAN, username="tech")
    wo = b.preventive(unit, b.library()["preheater_freeze"], "2026-01-10", done="2026-01-10")
    b.freeze_test(wo, tech, finished="2026-01-10", heaters=[heater], verdicts={"freeze_trip_test": "fail"})
    return world


def test_the_faults_page_says_what_the_dashboard_says_of_a_unit_not_ready_without_a_freeze_event(
    client, failed_freeze_test
):
    w = failed_freeze_test
    dashboard = _text(_get(client, w["pm"], reverse("frontend:dashboard")).content.decode())
    faults = _text(_get(client, w["pm"], reverse("frontend:faults")).content.decode())
    [why] = re.findall(
        r"AHU-01 \(Main block\): (not ready — test failed on 10 Jan 2026: .*?) for the freeze", dashboard
    )
    assert why.endswith("; no corrective work raised yet"), why
    freeze = faults.split("Freeze protection")[1]
    assert "No freeze event keeps a unit from being ready" not in faults
    assert "No freeze event in the trends" in freeze
    assert f"AHU-01 (Main block), Wharf House: {why}" in freeze
    # Once a retest passes, both say it is ready and the faults page names no unit.
    wo = b.preventive(w["unit"], b.library()["preheater_freeze"], "2026-01-12", done="2026-01-12")
    tech = make_person(organisation=w["org"], role=Role.TECHNICIAN, username="tech2")
    b.freeze_test(wo, tech, finished="2026-01-12", heaters=[w["unit"].components.get(name="Preheater")])
    faults = _text(_get(client, w["pm"], reverse("frontend:faults")).content.decode())
    freeze = faults.split("Freeze protection")[1]
    dashboard = _text(_get(client, w["pm"], reverse("frontend:dashboard")).content.decode())
    assert "AHU-01 (Main block): not ready" not in dashboard and "Freeze protection ready 1 of 1" in dashboard
    assert "AHU-01 (Main block)" not in freeze
    assert "No freeze event in the trends; every unit with preheat is ready for freeze protection." in freeze
