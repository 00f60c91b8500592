"""What generation writes beside the occurrences: visits that new work joins, and the audit trail."""

import datetime as dt

import pytest
import time_machine

from accounts.models import AuditEvent
from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrder, WorkOrderTask
from scheduling.services import meter_reading_record, task_definition_create
from tests.factories.inventory import AHUFactory, ComponentFactory, make_full_unit

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 3)


def org_of(ahu):
    return ahu.building.site.organisation


def audit_of(wo, action=None):
    qs = AuditEvent.objects.filter(object_type="scheduling.workorder", object_id=str(wo.pk))
    return list(qs.filter(action=action) if action else qs)


def test_new_occurrence_joining_an_open_visit_updates_it_once(library):
    """A task due 5 March joining the visit due 15 March makes it due 5 March, overdue from 5 + 7 + 1 days,
    names the new task in the title and raises the version; a second run changes nothing."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    org = org_of(ahu)
    work_orders_generate(organisation=org, today=TODAY, horizon_days=30)
    (visit,) = WorkOrder.objects.filter(ahu=ahu)
    assert visit.due_date == dt.date(2025, 3, 15)
    version, old_overdue = visit.version, visit.overdue_on
    # 80 days after the unit's service start: 5 March, within the 14-day bundling window of the visit.
    task_definition_create(
        organisation=org,
        code="gasket_look",
        name="Access-door gasket look",
        category="intake_screen",
        trigger="interval",
        interval_value=80,
        interval_unit="days",
        grace_days=7,
    )
    result = work_orders_generate(organisation=org, today=TODAY, horizon_days=30)
    assert (result.created, result.work_orders_created) == (1, 0)
    visit.refresh_from_db()
    assert WorkOrder.objects.filter(ahu=ahu).count() == 1
    assert visit.tasks.filter(task_code="gasket_look", due_date=dt.date(2025, 3, 5)).exists()
    assert visit.due_date == dt.date(2025, 3, 5)
    assert visit.overdue_on == min(old_overdue, dt.date(2025, 3, 13))
    assert "Access-door gasket look" in visit.title and "Filter pressure-drop check" in visit.title
    assert visit.version == version + 1
    (joined,) = audit_of(visit, "generated")[:1]
    assert joined.changes["joined"] is True and ["gasket_look", 0, "c:2025-03-05"] in joined.changes["occurrences"]

    snapshot = (visit.due_date, visit.overdue_on, visit.title, visit.version, len(audit_of(visit)))
    again = work_orders_generate(organisation=org, today=TODAY, horizon_days=30)
    assert (again.created, again.moved) == (0, 0)
    visit.refresh_from_db()
    assert (visit.due_date, visit.overdue_on, visit.title, visit.version, len(audit_of(visit))) == snapshot


def test_generation_audits_each_created_visit_with_its_occurrences(library):
    """Every visit generation creates has one "generated" audit event by no person, naming its occurrences;
    a second run writes no further events."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    org = org_of(ahu)
    work_orders_generate(organisation=org, today=TODAY, horizon_days=90)
    orders = list(WorkOrder.objects.filter(ahu=ahu))
    assert len(orders) > 1
    for wo in orders:
        (event,) = audit_of(wo)
        assert event.action == "generated" and event.actor is None and event.organisation == org
        stored = {tuple(r) for r in wo.tasks.values_list("task_code", "component_key", "occurrence_key")}
        assert {tuple(r) for r in event.changes["occurrences"]} == stored
    count = AuditEvent.objects.count()
    work_orders_generate(organisation=org, today=TODAY, horizon_days=90)
    assert AuditEvent.objects.count() == count


def test_dry_run_writes_no_audit(library):
    """A dry run creates neither work orders nor audit events."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    work_orders_generate(organisation=org_of(ahu), today=TODAY, dry_run=True)
    assert not WorkOrder.objects.exists() and not AuditEvent.objects.exists()


@time_machine.travel(dt.datetime(2025, 3, 3, 12, tzinfo=dt.UTC), tick=False)
def test_a_moved_projection_is_audited(library):
    """When a run-hour projection moves, its visit gets one "moved" event with the old and new due dates."""
    ahu = AHUFactory(service_start=dt.date(2024, 1, 1))
    ComponentFactory(ahu=ahu)  # final filter bank
    org = org_of(ahu)
    t0 = dt.datetime(2025, 1, 1, 8, tzinfo=dt.UTC)
    for day in range(0, 60, 10):
        meter_reading_record(ahu=ahu, hours=3000 + 12 * day, taken_at=t0 + dt.timedelta(days=day), source="api")
    work_orders_generate(organisation=org, horizon_days=120)
    row = WorkOrderTask.objects.get(task_code="filter_replace")
    before = row.work_order.due_date
    for k in range(1, 5):
        meter_reading_record(ahu=ahu, hours=3600 + 48 * k, taken_at=t0 + dt.timedelta(days=50 + 2 * k), source="api")
    work_orders_generate(organisation=org, horizon_days=120)
    row.refresh_from_db()
    (event,) = audit_of(row.work_order, "moved")
    assert event.actor is None
    assert event.changes["from"] == before.isoformat()
    assert event.changes["to"] == row.work_order.due_date.isoformat()
    assert event.changes["occurrences"] == [
        ["filter_replace", row.component_key, row.occurrence_key, row.due_date.isoformat()]
    ]
