"""The property manager's site page says the freeze season that freeze readiness judges.

A season that began more than the nightly run's look-back ago (30 days) is stored as the *coming* one, a year
on; the page must still say the running season began, on the date readiness judges against
(``inspections.freeze.season_window``), not "expected from" next autumn. Before the season it says "expected
from" the coming date. The clock is set; nothing depends on today's date.
"""

import datetime as dt

import pytest
import time_machine

from accounts.models import Role, SiteGrant
from inspections.freeze import season_window
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import SiteFactory

pytestmark = pytest.mark.django_db

# Monthly mean minimum normals of an invented inland site (°C, Jan–Dec): below the 5 °C preheat threshold from
# late October to mid-April (daily values interpolated between mid-months, engineering.freeze).
NORMALS_MIN = [-4.0, -3.0, 0.0, 3.5, 7.5, 10.5, 12.5, 12.0, 9.0, 5.5, 1.5, -2.5]


def _site_page(client, *, today: dt.date, freeze_start: dt.date):
    org = OrganisationFactory(name="Inland Air")
    site = SiteFactory(
        organisation=org,
        name="Millbrook Depot",
        time_zone="UTC",
        normals_min_c=NORMALS_MIN,
        preheat_threshold_c=5.0,
        freeze_season_start=freeze_start,
    )
    pm = make_person(organisation=org, role=Role.PROPERTY_MANAGER, username="pm-millbrook")
    SiteGrant.objects.create(user=pm, site=site)
    client.force_login(pm)
    with time_machine.travel(dt.datetime.combine(today, dt.time(10), tzinfo=dt.UTC), tick=False):
        html = client.get(f"/dashboard/site/{site.pk}/").content.decode()
        judged, _opens = season_window(site=site, today=today)
    return html, judged


def test_a_season_begun_weeks_ago_reads_as_begun_on_the_date_readiness_judges(client):
    # 3 December: the season began in late October, so the nightly run stored next year's start.
    html, judged = _site_page(client, today=dt.date(2026, 12, 3), freeze_start=dt.date(2027, 10, 24))
    assert judged == dt.date(2026, 10, 24)
    assert "Freeze season began on 24 October 2026." in html
    assert "2027" not in html.split("Freeze season")[1].split("</figcaption>")[0]


def test_before_the_season_the_page_says_when_it_is_expected(client):
    html, judged = _site_page(client, today=dt.date(2026, 9, 1), freeze_start=dt.date(2026, 10, 24))
    assert judged == dt.date(2026, 10, 24)
    assert "Freeze season expected from 24 October 2026." in html
