"""Jobs skip, not abort: one unit, rule or visit stored out of bounds is left out and named; the rest is done.

The poisoned rows are written with ``queryset.update`` (bypassing every check), as rows stored before the
input policy would be.
"""

import datetime as dt

import pytest

from scheduling import tasks
from scheduling.engine import work_orders_generate
from scheduling.models import TaskDefinition, WorkOrder, WorkOrderTask
from tests.factories.inventory import make_full_unit

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 3)


def _two_units():
    good = make_full_unit(service_start=dt.date(2024, 1, 15), tag="AHU-01")
    bad = make_full_unit(building=good.building, service_start=dt.date(2024, 1, 15), tag="AHU-03")
    type(bad).objects.filter(pk=bad.pk).update(service_start=dt.date(9999, 12, 31))
    return good, bad


def test_a_unit_starting_in_9999_is_skipped_and_named_the_others_are_generated(library):
    """A unit whose service start is 9999-12-31 gets no work and is named; its neighbour gets its work."""
    good, bad = _two_units()
    result = work_orders_generate(organisation=good.building.site.organisation, today=TODAY)
    assert WorkOrderTask.objects.filter(ahu=good).exists()
    assert not WorkOrderTask.objects.filter(ahu=bad).exists()
    site = good.building.site.name
    assert result.skipped == [f"AHU-03 at {site}: service start 9999-12-31 is out of range; "
                              "allowed: 1950-01-01 to 2035-03-03"]  # fmt: skip


def test_the_celery_task_returns_the_skipped_units(library):
    """The nightly task's result names what it skipped, beside its counts."""
    good, _ = _two_units()
    out = tasks.work_orders_generate(good.building.site.organisation.pk, today=TODAY.isoformat())
    assert out["created"] > 0
    assert len(out["skipped"]) == 1 and out["skipped"][0].startswith("AHU-03 at ")


def test_a_rule_stored_with_an_interval_of_a_million_months_is_skipped_the_other_rules_run(library):
    """An interval of 1,000,000 months (year 10000 and beyond) skips that rule alone, named with the limit."""
    ahu = make_full_unit(service_start=dt.date(2024, 1, 15))
    interval_tasks = TaskDefinition.objects.filter(trigger=TaskDefinition.Trigger.INTERVAL, interval_unit="months")
    poisoned = interval_tasks.first()
    TaskDefinition.objects.filter(pk=poisoned.pk).update(interval_value=1_000_000)
    result = work_orders_generate(organisation=ahu.building.site.organisation, today=TODAY)
    assert WorkOrderTask.objects.filter(ahu=ahu).exists()
    assert not WorkOrderTask.objects.filter(task_code=poisoned.code).exists()
    assert result.skipped == [
        f"maintenance rule {poisoned.name}: Interval: 1000000 months is out of range; allowed: 1 to 120 months "
        "(ten years)"
    ]


def test_date_arithmetic_past_the_calendar_skips_that_task_not_the_run(library, monkeypatch):
    """Should a date sum still run past year 9999 (a case no check foresaw), that task on that unit is named
    and skipped; every other task is generated."""
    from scheduling.engine import occurrences  # where the rules read their calendar grid

    ahu = make_full_unit(service_start=dt.date(2024, 1, 15))
    org = ahu.building.site.organisation
    wanted = {line.split()[2] for line in work_orders_generate(organisation=org, today=TODAY, dry_run=True).lines}
    victim = TaskDefinition.objects.get(
        code=sorted(wanted & set(TaskDefinition.objects.filter(trigger="interval").values_list("code", flat=True)))[0]
    )
    real = occurrences.calendar_occurrences

    def overflowing(*, anchor, value, unit, start, end):
        if (value, unit) == (victim.interval_value, victim.interval_unit):
            raise OverflowError("date value out of range")
        return real(anchor=anchor, value=value, unit=unit, start=start, end=end)

    monkeypatch.setattr(occurrences, "calendar_occurrences", overflowing)
    result = work_orders_generate(organisation=org, today=TODAY)
    assert WorkOrderTask.objects.filter(ahu=ahu).exists()
    assert not WorkOrderTask.objects.filter(task_code=victim.code).exists()
    assert any(line.startswith(f"{ahu.tag} at ") and victim.name in line for line in result.skipped)
    assert all("cannot be worked out" in line for line in result.skipped)
    assert WorkOrder.objects.exists()


def test_a_unit_in_service_since_1995_gets_its_work_planned_in_the_plan_window(library):
    """A unit started in 1995 (20-40 years of service is normal, common practice) is not skipped: it gets work,
    and every visit is due inside the plan window (none dated in the last century)."""
    unit = make_full_unit(service_start=dt.date(1995, 6, 1), tag="AHU-95")
    result = work_orders_generate(organisation=unit.building.site.organisation, today=TODAY)
    assert result.skipped == []
    due = list(WorkOrder.objects.filter(ahu=unit).values_list("due_date", flat=True))
    assert due and min(due) >= dt.date(2000, 1, 1)
