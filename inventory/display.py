"""How a moment reads for a person at a site: the site's clock with the zone named."""

import datetime as dt

# The one time format lives in the lowest app (accounts.clock) so the input policy's messages and the phone's
# twin share it; these names stay the pages' and the PDFs' way in.
from accounts.clock import local_date_text, local_time_text

__all__ = ["local_date_text", "local_time_text", "site_date_text", "site_time_text", "usual_zone"]


def site_time_text(when: dt.datetime | None, site) -> str:
    """``when`` on the clock of ``site`` (a Site or a zone name) with the zone named; "" without a moment.

    The one body of the pages' and the PDFs' ``site_time`` template filters.
    """
    if not when:
        return ""
    return local_time_text(when, zone=getattr(site, "time_zone", site))


def site_date_text(when: dt.datetime | None, site) -> str:
    """The day of ``when`` on the clock of ``site`` (a Site or a zone name), "2 Dec 2026"; "" without a moment."""
    if not when:
        return ""
    return local_date_text(when, zone=getattr(site, "time_zone", site))


def usual_zone(zones: list[str]) -> str:
    """The zone most of ``zones`` use (the first of them on a tie; "UTC" for none): one clock for many sites."""
    named = [z for z in zones if z]
    return max(named, key=named.count) if named else "UTC"
