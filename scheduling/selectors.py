"""Reads of the scheduling app. Tenancy always goes through inventory.selectors."""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass, field

from django.db.models import Count, Prefetch, Q, QuerySet, Sum
from django.utils import timezone

from accounts.models import Membership, Role
from inventory.selectors import sites_visible_to

from . import routing
from .models import TaskDefinition, WorkOrder, WorkOrderTask


def site_today(*, site, now: dt.datetime | None = None) -> dt.date:
    """Today's date where the site is (due dates are the site's local dates)."""
    return (now or timezone.now()).astimezone(zoneinfo.ZoneInfo(site.time_zone)).date()


def effective_tasks(*, organisation, include_disabled: bool = False) -> dict[str, TaskDefinition]:
    """The organisation's task set: library rows, overridden by its own rows of the same code, plus its own tasks."""
    rows = TaskDefinition.objects.filter(Q(organisation__isnull=True) | Q(organisation=organisation))
    out: dict[str, TaskDefinition] = {}
    for task in sorted(rows, key=lambda t: t.organisation_id is not None):
        out[task.code] = task
    if not include_disabled:
        out = {code: t for code, t in out.items() if t.enabled}
    return out


def _work_order_base() -> QuerySet[WorkOrder]:
    return WorkOrder.objects.select_related("ahu__building__site", "assignee", "component").prefetch_related(
        Prefetch("tasks", queryset=WorkOrderTask.objects.select_related("task", "component"))
    )


def work_orders_visible_to(*, user) -> QuerySet[WorkOrder]:
    """Work orders a person may see: on their visible sites; a technician only their own assigned work."""
    if not getattr(user, "is_authenticated", False):
        return WorkOrder.objects.none()
    roles: dict[int, set[str]] = {}
    for org_id, role in Membership.objects.filter(user=user).values_list("organisation_id", "role"):
        roles.setdefault(org_id, set()).add(role)
    see_all = [org for org, r in roles.items() if r & {Role.SUPERVISOR, Role.ADMIN, Role.PROPERTY_MANAGER}]
    return _work_order_base().filter(
        Q(ahu__building__site__in=sites_visible_to(user=user)) & (Q(organisation_id__in=see_all) | Q(assignee=user))
    )


def work_orders_managed_by(*, user) -> QuerySet[WorkOrder]:
    """Work orders the person may assign, approve, verify and cancel (supervisor/admin of the organisation)."""
    orgs = Membership.objects.filter(user=user, role__in=[Role.SUPERVISOR, Role.ADMIN]).values("organisation_id")
    return _work_order_base().filter(organisation_id__in=orgs)


@dataclass
class Board:
    week_start: dt.date
    due: list[WorkOrder] = field(default_factory=list)
    overdue: list[WorkOrder] = field(default_factory=list)
    assigned: list[WorkOrder] = field(default_factory=list)


def board_for(*, organisation, week_start: dt.date, today: dt.date | None = None) -> Board:
    """The supervisor's week: unassigned work due that week, everything overdue, and what is assigned that week."""
    today = today or timezone.localdate()
    week_end = week_start + dt.timedelta(days=7)
    rows = (
        _work_order_base()
        .filter(organisation=organisation, state__in=WorkOrder.OPEN_STATES)
        .exclude(approval__in=[WorkOrder.Approval.PENDING, WorkOrder.Approval.REJECTED])
        .filter(Q(due_date__lt=week_end) | Q(overdue_on__lte=today))
        .filter(Q(due_date__gte=week_start) | Q(overdue_on__lte=today) | Q(due_date__lt=today))
    )
    board = Board(week_start=week_start)
    for wo in rows:
        overdue = (wo.overdue_on or wo.due_date) <= today and wo.due_date < today
        if overdue:
            board.overdue.append(wo)
        elif week_start <= wo.due_date < week_end:
            (board.assigned if wo.assignee_id else board.due).append(wo)
    return board


def technician_load(*, organisation, start: dt.date, days: int) -> list[dict]:
    """Estimated hours per technician per day (scheduled date, else due date) against their daily capacity."""
    end = start + dt.timedelta(days=days)
    techs = list(
        Membership.objects.filter(organisation=organisation, role=Role.TECHNICIAN)
        .select_related("user")
        .order_by("user__username")
    )
    day_of = {}
    rows = (
        WorkOrder.objects.filter(
            organisation=organisation, state__in=[WorkOrder.State.ASSIGNED, WorkOrder.State.IN_PROGRESS]
        )
        .filter(
            Q(scheduled_for__gte=start, scheduled_for__lt=end)
            | Q(scheduled_for__isnull=True, due_date__gte=start, due_date__lt=end)
        )
        .values("assignee_id", "scheduled_for", "due_date")
        .annotate(minutes=Sum("tasks__task__estimated_minutes"), n=Count("id", distinct=True))
    )
    for r in rows:
        key = (r["assignee_id"], r["scheduled_for"] or r["due_date"])
        day_of[key] = day_of.get(key, 0) + (r["minutes"] or 0)
    out = []
    for m in techs:
        capacity = float(m.user.daily_capacity_hours)
        per_day = []
        for k in range(days):
            d = start + dt.timedelta(days=k)
            hours = round(day_of.get((m.user_id, d), 0) / 60.0, 2)
            per_day.append({"date": d, "hours": hours, "capacity_hours": capacity, "over": hours > capacity})
        out.append({"technician": m.user, "days": per_day})
    return out


@dataclass
class Visit:
    order: int
    site: object
    work_orders: list[WorkOrder]
    leg_km: float


def today_visits_for(*, technician, day: dt.date, start: tuple[float, float] | None = None) -> list[Visit]:
    """The technician's open visits for ``day`` (scheduled that day, or unscheduled and due by then),
    one stop per site, in a suggested driving order from ``start`` (default: the first site due)."""
    orders = list(
        _work_order_base()
        .filter(assignee=technician, state__in=[WorkOrder.State.ASSIGNED, WorkOrder.State.IN_PROGRESS])
        .filter(Q(scheduled_for=day) | Q(scheduled_for__isnull=True, due_date__lte=day))
        .order_by("due_date", "id")
    )
    by_site: dict[int, list[WorkOrder]] = {}
    sites = {}
    for wo in orders:
        site = wo.ahu.building.site
        sites[site.pk] = site
        by_site.setdefault(site.pk, []).append(wo)
    if not by_site:
        return []
    ids = list(by_site)
    points = [(sites[i].latitude, sites[i].longitude) for i in ids]
    origin = start or points[0]
    order = routing.suggest_order(start=origin, stops=points)
    visits = []
    prev = origin
    for n, idx in enumerate(order, start=1):
        here = points[idx]
        visits.append(
            Visit(
                order=n,
                site=sites[ids[idx]],
                work_orders=by_site[ids[idx]],
                leg_km=round(routing.haversine_km(prev, here), 2),
            )
        )
        prev = here
    return visits
