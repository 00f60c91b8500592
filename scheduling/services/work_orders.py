"""Work-order life cycle: transitions, assignment, planning the day.

Every change goes through one function here, bumps ``version`` and writes the
audit trail in the same transaction; e-mails go out after commit.
"""

from __future__ import annotations

import copy
import datetime as dt
from typing import Any

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from accounts.changes import work_changed
from accounts.clock import day_text, local_date_of
from accounts.inputs import PLAN_YEARS_AHEAD, latest_plan_date
from accounts.models import Membership, Role, User
from accounts.services import audit_record
from inventory.today import today_for

from ..models import WorkOrder
from ..signals import work_order_moved

State = WorkOrder.State


class WorkOrderConflict(Exception):
    """The work order changed since the caller read it (``expected_version`` is stale)."""

    def __init__(self, *, work_order: WorkOrder, expected_version: int) -> None:
        self.work_order = work_order
        self.expected_version = expected_version
        self.current_version = work_order.version
        super().__init__(
            f"work order {work_order.public_id} is at version {work_order.version}, not {expected_version}: "
            "someone changed it meanwhile; reload and try again"
        )


class WorkOrderTransitionError(ValidationError):
    """A move the transition table does not allow."""

    def __init__(self, *, work_order: WorkOrder, to_state: str) -> None:
        # Said with the states' names, never their codes.
        names = dict(State.choices)
        allowed = sorted(names[s].lower() for s in WorkOrder.TRANSITIONS.get(work_order.state, ()))
        super().__init__(
            {
                "to_state": [
                    f"a work order cannot move from {names.get(work_order.state, work_order.state).lower()} to "
                    f"{names.get(to_state, to_state).lower()}; allowed: "
                    + (", ".join(allowed) if allowed else "none (final state)")
                ]
            }
        )


def work_order_locked(work_order: WorkOrder, expected_version: int | None) -> WorkOrder:
    fresh = (
        WorkOrder.objects.select_for_update(of=("self",)).select_related("ahu__building__site").get(pk=work_order.pk)
    )
    if expected_version is not None and fresh.version != expected_version:
        raise WorkOrderConflict(work_order=fresh, expected_version=expected_version)
    return fresh


def work_order_save(
    wo: WorkOrder,
    fields: list[str],
    *,
    by: User | None,
    action: str,
    changes: dict[str, Any],
    write: bool = True,
    assignee_before: int | None = None,
) -> WorkOrder:
    """One move's version, audit event and answer versions; ``write=False`` leaves the row's UPDATE to a later
    move of the same call (``work_order_complete_locked``), which writes every field the moves changed.

    ``assignee_before``: the assignee's id as the row was locked, when this move changes the assignee (assigned
    to another, unassigned): their today loses the work order, as the new assignee's gains it."""
    wo.version += 1
    if write:
        wo.save(update_fields=[*fields, "version", "updated_at"])
    audit_record(actor=by, obj=wo, action=action, changes=changes, organisation_id=wo.organisation_id)
    # The board shows this work order, and the today of whoever it is (or was) assigned to.
    work_changed(organisation_id=wo.organisation_id, people=[assignee_before, wo.assignee_id])
    return wo


def _move(wo: WorkOrder, to_state: str) -> None:
    if to_state not in State.values:
        raise ValidationError({"to_state": [f"state {to_state!r} is not one of {', '.join(State.values)}"]})
    if not wo.can_move_to(to_state):
        raise WorkOrderTransitionError(work_order=wo, to_state=to_state)
    if wo.approval in {WorkOrder.Approval.PENDING, WorkOrder.Approval.REJECTED} and to_state != State.CANCELLED:
        raise ValidationError(
            {"to_state": [f"corrective work {wo.get_approval_display().lower()} can only be cancelled"]}
        )


def priority_grace_days(priority: str) -> int:
    """The grace days after its due date of work outside the plan (corrective work, call-outs), by priority."""
    return {"urgent": 1, "high": 3, "normal": 14, "low": 30}[priority]


def no_technician(value: object) -> str:
    """The one refusal for an assignee who is not a technician of the organisation: a username nobody has
    and a person of another organisation get the same words, so it never tells which usernames exist."""
    return f"no technician {str(value)!r} in your organisation you can assign"


def assignee_check(wo: WorkOrder, assignee: User | None) -> None:
    if assignee is None:
        raise ValidationError({"assignee": ["an assigned work order needs an assignee"]})
    # A deactivated person (accounts.services.person_deactivate) takes no new work.
    if not Membership.objects.filter(
        user=assignee, user__is_active=True, organisation_id=wo.organisation_id, role=Role.TECHNICIAN
    ).exists():
        raise ValidationError({"assignee": [no_technician(assignee.username)]})


