"""How a moment reads for a person at a site: the site's clock with the zone named."""

import datetime as dt
import zoneinfo

from django.utils import dateformat

TIME_FORMAT = "j M Y H:i T"


def local_time_text(when: dt.datetime, *, zone: str) -> str:
    """``when`` on the clock of ``zone`` with the zone's abbreviation, "2 Dec 2026 06:30 CET"."""
    return dateformat.format(when.astimezone(zoneinfo.ZoneInfo(zone or "UTC")), TIME_FORMAT)


def local_date_text(when: dt.datetime, *, zone: str) -> str:
    """The day of ``when`` on the clock of ``zone``, "2 Dec 2026"."""
    return dateformat.format(when.astimezone(zoneinfo.ZoneInfo(zone or "UTC")), "j M Y")


def site_time_text(when: dt.datetime | None, site) -> str:
    """``when`` on the clock of ``site`` (a Site or a zone name) with the zone named; "" without a moment.

    The one body of the pages' and the PDFs' ``site_time`` template filters.
    """
    if not when:
        return ""
    return local_time_text(when, zone=getattr(site, "time_zone", site))


def usual_zone(zones: list[str]) -> str:
    """The zone most of ``zones`` use (the first of them on a tie; "UTC" for none): one clock for many sites."""
    named = [z for z in zones if z]
    return max(named, key=named.count) if named else "UTC"
