"""Work-order life cycle: transitions, assignment, corrective proposals, escalation, calendar feeds.

Every change goes through one function here, bumps ``version`` and writes the
audit trail in the same transaction; e-mails go out after commit.
"""

from __future__ import annotations

import copy
import datetime as dt
import uuid
import zoneinfo
from collections.abc import Sequence
from dataclasses import dataclass, field

from django.conf import settings
from django.core.exceptions import ValidationError
from django.core.mail import send_mail
from django.db import transaction
from django.db.models import Q
from django.utils import timezone

from accounts.changes import organisation_changed
from accounts.clock import day_text, local_date_of, local_time_text
from accounts.inputs import PLAN_YEARS_AHEAD, FieldErrors, check_text, latest_plan_date, text_problem
from accounts.models import Membership, Role
from accounts.selectors import MANAGING_ROLES
from accounts.services import audit_record
from engineering.sun import sunset_utc
from inventory.models import AHU, Component
from inventory.today import today_for

from ..models import CalendarFeed, TaskCategory, TaskDefinition, WorkOrder, WorkOrderTask, overdue_day
from ..selectors import effective_tasks
from ..signals import work_order_moved
from ..targets import task_targets
from ..titles import TITLE_MAX, title_fit

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


def _locked(work_order: WorkOrder, expected_version: int | None) -> WorkOrder:
    fresh = (
        WorkOrder.objects.select_for_update(of=("self",)).select_related("ahu__building__site").get(pk=work_order.pk)
    )
    if expected_version is not None and fresh.version != expected_version:
        raise WorkOrderConflict(work_order=fresh, expected_version=expected_version)
    return fresh


def _save(wo: WorkOrder, fields: list[str], *, by, action: str, changes: dict, write: bool = True) -> WorkOrder:
    """One move's version, audit event and answer version; ``write=False`` leaves the row's UPDATE to a later
    move of the same call (``work_order_complete_locked``), which writes every field the moves changed."""
    wo.version += 1
    if write:
        wo.save(update_fields=[*fields, "version", "updated_at"])
    audit_record(actor=by, obj=wo, action=action, changes=changes, organisation_id=wo.organisation_id)
    organisation_changed(organisation_id=wo.organisation_id)  # today and the board show this work order
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


def no_technician(value: object) -> str:
    """The one refusal for an assignee who is not a technician of the organisation: a username nobody has
    and a person of another organisation get the same words, so it never tells which usernames exist."""
    return f"no technician {str(value)!r} in your organisation you can assign"


def _check_assignee(wo: WorkOrder, assignee) -> None:
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
    by,
    expected_version: int | None = None,
    reason: str = "",
    at: dt.datetime | None = None,
) -> WorkOrder:
    """Move a work order along the table in ``WorkOrder.TRANSITIONS``; refuse any other move."""
    wo = _locked(work_order, expected_version)
    _transition(wo, to_state=to_state, by=by, reason=reason, at=at)
    _copy_back(work_order, wo)
    return wo


def _transition(
    wo: WorkOrder,
    *,
    to_state: str,
    by,
    reason: str = "",
    at: dt.datetime | None = None,
    fields: list[str] | None = None,
    write: bool = True,
) -> list[str]:
    """The move of ``work_order_transition`` on a row the caller has locked (``_locked``) in its transaction.

    ``fields``: those an earlier move of the same call changed and left unwritten (``write=False``); the
    fields changed so far are returned. Receivers of ``work_order_moved`` act on completion and rework only,
    so an unwritten intermediate move (assigned → in progress, then completed) is written with the last."""
    _move(wo, to_state)
    now = at or timezone.now()
    before = wo.state
    fields = [*(fields or []), "state"]
    wo.state = to_state
    if to_state == State.ASSIGNED:
        _check_assignee(wo, wo.assignee)
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
    _save(
        wo, fields, by=by, action="transition", changes={"from": before, "to": to_state, "reason": reason}, write=write
    )
    work_order_moved.send(sender=WorkOrder, work_order=wo, before=before, by=by)
    return fields


def _copy_back(target: WorkOrder, source: WorkOrder) -> None:
    """Keep the caller's instance current, so chained calls with its version work."""
    for f in WorkOrder._meta.concrete_fields:
        setattr(target, f.attname, getattr(source, f.attname))


