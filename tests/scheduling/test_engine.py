"""The due-date engine: what falls due, bundling, idempotence, moving projections."""

import datetime as dt

import pytest
import time_machine

from inventory.models import AHU
from scheduling.engine import calendar_occurrences, work_orders_generate
from scheduling.models import WorkOrder, WorkOrderTask
from scheduling.services import (
    meter_reading_record,
    unit_task_set,
    work_order_assign,
    work_order_complete,
)
from tests.factories.inventory import AHUFactory, ComponentFactory, make_full_unit
from tests.factories.scheduling import make_technician

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 3)


def org_of(ahu):
    return ahu.building.site.organisation


def codes(ahu, **filters):
    return sorted(WorkOrderTask.objects.filter(ahu=ahu, **filters).values_list("task_code", flat=True).distinct())


def test_generation_twice_creates_nothing_new(library):
    """Running generation twice creates nothing new the second time."""
    ahu = make_full_unit(service_start=dt.date(2024, 1, 15))
    first = work_orders_generate(organisation=org_of(ahu), today=TODAY)
    n_tasks, n_orders = WorkOrderTask.objects.count(), WorkOrder.objects.count()
    assert first.created == n_tasks > 0
    second = work_orders_generate(organisation=org_of(ahu), today=TODAY)
    assert second.created == 0 and second.moved == 0
    assert second.unchanged == n_tasks
    assert (WorkOrderTask.objects.count(), WorkOrder.objects.count()) == (n_tasks, n_orders)


def test_tasks_due_together_share_one_visit(library):
    """Tasks falling due for one unit within the bundling window are one work order with several tasks."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    work_orders_generate(organisation=org_of(ahu), today=TODAY, horizon_days=30)
    orders = list(WorkOrder.objects.filter(ahu=ahu))
    assert len(orders) == 1
    # 2025-03-15: monthly filter checks (two banks), quarterly drain pan and intake screen, controls check.
    wo = orders[0]
    assert wo.due_date == dt.date(2025, 3, 15)
    assert {"filter_check", "drain_pan", "intake_screen", "controls_check"} <= set(
        wo.tasks.values_list("task_code", flat=True)
    )
    assert wo.tasks.filter(task_code="filter_check").count() == 2


def test_only_present_components_and_no_recirculation_dampers_on_full_oa(library):
    """A 100 % outdoor-air unit gets no return/mixing damper tasks; belt tasks need a belt fan."""
    ahu = make_full_unit(service_start=dt.date(2024, 1, 1), full_outdoor_air=True, design_min_oa_fraction=1.0)
    work_orders_generate(organisation=org_of(ahu), today=TODAY, horizon_days=370)
    damper_names = set(
        WorkOrderTask.objects.filter(ahu=ahu, task_code="damper_actuator").values_list("component__name", flat=True)
    )
    assert damper_names == {"Outdoor-air damper"}
    assert "belt_drive" not in codes(ahu)  # the supply fan is direct drive
    assert "humidifier" not in codes(ahu) and "heat_recovery" not in codes(ahu)
    ComponentFactory(
        ahu=ahu,
        kind="fan",
        name="Exhaust fan",
        specs={
            "role": "exhaust",
            "fan_type": "centrifugal",
            "drive": "belt",
            "motor_power_w": 3000,
            "design_flow_m3s": 2.5,
            "design_pressure_pa": 500,
        },
    )
    work_orders_generate(organisation=org_of(ahu), today=TODAY, horizon_days=370)
    assert set(WorkOrderTask.objects.filter(task_code="belt_drive").values_list("component__name", flat=True)) == {
        "Exhaust fan"
    }


def test_units_not_in_service_get_nothing_and_a_task_can_be_switched_off(library):
    """A unit on standby gets no work; a task switched off for a unit is not generated for it."""
    standby = make_full_unit(status=AHU.Status.STANDBY)
    running = make_full_unit(building=standby.building, service_start=dt.date(2024, 1, 1))
    unit_task_set(ahu=running, task_code="filter_check", enabled=False)
    work_orders_generate(organisation=org_of(running), today=TODAY)
    assert not WorkOrderTask.objects.filter(ahu=standby).exists()
    assert "filter_check" not in codes(running)
    assert "drain_pan" in codes(running)


def test_calendar_grid_is_fixed_to_the_anchor():
    """A quarterly task anchored on 15 January falls on the 15th of April, July and October."""
    days = calendar_occurrences(
        anchor=dt.date(2024, 1, 15), value=3, unit="months", start=dt.date(2025, 3, 1), end=dt.date(2025, 12, 31)
    )
    assert days == [dt.date(2025, 4, 15), dt.date(2025, 7, 15), dt.date(2025, 10, 15)]


def test_floating_interval_restarts_from_completion(library):
    """A floating task's next occurrence counts from the day it was actually done."""
    from scheduling.services import task_definition_override

    ahu = AHUFactory(service_start=dt.date(2024, 11, 1))
    ComponentFactory(ahu=ahu, kind="drain_pan", name="Pan", specs={"has_trap": True})
    org = org_of(ahu)
    task_definition_override(organisation=org, code="drain_pan", anchor="floating")
    work_orders_generate(organisation=org, today=TODAY, horizon_days=30)
    row = WorkOrderTask.objects.get(task_code="drain_pan")
    assert row.due_date == TODAY  # 2025-02-01 was due: at once
    tech = make_technician(org)
    wo = row.work_order
    work_order_assign(work_order=wo, assignee=tech, by=None)
    done = dt.datetime(2025, 3, 10, 9, tzinfo=dt.UTC)
    work_order_complete(work_order=wo, by=tech, completed_at=done)
    work_orders_generate(organisation=org, today=dt.date(2025, 3, 11), horizon_days=120)
    nxt = WorkOrderTask.objects.filter(task_code="drain_pan", completed_at__isnull=True).get()
    assert nxt.due_date == dt.date(2025, 6, 10)


@time_machine.travel(dt.datetime(2025, 3, 3, 12, tzinfo=dt.UTC), tick=False)
def test_run_hour_projection_moves_with_the_rate(library):
    """When the run-hour rate changes, the projected filter change moves instead of a second one appearing."""
    ahu = AHUFactory(service_start=dt.date(2024, 1, 1))
    ComponentFactory(ahu=ahu)  # final filter bank
    org = org_of(ahu)
    t0 = dt.datetime(2025, 1, 1, 8, tzinfo=dt.UTC)
    for day in range(0, 60, 10):  # 12 h a day; last reading 3600 h on 20 February
        meter_reading_record(ahu=ahu, hours=3000 + 12 * day, taken_at=t0 + dt.timedelta(days=day), source="api")
    work_orders_generate(organisation=org, horizon_days=120)
    row = WorkOrderTask.objects.get(task_code="filter_replace")
    # 400 h to the 4000 h change at 12 h/day: 33.3 days after 20 February.
    assert row.due_date == dt.date(2025, 3, 25)
    # The unit then runs round the clock (24 h/day): the change comes sooner.
    last = t0 + dt.timedelta(days=50)
    for k in range(1, 5):
        meter_reading_record(ahu=ahu, hours=3600 + 48 * k, taken_at=last + dt.timedelta(days=2 * k), source="api")
    result = work_orders_generate(organisation=org, horizon_days=120)
    assert (result.moved, result.created) == (1, 0)
    assert WorkOrderTask.objects.filter(task_code="filter_replace").count() == 1
    row.refresh_from_db()
    assert dt.date(2025, 3, 3) <= row.due_date < dt.date(2025, 3, 25)
    assert row.work_order.due_date <= row.due_date
