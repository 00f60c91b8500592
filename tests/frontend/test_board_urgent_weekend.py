"""Urgent work already due is offered the site's today on the board, weekend or not; other work keeps the weekday
rule (the Friday before a weekend due day, the Monday after when that Friday is past)."""

import datetime as dt

import pytest

from scheduling.models import TaskDefinition, WorkOrder

from . import scenario as scenario_module
from .scenario import make_work

pytestmark = pytest.mark.django_db
SATURDAY = dt.datetime(2026, 12, 5, 10, tzinfo=dt.UTC)  # 11:00 in Amsterdam, the sites' zone


def plan_value(html: str, wo: WorkOrder) -> str:
    return html.split(f'id="plan-{wo.public_id}" name="scheduled_for" value="')[1].split('"')[0]


def suggestion_of(html: str, wo: WorkOrder) -> str:
    row = html.split(f'id="row-{wo.public_id}"')[1].split("</tr>")[0]
    return row.split("data-suggested=")[1].split("</p>")[0]


def suggested_day(response, wo: WorkOrder) -> dt.date:
    """The day the suggestion's load was worked out for (board_suggestions), not only the words beside it."""
    rows = [r for column in response.context["columns"] for r in column["rows"]]
    (row,) = [r for r in rows if r["id"] == wo.public_id]
    return row["suggested"]["load"]["date"]


def test_urgent_work_due_is_offered_today_on_a_saturday_and_other_work_the_monday(clock, login):
    clock.move_to(SATURDAY)
    scenario = scenario_module.build()
    for person in (scenario.technician, scenario.other_technician):  # every skill, so each row has a suggestion
        person.skills = [value for value, _ in TaskDefinition.Skill.choices]
        person.save(update_fields=["skills"])

    def work(title, due, priority):
        wo = make_work(ahu=scenario.unit_a, title=title, due=due)
        WorkOrder.objects.filter(pk=wo.pk).update(priority=priority)
        return wo

    frost_overdue = work("Frost thermostat check", dt.date(2026, 12, 4), WorkOrder.Priority.URGENT)
    frost_today = work("Heating coil pump check", dt.date(2026, 12, 5), WorkOrder.Priority.URGENT)
    urgent_sunday = work("Preheat valve check", dt.date(2026, 12, 6), WorkOrder.Priority.URGENT)
    normal_today = work("Filter check", dt.date(2026, 12, 5), WorkOrder.Priority.NORMAL)
    high_overdue = work("Belt check", dt.date(2026, 12, 3), WorkOrder.Priority.HIGH)

    response = login(scenario.supervisor).get("/board/")
    html = response.content.decode()

    # Urgent and due (or overdue): today, the Saturday, and the suggestion is for that day.
    for wo in (frost_overdue, frost_today):
        assert plan_value(html, wo) == "2026-12-05"
        assert "on Sat 5 Dec with this work" in suggestion_of(html, wo)
        assert suggested_day(response, wo) == dt.date(2026, 12, 5)
    # Urgent but not yet due, and not urgent: the weekday rule (Friday 4 Dec is past, so Monday 7 Dec).
    for wo in (urgent_sunday, normal_today, high_overdue):
        assert plan_value(html, wo) == "2026-12-07"
        assert "on Mon 7 Dec with this work" in suggestion_of(html, wo)
        assert suggested_day(response, wo) == dt.date(2026, 12, 7)
    assert "except Urgent work already due or overdue: it is offered today, weekend or not" in html