@transaction.atomic
def work_order_assign(*, work_order: WorkOrder, assignee, by, expected_version: int | None = None) -> WorkOrder:
    """Assign or reassign to a technician of the organisation."""
    wo = _locked(work_order, expected_version)
    if wo.state not in WorkOrder.OPEN_STATES:
        raise WorkOrderTransitionError(work_order=wo, to_state=State.ASSIGNED)
    if wo.approval in {WorkOrder.Approval.PENDING, WorkOrder.Approval.REJECTED}:
        raise ValidationError({"assignee": ["corrective work must be approved before it is assigned"]})
    _check_assignee(wo, assignee)
    before = wo.assignee_id
    wo.assignee = assignee
    wo.state = State.ASSIGNED  # a reassigned visit in progress starts again with the new technician
    _save(wo, ["assignee", "state"], by=by, action="assign", changes={"from": before, "to": assignee.pk})
    _copy_back(work_order, wo)
    return wo


def work_order_plan_words(*, work_order: WorkOrder, today: dt.date) -> str:
    """How the planned day reads in a message: "for 1 Dec 2036, after its overdue date 3 Dec 2026" (the warning
    when the plan is later than the day the work turns overdue; the plan is kept), "" without a plan."""
    day = work_order.scheduled_for
    if day is None:
        return ""
    words = f"for {day_text(day, today=today)}"
    overdue = work_order.overdue_on
    if overdue is not None and day > overdue:
        words += f", after its overdue date {local_date_of(overdue)}"
    return words


@transaction.atomic
def work_order_schedule(
    *, work_order: WorkOrder, day: dt.date | None, by, expected_version: int | None = None
) -> WorkOrder:
    """Plan the visit for ``day`` (the site's local date), or take the plan off with ``None``.

    Only open work can be planned, and not for a day before the site's today.
    Planning it for the day it already has changes nothing (no new version).
    """
    wo = _locked(work_order, expected_version)
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
        today = today_for(wo.ahu.building.site)
        latest = latest_plan_date(today=today)
        if day > latest:
            raise ValidationError(
                {
                    "scheduled_for": [
                        f"Planned day {day.isoformat()} is more than {PLAN_YEARS_AHEAD} years ahead; "
                        f"allowed: {today.isoformat()} to {latest.isoformat()}"
                    ]
                }
            )
        if day < today:
            raise ValidationError(
                {
                    "scheduled_for": [
                        f"scheduled day {day.isoformat()} is in the past at {wo.ahu.building.site.name}; "
                        f"allowed: {today.isoformat()} or later"
                    ]
                }
            )
    if day == wo.scheduled_for:
        _copy_back(work_order, wo)
        return wo
    before = wo.scheduled_for
    wo.scheduled_for = day
    _save(
        wo,
        ["scheduled_for"],
        by=by,
        action="schedule",
        changes={"from": before.isoformat() if before else None, "to": day.isoformat() if day else None},
    )
    _copy_back(work_order, wo)
    return wo


def work_order_unassign(*, work_order: WorkOrder, by, expected_version: int | None = None) -> WorkOrder:
    return work_order_transition(
        work_order=work_order, to_state=State.PLANNED, by=by, expected_version=expected_version
    )


def work_order_start(
    *, work_order: WorkOrder, by, expected_version: int | None = None, at: dt.datetime | None = None
) -> WorkOrder:
    return work_order_transition(
        work_order=work_order, to_state=State.IN_PROGRESS, by=by, expected_version=expected_version, at=at
    )


@transaction.atomic
def work_order_complete(
    *, work_order: WorkOrder, by, completed_at: dt.datetime | None = None, expected_version: int | None = None
) -> WorkOrder:
    """Complete the visit; an assigned visit is started first (a phone may send the finished form at once)."""
    wo = _locked(work_order, expected_version)  # both moves on this one locked row (no second read)
    work_order_complete_locked(work_order=wo, by=by, completed_at=completed_at)
    _copy_back(work_order, wo)
    return wo


def work_order_complete_locked(*, work_order: WorkOrder, by, completed_at: dt.datetime | None = None) -> None:
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


