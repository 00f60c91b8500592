"""Technicians' days: their load (minutes against capacity, the route's km), the least-loaded technician with the
skills for a visit.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from django.db.models import Sum

from accounts.selectors import technicians_of

from .. import routing
from ..models import WorkOrder
from .today import route_legs
from .work_orders import person_of, planned_within


@dataclass(frozen=True)
class DayLoad:
    """One technician's day: the tasks' estimated minutes, the drive between the day's sites along the
    suggested route (:mod:`scheduling.routing`), and their daily capacity."""

    date: dt.date
    capacity_hours: float
    task_minutes: int = 0
    travel_km: float = 0.0
    travel_minutes: float = 0.0
    sites: int = 0
    visits: int = 0

    @property
    def hours(self) -> float:
        return round((self.task_minutes + self.travel_minutes) / 60.0, 2)

    @property
    def over(self) -> bool:
        return self.hours > self.capacity_hours

    def as_dict(self) -> dict:
        """The one shape of a day's load, on the board page and in the board API alike."""
        return {
            "date": self.date,
            "hours": self.hours,
            "task_hours": round(self.task_minutes / 60.0, 2),
            "travel_minutes": round(self.travel_minutes),
            "travel_km": round(self.travel_km, 1),
            "sites": self.sites,
            "visits": self.visits,
            "capacity_hours": self.capacity_hours,
            "over": self.over,
        }


LOADED_STATES = (WorkOrder.State.ASSIGNED, WorkOrder.State.IN_PROGRESS)


def _route_km(points: dict[int, tuple[float, float]]) -> float:
    """Kilometres of the day's route through ``points`` (site id: position, in first-due order), from the
    first site due, as the technician's today shows it (:func:`today_visits_for`)."""
    if len(points) < 2:
        return 0.0
    return sum(leg for _, _, leg in route_legs(points=points, start=None))


WEEKEND = (5, 6)  # Saturday, Sunday (date.weekday())


def capacity_on(user, day: dt.date) -> float:
    """Hours of field work ``user`` has on ``day``: their daily capacity. Every day counts alike, weekends too:
    work left unplanned is counted on its due date, which the calendar rules put on any day, and a weekend due
    date must not read as an overload. Weekend work is avoided where it is chosen instead: the day offered for
    it is a weekday (:func:`weekday_on_or_near`), save for Urgent work already due (``offered_day``)."""
    return float(user.daily_capacity_hours)


def weekday_on_or_near(day: dt.date, *, today: dt.date) -> dt.date:
    """The day to offer for work due on ``day``: the day itself on a weekday; on a Saturday or Sunday the Friday
    before when that is not before ``today``, else the Monday after. The board and the New work page offer it."""
    if day.weekday() not in WEEKEND:
        return day
    friday = day - dt.timedelta(days=day.weekday() - 4)
    return friday if friday >= today else day + dt.timedelta(days=7 - day.weekday())


def day_load(
    *, day: dt.date, capacity: float, visits: list[tuple[int, int, tuple[float, float]]], km_of: dict | None = None
) -> DayLoad:
    """``visits``: (minutes, site id, site position) per work order, first due first. ``km_of``: the route
    kilometres already worked out in this read, by the day's sites in order (many rows of a board share them)."""
    points = _points_of(visits)
    km = _route_km(points) if km_of is None else _known_km(points, km_of)
    return DayLoad(
        date=day,
        capacity_hours=capacity,
        task_minutes=sum(m for m, _, _ in visits),
        travel_km=km,
        travel_minutes=routing.drive_minutes(km),
        sites=len(points),
        visits=len(visits),
    )


def _technicians_of(organisation) -> list:
    return technicians_of(organisation=organisation)


Visit_ = tuple[int, int, tuple[float, float]]  # (task minutes, site id, site position) of one work order


