"""Assign-and-plan: a technician and the day of the visit, saved together or not at all.

The one path of the board page's row form and the work-order API's assign route: both warn before a
technician's day passes their capacity (tasks plus travel between the day's sites), before someone without a
skill the work needs is given it, and before the work is planned after its due date, and save nothing until
the sender confirms (``AssignmentCheck.needs_confirm``; the New work page reads the same check).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Collection

from django.db import transaction

from accounts.inputs import date_problem
from accounts.models import User
from inventory.today import today_for

from ..models import WorkOrder
from ..selectors import AssignmentCheck, assignment_check, offered_day
from .work_orders import (
    work_order_assign_locked,
    work_order_copy_back,
    work_order_locked,
    work_order_schedule_locked,
)


class AssignmentWarnings(Exception):
    """The assignment would take the technician's day past their capacity, give the work to someone without a
    skill it needs, or plan it after its due date (``check.warnings()``); nothing is saved until confirmed."""

    def __init__(self, check: AssignmentCheck) -> None:
        self.check = check
        super().__init__(" ".join(check.warnings()))


def work_order_assign_and_plan(
    *,
    work_order: WorkOrder,
    assignee: User,
    by: User | None,
    expected_version: int,
    plan: bool = False,
    day: dt.date | None = None,
    confirm: bool = False,
    seen: Collection[str] = (),
) -> AssignmentCheck | None:
    """Assign ``work_order`` to ``assignee`` and, with ``plan``, plan it for ``day`` (``None`` takes the plan
    off), in one transaction: a refused day leaves the assignment unsaved too.

    Before anything is written, the technician's day the work would count on (the day asked for, the day the
    board offers when the day is sent empty (``offered_day``), else its plan, else its due date) is checked
    (``assignment_check``): over their capacity, a skill they lack or a day after the due date,
    not confirmed, raises :class:`AssignmentWarnings` with the check. ``seen`` confirms only
    the warnings of those codes (``AssignmentCheck.codes``; already read, as the board's "Assign to ... instead"
    sends them): any other still raises. A stale
    ``expected_version``, a day before the site's today or outside the plan window is not checked: the
    services refuse those in their own words. Returns the check made (None when none was)."""
    check = None
    site_today = today_for(work_order.ahu.building.site)
    # A Day sent empty: the day the board offers (never a due date already past); no Day sent: its plan, else due.
    offered = offered_day(
        scheduled_for=None, due_date=work_order.due_date, today=site_today, priority=work_order.priority
    )
    on_day = (day or offered) if plan else (work_order.scheduled_for or work_order.due_date)
    refused_day = plan and day is not None and day < site_today  # the schedule service refuses it in its words
    if (
        expected_version == work_order.version
        and not refused_day
        and date_problem(on_day, label="day", today=site_today) is None
    ):
        check = assignment_check(work_order=work_order, technician=assignee, day=on_day)
        if check.needs_confirm and not confirm and not set(check.codes()) <= set(seen):
            raise AssignmentWarnings(check)
    with transaction.atomic():
        # One locked read of the row for both changes; the caller's instance is brought up to date only once both
        # are saved (a refused day leaves it, as the database, unassigned).
        wo = work_order_locked(work_order, expected_version)
        work_order_assign_locked(work_order=wo, assignee=assignee, by=by)
        if plan:
            work_order_schedule_locked(work_order=wo, day=day, by=by)
        work_order_copy_back(work_order, wo)
    return check