def work_order_verify(*, work_order: WorkOrder, by, expected_version: int | None = None) -> WorkOrder:
    return work_order_transition(
        work_order=work_order, to_state=State.VERIFIED, by=by, expected_version=expected_version
    )


def work_order_cancel(*, work_order: WorkOrder, by, reason: str, expected_version: int | None = None) -> WorkOrder:
    if not reason.strip():
        raise ValidationError({"reason": ["a cancelled work order needs a reason"]})
    return work_order_transition(
        work_order=work_order, to_state=State.CANCELLED, by=by, expected_version=expected_version, reason=reason
    )


def _supervisor_emails(organisation_id: int) -> list[str]:
    return [
        e
        for e in Membership.objects.filter(organisation_id=organisation_id, role__in=MANAGING_ROLES).values_list(
            "user__email", flat=True
        )
        if e
    ]


def _email_supervisors_on_commit(organisation_id: int, subject: str, body) -> None:
    """Send once the transaction commits; ``body`` may be a function, then written at that moment (so it tells
    what is true when the e-mail leaves, e.g. work assigned later in the same transaction)."""

    def send() -> None:
        to = _supervisor_emails(organisation_id)
        if to:
            send_mail(subject, body() if callable(body) else body, settings.DEFAULT_FROM_EMAIL, to)

    transaction.on_commit(send)


@transaction.atomic
def corrective_work_order_propose(
    *,
    ahu: AHU,
    title: str,
    reason: str,
    condition_code: str = "",
    priority: str = WorkOrder.Priority.NORMAL,
    component: Component | None = None,
    source_ref: str = "",
    by=None,
    approved: bool = False,
    observed_on: dt.date | None = None,
) -> WorkOrder:
    """Corrective work raised by a finding or a person.

    Due on the day the fault was seen (``observed_on``, the visit's day on the site's clock; a form sent
    days later from a phone that was offline does not postpone the repair), else today; its grace follows
    its priority. Work awaiting approval that is approved after that day becomes due on the approval day
    (:func:`corrective_work_order_approve`): nobody may start it before, so it is not late the moment it is
    approved; its first-seen day stays in its reason.

    Awaits a supervisor's approval unless ``approved``. With a ``condition_code``
    the library tasks raised by that condition (e.g. ``filter_loaded`` →
    ``filter_replace``) are put on the work order, due now; an open corrective
    work order for the same unit, component and condition is returned instead
    of a second one.
    """
    if priority not in WorkOrder.Priority.values:
        raise ValidationError(
            {"priority": [f"priority={priority!r} is not one of {', '.join(WorkOrder.Priority.values)}"]}
        )
    if component is not None and component.ahu_id != ahu.pk:
        raise ValidationError({"component": [f"component {component.pk} belongs to another unit than {ahu.tag}"]})
    site = ahu.building.site
    organisation = site.organisation
    if condition_code:
        existing = (
            WorkOrder.objects.select_for_update()
            .filter(
                ahu=ahu,
                component=component,
                condition_code=condition_code,
                kind=WorkOrder.Kind.CORRECTIVE,
                state__in=WorkOrder.OPEN_STATES,
            )
            .exclude(approval=WorkOrder.Approval.REJECTED)
            .first()
        )
        if existing is not None:
            return existing
    today = today_for(site)
    due = min(observed_on, today) if observed_on is not None else today
    wo = WorkOrder(
        organisation=organisation,
        ahu=ahu,
        component=component,
        kind=WorkOrder.Kind.CORRECTIVE,
        priority=priority,
        title=title_fit(title),
        reason=reason,
        condition_code=condition_code,
        source_ref=source_ref[:200],
        due_date=due,
        overdue_on=overdue_day(due, _grace(priority)),
        approval=WorkOrder.Approval.APPROVED if approved else WorkOrder.Approval.PENDING,
    )
    wo.full_clean()
    wo.save()
    if condition_code:
        rows = []
        components = list(ahu.components.all()) if component is None else [component]
        for task in effective_tasks(organisation=organisation).values():
            if task.condition_code != condition_code:
                continue
            for target in task_targets(task=task, ahu=ahu, components=components):
                rows.append(
                    WorkOrderTask(
                        work_order=wo,
                        task=task,
                        task_code=task.code,
                        ahu=ahu,
                        component=target,
                        component_key=target.pk if target else 0,
                        due_date=due,
                        occurrence_key=f"cond:{condition_code}:{wo.public_id.hex[:12]}",
                    )
                )
        WorkOrderTask.objects.bulk_create(rows)
    audit_record(
        actor=by,
        obj=wo,
        action="corrective_propose",
        changes={
            "condition_code": condition_code,
            "priority": priority,
            "approved": approved,
            "source_ref": source_ref,
        },
        organisation=organisation,
    )
    organisation_changed(organisation_id=organisation.pk)
    if approved and priority == WorkOrder.Priority.URGENT:
        _email_supervisors_on_commit(
            organisation.pk,
            f"Urgent corrective work: {ahu.tag} at {site.name}",
            lambda: f"{title}\n\n{reason}\n\nUnit {ahu.display_name}, {site.name}. {_who_now(wo)}",
        )
    return wo