def _loaded_visits(*, organisation, start: dt.date, end: dt.date, leave_out=()) -> dict[tuple[int, dt.date], list]:
    """Assigned and started work per (technician id, day) in [start, end), first due first: one query."""
    rows = WorkOrder.objects.filter(organisation=organisation, state__in=LOADED_STATES, assignee__isnull=False)
    if leave_out:
        rows = rows.exclude(pk__in=list(leave_out))
    rows = (
        rows.filter(planned_within(start, end))
        .values(
            "id",
            "assignee_id",
            "scheduled_for",
            "due_date",
            "ahu__building__site_id",
            "ahu__building__site__latitude",
            "ahu__building__site__longitude",
        )
        .annotate(minutes=Sum("tasks__task__estimated_minutes"))
        .order_by("due_date", "id")
    )
    visits: dict[tuple[int, dt.date], list[Visit_]] = {}
    for r in rows:
        where = (r["ahu__building__site__latitude"], r["ahu__building__site__longitude"])
        key = (r["assignee_id"], r["scheduled_for"] or r["due_date"])
        visits.setdefault(key, []).append((r["minutes"] or 0, r["ahu__building__site_id"], where))
    return visits


def _visit_of(work_order: WorkOrder) -> Visit_:
    site = work_order.ahu.building.site
    return (work_order.estimated_minutes(), site.pk, (site.latitude, site.longitude))


def technician_day_loads(
    *,
    organisation,
    start: dt.date,
    days: int,
    adding: WorkOrder | None = None,
    adding_day: dt.date | None = None,
) -> list[tuple]:
    """THE technician's day load: per technician of the organisation (by username), one :class:`DayLoad` per
    day from ``start``: assigned and started work on its day (the day it is planned for, else its due date),
    the tasks' estimated minutes plus the drive between the day's sites. The board's load table, the warning
    before an assignment and the suggested technician all read it.

    With ``adding``, that work order is taken off wherever it now counts and put on ``adding_day`` of every
    technician: each one's day as it would be if the work were given to them. Returns (user, [DayLoad]) pairs.
    """
    end = start + dt.timedelta(days=days)
    leave_out = [adding.pk] if adding is not None else []
    visits = _loaded_visits(organisation=organisation, start=start, end=end, leave_out=leave_out)
    extra = _visit_of(adding) if adding is not None and adding_day is not None else None
    out = []
    for user in _technicians_of(organisation):
        per_day = []
        for k in range(days):
            d = start + dt.timedelta(days=k)
            todo = list(visits.get((user.pk, d), []))
            if extra is not None and d == adding_day:
                todo.append(extra)
            per_day.append(day_load(day=d, capacity=capacity_on(user, d), visits=todo))
        out.append((user, per_day))
    return out


def least_loaded(candidates: list[tuple]) -> tuple | None:
    """The (user, DayLoad) with the smallest share of capacity once the work is added, within capacity first;
    ties by name."""
    return min(
        candidates,
        key=lambda p: (p[1].over, p[1].hours / max(p[1].capacity_hours, 0.1), str(p[0])),
        default=None,
    )


def _skills_of(work_order: WorkOrder) -> set[str]:
    return {t.task.skill for t in work_order.tasks.all()}


@dataclass(frozen=True)
class WorkNeed:
    """What one visit asks of a technician's day: its tasks' minutes, its site and the skills its tasks name."""

    minutes: int
    site_id: int
    where: tuple[float, float]
    skills: frozenset[str]

    @property
    def visit(self) -> Visit_:
        return (self.minutes, self.site_id, self.where)


def _load_key(user, load: DayLoad, place: int) -> tuple:
    """:func:`least_loaded`'s order, with the candidate's place last (``min`` keeps the first of equals)."""
    return (load.over, load.hours / max(load.capacity_hours, 0.1), str(user), place)


def _points_of(visits: list[Visit_]) -> dict[int, tuple[float, float]]:
    points: dict[int, tuple[float, float]] = {}
    for _, site_id, where in visits:
        points.setdefault(site_id, where)
    return points


def _known_km(points: dict[int, tuple[float, float]], km_of: dict) -> float:
    route = tuple(points.items())
    km = km_of.get(route)
    if km is None:
        km = km_of[route] = _route_km(points)
    return km


