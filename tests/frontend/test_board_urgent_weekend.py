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


def test_a_weekend_day_typed_for_work_the_board_would_not_offer_it_is_kept_with_a_warning(clock, login):
    """The service allows a weekend plan (a shutdown out of hours, a weekend rota: every day has the person's
    capacity), so a Sunday typed for normal work is saved as typed, and the page warns after saving, naming the day
    typed and what the board offers. Urgent work already due typed for the site's today, the Saturday, is the
    board's own offer: no warning."""
    from django.contrib.messages import get_messages
    from django.urls import reverse

    clock.move_to(SATURDAY)
    scenario = scenario_module.build()
    # Every skill: the plans are saved at once, no missing-skill warning to confirm first.
    scenario.technician.skills = TaskDefinition.Skill.values
    scenario.technician.save(update_fields=["skills"])
    normal = make_work(ahu=scenario.unit_a, title="Filter check", due=dt.date(2026, 12, 7))
    urgent = make_work(ahu=scenario.unit_a, title="Frost thermostat check", due=dt.date(2026, 12, 4))
    WorkOrder.objects.filter(pk=urgent.pk).update(priority=WorkOrder.Priority.URGENT)
    urgent.refresh_from_db()
    client = login(scenario.supervisor)

    def plan(wo, day):
        url = reverse("frontend:assign", kwargs={"public_id": wo.public_id})
        sent = {"assignee": scenario.technician.pk, "version": wo.version, "scheduled_for": day, "week": ""}
        response = client.post(url, sent, follow=True)
        wo.refresh_from_db()
        return response

    page = plan(normal, "2026-12-06")
    assert normal.scheduled_for == dt.date(2026, 12, 6) and normal.assignee == scenario.technician
    html = page.content.decode()
    warning = html.split('class="warning" data-warning>')[1].split("</li>")[0]
    assert "AHU-01 (North block) — Filter check: Day 2026-12-06 is a Sunday: kept as typed" in warning
    assert "the board offers a weekday (Monday to Friday)" in warning
    assert "a Saturday or Sunday only to urgent work already due, on the site&#x27;s today" in warning

    page = plan(urgent, "05.12.2026")
    assert urgent.scheduled_for == dt.date(2026, 12, 5)
    assert "data-warning" not in page.content.decode()
    assert not [m for m in get_messages(page.wsgi_request) if m.level_tag == "warning"]