def _who_now(wo: WorkOrder) -> str:
    """Where the work stands as the e-mail leaves: assigned to whom and for which day, or still to assign."""
    wo = WorkOrder.objects.select_related("assignee").get(pk=wo.pk)
    if wo.assignee_id is None:
        return f"Not assigned yet: due {wo.due_date:%-d %b %Y}; assign it on the board."
    day = wo.scheduled_for or wo.due_date
    return f"Assigned to {wo.assignee} for {day:%-d %b %Y}."


def _grace(priority: str) -> int:
    return {"urgent": 1, "high": 3, "normal": 14, "low": 30}[priority]


def _refuse_decision_on_closed(wo: WorkOrder, decision: str) -> None:
    """Corrective work no longer open (cancelled, e.g. its finding closed by a later good visit, or completed)
    is not approved or rejected: the decision would change nothing and would read as if it had."""
    if wo.state in WorkOrder.OPEN_STATES:
        return
    why = f": {wo.cancel_reason}" if wo.state == State.CANCELLED and wo.cancel_reason else ""
    raise ValidationError(
        {
            "approval": [
                f"this corrective work is {wo.get_state_display().lower()}{why}; "
                f"only open corrective work can be {decision}"
            ]
        }
    )


@transaction.atomic
def corrective_work_order_approve(*, work_order: WorkOrder, by, expected_version: int | None = None) -> WorkOrder:
    wo = _locked(work_order, expected_version)
    _refuse_decision_on_closed(wo, "approved")
    if wo.approval != WorkOrder.Approval.PENDING:
        raise ValidationError(
            {
                "approval": [
                    f"only corrective work awaiting approval can be approved "
                    f"(approval here: {wo.get_approval_display().lower()})"
                ]
            }
        )
    wo.approval = WorkOrder.Approval.APPROVED
    changes: dict[str, object] = {"approval": "approved"}
    fields = ["approval"]
    today = today_for(wo.ahu.building.site)
    if wo.due_date < today:
        # Due from the approval day with its priority's grace (see corrective_work_order_propose).
        changes["due_date"] = [wo.due_date.isoformat(), today.isoformat()]
        wo.due_date, wo.overdue_on = today, overdue_day(today, _grace(wo.priority))
        fields += ["due_date", "overdue_on"]
        wo.tasks.filter(due_date__lt=today).update(due_date=today)
    _save(wo, fields, by=by, action="corrective_approve", changes=changes)
    if wo.priority == WorkOrder.Priority.URGENT:
        _email_supervisors_on_commit(
            wo.organisation_id, f"Urgent corrective work approved: {wo.ahu.tag}", f"{wo.title}\n\n{wo.reason}"
        )
    _copy_back(work_order, wo)
    return wo


REJECT_REASON_MAX = 300  # WorkOrder.cancel_reason holds it


def rejection_reason_check(*, reason: object) -> str:
    """The reason a supervisor gives for rejecting corrective work, trimmed; refused when blank or too long."""
    text = reason.strip() if isinstance(reason, str) else ""
    if not text:
        raise ValidationError(
            {"reason": ["a reason is needed to reject corrective work: say why the work is not needed"]}
        )
    if len(text) > REJECT_REASON_MAX:
        raise ValidationError(
            {"reason": [f"the reason is {len(text)} characters long; at most {REJECT_REASON_MAX} are allowed"]}
        )
    problem = text_problem(text, label="Reason", max_length=REJECT_REASON_MAX, lines=True)
    if problem:
        raise ValidationError({"reason": [problem]})
    return text


