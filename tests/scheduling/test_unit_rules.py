"""A unit's own rule numbers: interval, grace, lead time and run-hours per unit, read by the due-date engine."""

import datetime as dt

import pytest
from django.core.exceptions import ValidationError

from accounts.models import AuditEvent
from scheduling.engine import work_orders_generate
from scheduling.models import UnitTaskSetting, WorkOrderTask
from scheduling.selectors import effective_tasks
from scheduling.services.library import unit_task_rule_set
from tests.factories.inventory import BuildingFactory, make_full_unit
from tests.factories.scheduling import make_supervisor

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 3)  # a fixed day; the units' calendar grid starts at their service start


def _first_filter_check(ahu) -> WorkOrderTask:
    return WorkOrderTask.objects.filter(ahu=ahu, task_code="filter_check").order_by("due_date").first()


def _two_units():
    first = make_full_unit(service_start=dt.date(2024, 12, 15), tag="AHU-01")
    second = make_full_unit(
        service_start=dt.date(2024, 12, 15), tag="AHU-02", building=BuildingFactory(site=first.building.site)
    )
    return first, second


def test_a_units_own_interval_moves_its_next_due_date(library):
    """Filters every 2 weeks on one unit (the library's monthly elsewhere): its first check comes on 9 March,
    the other unit's on 15 March; its own grace of 2 days makes the visit overdue on 12 March."""
    first, second = _two_units()
    org = first.building.site.organisation
    supervisor = make_supervisor(organisation=org)
    task = effective_tasks(organisation=org)["filter_check"]
    assert (task.interval_value, task.interval_unit) == (1, "months")
    unit_task_rule_set(
        ahu=second,
        task=task,
        numbers={"interval_value": 2, "interval_unit": "weeks", "grace_days": 2},
        reason="Dusty site next to a building yard",
        by=supervisor,
    )
    work_orders_generate(organisation=org, today=TODAY, horizon_days=30)
    assert _first_filter_check(first).due_date == dt.date(2025, 3, 15)
    own = _first_filter_check(second)
    # Calendar grid every 14 days from 2024-12-15: ..., 23 Feb, 9 Mar, 23 Mar.
    assert own.due_date == dt.date(2025, 3, 9)
    assert own.work_order.overdue_on == dt.date(2025, 3, 12)  # grace 2 days: 10 and 11 March still on time
    assert (
        sorted(WorkOrderTask.objects.filter(ahu=second, task_code="filter_check").values_list("due_date", flat=True))
        == [dt.date(2025, 3, 9)] * 2 + [dt.date(2025, 3, 23)] * 2
    )  # two filter banks
    event = AuditEvent.objects.get(action="unit_task_rule_set")
    assert event.changes["reason"] == "Dusty site next to a building yard"
    assert event.changes["after"]["interval_value"] == 2


def test_emptying_a_units_number_follows_the_organisation_again(library):
    """An empty value means "the organisation's": the unit's checks come back to the monthly grid."""
    first, second = _two_units()
    org = first.building.site.organisation
    task = effective_tasks(organisation=org)["filter_check"]
    unit_task_rule_set(ahu=second, task=task, numbers={"interval_value": 2, "interval_unit": "weeks"}, reason="x")
    unit_task_rule_set(ahu=second, task=task, numbers={"interval_value": None, "interval_unit": ""}, reason="back")
    setting = UnitTaskSetting.objects.get(ahu=second, task_code="filter_check")
    assert (setting.interval_value, setting.interval_unit, setting.enabled) == (None, "", True)
    work_orders_generate(organisation=org, today=TODAY, horizon_days=30)
    assert _first_filter_check(second).due_date == dt.date(2025, 3, 15)


@pytest.mark.parametrize(
    ("numbers", "field", "words"),
    [
        ({"interval_value": 0, "interval_unit": "weeks"}, "interval_value", "allowed: 1 to 521 weeks"),
        ({"interval_value": 121}, "interval_value", "allowed: 1 to 120 months"),
        ({"grace_days": 366}, "grace_days", "from 0 to 365"),
        ({"run_hours": 500}, "run_hours", "not a number"),
        ({"interval_unit": "fortnights"}, "interval_unit", "not one of days, weeks, months"),
    ],
)
def test_a_number_out_of_bounds_is_refused_and_nothing_saved(library, numbers, field, words):
    """Bounds are the rule's own (scheduling.inputs: ten years at most); a number the rule has not is refused."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    task = effective_tasks(organisation=ahu.building.site.organisation)["filter_check"]
    with pytest.raises(ValidationError) as caught:
        unit_task_rule_set(ahu=ahu, task=task, numbers=numbers, reason="typo test")
    assert words in " ".join(caught.value.message_dict[field])
    assert not UnitTaskSetting.objects.exists()


def test_a_reason_is_required(library):
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    task = effective_tasks(organisation=ahu.building.site.organisation)["filter_check"]
    with pytest.raises(ValidationError) as caught:
        unit_task_rule_set(ahu=ahu, task=task, numbers={"grace_days": 3}, reason="  ")
    assert "reason" in caught.value.message_dict
    assert not UnitTaskSetting.objects.exists()


def test_a_units_number_stored_out_of_bounds_skips_that_rule_and_names_it(library):
    """A row written past the checks (psql, an old import) is left out of generation and named; the rest runs."""
    ahu = make_full_unit(service_start=dt.date(2024, 12, 15))
    UnitTaskSetting.objects.create(ahu=ahu, task_code="filter_check", enabled=True, interval_value=1_000_000)
    result = work_orders_generate(organisation=ahu.building.site.organisation, today=TODAY, horizon_days=30)
    assert not WorkOrderTask.objects.filter(ahu=ahu, task_code="filter_check").exists()
    assert WorkOrderTask.objects.filter(ahu=ahu).exists()
    assert any("1000000 months is out of range" in line and ahu.tag in line for line in result.skipped)