@transaction.atomic
def work_order_transition(
    *,
    work_order: WorkOrder,
    to_state: str,
    by: User | None,
    expected_version: int | None = None,
    reason: str = "",
    at: dt.datetime | None = None,
) -> WorkOrder:
    """Move a work order along the table in ``WorkOrder.TRANSITIONS``; refuse any other move."""
    wo = work_order_locked(work_order, expected_version)
    _transition(wo, to_state=to_state, by=by, reason=reason, at=at)
    work_order_copy_back(work_order, wo)
    return wo


def _transition(
    wo: WorkOrder,
    *,
    to_state: str,
    by: User | None,
    reason: str = "",
    at: dt.datetime | None = None,
    fields: list[str] | None = None,
    write: bool = True,
) -> list[str]:
    """The move of ``work_order_transition`` on a row the caller has locked (``work_order_locked``) in its transaction.

    ``fields``: those an earlier move of the same call changed and left unwritten (``write=False``); the
    fields changed so far are returned. Receivers of ``work_order_moved`` act on completion and rework only,
    so an unwritten intermediate move (assigned → in progress, then completed) is written with the last."""
    _move(wo, to_state)
    now = at or timezone.now()
    before, assignee_before = wo.state, wo.assignee_id
    fields = [*(fields or []), "state"]
    wo.state = to_state
    if to_state == State.ASSIGNED:
        assignee_check(wo, wo.assignee)
    elif to_state == State.PLANNED:
        wo.assignee = None
        fields.append("assignee")
    elif to_state == State.IN_PROGRESS and wo.started_at is None:
        wo.started_at = now
        fields.append("started_at")
    elif to_state == State.COMPLETED:
        wo.completed_at = now
        fields.append("completed_at")
        wo.tasks.update(completed_at=now)
    elif to_state == State.VERIFIED:
        wo.verified_at = now
        fields.append("verified_at")
    elif to_state == State.CANCELLED:
        wo.cancel_reason = reason[:300]
        fields.append("cancel_reason")
    if before == State.COMPLETED and to_state == State.IN_PROGRESS:
        # Sent back for rework: the tasks are not done any more.
        wo.completed_at = None
        fields.append("completed_at")
        wo.tasks.update(completed_at=None)
    fields = list(dict.fromkeys(fields))
    work_order_save(
        wo,
        fields,
        by=by,
        action="transition",
        changes={"from": before, "to": to_state, "reason": reason},
        write=write,
        assignee_before=assignee_before,
    )
    work_order_moved.send(sender=WorkOrder, work_order=wo, before=before, by=by)
    return fields


def work_order_copy_back(target: WorkOrder, source: WorkOrder) -> None:
    """Keep the caller's instance current, so chained calls with its version work."""
    for f in WorkOrder._meta.concrete_fields:
        setattr(target, f.attname, getattr(source, f.attname))


@transaction.atomic
def work_order_assign(
    *, work_order: WorkOrder, assignee: User, by: User | None, expected_version: int | None = None
) -> WorkOrder:
    """Assign or reassign to a technician of the organisation."""
    wo = work_order_locked(work_order, expected_version)
    work_order_assign_locked(work_order=wo, assignee=assignee, by=by)
    work_order_copy_back(work_order, wo)
    return wo


def work_order_assign_locked(*, work_order: WorkOrder, assignee: User, by: User | None) -> None:
    """``work_order_assign`` on a row the caller has locked (``work_order_locked``) in its open transaction:
    every refusal is raised before the row is written."""
    wo = work_order
    if wo.state not in WorkOrder.OPEN_STATES:
        raise WorkOrderTransitionError(work_order=wo, to_state=State.ASSIGNED)
    if wo.approval in {WorkOrder.Approval.PENDING, WorkOrder.Approval.REJECTED}:
        raise ValidationError({"assignee": ["corrective work must be approved before it is assigned"]})
    assignee_check(wo, assignee)
    before = wo.assignee_id
    wo.assignee = assignee
    wo.state = State.ASSIGNED  # a reassigned visit in progress starts again with the new technician
    work_order_save(
        wo,
        ["assignee", "state"],
        by=by,
        action="assign",
        changes={"from": before, "to": assignee.pk},
        assignee_before=before,
    )


def work_order_plan_words(*, work_order: WorkOrder, today: dt.date) -> str:
    """How the planned day reads in a message: "for 1 Dec 2036, after its due date 1 Dec 2026" (the warning when
    the plan is later than the day the work turns overdue; the plan is kept; the date named is the due date, the
    day the work was meant to be done by), "" without a plan."""
    day = work_order.scheduled_for
    if day is None:
        return ""
    words = f"for {day_text(day, today=today)}"
    overdue = work_order.overdue_on
    if overdue is not None and day > overdue:
        words += f", after its due date {local_date_of(work_order.due_date)}"
    return words