@transaction.atomic
def corrective_work_order_reject(
    *, work_order: WorkOrder, by, reason: str, expected_version: int | None = None
) -> WorkOrder:
    """Reject proposed corrective work with a reason (kept on the work order and in the audit trail)."""
    text = rejection_reason_check(reason=reason)
    wo = _locked(work_order, expected_version)
    _refuse_decision_on_closed(wo, "rejected")
    if wo.approval != WorkOrder.Approval.PENDING:
        raise ValidationError(
            {
                "approval": [
                    f"only corrective work awaiting approval can be rejected "
                    f"(approval here: {wo.get_approval_display().lower()})"
                ]
            }
        )
    wo.approval = WorkOrder.Approval.REJECTED
    wo.state = State.CANCELLED
    wo.cancel_reason = text
    _save(wo, ["approval", "state", "cancel_reason"], by=by, action="corrective_reject", changes={"reason": text})
    _copy_back(work_order, wo)
    return wo


@transaction.atomic
def overdue_escalation_send(*, organisation, today: dt.date, repeat_days: int = 7) -> int:
    """E-mail the supervisors the open work that is overdue; each order at most once every ``repeat_days``."""
    qs = (
        WorkOrder.objects.select_for_update(of=("self",))
        .filter(organisation=organisation, state__in=WorkOrder.OPEN_STATES, overdue_on__lte=today)
        .exclude(escalated_on__gt=today - dt.timedelta(days=repeat_days))
        .select_related("ahu__building__site", "assignee")
        .order_by("due_date", "id")
    )
    orders = list(qs)
    if not orders:
        return 0
    lines = [
        f"- {wo.ahu.tag} at {wo.ahu.building.site.name}: {wo.title}, due {wo.due_date}"
        f" ({(today - wo.due_date).days} days ago), {wo.assignee or 'not assigned'}"
        for wo in orders
    ]
    WorkOrder.objects.filter(pk__in=[wo.pk for wo in orders]).update(escalated_on=today)
    organisation_changed(organisation_id=organisation.pk)
    _email_supervisors_on_commit(
        organisation.pk,
        f"{len(orders)} overdue work order{'' if len(orders) == 1 else 's'}",
        "Overdue maintenance:\n\n" + "\n".join(lines),
    )
    return len(orders)


@transaction.atomic
def calendar_feed_issue(*, user) -> CalendarFeed:
    """A new secret feed URL for the user; older ones are revoked."""
    CalendarFeed.objects.filter(user=user, revoked_at__isnull=True).update(revoked_at=timezone.now())
    feed = CalendarFeed.objects.create(user=user)
    audit_record(actor=user, obj=feed, action="calendar_feed_issued")  # never the token: it is the key
    return feed


def calendar_feeds_revoke_for_password(sender=None, *, user, **kwargs) -> None:
    """accounts.signals.password_changed: a new password ends the person's secret calendar URLs."""
    CalendarFeed.objects.filter(user=user, revoked_at__isnull=True).update(revoked_at=timezone.now())


@transaction.atomic
def calendar_feed_revoke(*, feed: CalendarFeed, by=None) -> None:
    if feed.revoked_at is None:
        feed.revoked_at = timezone.now()
        feed.save(update_fields=["revoked_at"])
        audit_record(actor=by, obj=feed, action="calendar_feed_revoked")


# ---------------------------------------------------------------------------
# Work beyond the plan: call-outs, ad-hoc work, work from a finding, the frost check
# ---------------------------------------------------------------------------
ONE_OFF_PREFIX = "once-"  # code of a task written for one work order only (never in the organisation's task set)
ONE_OFF_MINUTES = (1, 960)  # a task of one visit: one minute to two working days
DESCRIPTION_MAX = 5000
MADE_KINDS = (WorkOrder.Kind.CALL_OUT, WorkOrder.Kind.AD_HOC, WorkOrder.Kind.CORRECTIVE)
ONE_OFF_SAFETY = (
    "Lock out and tag out the fan and any electric heater before opening the unit; hot coils and pipework can "
    "burn. Local codes, the manufacturer's instructions and licensed practice take precedence."
)


