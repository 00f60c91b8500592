"""Reads of the scheduling app. Tenancy always goes through inventory.selectors."""

from __future__ import annotations

import copy
import datetime as dt
import functools
from dataclasses import dataclass

from django.core.exceptions import PermissionDenied, ValidationError
from django.db.models import Case, CharField, Count, F, Prefetch, Q, QuerySet, Sum, Value, When, Window
from django.db.models.functions import Coalesce, RowNumber
from django.http import Http404

from accounts.inputs import date_problem
from accounts.models import Membership
from accounts.selectors import MANAGING_ROLES, technicians_of
from inventory.selectors import sites_visible_to
from inventory.today import today_for

from . import routing, shapes
from .models import TaskDefinition, UnitTaskSetting, WorkOrder, WorkOrderTask


def effective_tasks(*, organisation, include_disabled: bool = False) -> dict[str, TaskDefinition]:
    """The organisation's task set: library rows, overridden by its own rows of the same code, plus its own tasks."""
    # A task written for one work order only (a call-out's "reset the frost thermostat") is not part of the set.
    rows = TaskDefinition.objects.filter(Q(organisation__isnull=True) | Q(organisation=organisation)).exclude(
        code__startswith="once-"
    )
    out: dict[str, TaskDefinition] = {}
    for task in sorted(rows, key=lambda t: t.organisation_id is not None):
        out[task.code] = task
    if not include_disabled:
        out = {code: t for code, t in out.items() if t.enabled}
    return out


def unit_rule_numbers(*, ahu_ids) -> dict[tuple[int, str], dict]:
    """(unit id, task code) -> the numbers a unit has of its own for that rule (only the filled ones)."""
    fields = UnitTaskSetting.RULE_FIELDS
    has_any = Q(interval_value__isnull=False) | ~Q(interval_unit="") | Q(grace_days__isnull=False)
    has_any |= Q(lead_days__isnull=False) | Q(run_hours__isnull=False)
    out: dict[tuple[int, str], dict] = {}
    for row in (
        UnitTaskSetting.objects.filter(ahu_id__in=ahu_ids).filter(has_any).values("ahu_id", "task_code", *fields)
    ):
        numbers = {k: row[k] for k in fields if row[k] not in (None, "")}
        if numbers:
            out[(row["ahu_id"], row["task_code"])] = numbers
    return out


def task_for_unit(*, task: TaskDefinition, numbers: dict | None) -> TaskDefinition:
    """The rule as it holds on one unit: the organisation's ``task`` with the unit's own ``numbers`` over it.

    A copy (same id and code, so the work it makes points to the same rule); ``task`` itself is unchanged."""
    if not numbers:
        return task
    own = copy.copy(task)
    for name, value in numbers.items():
        setattr(own, name, value)
    return own


def _work_order_base() -> QuerySet[WorkOrder]:
    return WorkOrder.objects.select_related("ahu__building__site", "assignee", "component").prefetch_related(
        Prefetch("tasks", queryset=WorkOrderTask.objects.select_related("task", "component"))
    )


def work_orders_visible_to(*, user) -> QuerySet[WorkOrder]:
    """Work orders a person may see: every work order on the sites they see (``sites_visible_to``).

    A technician sees colleagues' work on the sites where they work: the unit's history matters on the job.
    """
    if not getattr(user, "is_authenticated", False):
        return WorkOrder.objects.none()
    return _work_order_base().filter(ahu__building__site__in=sites_visible_to(user=user))


def work_orders_managed_by(*, user) -> QuerySet[WorkOrder]:
    """Work orders the person may assign, approve, verify and cancel (supervisor/admin of the organisation)."""
    orgs = Membership.objects.filter(user=user, role__in=MANAGING_ROLES).values("organisation_id")
    return _work_order_base().filter(organisation_id__in=orgs)


def work_order_for(*, user, public_id, write: bool = False) -> WorkOrder:
    """THE access function of a work order (as Zulip's ``access_message``): every page, API route, report and
    feed that names one work order gets it here.

    Raises ``Http404`` when the person may not see it (another organisation's, a site they do not see, a
    malformed id: one answer, so ids do not leak) and, with ``write``, ``PermissionDenied`` when they may see
    it but not change it (only a supervisor or admin of its organisation may).
    """
    try:
        wo = work_orders_visible_to(user=user).filter(public_id=public_id).first()
    except (ValueError, ValidationError):
        wo = None
    if wo is None:
        raise Http404("No such work order that you may see.")
    if write and not work_orders_managed_by(user=user).filter(pk=wo.pk).exists():
        raise PermissionDenied("Only a supervisor or admin of the organisation may change this work order.")
    return wo


