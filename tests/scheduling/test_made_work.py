"""Work beyond the plan (scheduling.services.made_work.work_order_create, frost_checks_create).

On a fixed clock: Wednesday 3 December 2025, 09:00 UTC (10:00 in Amsterdam, where the site is).

- A call-out is due by a time on the site's clock; its day is the due date and the day it is planned for; a task
  said in words becomes a task of that work order only (never in the organisation's task set) with its minutes
  and skill, so the day load and the skills check read it; every refusal is keyed to its field and nothing is
  half-saved.
- "Check freeze protection before tonight's frost" makes one urgent ad-hoc work order per in-service unit with an
  electric preheater or a preheat water coil, with the library's freeze-protection task on each protected part,
  due at sunset today on the site's clock; a unit already holding an open check gets no second one.

Sunset in Amsterdam (52.37 N, 4.90 E) on 3 December: about 16:30 CET (from memory; almanacs give 16:29);
engineering.sun's approximation is within a few minutes.
"""

import datetime as dt
import zoneinfo

import pytest
import time_machine
from django.core.exceptions import ValidationError

from accounts.models import AuditEvent
from engineering.sun import sunset_utc
from inventory.models import AHU
from scheduling.models import TaskDefinition, WorkOrder, WorkOrderTask
from scheduling.selectors import assignment_check, effective_tasks
from scheduling.services.made_work import (
    FROST_TITLE,
    OneOffTask,
    frost_checks_create,
    work_order_create,
)
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import AHUFactory, BuildingFactory, ComponentFactory, SiteFactory
from tests.factories.scheduling import make_supervisor, make_technician

pytestmark = pytest.mark.django_db

NOW = dt.datetime(2025, 12, 3, 9, 0, tzinfo=dt.UTC)
AMS = zoneinfo.ZoneInfo("Europe/Amsterdam")
PREHEATER = {"power_w": 24000, "stages": 2, "switch_on_c": 3}
PREHEAT_COIL = {
    "duty": "preheat",
    "fluid": "water",
    "design_capacity_w": 30000,
    "design_water_flow_m3s": 0.0004,
    "entering_water_c": 70,
    "leaving_water_c": 50,
}


@pytest.fixture
def clock():
    with time_machine.travel(NOW, tick=False):
        yield


@pytest.fixture
def world(library, clock):
    org = OrganisationFactory(name="Fjord Air Service")
    site = SiteFactory(organisation=org, name="Harbour Yard", latitude=52.37, longitude=4.90)
    north = BuildingFactory(site=site, name="North Hall")
    south = BuildingFactory(site=site, name="South Hall")
    electric = AHUFactory(building=north, tag="AHU-01")
    ComponentFactory(ahu=electric, kind="electric_preheater", name="Preheater", specs=PREHEATER)
    water = AHUFactory(building=south, tag="AHU-01")
    ComponentFactory(ahu=water, kind="coil", name="Preheat coil", specs=PREHEAT_COIL)
    plain = AHUFactory(building=south, tag="AHU-02")  # filters only: no freeze risk of its own
    ComponentFactory(ahu=plain)
    retired = AHUFactory(building=north, tag="AHU-09", status=AHU.Status.RETIRED)
    ComponentFactory(ahu=retired, kind="electric_preheater", name="Old preheater", specs=PREHEATER)
    tech = make_technician(org, username="lena", skills=["mechanical"], daily_capacity_hours=7.5)
    supervisor = make_supervisor(org, username="ruth")
    return {
        "org": org, "site": site, "electric": electric, "water": water, "plain": plain, "retired": retired,
        "tech": tech, "supervisor": supervisor,
    }  # fmt: skip


def _callout(w, **changes):
    fields = {
        "ahu": w["plain"],
        "by": w["supervisor"],
        "kind": WorkOrder.Kind.CALL_OUT,
        "title": "Office too warm, fan noisy",
        "priority": WorkOrder.Priority.URGENT,
        "due_by": dt.datetime(2025, 12, 3, 14, 0, tzinfo=AMS),
        "one_off": [OneOffTask(name="Listen to the supply fan and check the belt", minutes=90, skill="mechanical")],
    }
    return work_order_create(**{**fields, **changes})


def test_a_call_out_is_due_by_its_time_and_planned_on_its_day(world):
    wo = _callout(world, assignee=world["tech"])
    assert wo.kind == "call_out" and wo.get_kind_display() == "Call-out"
    assert wo.due_by == dt.datetime(2025, 12, 3, 13, 0, tzinfo=dt.UTC)
    assert wo.due_date == wo.scheduled_for == dt.date(2025, 12, 3)
    assert wo.state == WorkOrder.State.ASSIGNED and wo.assignee == world["tech"]
    assert wo.approval == WorkOrder.Approval.NOT_NEEDED and wo.state_words == "assigned"
    (task,) = wo.tasks.select_related("task")
    assert task.task.estimated_minutes == 90 and task.task.skill == "mechanical"
    assert task.task.safety_notes.startswith("Lock out and tag out")
    # Written for this work order only: never offered as a task of the organisation.
    assert task.task_code not in effective_tasks(organisation=world["org"], include_disabled=True)
    assert AuditEvent.objects.filter(action="work_order_create").count() == 1
    # The board's check reads it like any other work: 1.5 h of tasks on her day.
    check = assignment_check(work_order=wo, technician=world["tech"], day=wo.scheduled_for)
    assert check.load.task_minutes == 90 and not check.over and check.missing_skills == ()


