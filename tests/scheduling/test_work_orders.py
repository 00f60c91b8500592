"""Work-order life cycle, assignment, corrective proposals and escalation."""

import datetime as dt
import itertools

import pytest
from django.core import mail
from django.core.exceptions import ValidationError

from accounts.models import AuditEvent, Role
from scheduling.models import WorkOrder
from scheduling.services import (
    WorkOrderConflict,
    corrective_work_order_approve,
    corrective_work_order_propose,
    overdue_escalation_send,
    work_order_assign,
    work_order_transition,
)
from tests.factories.accounts import make_person
from tests.factories.inventory import make_full_unit
from tests.factories.scheduling import WorkOrderFactory, make_supervisor, make_technician

pytestmark = pytest.mark.django_db
State = WorkOrder.State


def test_every_illegal_transition_is_refused():
    """Every move not in WorkOrder.TRANSITIONS is refused with a message naming what is allowed."""
    wo = WorkOrderFactory()
    tech = make_technician(wo.organisation)
    for start, target in itertools.product(State.values, State.values):
        if target in WorkOrder.TRANSITIONS[start]:
            continue
        WorkOrder.objects.filter(pk=wo.pk).update(state=start, assignee=tech)
        wo.refresh_from_db()
        with pytest.raises(ValidationError) as exc:
            work_order_transition(work_order=wo, to_state=target, by=None)
        names = dict(State.choices)
        message = str(exc.value)
        assert f"cannot move from {names[start].lower()} to {names[target].lower()}" in message
        assert "to_state" not in message.partition(":")[2] and "_" not in message.partition(":")[2]
        wo.refresh_from_db()
        assert wo.state == start


def test_life_cycle_bumps_version_and_audits_each_step():
    """planned → assigned → in progress → completed → verified, each step raising the version and audited."""
    wo = WorkOrderFactory()
    sup, tech = make_supervisor(wo.organisation), make_technician(wo.organisation)
    work_order_assign(work_order=wo, assignee=tech, by=sup, expected_version=1)
    assert (wo.state, wo.version) == (State.ASSIGNED, 2)
    for target in (State.IN_PROGRESS, State.COMPLETED, State.VERIFIED):
        work_order_transition(work_order=wo, to_state=target, by=tech, expected_version=wo.version)
    wo.refresh_from_db()
    assert (wo.state, wo.version) == (State.VERIFIED, 5)
    assert wo.completed_at is not None and wo.verified_at is not None
    assert AuditEvent.objects.filter(object_type="scheduling.workorder", object_id=str(wo.pk)).count() == 4


def test_stale_version_is_a_conflict():
    """A change made against an old version is refused as a conflict and changes nothing."""
    wo = WorkOrderFactory()
    tech = make_technician(wo.organisation)
    work_order_assign(work_order=wo, assignee=tech, by=None)
    with pytest.raises(WorkOrderConflict, match="version 2, not 1"):
        work_order_transition(
            work_order=WorkOrder.objects.get(pk=wo.pk),
            to_state=State.CANCELLED,
            by=None,
            expected_version=1,
            reason="x",
        )
    assert WorkOrder.objects.get(pk=wo.pk).state == State.ASSIGNED


def test_assignee_must_be_a_technician_of_the_organisation():
    """Work cannot be assigned to someone of another organisation or who is not a technician."""
    wo = WorkOrderFactory()
    outsider = make_technician(WorkOrderFactory().organisation)
    manager = make_person(organisation=wo.organisation, role=Role.PROPERTY_MANAGER)
    for person in (outsider, manager):
        with pytest.raises(ValidationError, match=r"no technician .* in your organisation you can assign"):
            work_order_assign(work_order=wo, assignee=person, by=None)


def test_corrective_condition_marks_library_task_due_and_is_not_duplicated(library):
    """A loaded filter raises filter_replace due now; the same condition again returns the open order."""
    ahu = make_full_unit()
    bank = ahu.components.get(name="Final filters")
    first = corrective_work_order_propose(
        ahu=ahu,
        component=bank,
        title="Final filters loaded",
        reason="dp 240 Pa of 250 Pa final",
        condition_code="filter_loaded",
    )
    assert first.approval == WorkOrder.Approval.PENDING and first.kind == WorkOrder.Kind.CORRECTIVE
    assert list(first.tasks.values_list("task_code", "component_id")) == [("filter_replace", bank.pk)]
    again = corrective_work_order_propose(
        ahu=ahu, component=bank, title="Final filters loaded", reason="again", condition_code="filter_loaded"
    )
    assert again.pk == first.pk
    with pytest.raises(ValidationError, match="approved before"):
        work_order_assign(work_order=first, assignee=make_technician(first.organisation), by=None)
    corrective_work_order_approve(work_order=first, by=None)
    assert first.approval == WorkOrder.Approval.APPROVED


def test_urgent_approved_corrective_emails_supervisors_after_commit(django_capture_on_commit_callbacks):
    """Urgent, approved corrective work is ready to assign and the supervisors get an e-mail."""
    ahu = make_full_unit()
    make_supervisor(ahu.building.site.organisation, email="lead@example.invalid")
    with django_capture_on_commit_callbacks(execute=True):
        wo = corrective_work_order_propose(
            ahu=ahu,
            title="Fan not proven",
            reason="no airflow",
            condition_code="fan_not_proven",
            priority="urgent",
            approved=True,
        )
    assert wo.approval == WorkOrder.Approval.APPROVED
    assert len(mail.outbox) == 1 and mail.outbox[0].to == ["lead@example.invalid"]
    assert ahu.tag in mail.outbox[0].subject
    assert "Not assigned yet" in mail.outbox[0].body and "assign it on the board" in mail.outbox[0].body


def test_urgent_corrective_email_tells_the_assignment_made_before_it_leaves(django_capture_on_commit_callbacks):
    """Work assigned in the same transaction that proposed it: the e-mail, written as it leaves, says who has
    it and for which day, never "assign it" for work already assigned."""
    ahu = make_full_unit()
    make_supervisor(ahu.building.site.organisation, email="lead@example.invalid")
    tech = make_technician(ahu.building.site.organisation)
    with django_capture_on_commit_callbacks(execute=True):
        wo = corrective_work_order_propose(
            ahu=ahu,
            title="Fan not proven",
            reason="no airflow",
            condition_code="fan_not_proven",
            priority="urgent",
            approved=True,
        )
        work_order_assign(work_order=wo, assignee=tech, by=None)
    body = mail.outbox[0].body
    assert f"Assigned to {tech}" in body and "Not assigned" not in body and "assign it" not in body


def test_overdue_escalation_once_a_week(django_capture_on_commit_callbacks):
    """Overdue work is e-mailed to the supervisors, and not again the next day."""
    wo = WorkOrderFactory(due_date=dt.date(2025, 3, 1), overdue_on=dt.date(2025, 3, 9))
    make_supervisor(wo.organisation, email="lead@example.invalid")
    with django_capture_on_commit_callbacks(execute=True):
        assert overdue_escalation_send(organisation=wo.organisation, today=dt.date(2025, 3, 8)) == 0
        assert overdue_escalation_send(organisation=wo.organisation, today=dt.date(2025, 3, 9)) == 1
        assert overdue_escalation_send(organisation=wo.organisation, today=dt.date(2025, 3, 10)) == 0
    assert len(mail.outbox) == 1 and wo.ahu.tag in mail.outbox[0].body