def _planned_within(start: dt.date, end: dt.date) -> Q:
    """Work whose day is in [start, end): the day it is planned for, else (no plan) the day it is due."""
    return Q(scheduled_for__gte=start, scheduled_for__lt=end) | Q(
        scheduled_for__isnull=True, due_date__gte=start, due_date__lt=end
    )


def _overdue(today: dt.date) -> Q:
    """Past due and past the grace window (``overdue_on``; no grace window set means the due date)."""
    return Q(due_date__lt=today) & (Q(overdue_on__isnull=True) | Q(overdue_on__lte=today))


def _on_week(week_start: dt.date, today: dt.date) -> Q:
    """Work on the week starting ``week_start``: its day (:func:`_planned_within`) in the week; on the week
    holding ``today`` also open work whose day is already behind it (past due but still inside its grace
    window, or planned for a day gone by), so late work never drops off the board before it turns overdue."""
    week_end = week_start + dt.timedelta(days=7)
    rows = _planned_within(week_start, week_end)
    if week_start <= today < week_end:
        rows |= Q(scheduled_for__lt=week_start) | Q(scheduled_for__isnull=True, due_date__lt=week_start)
    return rows


def _board_rows(*, organisation, week_start: dt.date, today: dt.date) -> QuerySet[WorkOrder]:
    return (
        WorkOrder.objects.filter(organisation=organisation, state__in=WorkOrder.OPEN_STATES)
        .exclude(approval__in=[WorkOrder.Approval.PENDING, WorkOrder.Approval.REJECTED])
        .filter(_on_week(week_start, today) | _overdue(today))
    )


def _board_section(*, week_start: dt.date, today: dt.date) -> Case:
    """The board's one rule, as SQL so counts and pages come from the database: overdue once past due
    and past the grace window (see :func:`_overdue`), whatever week it is planned for; else due (unassigned)
    or assigned in the week of its day: the day it is planned for, else the day it is due
    (:func:`_planned_within`), work whose day is behind this week carried to the week of ``today``
    (:func:`_on_week`); else NULL (on no section).

    :func:`board_page_for` (the board page and the board API alike) annotates with this; there is no
    other copy of the rule."""
    in_week = _on_week(week_start, today)
    return Case(
        When(_overdue(today), then=Value("overdue")),
        When(in_week & Q(assignee__isnull=False), then=Value("assigned")),
        When(in_week, then=Value("due")),
        default=Value(None),
        output_field=CharField(),
    )


def _person(user) -> dict | None:
    if user is None:
        return None
    return shapes.person_ref(id=user.pk, username=user.username, first_name=user.first_name, last_name=user.last_name)


BOARD_SECTIONS = ("overdue", "due", "assigned")
BOARD_LIMIT_MAX = 500


def _board_sorted(*, organisation, week_start: dt.date, today: dt.date) -> QuerySet[WorkOrder]:
    """The board's rows with their ``section``, rows on no section left out."""
    return (
        _board_rows(organisation=organisation, week_start=week_start, today=today)
        .annotate(section=_board_section(week_start=week_start, today=today))
        .exclude(section=None)
    )