def test_library_tasks_go_on_the_parts_they_are_done_on(world):
    wo = _callout(
        world, ahu=world["electric"], one_off=[], tasks=[effective_tasks(organisation=world["org"])["preheater_freeze"]]
    )
    (row,) = wo.tasks.select_related("component")
    assert row.component.name == "Preheater"
    check = assignment_check(work_order=wo, technician=world["tech"], day=wo.scheduled_for)
    assert check.missing_skills == ("electrical",)


@pytest.mark.parametrize(
    "changes,field,words",
    [
        ({"title": ""}, "title", "Title is required"),
        ({"title": "x" * 10_000}, "title", "10000 characters is too long"),
        ({"title": "fan\x00noise"}, "title", "control characters"),
        ({"priority": "sometime"}, "priority", "'sometime' is not one of low, normal, high, urgent"),
        ({"due_by": dt.datetime(2025, 12, 3, 9, 0, tzinfo=AMS)}, "due_by", "is in the past at Harbour Yard"),
        ({"one_off": []}, "tasks", "none chosen"),
        (
            {"one_off": [OneOffTask(name="Look", minutes=0, skill="mechanical")]},
            "task_minutes",
            "allowed: a whole number from 1 to 960",
        ),
        ({"one_off": [OneOffTask(name="Look", minutes=30, skill="juggling")]}, "task_skill", "'juggling'"),
    ],
)
def test_refusals_are_keyed_to_their_field_and_nothing_is_saved(world, changes, field, words):
    with pytest.raises(ValidationError) as exc:
        _callout(world, **changes)
    assert words in " ".join(exc.value.message_dict[field])
    assert not WorkOrder.objects.exists() and not TaskDefinition.objects.filter(code__startswith="once-").exists()


def test_a_retired_unit_and_a_deactivated_technician_are_refused(world):
    world["tech"].is_active = False
    world["tech"].save()
    with pytest.raises(ValidationError) as exc:
        _callout(world, ahu=world["retired"], assignee=world["tech"])
    assert "AHU-09 (North Hall) is retired" in exc.value.message_dict["unit"][0]
    assert "no technician 'lena'" in exc.value.message_dict["assignee"][0]
    assert not WorkOrder.objects.exists()


def test_frost_check_makes_one_urgent_order_per_protected_unit_due_at_sunset(world):
    result = frost_checks_create(site=world["site"], by=world["supervisor"])
    sunset = sunset_utc(latitude=52.37, longitude=4.90, day=dt.date(2025, 12, 3)).astimezone(AMS)
    assert dt.time(16, 20) <= sunset.time() <= dt.time(16, 40)  # almanac: 16:29 CET (from memory)
    assert result.due_by == sunset.replace(second=0, microsecond=0) and result.due_why == "sunset there"
    made = {wo.ahu.display_name: wo for wo in result.created}
    # Both AHU-01s, told apart by their building; not the filter-only unit, not the retired one.
    assert set(made) == {"AHU-01 (North Hall)", "AHU-01 (South Hall)"}
    for wo in made.values():
        assert (wo.kind, wo.priority, wo.title) == ("ad_hoc", "urgent", FROST_TITLE)
        assert wo.due_date == dt.date(2025, 12, 3) and wo.state == WorkOrder.State.PLANNED
        assert [t.task_code for t in wo.tasks.all()] == ["preheater_freeze"]
    assert WorkOrderTask.objects.get(work_order=made["AHU-01 (South Hall)"]).component.name == "Preheat coil"

    # Pressed again (or by a colleague): nothing doubled, the open checks are named.
    again = frost_checks_create(site=world["site"], by=world["supervisor"])
    assert again.created == [] and {wo.pk for wo in again.already_open} == {wo.pk for wo in result.created}
    assert WorkOrder.objects.count() == 2


def test_after_sunset_the_frost_check_is_due_within_the_hour(world):
    with time_machine.travel(dt.datetime(2025, 12, 3, 17, 10, tzinfo=dt.UTC), tick=False):
        result = frost_checks_create(site=world["site"], by=world["supervisor"])
    assert result.due_by == dt.datetime(2025, 12, 3, 19, 10, tzinfo=AMS)
    assert result.due_why == "within the hour: the sun has set there"
    assert len(result.created) == 2
