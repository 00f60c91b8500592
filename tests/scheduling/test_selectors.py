"""Reads of the scheduling app: each technician's load per day against their capacity."""

import datetime as dt

import pytest

from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrder
from scheduling.selectors import technician_load
from scheduling.services import work_order_assign
from tests.factories.inventory import make_full_unit
from tests.factories.scheduling import make_technician

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 3)


def test_technician_load_sums_estimated_hours_per_day_against_capacity(library):
    """Assigned work counts on its scheduled day (else its due day) as the sum of its tasks' estimates;
    a day above the technician's capacity is flagged; unassigned work counts for no one."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    org = ahu.building.site.organisation
    work_orders_generate(organisation=org, today=TODAY, horizon_days=120)
    first, second, *rest = WorkOrder.objects.filter(ahu=ahu).order_by("due_date")
    assert rest, "the full unit has more than two visits in 120 days"
    busy = make_technician(org, username="busy-tech", daily_capacity_hours=1)
    idle = make_technician(org, username="idle-tech", daily_capacity_hours=6)
    work_order_assign(work_order=first, assignee=busy, by=None)
    work_order_assign(work_order=second, assignee=busy, by=None)
    # No service plans a visit for a day yet: set the planned day directly.
    WorkOrder.objects.filter(pk=second.pk).update(scheduled_for=first.due_date)

    load = technician_load(organisation=org, start=first.due_date - dt.timedelta(days=1), days=3)
    assert [row["technician"] for row in load] == [busy, idle]
    by_day = {d["date"]: d for d in load[0]["days"]}
    expected = round((first.estimated_minutes() + second.estimated_minutes()) / 60.0, 2)
    assert expected > 1
    assert by_day[first.due_date] == {
        "date": first.due_date,
        "hours": expected,
        "task_hours": expected,
        "travel_minutes": 0,  # both visits on one site: no drive
        "travel_km": 0.0,
        "sites": 1,
        "visits": 2,
        "capacity_hours": 1.0,
        "over": True,
    }
    assert by_day[first.due_date - dt.timedelta(days=1)]["hours"] == 0
    assert all(d["hours"] == 0 and d["capacity_hours"] == 6.0 and not d["over"] for d in load[1]["days"])


def test_technician_load_is_not_over_at_capacity_and_leaves_out_unassigned_and_finished_work(library):
    """Hours up to the capacity are not flagged; planned (unassigned) and completed visits add nothing."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    org = ahu.building.site.organisation
    work_orders_generate(organisation=org, today=TODAY, horizon_days=120)
    first, second, third = WorkOrder.objects.filter(ahu=ahu).order_by("due_date")[:3]
    tech = make_technician(org, username="tech")
    work_order_assign(work_order=first, assignee=tech, by=None)
    hours = first.estimated_minutes() / 60.0
    tech.daily_capacity_hours = round(hours, 1) + 0.1
    tech.save(update_fields=["daily_capacity_hours"])
    work_order_assign(work_order=third, assignee=tech, by=None)
    WorkOrder.objects.filter(pk=third.pk).update(state=WorkOrder.State.COMPLETED, scheduled_for=first.due_date)
    WorkOrder.objects.filter(pk=second.pk).update(scheduled_for=first.due_date)  # planned, nobody's yet

    (row,) = technician_load(organisation=org, start=first.due_date, days=1)
    assert row["days"][0]["hours"] == round(hours, 2)
    assert row["days"][0]["over"] is False