def board_page_for(
    *,
    organisation,
    week_start: dt.date,
    today: dt.date | None = None,
    limit: int = 100,
    offset: int = 0,
    section: str | None = None,
) -> dict:
    """The board as plain dicts: totals per section and per day of the week for all of it, and the
    rows ``offset`` to ``offset + limit`` of each section (or of ``section`` alone), due date first.

    Two queries, both sorting rows into sections with :func:`_board_section` in the database: one
    grouped read of the counts, then the shown rows with their unit, site and assignee (numbered
    within their section, so one query pages all three); no model instances. Overdue as of ``today``, by
    default the organisation's (``inventory.today.today_for``)."""
    today = today or today_for(organisation)
    days = [week_start + dt.timedelta(days=k) for k in range(7)]
    rows = _board_sorted(organisation=organisation, week_start=week_start, today=today)
    # One grouped read: overdue rows in one group whatever their due date, the others per section and day.
    groups = (
        rows.annotate(
            day=Case(When(section="overdue", then=Value(None)), default=Coalesce(F("scheduled_for"), F("due_date")))
        )
        .order_by()
        .values_list("section", "day")
        .annotate(n=Count("id"))
    )
    totals = dict.fromkeys(BOARD_SECTIONS, 0)
    per_day = {d: {"date": d, "due": 0, "assigned": 0} for d in days}
    for name, day, n in groups:
        totals[name] += n
        if day is not None:
            # Work carried from a day behind this week (see _on_week) is due now: counted on today.
            per_day[day if day >= week_start else today][name] += n
    wanted = [section] if section else list(BOARD_SECTIONS)
    shown: dict[str, list[dict]] = {name: [] for name in BOARD_SECTIONS}
    if limit and any(totals[name] > offset for name in wanted):
        # Numbered within each section on the bare rows; only the shown ones are joined to unit, site, person.
        place = Window(RowNumber(), partition_by=[F("section")], order_by=[F("due_date").asc(), F("id").asc()])
        shown_ids = (
            rows.filter(section__in=wanted)
            .annotate(place=place)
            .filter(place__gt=offset, place__lte=offset + limit)
            .values("id")
        )
        page = (
            WorkOrder.objects.filter(pk__in=shown_ids)
            .annotate(section=_board_section(week_start=week_start, today=today))
            .order_by("due_date", "id")
            .values(*shapes.BOARD_ITEM_COLUMNS, "section")
        )
        for r in page:
            shown[r["section"]].append(shapes.board_item_shape(r))
    return {
        "week_start": week_start,
        "today": today,
        "limit": limit,
        "offset": offset,
        "counts": totals,
        "days": list(per_day.values()),
        **shown,
    }


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
    return sum(leg for _, _, leg in _route(points=points, start=None))


WEEKEND = (5, 6)  # Saturday, Sunday (date.weekday())


def capacity_on(user, day: dt.date) -> float:
    """Hours of field work ``user`` has on ``day``: their daily capacity. Every day counts alike, weekends too:
    work left unplanned is counted on its due date, which the calendar rules put on any day, and a weekend due
    date must not read as an overload. Weekend work is avoided where it is chosen instead: the day offered for
    it is a weekday (:func:`weekday_on_or_near`)."""
    return float(user.daily_capacity_hours)


def weekday_on_or_near(day: dt.date, *, today: dt.date) -> dt.date:
    """The day to offer for work due on ``day``: the day itself on a weekday; on a Saturday or Sunday the Friday
    before when that is not before ``today``, else the Monday after. The board and the New work page offer it."""
    if day.weekday() not in WEEKEND:
        return day
    friday = day - dt.timedelta(days=day.weekday() - 4)
    return friday if friday >= today else day + dt.timedelta(days=7 - day.weekday())