def plan_day_refusal(*, day: dt.date, today: dt.date, site_name: str) -> str:
    """Why a visit cannot be planned for ``day`` at a site whose today is ``today`` (a day before it, or past the
    plan window), "" when it can: the schedule service's refusal, and the board's words beside a row's Day."""
    latest = latest_plan_date(today=today)
    if day > latest:
        return (
            f"Planned day {day.isoformat()} is more than {PLAN_YEARS_AHEAD} years ahead; "
            f"allowed: {today.isoformat()} to {latest.isoformat()}"
        )
    if day < today:
        return f"scheduled day {day.isoformat()} is in the past at {site_name}; allowed: {today.isoformat()} or later"
    return ""


@transaction.atomic
def work_order_schedule(
    *, work_order: WorkOrder, day: dt.date | None, by: User | None, expected_version: int | None = None
) -> WorkOrder:
    """Plan the visit for ``day`` (the site's local date), or take the plan off with ``None``.

    Only open work can be planned, and not for a day before the site's today.
    Planning it for the day it already has changes nothing (no new version).
    """
    wo = work_order_locked(work_order, expected_version)
    work_order_schedule_locked(work_order=wo, day=day, by=by)
    work_order_copy_back(work_order, wo)
    return wo


def work_order_schedule_locked(*, work_order: WorkOrder, day: dt.date | None, by: User | None) -> None:
    """``work_order_schedule`` on a row the caller has locked (``work_order_locked``, its unit's site read with it)
    in its open transaction: every refusal is raised before the row is written."""
    wo = work_order
    if wo.state not in WorkOrder.OPEN_STATES:
        raise ValidationError(
            {
                "scheduled_for": [
                    f"work order is {wo.state!r}: only open work ("
                    + ", ".join(sorted(WorkOrder.OPEN_STATES))
                    + ") can be planned for a day"
                ]
            }
        )
    if day is not None:
        site = wo.ahu.building.site
        refusal = plan_day_refusal(day=day, today=today_for(site), site_name=site.name)
        if refusal:
            raise ValidationError({"scheduled_for": [refusal]})
    if day == wo.scheduled_for:
        return
    before = wo.scheduled_for
    wo.scheduled_for = day
    work_order_save(
        wo,
        ["scheduled_for"],
        by=by,
        action="schedule",
        changes={"from": before.isoformat() if before else None, "to": day.isoformat() if day else None},
    )


def work_order_unassign(*, work_order: WorkOrder, by: User | None, expected_version: int | None = None) -> WorkOrder:
    return work_order_transition(
        work_order=work_order, to_state=State.PLANNED, by=by, expected_version=expected_version
    )


def work_order_start(
    *, work_order: WorkOrder, by: User | None, expected_version: int | None = None, at: dt.datetime | None = None
) -> WorkOrder:
    return work_order_transition(
        work_order=work_order, to_state=State.IN_PROGRESS, by=by, expected_version=expected_version, at=at
    )


@transaction.atomic
def work_order_complete(
    *,
    work_order: WorkOrder,
    by: User | None,
    completed_at: dt.datetime | None = None,
    expected_version: int | None = None,
) -> WorkOrder:
    """Complete the visit; an assigned visit is started first (a phone may send the finished form at once)."""
    wo = work_order_locked(work_order, expected_version)  # both moves on this one locked row (no second read)
    work_order_complete_locked(work_order=wo, by=by, completed_at=completed_at)
    work_order_copy_back(work_order, wo)
    return wo


def work_order_complete_locked(
    *, work_order: WorkOrder, by: User | None, completed_at: dt.datetime | None = None
) -> None:
    """``work_order_complete`` on a row the caller has already locked (``select_for_update``) in its open
    transaction, without a savepoint of its own: every move is judged before the first is written, so a
    refusal (``ValidationError``) leaves the row and the caller's transaction as they were."""
    if not transaction.get_connection().in_atomic_block:
        raise RuntimeError("work_order_complete_locked() needs the caller's transaction holding the row lock")
    moves = [State.IN_PROGRESS, State.COMPLETED] if work_order.state == State.ASSIGNED else [State.COMPLETED]
    probe = copy.copy(work_order)
    for to_state in moves:
        _move(probe, to_state)
        probe.state = to_state
    fields: list[str] = []
    for n, to_state in enumerate(moves, start=1):  # one UPDATE of the row for both moves
        fields = _transition(
            work_order, to_state=to_state, by=by, at=completed_at, fields=fields, write=n == len(moves)
        )


def work_order_verify(*, work_order: WorkOrder, by: User | None, expected_version: int | None = None) -> WorkOrder:
    return work_order_transition(
        work_order=work_order, to_state=State.VERIFIED, by=by, expected_version=expected_version
    )


def work_order_cancel(
    *, work_order: WorkOrder, by: User | None, reason: str, expected_version: int | None = None
) -> WorkOrder:
    if not reason.strip():
        raise ValidationError({"reason": ["a cancelled work order needs a reason"]})
    return work_order_transition(
        work_order=work_order, to_state=State.CANCELLED, by=by, expected_version=expected_version, reason=reason
    )
