"""Today's date where something is: the one rule for "today".

Due dates, plans, report periods and the input policy's date windows are days on the calendar of the place
they concern, never on the server's (UTC): at 23:30 UTC a site in Amsterdam is already on the next day.
``today_for`` answers for

- a site: its own time zone;
- an organisation: the zone most of its sites keep (ties: the zone named first);
- a person: the zone most of the sites of their organisations keep, every site counted whether the person
  sees it or not (a new technician has no assigned sites yet);
- a zone name (or a ``ZoneInfo``): that zone.

With nowhere to go by (an organisation without sites, a person without one, ``None``) it is the server's
date. ``now`` is the moment asked about (tests and jobs pass a fixed one); without it, the present.
It lives in the lowest app that holds sites, so the registry's own checks (``inventory.models``,
``inventory.csv_io``) read the same day as the schedule, the pages and the reports above it.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from typing import TypeAlias

from django.contrib.auth.models import AnonymousUser
from django.db.models import Count, QuerySet
from django.utils import timezone

from accounts.models import Membership, Organisation, User

from .models import Site

Place: TypeAlias = Site | Organisation | User | AnonymousUser | zoneinfo.ZoneInfo | str | None


def time_zone_for(subject: Place) -> str | None:
    """The IANA zone name ``today_for`` reads for ``subject`` (see the module); None with nowhere to go by.

    One query for an organisation or a person, none otherwise."""
    if subject is None or isinstance(subject, str):
        return subject or None
    if isinstance(subject, zoneinfo.ZoneInfo):
        return subject.key
    if isinstance(subject, Site):
        return subject.time_zone or "UTC"
    if isinstance(subject, Organisation):
        return _usual_zone(Site.objects.filter(organisation=subject))
    if isinstance(subject, User):
        orgs = Membership.objects.filter(user=subject).values("organisation_id")
        return _usual_zone(Site.objects.filter(organisation_id__in=orgs))
    if isinstance(subject, AnonymousUser):
        return None  # a visitor who is not signed in works nowhere
    raise TypeError(f"today_for: {subject!r} is not a site, organisation, person or time zone")


def today_for(subject: Place, *, now: dt.datetime | None = None) -> dt.date:
    """Today's date where ``subject`` is (a site, an organisation, a person or a zone name) at ``now``."""
    moment = now or timezone.now()
    zone = time_zone_for(subject)
    if zone is None:
        return timezone.localdate(moment)
    return moment.astimezone(zoneinfo.ZoneInfo(zone)).date()


def _usual_zone(sites: QuerySet[Site]) -> str | None:
    return (
        sites.order_by()
        .values("time_zone")
        .annotate(n=Count("id"))
        .order_by("-n", "time_zone")
        .values_list("time_zone", flat=True)
        .first()
    )
