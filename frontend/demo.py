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
from automation.demo import demo_trends_load
from engineering.freeze import daily_values_from_normals
from inspections.demo import demo_history_day, demo_history_load
from inventory.demo import demo_registry_load
from inventory.models import AHU, ComponentKind
from inventory.today import today_for
from scheduling.demo import ROUND_REF, demo_round_visit, demo_round_visit_due, demo_schedule_load
from scheduling.models import WorkOrder
from scheduling.selectors import assignment_check, offered_day, today_visits_for, weekday_on_or_near
from scheduling.services import (
    outdoor_temperatures_store,
    site_seasons_refresh,
    work_order_assign,
    work_order_schedule,
    work_order_verify,
)
from scheduling.weather import DailyTemperature

# Open work due within this many days is handed to the demo technicians, so a
# technician who signs in sees a day's round at once.
ASSIGN_AHEAD_DAYS = 10
# Each technician's round today carries these, on up to ROUND_UNITS units with preheat on their sites: the
# freeze-protection test, the outdoor-air check, the filter banks (airflow asked) and the coil balance.
ROUND_TASKS = ("preheater_freeze", "ventilation_check", "filter_check", "coil_clean")
# The first of those units also carries the sensor calibration (drift) and the fan proving test, so each
# technician can walk every kind of check in one day.
ROUND_FIRST_UNIT_TASKS = ("sensor_calibration", "fan_proving")
ROUND_UNITS = 2
# Completed visits older than this are verified by the supervisor, so the history shows both states.
VERIFY_AFTER_DAYS = 60
MEASURED_DAYS, FORECAST_DAYS = 30, 14


def demo_load(*, today: dt.date | None = None) -> dict[str, Any]:
    """Load the demo and return what the command prints: counts and the logins."""
    # The server's date on purpose: the one day the invented history of every organisation is anchored to,
    # taken before any site exists; each site's own today is used wherever a day is planned there.
    today = today or timezone.localdate()
    registry = demo_registry_load()
    summary: dict[str, Any] = {"registry": registry, "history": {}, "generated": {}, "assigned": 0}
    for organisation in registry["organisations"].values():
        if not organisation.sites.exists():
            continue
        # Seasons first: the history tests freeze protection for the season freeze readiness judges today.
        for site in organisation.sites.all():
            _outdoor_temperatures(site=site, today=today)
            site_seasons_refresh(site=site, today=today, fetch=False)
        # A history loaded on an earlier day stays as it was; the schedule and today's round follow today.
        history_day = demo_history_day(organisation=organisation) or today
        summary["history"][organisation.slug] = demo_history_load(organisation=organisation, today=history_day)
        # A year of synthetic building-automation trends with seeded faults, judged as a real site's would be.
        summary.setdefault("trends", {})[organisation.slug] = demo_trends_load(organisation=organisation, today=today)
        summary["generated"][organisation.slug] = demo_schedule_load(organisation=organisation, today=today)
        # Today's round first, then the rest where it fits: the demo plans as the board would, never past a
        # technician's daily capacity (scheduling.selectors.assignment_check).
        summary["assigned"] += _round_today(organisation=organisation, today=today)
        summary["assigned"] += _assign_upcoming(organisation=organisation, today=today)
        summary["verified"] = summary.get("verified", 0) + _verify_history(organisation=organisation, today=today)
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


def _technicians(*, organisation) -> list:
    return [
        m.user
        for m in Membership.objects.filter(organisation=organisation, role=Role.TECHNICIAN)
        .select_related("user")
        .order_by("user__username")
    ]


def _supervisor(*, organisation):
    ms = Membership.objects.filter(organisation=organisation, role=Role.SUPERVISOR).select_related("user").first()
    return None if ms is None else ms.user


def _site_owners(*, organisation, technicians: list) -> dict[int, Any]:
    """One technician per site, in turn by the sites' order of creation."""
    site_ids = sorted(organisation.sites.values_list("pk", flat=True))
    return {site_id: technicians[n % len(technicians)] for n, site_id in enumerate(site_ids)}