def _least_travel_km(*, day_visits: list[Visit_], need: WorkNeed, km_of: dict) -> float:
    """At most the kilometres of the day's route once ``need`` is added (:func:`_route_km`), from the day's route
    without it: adding a site to a route from the same first site never shortens the shortest one (the triangle
    inequality of great-circle distances), less what rounding each leg to 10 m can take away. Nothing is known
    where the order would not be exact (more than ``routing.EXACT_LIMIT`` sites): 0."""
    points = _points_of(day_visits)
    if not points:
        return 0.0
    if need.site_id in points:
        return _known_km(points, km_of)  # the same sites in the same order: the same route
    if len(points) + 1 > routing.EXACT_LIMIT:
        return 0.0
    return max(0.0, _known_km(points, km_of) - 0.01 * (len(points) + 2))


def least_loaded_for(*, techs: list, day: dt.date, visits: dict, need: WorkNeed, km_of: dict) -> tuple | None:
    """:func:`least_loaded` of the qualified technicians' days with the work added, working out only the routes
    that can change the answer. A day with the work added takes at least its tasks' hours and the drive of the
    day's route without it (:func:`_least_travel_km`), so candidates are tried from the smallest of those bounds,
    and once the bound reaches the best day found no later one can beat it. The same pick and the same day as
    working out every route (the order's key is the same, with the candidate's place to keep the first of equals).
    """
    bounded = []
    for place, user in enumerate(techs):
        if not need.skills <= set(user.skills or []):
            continue
        day_visits = visits.get((user.pk, day), [])
        todo = [*day_visits, need.visit]
        capacity = capacity_on(user, day)
        km = _least_travel_km(day_visits=day_visits, need=need, km_of=km_of)
        lower = DayLoad(
            date=day,
            capacity_hours=capacity,
            task_minutes=sum(m for m, _, _ in todo),
            travel_km=km,
            travel_minutes=routing.drive_minutes(km),
        )
        bounded.append((_load_key(user, lower, place), user, capacity, todo))
    bounded.sort(key=lambda b: b[0])
    best: tuple | None = None
    for lower_key, user, capacity, todo in bounded:
        if best is not None and lower_key >= best[0]:
            break
        load = day_load(day=day, capacity=capacity, visits=todo, km_of=km_of)
        key = _load_key(user, load, lower_key[-1])
        if best is None or key < best[0]:
            best = (key, user, load)
    return None if best is None else (best[1], best[2])


def suggested_technicians(*, organisation, days: dict[int, tuple[WorkNeed, dt.date]]) -> dict[int, tuple]:
    """For each work order (by id: (what it needs, the day it would be done)), the least-loaded technician who
    has every skill it needs, with their day as it would be: two queries for all."""
    if not days:
        return {}
    first = min(d for _, d in days.values())
    last = max(d for _, d in days.values())
    visits = _loaded_visits(
        organisation=organisation, start=first, end=last + dt.timedelta(days=1), leave_out=list(days)
    )
    techs = _technicians_of(organisation)
    km_of: dict = {}
    out = {}
    for pk, (need, day) in days.items():
        pick = least_loaded_for(techs=techs, day=day, visits=visits, need=need, km_of=km_of)
        if pick is not None:
            out[pk] = pick
    return out


def technician_load(*, organisation, start: dt.date, days: int) -> list[dict]:
    """Estimated hours per technician per day (planned day, else due date), tasks plus travel, against each
    one's daily capacity (:func:`technician_day_loads`), as the board page shows it."""
    return [
        {"technician": user, "days": [d.as_dict() for d in per_day]}
        for user, per_day in technician_day_loads(organisation=organisation, start=start, days=days)
    ]


def board_load_rows(*, organisation, start: dt.date, days: int = 7) -> list[dict]:
    """:func:`technician_load` in the board API's plain shape (the person as a reference)."""
    return [
        {"technician": person_of(user), "days": [d.as_dict() for d in per_day]}
        for user, per_day in technician_day_loads(organisation=organisation, start=start, days=days)
    ]


def skills_needed(*, work_order: WorkOrder) -> set[str]:
    """The skills the work order's tasks name (each task names one); a technician must have them all."""
    return _skills_of(work_order)
