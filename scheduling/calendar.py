"""iCalendar (RFC 5545) feed of a technician's assigned visits, built with the icalendar library."""

from __future__ import annotations

import datetime as dt
import zoneinfo

from django.conf import settings
from django.utils import timezone
from icalendar import Calendar, Event

from inventory.today import today_for

from .inputs import visit_problem
from .models import WorkOrder
from .selectors import work_orders_visible_to


def feed_ics(*, user) -> bytes:
    """One all-day event per open assigned visit (scheduled date, else due date).

    A visit dated outside the plan window (a row stored before the input policy, e.g. planned for 9999-12-31)
    is left out, so one bad row does not take the technician's whole calendar down; the board names it."""
    cal = Calendar()
    cal.add("prodid", "-//Plenum//Maintenance visits//EN")
    cal.add("version", "2.0")
    cal.add("x-wr-calname", f"Plenum visits — {user}")
    orders = (
        work_orders_visible_to(user=user)
        .filter(assignee=user, state__in=[WorkOrder.State.ASSIGNED, WorkOrder.State.IN_PROGRESS])
        .order_by("due_date", "id")
    )
    base = settings.PLENUM_PUBLIC_URL.rstrip("/")
    now = timezone.now()
    for wo in orders:
        site = wo.ahu.building.site
        if visit_problem(wo, today=today_for(site, now=now)) is not None:
            continue
        day = wo.scheduled_for or wo.due_date
        event = Event()
        event.add("uid", f"{wo.public_id}@plenum")
        summary = f"{wo.ahu.tag}: {wo.title}"
        if wo.kind in (WorkOrder.Kind.CALL_OUT, WorkOrder.Kind.AD_HOC):
            summary = f"{wo.get_kind_display()}, {wo.get_priority_display().lower()}: {summary}"
        event.add("summary", summary)
        if wo.due_by is not None and wo.due_by.astimezone(zoneinfo.ZoneInfo(site.time_zone)).date() == day:
            # Work due by a time (a call-out "by 14:00"): an event ending then, as long as its tasks take.
            minutes = max(sum(t.task.estimated_minutes for t in wo.tasks.all()), 15)
            end = wo.due_by.astimezone(zoneinfo.ZoneInfo(site.time_zone))
            event.add("dtstart", end - dt.timedelta(minutes=minutes))
            event.add("dtend", end)
        else:
            event.add("dtstart", day)
            event.add("dtend", day + dt.timedelta(days=1))
        event.add("dtstamp", wo.updated_at)
        event.add("location", f"{site.name}, {site.address}".strip(", "))
        event.add("geo", (site.latitude, site.longitude))
        tasks = "\n".join(
            f"- {t.task.name}" + (f" ({t.component.name})" if t.component else "") for t in wo.tasks.all()
        )
        event.add("description", f"{tasks}\n\nUnit label {wo.ahu.label_code}. {base}{wo.ahu.get_absolute_url()}")
        event.add("sequence", wo.version)
        cal.add_component(event)
    return cal.to_ical()
