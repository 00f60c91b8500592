"""Corrective work: proposed by a finding or a person, approved or rejected by a supervisor.

Urgent work e-mails the supervisors after commit (``escalation.email_supervisors_on_commit``).
"""

from __future__ import annotations

import datetime as dt

from django.core.exceptions import ValidationError
from django.db import transaction

from accounts.changes import work_changed
from accounts.inputs import text_problem
from accounts.models import User
from accounts.services import audit_record
from inventory.models import AHU, Component
from inventory.today import today_for

from ..models import WorkOrder, WorkOrderTask, overdue_day
from ..selectors import effective_tasks
from ..task_rows import tasks_on_parts, work_order_task_rows
from ..titles import title_fit
from .escalation import email_supervisors_on_commit
from .work_orders import State, priority_grace_days, work_order_copy_back, work_order_locked, work_order_save


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
    by: User | None = None,
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
        overdue_on=overdue_day(due, priority_grace_days(priority)),
        approval=WorkOrder.Approval.APPROVED if approved else WorkOrder.Approval.PENDING,
    )
    # The unit, its part and its organisation are rows the caller has just read (and holds): whether they exist is
    # not asked again, nor whether a fresh random public id is taken (the table's keys still hold both). Every
    # other field is judged.
    wo.full_clean(exclude=["organisation", "ahu", "component"], validate_unique=False)
    wo.save()
    if condition_code:
        tasks = [t for t in effective_tasks(organisation=organisation).values() if t.condition_code == condition_code]
        components = list(ahu.components.all()) if component is None else [component]
        rows = work_order_task_rows(
            work_order=wo,
            tasks_on=tasks_on_parts(tasks=tasks, ahu=ahu, components=components),
            due=due,
            occurrence_key=f"cond:{condition_code}:{wo.public_id.hex[:12]}",
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
    work_changed(organisation_id=organisation.pk, people=[wo.assignee_id])  # made without an assignee
    if approved and priority == WorkOrder.Priority.URGENT:
        email_supervisors_on_commit(
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
def corrective_work_order_approve(
    *, work_order: WorkOrder, by: User | None, expected_version: int | None = None
) -> WorkOrder:
    wo = work_order_locked(work_order, expected_version)
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
        wo.due_date, wo.overdue_on = today, overdue_day(today, priority_grace_days(wo.priority))
        fields += ["due_date", "overdue_on"]
        wo.tasks.filter(due_date__lt=today).update(due_date=today)
    work_order_save(wo, fields, by=by, action="corrective_approve", changes=changes)
    if wo.priority == WorkOrder.Priority.URGENT:
        email_supervisors_on_commit(
            wo.organisation_id, f"Urgent corrective work approved: {wo.ahu.tag}", f"{wo.title}\n\n{wo.reason}"
        )
    work_order_copy_back(work_order, wo)
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
    *, work_order: WorkOrder, by: User | None, reason: str, expected_version: int | None = None
) -> WorkOrder:
    """Reject proposed corrective work with a reason (kept on the work order and in the audit trail)."""
    text = rejection_reason_check(reason=reason)
    wo = work_order_locked(work_order, expected_version)
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
    work_order_save(
        wo, ["approval", "state", "cancel_reason"], by=by, action="corrective_reject", changes={"reason": text}
    )
    work_order_copy_back(work_order, wo)
    return wo
