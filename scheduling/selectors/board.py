"""The supervisor's board: its sections and rows, a page of them, the suggested technician of each unassigned row,
the work waiting for verification.
"""

from __future__ import annotations

import datetime as dt

from django.db.models import Case, CharField, Count, F, Q, QuerySet, Value, When, Window
from django.db.models.functions import Coalesce, RowNumber

from accounts.inputs import date_problem
from inventory.today import today_for

from .. import shapes
from ..models import WorkOrder
from .assignment import offered_day
from .load import WorkNeed, suggested_technicians
from .work_orders import person_of, planned_within


def _overdue(today: dt.date) -> Q:
    """Past due and past the grace window (``overdue_on``; no grace window set means the due date)."""
    return Q(due_date__lt=today) & (Q(overdue_on__isnull=True) | Q(overdue_on__lte=today))


def _on_week(week_start: dt.date, today: dt.date) -> Q:
    """Work on the week starting ``week_start``: its day (:func:`planned_within`) in the week; on the week
    holding ``today`` also open work whose day is already behind it (past due but still inside its grace
    window, or planned for a day gone by), so late work never drops off the board before it turns overdue."""
    week_end = week_start + dt.timedelta(days=7)
    rows = planned_within(week_start, week_end)
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
    (:func:`planned_within`), work whose day is behind this week carried to the week of ``today``
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
            "priority",
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
        day = offered_day(
            scheduled_for=wo["scheduled_for"], due_date=wo["due_date"], today=today, priority=wo["priority"]
        )
        if date_problem(day, label="day", today=today) is None:
            where = (wo["ahu__building__site__latitude"], wo["ahu__building__site__longitude"])
            days[pk] = (WorkNeed(wo["minutes"], site_id, where, frozenset(wo["skills"])), day)
    by_public = {wo["public_id"]: pk for pk, wo in orders.items() if pk in days}
    picks = suggested_technicians(organisation=organisation, days=days)
    for r in rows:
        pick = picks.get(by_public.get(r["id"])) if r["assignee"] is None else None
        r["suggested"] = None if pick is None else {**person_of(pick[0]), "load": pick[1].as_dict()}
    return rows


def overdue_awaiting_approval(*, organisation) -> list[WorkOrder]:
    """Proposed corrective work still awaiting approval (the corrective page's list) that is overdue at its site
    (:meth:`WorkOrder.is_overdue_on` on the site's today), due date first, each with ``site_today``. The board's
    sections leave unapproved work out; this is said beside them so the supervisor sees it, as the property
    manager's dashboard and the compliance PDF count it overdue."""
    latest_today = today_for(organisation) + dt.timedelta(days=2)  # no zone's date is two days ahead of another's
    found = []
    for wo in (
        WorkOrder.objects.filter(
            organisation=organisation,
            kind=WorkOrder.Kind.CORRECTIVE,
            approval=WorkOrder.Approval.PENDING,
            state__in=WorkOrder.OPEN_STATES,
            due_date__lt=latest_today,
        )
        .select_related("ahu__building__site")
        .order_by("due_date", "id")
    ):
        wo.site_today = today_for(wo.ahu.building.site)
        if wo.is_overdue_on(wo.site_today):
            found.append(wo)
    return found


OVERDUE_AWAITING_FIELDS = ("id", "title", "kind", "priority", "unit", "site", "due_date", "overdue_on", "version")


def overdue_awaiting_rows(*, organisation) -> list[dict]:
    """:func:`overdue_awaiting_approval` as the board page and the board API both list it: each work order in a
    plain shape (the board's unit and site names) with its due date in words on its site's today (``due_words``,
    :meth:`WorkOrder.due_words_on`)."""
    return [
        {
            **shapes.work_order_shape(wo, fields=OVERDUE_AWAITING_FIELDS, unit=shapes.unit_ref, site=shapes.site_ref),
            "due_words": wo.due_words_on(wo.site_today),
        }
        for wo in overdue_awaiting_approval(organisation=organisation)
    ]


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