@dataclass(frozen=True)
class OneOffTask:
    """A task said in words on the phone: what to do, how long it takes and the skill it needs."""

    name: str
    minutes: int
    skill: str


def _local_text(when: dt.datetime, site) -> str:
    return local_time_text(when, zone=site.time_zone)


def work_order_due_problem(*, due_by: dt.datetime, site, now: dt.datetime) -> str | None:
    """What is wrong with a due time for work at ``site`` (in the past there, beyond the plan window), or None."""
    if due_by.tzinfo is None:
        return f"Due: {due_by.isoformat(timespec='minutes')} has no time zone; allowed: a time on the site's clock"
    if due_by <= now:
        return (
            f"Due: {_local_text(due_by, site)} is in the past at {site.name} (it is {_local_text(now, site)} there); "
            "allowed: a time later than now"
        )
    today = today_for(site, now=now)
    latest = latest_plan_date(today=today)
    if due_by.astimezone(zoneinfo.ZoneInfo(site.time_zone)).date() > latest:
        return (
            f"Due: {_local_text(due_by, site)} is more than {PLAN_YEARS_AHEAD} years ahead; "
            f"allowed: up to {local_date_of(latest)}"
        )
    return None


def made_work_fields_check(
    *, errors: FieldErrors, ahu, kind, title, description, priority, due_by, now, component=None
) -> tuple[str | None, str | None]:
    """The checks of :func:`work_order_create` on the words, kind, priority, unit and due time (skipped when
    ``due_by`` is None: a form whose day or time could not be read), added to ``errors``; a page calls it to say
    every refusal at once. Returns the title and description as they would be stored."""
    if kind not in MADE_KINDS:
        allowed = ", ".join(str(k.label).lower() for k in MADE_KINDS)
        errors.add("kind", f"Kind: {str(kind)[:40]!r} is not one of {allowed}")
    if ahu.status == AHU.Status.RETIRED:
        errors.add("unit", f"Unit: {ahu.display_name} is retired; allowed: a unit that is not retired")
    title_text = check_text(title, key="title", label="Title", max_length=TITLE_MAX, errors=errors, required=True)
    description_text = check_text(
        description, key="description", label="Description", max_length=DESCRIPTION_MAX, errors=errors, lines=True
    )
    if priority not in WorkOrder.Priority.values:
        errors.add(
            "priority",
            f"Priority: {str(priority)[:40]!r} is not one of "
            + ", ".join(str(p.label).lower() for p in WorkOrder.Priority),
        )
    problem = None if due_by is None else work_order_due_problem(due_by=due_by, site=ahu.building.site, now=now)
    if problem:
        errors.add("due_by", problem)
    if component is not None and component.ahu_id != ahu.pk:
        errors.add("component", f"Part: {component.name} belongs to another unit than {ahu.display_name}")
    return title_text, description_text


def _check_tasks(*, errors: FieldErrors, ahu, tasks, one_off) -> list[tuple]:
    """(task, target component or None) rows of the library tasks chosen, refusing one not done on this unit."""
    organisation_id = ahu.building.site.organisation_id
    components = list(ahu.components.all())
    rows = []
    for task in tasks:
        if task.organisation_id not in (None, organisation_id) or task.code.startswith(ONE_OFF_PREFIX):
            errors.add("tasks", f"Tasks: {task.name} is not a task of your organisation's library")
            continue
        targets = task_targets(task=task, ahu=ahu, components=components)
        if not targets:
            errors.add("tasks", f"Tasks: {task.name} is not done on {ahu.display_name} (it has no such part)")
        rows += [(task, target) for target in targets]
    for k, t in enumerate(one_off):
        key = "task_name" if len(one_off) == 1 else f"task_name_{k}"
        check_text(t.name, key=key, label="Task", max_length=200, errors=errors, required=True)
        lo, hi = ONE_OFF_MINUTES
        if not isinstance(t.minutes, int) or not lo <= t.minutes <= hi:
            errors.add("task_minutes", f"Estimated minutes: {t.minutes!r} is out of range; allowed: {lo} to {hi}")
        if t.skill not in TaskDefinition.Skill.values:
            errors.add(
                "task_skill",
                f"Skill: {str(t.skill)[:40]!r} is not one of "
                + ", ".join(str(s.label).lower() for s in TaskDefinition.Skill),
            )
    if not tasks and not one_off:
        errors.add("tasks", "Tasks: none chosen; allowed: at least one task from the library or one written in words")
    return rows


