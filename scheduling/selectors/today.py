"""A technician's day: the visits of the day in route order, read as plain dicts from one joined query."""

from __future__ import annotations

import datetime as dt
import functools

from django.db.models import Min, Q, QuerySet

from inventory.today import today_for

from .. import routing, shapes
from ..models import WorkOrder


def _today_orders(*, technician, day: dt.date, today: dt.date) -> QuerySet[WorkOrder]:
    """Open visits of ``technician`` for ``day``: planned that day, or unplanned and due by then. A visit already
    in progress is on the technician's ``today`` alone, whatever day it was planned for, and on no other day's
    list (a visit planned for Monday and started on Saturday is on Saturday's list, not Monday's): listed once."""
    on_day = Q(scheduled_for=day) | Q(scheduled_for__isnull=True, due_date__lte=day)
    if day == today:
        return WorkOrder.objects.filter(assignee=technician).filter(
            Q(state=WorkOrder.State.IN_PROGRESS) | (Q(state=WorkOrder.State.ASSIGNED) & on_day)
        )
    return WorkOrder.objects.filter(assignee=technician, state=WorkOrder.State.ASSIGNED).filter(on_day)


def next_visit_day(*, technician, after: dt.date) -> dt.date | None:
    """The first day after ``after`` with an open visit of the technician's (planned that day, or unplanned and
    due then): what the phone offers when today holds none (a weekend, a day off), so the next round can be
    looked at and prepared."""
    open_orders = WorkOrder.objects.filter(
        assignee=technician, state__in=[WorkOrder.State.ASSIGNED, WorkOrder.State.IN_PROGRESS]
    )
    days = open_orders.aggregate(
        planned=Min("scheduled_for", filter=Q(scheduled_for__gt=after)),
        unplanned=Min("due_date", filter=Q(scheduled_for__isnull=True, due_date__gt=after)),
    )
    found = [d for d in days.values() if d is not None]
    return min(found) if found else None


@functools.lru_cache(maxsize=4096)
def _suggest_order(origin: tuple[float, float], coords: tuple[tuple[float, float], ...]) -> tuple[int, ...]:
    # The exact order of 10 stops costs milliseconds and a phone asks for the same day again and again. A board
    # of 5,000 units works out about 170 routes (every technician's days, and the candidates' days with a visit
    # added) and each organisation's board its own: kept for several boards, a board built again after a change
    # finds its unchanged days here (at most about 1 kB a route).
    return tuple(routing.suggest_order(start=origin, stops=coords))


def cache_clear() -> None:
    """Forget the day's suggested route orders kept in this process (``config.caches.clear_module_caches``)."""
    _suggest_order.cache_clear()


def route_legs(*, points: dict[int, tuple[float, float]], start: tuple[float, float] | None):
    """(order, site id, leg km) per stop in the suggested order; ``points`` in first-due order."""
    ids = list(points)
    coords = tuple(points[i] for i in ids)
    origin = start or coords[0]
    prev = origin
    for n, idx in enumerate(_suggest_order(origin, coords), start=1):
        here = coords[idx]
        yield n, ids[idx], round(routing.haversine_km(prev, here), 2)
        prev = here


# ---------------------------------------------------------------------------
# The API's hot paths: the same reads as plain dicts from one joined query each
# (model instances, prefetches and nested serializers cost ~10x the SQL here).
# ---------------------------------------------------------------------------
_TODAY_COLUMNS = (
    "id",
    *shapes.WORK_ORDER_COLUMNS,
    "ahu__building__site__address",
    *("tasks__" + c for c in shapes.TASK_COLUMNS),
)


def today_visits_for(
    *, technician, day: dt.date, start: tuple[float, float] | None = None, today: dt.date | None = None
) -> list[dict]:
    """The technician's open visits for ``day`` (scheduled that day, or unscheduled and due by then; on their
    ``today``, by default ``inventory.today.today_for(technician)``, also those in progress whatever their day), one
    stop per site, in a suggested driving order from ``start`` (default: the first site due): the today API's answer
    and the today page's list alike.

    Plain dicts in the API's visit shape (each work order as the work-order endpoint shows it, with its tasks,
    :mod:`scheduling.shapes`), read in one query: work orders left-joined to their tasks."""
    rows = (
        _today_orders(technician=technician, day=day, today=today or today_for(technician))
        .order_by("due_date", "id", "tasks__due_date", "tasks__id")
        .values(*_TODAY_COLUMNS)
    )
    orders: dict[int, dict] = {}
    by_site: dict[int, list[dict]] = {}
    sites: dict[int, dict] = {}
    for r in rows:
        wo = orders.get(r["id"])
        if wo is None:
            site_id = r["ahu__building__site_id"]
            if site_id not in sites:
                sites[site_id] = {
                    "id": site_id,
                    "code": r["ahu__building__site__code"],
                    "name": r["ahu__building__site__name"],
                    "address": r["ahu__building__site__address"],
                    "latitude": r["ahu__building__site__latitude"],
                    "longitude": r["ahu__building__site__longitude"],
                }
            wo = orders[r["id"]] = shapes.work_order_shape(r)
            by_site.setdefault(site_id, []).append(wo)
        if r["tasks__id"] is not None:
            wo["tasks"].append(shapes.task_shape(r, prefix="tasks__"))
    if not by_site:
        return []
    points = {pk: (site["latitude"], site["longitude"]) for pk, site in sites.items()}
    return [
        {"order": n, "leg_km": leg, "site": sites[pk], "work_orders": by_site[pk]}
        for n, pk, leg in route_legs(points=points, start=start)
    ]
