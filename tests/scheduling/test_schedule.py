"""Planning a work order for a day: the service and its API."""

import datetime as dt

import pytest
import time_machine
from django.core.exceptions import ValidationError

from accounts.models import AuditEvent
from scheduling.models import WorkOrder
from scheduling.selectors import technician_load
from scheduling.services import WorkOrderConflict, work_order_assign, work_order_cancel, work_order_schedule
from tests.factories.scheduling import WorkOrderFactory, add_task, make_supervisor, make_technician

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 3)


@pytest.fixture(autouse=True)
def clock():
    with time_machine.travel(dt.datetime(2025, 3, 3, 12, tzinfo=dt.UTC), tick=False):
        yield


@pytest.fixture
def work():
    wo = WorkOrderFactory(due_date=dt.date(2025, 3, 7))
    return {"wo": wo, "sup": make_supervisor(wo.organisation), "tech": make_technician(wo.organisation)}


def test_planning_a_day_bumps_the_version_and_is_audited(work):
    """Planning the visit for a day stores it, raises the version and records who planned it from when to when."""
    wo, sup = work["wo"], work["sup"]
    work_order_schedule(work_order=wo, day=dt.date(2025, 3, 5), by=sup, expected_version=1)
    wo.refresh_from_db()
    assert (wo.scheduled_for, wo.version) == (dt.date(2025, 3, 5), 2)
    event = AuditEvent.objects.get(object_id=str(wo.pk), action="schedule")
    assert event.actor == sup and event.changes == {"from": None, "to": "2025-03-05"}


def test_planning_the_same_day_again_changes_nothing(work):
    """Planning the day it already has leaves the version and the audit trail alone; None clears the plan."""
    wo, sup = work["wo"], work["sup"]
    work_order_schedule(work_order=wo, day=TODAY, by=sup)
    work_order_schedule(work_order=wo, day=TODAY, by=sup)
    wo.refresh_from_db()
    assert wo.version == 2 and AuditEvent.objects.filter(action="schedule").count() == 1
    work_order_schedule(work_order=wo, day=None, by=sup)
    wo.refresh_from_db()
    assert wo.scheduled_for is None and wo.version == 3


def test_a_day_in_the_past_is_refused_naming_field_and_value(work):
    """Yesterday (at the site) is refused with a message naming scheduled_for, the day and what is allowed."""
    with pytest.raises(ValidationError) as exc:
        work_order_schedule(work_order=work["wo"], day=dt.date(2025, 3, 2), by=work["sup"])
    message = exc.value.message_dict["scheduled_for"][0]
    assert "scheduled day 2025-03-02" in message and "2025-03-03 or later" in message
    work["wo"].refresh_from_db()
    assert work["wo"].scheduled_for is None and work["wo"].version == 1


def test_closed_work_cannot_be_planned(work):
    """Cancelled work is refused with a message naming its state."""
    wo = work["wo"]
    work_order_cancel(work_order=wo, by=work["sup"], reason="unit replaced")
    with pytest.raises(ValidationError) as exc:
        work_order_schedule(work_order=wo, day=TODAY, by=work["sup"])
    assert "'cancelled'" in exc.value.message_dict["scheduled_for"][0]


def test_stale_version_is_a_conflict(work):
    """A plan made from an old copy of the work order is refused."""
    with pytest.raises(WorkOrderConflict):
        work_order_schedule(work_order=work["wo"], day=TODAY, by=work["sup"], expected_version=7)


def test_load_counts_the_planned_day_not_the_due_day(work, library):
    """The technician's load shows assigned work (a 45-minute filter change) on the day it is planned for."""
    wo, sup, tech = work["wo"], work["sup"], work["tech"]
    task = library["filter_replace"]
    add_task(wo, task)
    work_order_assign(work_order=wo, assignee=tech, by=sup)
    work_order_schedule(work_order=wo, day=dt.date(2025, 3, 4), by=sup)
    (row,) = technician_load(organisation=wo.organisation, start=TODAY, days=7)
    hours = {d["date"]: d["hours"] for d in row["days"]}
    assert hours[dt.date(2025, 3, 4)] == 0.75 and hours[dt.date(2025, 3, 7)] == 0


def url(wo, op):
    return f"/api/scheduling/work-orders/{wo.public_id}/{op}/"


def test_schedule_api_plans_the_day(api_client, work):
    """POST schedule/ with the current version plans the day and answers the work order at its new version."""
    api_client.force_authenticate(work["sup"])
    r = api_client.post(url(work["wo"], "schedule"), {"scheduled_for": "2025-03-05", "version": 1}, format="json")
    assert r.status_code == 200
    assert r.json()["scheduled_for"] == "2025-03-05" and r.json()["version"] == 2


def test_schedule_api_stale_version_is_409(api_client, work):
    """A stale version is a 409 with the current version."""
    api_client.force_authenticate(work["sup"])
    work_order_schedule(work_order=work["wo"], day=TODAY, by=work["sup"])
    r = api_client.post(url(work["wo"], "schedule"), {"scheduled_for": "2025-03-05", "version": 1}, format="json")
    assert r.status_code == 409 and r.json()["current_version"] == 2


def test_schedule_api_past_day_is_400_naming_the_field(api_client, work):
    """A day in the past is a 400 whose errors name scheduled_for and the day."""
    api_client.force_authenticate(work["sup"])
    r = api_client.post(url(work["wo"], "schedule"), {"scheduled_for": "2025-03-01", "version": 1}, format="json")
    assert r.status_code == 400
    assert "scheduled day 2025-03-01" in r.json()["errors"]["scheduled_for"][0]


def test_schedule_api_is_for_supervisors(api_client, work):
    """A technician cannot plan the organisation's work (403); nothing changes."""
    work_order_assign(work_order=work["wo"], assignee=work["tech"], by=work["sup"])
    api_client.force_authenticate(work["tech"])
    r = api_client.post(url(work["wo"], "schedule"), {"scheduled_for": "2025-03-05", "version": 2}, format="json")
    assert r.status_code == 403
    assert WorkOrder.objects.get(pk=work["wo"].pk).scheduled_for is None


def test_assign_api_plans_the_day_too(api_client, work):
    """Assigning with scheduled_for assigns and plans at once."""
    api_client.force_authenticate(work["sup"])
    body = {"assignee": work["tech"].username, "version": 1, "scheduled_for": "2025-03-04"}
    r = api_client.post(url(work["wo"], "assign"), body, format="json")
    assert r.status_code == 200
    assert (r.json()["state"], r.json()["scheduled_for"]) == ("assigned", "2025-03-04")


def test_assign_api_with_a_past_day_saves_nothing(api_client, work):
    """Assigning with a day in the past is a 400 and leaves the work unassigned."""
    api_client.force_authenticate(work["sup"])
    body = {"assignee": work["tech"].username, "version": 1, "scheduled_for": "2025-02-28"}
    r = api_client.post(url(work["wo"], "assign"), body, format="json")
    assert r.status_code == 400 and "scheduled_for" in r.json()["errors"]
    wo = WorkOrder.objects.get(pk=work["wo"].pk)
    assert (wo.state, wo.assignee_id, wo.version) == ("planned", None, 1)
