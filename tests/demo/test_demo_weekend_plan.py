"""The demo plans open work by the board's rule (scheduling.selectors.offered_day, one function): loaded on a
Saturday, urgent work already due goes on the site's today, the Saturday; other work due that day on the Monday
after (its Friday is past)."""

import datetime as dt

import pytest

from frontend.demo import _assign_upcoming
from scheduling.models import TaskDefinition, WorkOrder
from tests.frontend import scenario as scenario_module
from tests.frontend.scenario import make_work

pytestmark = pytest.mark.django_db
SATURDAY = dt.datetime(2026, 12, 5, 10, tzinfo=dt.UTC)  # 11:00 in Amsterdam, the sites' zone


def test_loaded_on_a_saturday_urgent_work_due_is_planned_that_day_and_other_work_the_monday(clock):
    clock.move_to(SATURDAY)
    scenario = scenario_module.build()
    for person in (scenario.technician, scenario.other_technician):  # every skill: the work fits someone's day
        person.skills = [value for value, _ in TaskDefinition.Skill.choices]
        person.save(update_fields=["skills"])
    urgent = make_work(ahu=scenario.unit_a, title="Frost thermostat check", due=dt.date(2026, 12, 4))
    normal = make_work(ahu=scenario.unit_a, title="Filter check", due=dt.date(2026, 12, 5))
    WorkOrder.objects.filter(pk=urgent.pk).update(priority=WorkOrder.Priority.URGENT)
    WorkOrder.objects.filter(pk=normal.pk).update(priority=WorkOrder.Priority.NORMAL)

    _assign_upcoming(organisation=scenario.org, today=dt.date(2026, 12, 5))

    urgent.refresh_from_db()
    normal.refresh_from_db()
    assert urgent.assignee_id is not None and urgent.scheduled_for == dt.date(2026, 12, 5)
    assert normal.assignee_id is not None and normal.scheduled_for == dt.date(2026, 12, 7)
