"""The whole invented demo, chained: registry, a year of history, the schedule, today's assignments.

Each step is idempotent, so ``load_demo`` can run on every ``make run``.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from django.db import transaction
from django.db.models import Q
from django.utils import timezone

from accounts.models import Membership, Role
from engineering.freeze import daily_values_from_normals
from inspections.demo import demo_history_load
from inventory.demo import demo_registry_load
from scheduling.demo import demo_schedule_load
from scheduling.models import WorkOrder
from scheduling.selectors import person_today, site_today, today_visits_for
from scheduling.services import outdoor_temperatures_store, work_order_assign, work_order_schedule
from scheduling.weather import DailyTemperature

# Open work due within this many days is handed to the demo technicians, so a
# technician who signs in sees a day's round at once.
ASSIGN_AHEAD_DAYS = 10
MEASURED_DAYS, FORECAST_DAYS = 30, 14


def demo_load(*, today: dt.date | None = None) -> dict[str, Any]:
    """Load the demo and return what the command prints: counts and the logins."""
    today = today or timezone.localdate()
    registry = demo_registry_load()
    summary: dict[str, Any] = {"registry": registry, "history": {}, "generated": {}, "assigned": 0}
    for organisation in registry["organisations"].values():
        if not organisation.sites.exists():
            continue
        summary["history"][organisation.slug] = demo_history_load(organisation=organisation, today=today)
        for site in organisation.sites.all():
            _outdoor_temperatures(site=site, today=today)
        summary["generated"][organisation.slug] = demo_schedule_load(organisation=organisation, today=today)
        summary["assigned"] += _assign_upcoming(organisation=organisation, today=today)
    return summary


def _outdoor_temperatures(*, site, today: dt.date) -> None:
    """A month of invented measured days and two weeks of invented forecast around the site's normals.

    The noise is seeded by site and date, so a rerun stores the same values (and changes nothing).
    """
    import random

    start = today - dt.timedelta(days=MEASURED_DAYS)
    lows = daily_values_from_normals(monthly_c=site.normals_min_c, start=start, days=MEASURED_DAYS + FORECAST_DAYS)
    highs = daily_values_from_normals(monthly_c=site.normals_max_c, start=start, days=MEASURED_DAYS + FORECAST_DAYS)
    measured, forecast = [], []
    for (day, low), (_, high) in zip(lows, highs, strict=True):
        rng = random.Random(f"{site.code}:{day.isoformat()}")
        swing = rng.uniform(-3.0, 3.0)
        entry = DailyTemperature(date=day, min_c=round(low + swing, 1), max_c=round(high + swing, 1))
        (measured if day < today else forecast).append(entry)
    outdoor_temperatures_store(site=site, days=measured, source="csv")
    outdoor_temperatures_store(site=site, days=forecast, source="forecast")


@transaction.atomic
def _assign_upcoming(*, organisation, today: dt.date) -> int:
    """Give unassigned work due soon to the organisation's technicians, one site per technician."""
    technicians = [
        m.user
        for m in Membership.objects.filter(organisation=organisation, role=Role.TECHNICIAN)
        .select_related("user")
        .order_by("user__username")
    ]
    supervisor = (
        Membership.objects.filter(organisation=organisation, role=Role.SUPERVISOR).select_related("user").first()
    )
    if not technicians or supervisor is None:
        return 0
    site_ids = sorted(organisation.sites.values_list("pk", flat=True))
    owner = {site_id: technicians[n % len(technicians)] for n, site_id in enumerate(site_ids)}
    open_orders = (
        WorkOrder.objects.filter(
            organisation=organisation,
            state=WorkOrder.State.PLANNED,
            assignee__isnull=True,
            due_date__lte=today + dt.timedelta(days=ASSIGN_AHEAD_DAYS),
        )
        .exclude(kind=WorkOrder.Kind.CORRECTIVE, approval="pending")
        .select_related("ahu__building")
        .order_by("due_date", "id")
    )
    count = 0
    for wo in open_orders:
        work_order_assign(work_order=wo, assignee=owner[wo.ahu.building.site_id], by=supervisor.user)
        count += 1
    # A technician with nothing due yet gets the soonest visit on their sites (theirs already, or still
    # unassigned) planned for today, so every demo technician signs in to a round whatever the date.
    for tech in technicians:
        if today_visits_for(technician=tech, day=person_today(user=tech)):
            continue
        theirs = [site_id for site_id, person in owner.items() if person == tech]
        soonest = (
            WorkOrder.objects.filter(organisation=organisation, due_date__gte=today, ahu__building__site_id__in=theirs)
            .filter(
                Q(assignee=tech, state=WorkOrder.State.ASSIGNED)
                | Q(assignee__isnull=True, state=WorkOrder.State.PLANNED)
            )
            .exclude(kind=WorkOrder.Kind.CORRECTIVE, approval="pending")
            .order_by("due_date", "id")
            .first()
        )
        if soonest is None:
            continue
        if soonest.assignee_id is None:
            work_order_assign(work_order=soonest, assignee=tech, by=supervisor.user)
            count += 1
        # The site's own today: the service refuses a day already past there (after midnight in its zone).
        day = max(today, site_today(site=soonest.ahu.building.site))
        work_order_schedule(work_order=soonest, day=day, by=supervisor.user)
    return count