@transaction.atomic
def _round_today(*, organisation, today: dt.date) -> int:
    """Give each technician today a visit carrying ROUND_TASKS on up to ROUND_UNITS units with preheat,
    the first of them with ROUND_FIRST_UNIT_TASKS too.

    The units are the technician's in-service units with an electric preheater or a preheat coil, by
    site, building and tag. Each gets one open round visit (made once, kept while open), assigned to the
    technician and scheduled for the site's today through the work-order services; a rerun the same day
    changes nothing, a rerun on a later day moves the still-open visit to that day.
    """
    technicians, supervisor = _technicians(organisation=organisation), _supervisor(organisation=organisation)
    if not technicians or supervisor is None:
        return 0
    owner = _site_owners(organisation=organisation, technicians=technicians)
    protected = (
        AHU.objects.filter(building__site__organisation=organisation, status=AHU.Status.IN_SERVICE)
        .filter(
            Q(components__kind=ComponentKind.ELECTRIC_PREHEATER)
            | Q(components__kind=ComponentKind.COIL, components__specs__duty="preheat")
        )
        .distinct()
        .select_related("building__site")
        .order_by("building__site__code", "building__code", "tag")
    )
    chosen: dict[int, list[AHU]] = {}
    for ahu in protected:
        tech = owner[ahu.building.site_id]
        if len(chosen.setdefault(tech.pk, [])) < ROUND_UNITS:
            chosen[tech.pk].append(ahu)
    count = 0
    for tech in technicians:
        for n, ahu in enumerate(chosen.get(tech.pk, [])):
            # Technicians do not work weekends: loaded on a Saturday or Sunday, the round is Monday's.
            site_day = max(today, today_for(ahu.building.site))
            first_day = weekday_on_or_near(site_day, today=site_day)
            # A task the technician already has on this unit by then (the retest of a failed freeze test)
            # is not asked twice.
            held = set(
                WorkOrder.objects.filter(ahu=ahu, assignee=tech, state__in=WorkOrder.OPEN_STATES)
                .filter(due_date__lte=first_day)
                .exclude(source_ref=ROUND_REF)
                .values_list("tasks__task_code", flat=True)
            )
            codes = [c for c in ROUND_TASKS + (ROUND_FIRST_UNIT_TASKS if n == 0 else ()) if c not in held]
            wo, _ = demo_round_visit(ahu=ahu, codes=codes, due=first_day)
            # The first unit is today's; a further one on the first day it fits in the technician's capacity.
            day = first_day if n == 0 else _first_day_that_fits(work_order=wo, technician=tech, start=first_day)
            if wo.due_date != day and wo.state in (WorkOrder.State.PLANNED, WorkOrder.State.ASSIGNED):
                wo = demo_round_visit_due(work_order=wo, due=day)
            if wo.assignee_id != tech.pk:
                wo = work_order_assign(work_order=wo, assignee=tech, by=supervisor)
                count += 1
            if wo.scheduled_for != day:
                work_order_schedule(work_order=wo, day=day, by=supervisor)
    return count


PLAN_AHEAD_DAYS = 14


def _first_day_that_fits(*, work_order: WorkOrder, technician, start: dt.date) -> dt.date | None:
    """The first day from ``start`` (weekdays, within PLAN_AHEAD_DAYS) on which ``technician`` can take
    ``work_order`` without going over their daily capacity, tasks plus travel; ``start`` when none does."""
    for k in range(PLAN_AHEAD_DAYS):
        day = start + dt.timedelta(days=k)
        if day.weekday() >= 5:
            continue
        if not assignment_check(work_order=work_order, technician=technician, day=day).over:
            return day
    return start


@transaction.atomic
def _verify_history(*, organisation, today: dt.date) -> int:
    """The supervisor verifies the completed preventive visits older than VERIFY_AFTER_DAYS (idempotent)."""
    supervisor = _supervisor(organisation=organisation)
    if supervisor is None:
        return 0
    done = WorkOrder.objects.filter(
        organisation=organisation,
        kind=WorkOrder.Kind.PREVENTIVE,
        state=WorkOrder.State.COMPLETED,
        due_date__lt=today - dt.timedelta(days=VERIFY_AFTER_DAYS),
    ).order_by("due_date", "id")
    count = 0
    for wo in done:
        work_order_verify(work_order=wo, by=supervisor)
        count += 1
    return count


@transaction.atomic
def _assign_upcoming(*, organisation, today: dt.date) -> int:
    """Give unassigned work due soon to the organisation's technicians, one site per technician."""
    technicians, supervisor = _technicians(organisation=organisation), _supervisor(organisation=organisation)
    if not technicians or supervisor is None:
        return 0
    owner = _site_owners(organisation=organisation, technicians=technicians)
    open_orders = (
        WorkOrder.objects.filter(
            organisation=organisation,
            state=WorkOrder.State.PLANNED,
            assignee__isnull=True,
            due_date__lte=today + dt.timedelta(days=ASSIGN_AHEAD_DAYS),
        )
        .exclude(kind=WorkOrder.Kind.CORRECTIVE, approval="pending")
        .select_related("ahu__building__site")
        .order_by("due_date", "id")
    )
    count = 0
    for wo in open_orders:
        # The site's technician if the work fits their day (its due date, or today when overdue); else the
        # least-loaded technician with the skills if it fits theirs; else it waits on the board to be planned.
        # The site's own today: the service refuses a day already past there (after midnight in its zone).
        # The day the board offers (one rule, offered_day): urgent work already due on the site's today, weekend
        # or not; other work a weekday.
        site_day = max(today, today_for(wo.ahu.building.site))
        day = offered_day(scheduled_for=None, due_date=wo.due_date, today=site_day, priority=wo.priority)
        check = assignment_check(work_order=wo, technician=owner[wo.ahu.building.site_id], day=day)
        if check.over or check.missing_skills:
            pick = check.suggestion
            if pick is None or pick[1].over:
                continue
            person = pick[0]
        else:
            person = check.technician
        wo = work_order_assign(work_order=wo, assignee=person, by=supervisor)
        if day != (wo.scheduled_for or wo.due_date):  # overdue, or due on a weekend: planned for the day offered
            work_order_schedule(work_order=wo, day=day, by=supervisor)
        count += 1
    # A technician with nothing due yet gets the soonest visit on their sites (theirs already, or still
    # unassigned) planned for today, so every demo technician signs in to a round whatever the date.
    for tech in technicians:
        if today_visits_for(technician=tech, day=today_for(tech)):
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
            work_order_assign(work_order=soonest, assignee=tech, by=supervisor)
            count += 1
        # The site's own today: the service refuses a day already past there (after midnight in its zone).
        site_day = max(today, today_for(soonest.ahu.building.site))
        day = offered_day(scheduled_for=None, due_date=site_day, today=site_day, priority=soonest.priority)
        work_order_schedule(work_order=soonest, day=day, by=supervisor)
    return count
