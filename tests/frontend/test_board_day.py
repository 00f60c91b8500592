"""The supervisor's board opens on the week of the organisation's own day, not the server's.

23:30 UTC on Sunday 6 December 2026 is already Monday 7 December 00:30 in Berlin (CET, UTC+1; IANA tz database):
a contractor whose sites are all in Berlin opens the board on the week of Monday 7 December, not the one
before it, which the server's UTC clock would give.
"""

import datetime as dt

import pytest
import time_machine
from django.urls import reverse

from inventory.models import Site
from tests.factories.accounts import make_person
from tests.factories.inventory import BuildingFactory

pytestmark = pytest.mark.django_db


def test_the_board_opens_on_the_week_of_the_sites_day(client, settings):
    settings.TIME_ZONE = "UTC"
    building = BuildingFactory()
    Site.objects.filter(pk=building.site_id).update(time_zone="Europe/Berlin")
    boss = make_person(organisation=building.site.organisation, role="supervisor")
    client.force_login(boss)
    with time_machine.travel(dt.datetime(2026, 12, 6, 23, 30, tzinfo=dt.UTC), tick=False):
        page = client.get(reverse("frontend:board"))
    assert page.status_code == 200
    assert page.context["week"] == dt.date(2026, 12, 7), page.context["week"]
