"""The visits a technician finished today, each on its own site's calendar (a selector for the today page)."""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass

from accounts.models import User
from inventory.today import today_for

from .selectors import inspections_visible_to

# A local day lasts at most 25 hours (the day clocks go back): a form finished earlier than that before now
# cannot have been finished today on any site's clock.
_LONGEST_DAY = dt.timedelta(hours=26)


@dataclass(frozen=True)
class DoneVisit:
    inspection_id: int
    work_order_public_id: str
    title: str
    unit: str
    site: str
    finished_local: dt.datetime  # on the site's clock
    finished_time: str  # "14:05", the site's clock (a template's time filter would move it to the server's zone)
    flagged: bool


def done_today_for(*, technician: User, now: dt.datetime) -> list[DoneVisit]:
    """The forms ``technician`` signed whose finish falls on today's date where their site is, first done first.

    Starts from the sites the person may see (``inspections_visible_to``); one query."""
    recent = (
        inspections_visible_to(user=technician)
        .filter(technician=technician, finished_at__gt=now - _LONGEST_DAY, finished_at__lte=now)
        .select_related("ahu__building__site", "work_order")
        .order_by("finished_at", "id")
    )
    out = []
    for insp in recent:
        site = insp.ahu.building.site
        zone = zoneinfo.ZoneInfo(site.time_zone or "UTC")
        local = insp.finished_at.astimezone(zone)
        if local.date() != today_for(site, now=now):
            continue
        out.append(
            DoneVisit(
                inspection_id=insp.pk,
                work_order_public_id=str(insp.work_order.public_id),
                title=insp.work_order.title,
                unit=insp.ahu.display_name,
                site=site.name,
                finished_local=local,
                finished_time=local.strftime("%H:%M"),
                flagged=insp.flag_open,
            )
        )
    return out
