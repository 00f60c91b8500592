"""``inventory.today.today_for``: the one rule for "today" — a site's, an organisation's, a person's or a zone's
date at a given moment, never the server's (UTC) while there is a place to go by."""

import datetime as dt
import zoneinfo

import pytest
from django.contrib.auth.models import AnonymousUser

from accounts.models import Role
from inventory.today import time_zone_for, today_for
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import SiteFactory

pytestmark = pytest.mark.django_db
LATE = dt.datetime(2025, 3, 5, 23, 30, tzinfo=dt.UTC)  # 00:30 on 6 March in Amsterdam, 12:30 in Auckland


def test_a_sites_today_is_the_date_on_its_own_clock():
    """At 23:30 UTC a site in Amsterdam or Auckland is on the next day; one in Reykjavik (UTC) is not;
    an hour earlier Amsterdam is still on the 5th."""
    amsterdam = SiteFactory(time_zone="Europe/Amsterdam")
    auckland = SiteFactory(time_zone="Pacific/Auckland")
    reykjavik = SiteFactory(time_zone="Atlantic/Reykjavik")
    assert today_for(amsterdam, now=LATE) == dt.date(2025, 3, 6)
    assert today_for(auckland, now=LATE) == dt.date(2025, 3, 6)
    assert today_for(reykjavik, now=LATE) == dt.date(2025, 3, 5)
    assert today_for(amsterdam, now=LATE - dt.timedelta(hours=1)) == dt.date(2025, 3, 5)


def test_a_zone_name_or_zone_reads_that_clock_and_nothing_reads_the_servers():
    assert today_for("Europe/Amsterdam", now=LATE) == dt.date(2025, 3, 6)
    assert today_for(zoneinfo.ZoneInfo("Pacific/Auckland"), now=LATE) == dt.date(2025, 3, 6)
    assert today_for("America/New_York", now=LATE) == dt.date(2025, 3, 5)
    assert today_for(None, now=LATE) == dt.date(2025, 3, 5)  # settings.TIME_ZONE is UTC
    assert today_for(AnonymousUser(), now=LATE) == dt.date(2025, 3, 5)


def test_an_organisations_today_is_on_the_clock_most_of_its_sites_keep():
    """Two Amsterdam sites outvote one in New York; a tie goes to the zone named first; no sites: the server's."""
    org = OrganisationFactory()
    SiteFactory(organisation=org, time_zone="America/New_York")
    SiteFactory(organisation=org, time_zone="Europe/Amsterdam")
    SiteFactory(organisation=org, time_zone="Europe/Amsterdam")
    assert time_zone_for(org) == "Europe/Amsterdam"
    assert today_for(org, now=LATE) == dt.date(2025, 3, 6)

    tied = OrganisationFactory()
    SiteFactory(organisation=tied, time_zone="Europe/Amsterdam")
    SiteFactory(organisation=tied, time_zone="America/New_York")
    assert time_zone_for(tied) == "America/New_York"
    assert today_for(tied, now=LATE) == dt.date(2025, 3, 5)

    assert time_zone_for(OrganisationFactory()) is None
    assert today_for(OrganisationFactory(), now=LATE) == dt.date(2025, 3, 5)


def test_a_persons_today_is_the_date_where_their_organisations_sites_are():
    """At 23:30 UTC a technician of an Amsterdam organisation (no site assigned yet) is on the next day; a
    person whose organisation has no site yet has the server's date."""
    org = OrganisationFactory()
    SiteFactory(organisation=org, time_zone="Europe/Amsterdam")
    tech = make_person(organisation=org, role=Role.TECHNICIAN)
    assert today_for(tech, now=LATE) == dt.date(2025, 3, 6)
    assert today_for(tech, now=LATE - dt.timedelta(hours=1)) == dt.date(2025, 3, 5)
    nobody = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    assert today_for(nobody, now=LATE) == dt.date(2025, 3, 5)


def test_anything_else_is_refused_by_name():
    with pytest.raises(TypeError, match="not a site, organisation, person or time zone"):
        today_for(42, now=LATE)  # type: ignore[arg-type]