@transaction.atomic
def work_order_create(
    *,
    ahu: AHU,
    by,
    kind: str,
    title: str,
    priority: str,
    due_by: dt.datetime,
    description: str = "",
    tasks: Sequence[TaskDefinition] = (),
    one_off: Sequence[OneOffTask] = (),
    component: Component | None = None,
    assignee=None,
    source_ref: str = "",
    now: dt.datetime | None = None,
) -> WorkOrder:
    """A work order a supervisor makes outside the plan: a call-out from a phone call, ad-hoc work, or work for a
    finding (``kind`` corrective; made by a supervisor, it needs no approval).

    Due by ``due_by`` (an aware moment, read on the site's clock; its date is the due date and the day it is
    planned for, so it shows in that day's board week, the technician's today and the calendar). The tasks are
    library tasks done on the unit (one row per part they apply to) and/or tasks said in words
    (``one_off``: each becomes a task of this work order only, with its minutes and skill, so the board's
    day load and the skills check read it like any other). With ``assignee`` it is assigned at once; a
    deactivated person or someone who is not a technician of the organisation is refused. Every refusal is
    keyed to its field; nothing is saved unless everything is right.
    """
    now = now or timezone.now()
    errors = FieldErrors()
    site = ahu.building.site
    organisation = site.organisation
    title_text, description_text = made_work_fields_check(
        errors=errors, ahu=ahu, kind=kind, title=title, description=description, priority=priority,
        due_by=due_by, now=now, component=component,
    )  # fmt: skip
    rows = _check_tasks(errors=errors, ahu=ahu, tasks=list(tasks), one_off=list(one_off))
    if assignee is not None:
        try:
            _check_assignee(WorkOrder(organisation=organisation), assignee)
        except ValidationError as exc:
            for message in exc.message_dict.get("assignee", exc.messages):
                errors.add("assignee", f"Technician: {message}")
    errors.raise_if_any()
    local_due = due_by.astimezone(zoneinfo.ZoneInfo(site.time_zone))
    day = local_due.date()
    wo = WorkOrder(
        organisation=organisation,
        ahu=ahu,
        component=component,
        kind=kind,
        priority=priority,
        title=title_text,
        reason=description_text or "",
        source_ref=source_ref[:200],
        due_date=day,
        due_by=due_by,
        scheduled_for=day,
        overdue_on=overdue_day(day, _grace(priority)),
        approval=WorkOrder.Approval.APPROVED if kind == WorkOrder.Kind.CORRECTIVE else WorkOrder.Approval.NOT_NEEDED,
        assignee=assignee,
        state=State.ASSIGNED if assignee is not None else State.PLANNED,
    )
    wo.full_clean()
    wo.save()
    key = f"made:{wo.public_id.hex[:12]}"
    for t in one_off:
        task = TaskDefinition(
            organisation=organisation,
            code=f"{ONE_OFF_PREFIX}{uuid.uuid4().hex[:16]}",
            name=t.name.strip(),
            description=f"Written for one work order: {wo.title}",
            category=TaskCategory.CONTROLS_VENTILATION,
            trigger=TaskDefinition.Trigger.CONDITION,
            condition_code="one_off",
            checklist_code="visit",
            estimated_minutes=t.minutes,
            skill=t.skill,
            safety_notes=ONE_OFF_SAFETY,
            source="Written by a supervisor for one work order",
            enabled=False,
        )
        task.full_clean()
        task.save()
        rows.append((task, None))
    WorkOrderTask.objects.bulk_create(
        [
            WorkOrderTask(
                work_order=wo, task=task, task_code=task.code, ahu=ahu, component=target,
                component_key=target.pk if target else 0, due_date=day, occurrence_key=key,
            )
            for task, target in rows
        ]
    )  # fmt: skip
    audit_record(
        actor=by,
        obj=wo,
        action="work_order_create",
        changes={
            "kind": kind,
            "priority": priority,
            "due_by": due_by.isoformat(),
            "tasks": sorted({task.code for task, _ in rows}),
            "assignee": assignee.pk if assignee is not None else None,
            "source_ref": source_ref[:200],
        },
        organisation=organisation,
    )
    organisation_changed(organisation_id=organisation.pk)
    return wo