def _day_load(
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
        rows.filter(_planned_within(start, end))
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
            per_day.append(_day_load(day=d, capacity=capacity_on(user, d), visits=todo))
        out.append((user, per_day))
    return out


def _least_loaded(candidates: list[tuple]) -> tuple | None:
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
    """:func:`_least_loaded`'s order, with the candidate's place last (``min`` keeps the first of equals)."""
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


def _least_loaded_for(*, techs: list, day: dt.date, visits: dict, need: WorkNeed, km_of: dict) -> tuple | None:
    """:func:`_least_loaded` of the qualified technicians' days with the work added, working out only the routes
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
        load = _day_load(day=day, capacity=capacity, visits=todo, km_of=km_of)
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
        pick = _least_loaded_for(techs=techs, day=day, visits=visits, need=need, km_of=km_of)
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
        {"technician": _person(user), "days": [d.as_dict() for d in per_day]}
        for user, per_day in technician_day_loads(organisation=organisation, start=start, days=days)
    ]


def skills_needed(*, work_order: WorkOrder) -> set[str]:
    """The skills the work order's tasks name (each task names one); a technician must have them all."""
    return _skills_of(work_order)


@dataclass(frozen=True)
class AssignmentCheck:
    """What giving ``work_order`` to ``technician`` for ``day`` does to their day, said before it is saved."""

    technician: object
    day: dt.date
    load: DayLoad
    missing_skills: tuple[str, ...]
    suggestion: tuple | None  # (user, DayLoad with the work added) of the least-loaded qualified technician
    today: dt.date

    @property
    def over(self) -> bool:
        return self.load.over

    def day_words(self) -> str:
        from accounts.clock import day_text

        return f"{self.day:%a} {day_text(self.day, today=self.today)}"

    def load_words(self, load: DayLoad | None = None) -> str:
        """ "8.4 h: 7.7 h of tasks and 43 min of travel (22 km between 2 sites)" """
        load = load or self.load
        words = f"{load.hours:.1f} h: {load.task_minutes / 60:.1f} h of tasks"
        if load.sites > 1:
            words += (
                f" and {load.travel_minutes:.0f} min of travel ({load.travel_km:.0f} km between {load.sites} sites)"
            )
        else:
            words += ", no travel between sites"
        return words

    def message(self) -> str:
        """The warning: the technician, the day, the hours and the capacity."""
        return (
            f"{self.technician} on {self.day_words()} would have {self.load_words()}, "
            f"over the capacity of {self.load.capacity_hours:.1f} h a day."
        )

    def suggestion_words(self) -> str:
        if self.suggestion is None:
            return "No technician of the organisation has every skill this work needs."
        user, load = self.suggestion
        if user == self.technician:
            return f"{user} is already the least loaded of those with the skills."
        state = "over capacity too" if load.over else "within capacity"
        return (
            f"Least loaded with the skills: {user}, {load.hours:.1f} h of {load.capacity_hours:.1f} h "
            f"on {self.day_words()} with this work ({state})."
        )


def assignment_check(*, work_order: WorkOrder, technician, day: dt.date) -> AssignmentCheck:
    """The day ``technician`` would have if given ``work_order`` on ``day`` (tasks plus travel, against their
    capacity), the skills they lack, and the least-loaded technician who has every skill the work needs
    (smallest share of their capacity with the work added; ties by name). Reads only; nothing is saved."""
    loads = technician_day_loads(
        organisation=work_order.organisation, start=day, days=1, adding=work_order, adding_day=day
    )
    needed = skills_needed(work_order=work_order)
    chosen = next((load for user, (load,) in loads if user.pk == technician.pk), None)
    if chosen is None:  # not a technician of the organisation: the service refuses it in its own words
        chosen = DayLoad(date=day, capacity_hours=capacity_on(technician, day))
    suggestion = _least_loaded([(user, load) for user, (load,) in loads if needed <= set(user.skills or [])])
    return AssignmentCheck(
        technician=technician,
        day=day,
        load=chosen,
        missing_skills=tuple(sorted(needed - set(technician.skills or []))),
        suggestion=suggestion,
        today=today_for(work_order.ahu.building.site),
    )


def offered_day(*, scheduled_for: dt.date | None, due_date: dt.date, today: dt.date) -> dt.date:
    """The day a board row offers for its visit: its plan, else its due date, never a day already past at its
    site (``today`` is the site's: the schedule service refuses a day before it) nor a weekend day."""
    return scheduled_for or weekday_on_or_near(max(due_date, today), today=today)


def board_suggestions(*, organisation, rows: list[dict]) -> list[dict]:
    """Each unassigned board row (API shape) with ``suggested``: the least-loaded technician with the skills for
    its :func:`offered_day` at its site; None when nobody has the skills. Assigned rows get None. The board page
    and the API alike. A constant number of queries whatever the rows."""
    open_ids = [r["id"] for r in rows if r["assignee"] is None]
    # One joined read of the rows' work orders with their tasks' minutes and skills (plain rows, no instances).
    orders: dict[int, dict] = {}
    for r in (
        WorkOrder.objects.filter(public_id__in=open_ids)
        .order_by("id", "tasks__id")
        .values(
            "id",
            "public_id",
            "scheduled_for",
            "due_date",
            "ahu__building__site_id",
            "ahu__building__site__latitude",
            "ahu__building__site__longitude",
            "ahu__building__site__time_zone",
            "tasks__task__estimated_minutes",
            "tasks__task__skill",
        )
    ):
        wo = orders.setdefault(r["id"], {**r, "minutes": 0, "skills": set()})
        if r["tasks__task__estimated_minutes"] is not None:
            wo["minutes"] += r["tasks__task__estimated_minutes"]
            wo["skills"].add(r["tasks__task__skill"])
    site_today: dict[int, dt.date] = {}
    days: dict[int, tuple[WorkNeed, dt.date]] = {}
    for pk, wo in orders.items():
        site_id = wo["ahu__building__site_id"]
        if site_id not in site_today:
            site_today[site_id] = today_for(wo["ahu__building__site__time_zone"] or "UTC")  # as today_for(site)
        today = site_today[site_id]
        day = offered_day(scheduled_for=wo["scheduled_for"], due_date=wo["due_date"], today=today)
        if date_problem(day, label="day", today=today) is None:
            where = (wo["ahu__building__site__latitude"], wo["ahu__building__site__longitude"])
            days[pk] = (WorkNeed(wo["minutes"], site_id, where, frozenset(wo["skills"])), day)
    by_public = {wo["public_id"]: pk for pk, wo in orders.items() if pk in days}
    picks = suggested_technicians(organisation=organisation, days=days)
    for r in rows:
        pick = picks.get(by_public.get(r["id"])) if r["assignee"] is None else None
        r["suggested"] = None if pick is None else {**_person(pick[0]), "load": pick[1].as_dict()}
    return rows


def work_orders_to_verify(*, organisation, limit: int = 100) -> QuerySet[WorkOrder]:
    """Completed work waiting for the supervisor's verification, longest waiting first."""
    return (
        WorkOrder.objects.filter(organisation=organisation, state=WorkOrder.State.COMPLETED)
        .select_related("ahu__building__site", "assignee")
        .order_by("completed_at", "id")[:limit]
    )


TO_VERIFY_FIELDS = ("id", "title", "unit", "site", "assignee", "completed_at", "version")
_TO_VERIFY_COLUMNS = (
    "public_id",
    "title",
    *shapes.UNIT_IN_BUILDING_COLUMNS,
    *shapes.ASSIGNEE_COLUMNS,
    "completed_at",
    "version",
)


def to_verify_rows(*, organisation, limit: int = 100) -> list[dict]:
    """:func:`work_orders_to_verify` in the board API's plain shape: the same rows in the same order, read as
    plain rows of the columns the shape names (no model instances)."""
    return [
        shapes.work_order_shape(row, fields=TO_VERIFY_FIELDS, unit=shapes.unit_ref, site=shapes.site_ref)
        for row in work_orders_to_verify(organisation=organisation, limit=limit).values(*_TO_VERIFY_COLUMNS)
    ]


def _today_orders(*, technician, day: dt.date) -> QuerySet[WorkOrder]:
    return WorkOrder.objects.filter(
        assignee=technician, state__in=[WorkOrder.State.ASSIGNED, WorkOrder.State.IN_PROGRESS]
    ).filter(Q(scheduled_for=day) | Q(scheduled_for__isnull=True, due_date__lte=day))


@functools.lru_cache(maxsize=4096)
def _suggest_order(origin: tuple[float, float], coords: tuple[tuple[float, float], ...]) -> tuple[int, ...]:
    # The exact order of 10 stops costs milliseconds and a phone asks for the same day again and again. A board
    # of 5,000 units works out about 170 routes (every technician's days, and the candidates' days with a visit
    # added) and each organisation's board its own: kept for several boards, a board built again after a change
    # finds its unchanged days here (at most about 1 kB a route).
    return tuple(routing.suggest_order(start=origin, stops=coords))


def _route(*, points: dict[int, tuple[float, float]], start: tuple[float, float] | None):
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


def today_visits_for(*, technician, day: dt.date, start: tuple[float, float] | None = None) -> list[dict]:
    """The technician's open visits for ``day`` (scheduled that day, or unscheduled and due by then), one stop
    per site, in a suggested driving order from ``start`` (default: the first site due): the today API's answer
    and the today page's list alike.

    Plain dicts in the API's visit shape (each work order as the work-order endpoint shows it, with its tasks,
    :mod:`scheduling.shapes`), read in one query: work orders left-joined to their tasks."""
    rows = (
        _today_orders(technician=technician, day=day)
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
        for n, pk, leg in _route(points=points, start=start)
    ]


def latest_meter_reading(*, ahu, component=None, as_of: dt.datetime | None = None):
    """The unit's (or component's) latest run-hour reading at or before ``as_of`` (default: any), or None.

    The reading ``services.meter_reading_check`` compares a new reading with when it is the newest.
    """
    from .models import MeterReading

    rows = MeterReading.objects.filter(ahu=ahu, component=component)
    if as_of is not None:
        rows = rows.filter(taken_at__lte=as_of)
    return rows.order_by("-taken_at", "-id").first()