FROST_TASK = "preheater_freeze"
FROST_TITLE = "Check freeze protection before tonight's frost"
FROST_FALLBACK = dt.time(16, 0)  # where the sun does not set (polar night): the working day's end


@dataclass
class FrostChecks:
    """What the frost action did at one site: the work orders it made, the units already holding an open check."""

    due_by: dt.datetime
    due_why: str = "sunset there"  # how the due time was chosen, in words
    created: list[WorkOrder] = field(default_factory=list)
    already_open: list[WorkOrder] = field(default_factory=list)


def frost_due_by(*, site, now: dt.datetime) -> tuple[dt.datetime, str]:
    """Due time of tonight's frost check and how it was chosen: sunset today on the site's clock
    (engineering.sun); once the sun has set (or within half an hour of it), one hour from now."""
    zone = zoneinfo.ZoneInfo(site.time_zone)
    today = today_for(site, now=now)
    sunset = sunset_utc(latitude=site.latitude, longitude=site.longitude, day=today)
    why = "sunset there"
    if sunset is None:
        sunset = dt.datetime.combine(today, FROST_FALLBACK, tzinfo=zone)
        why = "the end of the working day: the sun does not set or rise there today"
    due = sunset.replace(second=0, microsecond=0)
    if due <= now + dt.timedelta(minutes=30):
        due = (now + dt.timedelta(hours=1)).replace(second=0, microsecond=0)
        why = "within the hour: the sun has set there"
    return due.astimezone(zone), why


@transaction.atomic
def frost_checks_create(*, site, by, now: dt.datetime | None = None) -> FrostChecks:
    """ "Check freeze protection before tonight's frost" at ``site``: one urgent ad-hoc work order per in-service
    unit whose freeze-protection task (the library's ``preheater_freeze``: an electric preheater or a preheat
    water coil) applies to it, with that task on each protected part, due before sunset today on the site's
    clock. A unit that already holds an open freeze-protection check (this action's or the corrective retest of
    a failed test) gets no second one: it is named in ``already_open``."""
    now = now or timezone.now()
    organisation = site.organisation
    task = effective_tasks(organisation=organisation, include_disabled=True).get(FROST_TASK)
    due_by, why = frost_due_by(site=site, now=now)
    out = FrostChecks(due_by=due_by, due_why=why)
    if task is None:
        return out
    units = (
        AHU.objects.select_for_update(of=("self",))
        .filter(building__site=site, status=AHU.Status.IN_SERVICE)
        .select_related("building__site")
        .prefetch_related("components")
        .order_by("building__name", "tag", "pk")
    )
    for ahu in units:
        targets = task_targets(task=task, ahu=ahu, components=list(ahu.components.all()))
        if not targets:
            continue
        open_check = (
            WorkOrder.objects.filter(ahu=ahu, state__in=WorkOrder.OPEN_STATES)
            .exclude(approval__in=[WorkOrder.Approval.PENDING, WorkOrder.Approval.REJECTED])
            .filter(Q(tasks__task_code=FROST_TASK) | Q(condition_code="freeze_protection_failed"))
            .exclude(kind=WorkOrder.Kind.PREVENTIVE, due_date__gt=today_for(site, now=now))
            .order_by("due_date", "id")
            .first()
        )
        if open_check is not None:
            out.already_open.append(open_check)
            continue
        out.created.append(
            work_order_create(
                ahu=ahu, by=by, kind=WorkOrder.Kind.AD_HOC, title=FROST_TITLE, priority=WorkOrder.Priority.URGENT,
                due_by=due_by, tasks=[task], now=now, source_ref=f"frost check at {site.name}"[:200],
                description=(
                    "Frost tonight: prove the preheater stages, its limits and the frost thermostat's trip "
                    "before the evening's cold."
                ),
            )
        )  # fmt: skip
    audit_record(
        actor=by,
        obj=site,
        action="frost_checks_create",
        changes={
            "due_by": due_by.isoformat(),
            "created": [str(wo.public_id) for wo in out.created],
            "already_open": [str(wo.public_id) for wo in out.already_open],
        },
        organisation=organisation,
    )
    return out
