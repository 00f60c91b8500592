"""Maintenance rules in the pages: intervals, grace and lead time per organisation and per unit.

Journeys through the Django test client from the page scenario (tests/frontend/scenario.py): each rule shows the
library default and its source beside the value in force; a change needs a reason and is audited; a bad
number (0, negative, past ten years, a word, 1e400) is refused at its field with the value and what is
allowed, and nothing is saved.
"""

from __future__ import annotations

import re

import pytest
from django.urls import reverse

from accounts.models import AuditEvent
from scheduling.models import TaskDefinition, UnitTaskSetting
from scheduling.selectors import effective_tasks

pytestmark = pytest.mark.django_db

RULES = reverse("frontend:rules")


def unit_rules(unit) -> str:
    return reverse("frontend:registry_rules", kwargs={"pk": unit.pk})


def field_error(page: str, code: str, name: str) -> str:
    found = re.search(rf'id="{code}-{name}-error" role="alert">([^<]*)<', page)
    return found.group(1).replace("&#x27;", "'") if found else ""


def saved_rules() -> tuple:
    return (
        list(TaskDefinition.objects.order_by("pk").values()),
        list(UnitTaskSetting.objects.order_by("pk").values()),
        AuditEvent.objects.count(),
    )


def test_each_rule_shows_the_library_default_and_its_source(scenario, login):
    client = login(scenario.supervisor)
    page = client.get(RULES).content.decode()
    assert "Maintenance rules of Brightwater Building Services" in page
    card = page[page.index('id="rule-filter_check"') :]
    card = card[: card.index("</section>")]
    assert "Library default" in card and "Every 1 month (fixed to the calendar); overdue after" in card
    assert "Source of the default" in card and "filter pressure drop checked monthly" in card
    assert "the library&#x27;s" in card or "the library's" in card


def test_the_organisation_changes_an_interval_with_a_reason(scenario, login):
    client = login(scenario.supervisor)
    task = effective_tasks(organisation=scenario.org)["filter_check"]
    post = {"task_code": "filter_check", "action": "numbers", "interval_value": "2", "interval_unit": "months"}
    post["grace_days"] = str(task.grace_days)
    res = client.post(RULES, {**post, "reason": ""})
    assert res.status_code == 400
    assert "Reason is required" in field_error(res.content.decode(), "filter_check", "reason")
    assert effective_tasks(organisation=scenario.org)["filter_check"].interval_value == 1
    res = client.post(RULES, {**post, "reason": "Clean office air, low dust"}, follow=True)
    page = res.content.decode()
    assert "Every 2 months" in page
    own = TaskDefinition.objects.get(organisation=scenario.org, code="filter_check")
    assert own.interval_value == 2
    event = AuditEvent.objects.get(action="task_override")
    assert event.changes == {"interval_value": 2, "reason": "Clean office air, low dust"}
    card = page[page.index('id="rule-filter_check"') :]
    card = card[: card.index("</section>")]
    # The library's default and its source stay beside the organisation's value.
    assert "Every 1 month" in card and "checked monthly" in card and "changed by your organisation" in card


@pytest.mark.parametrize(
    ("name", "typed", "words"),
    [
        ("interval_value", "0", "Interval: 0 is out of range; allowed: a whole number from 1 to 120 months"),
        ("interval_value", "-3", "Interval: -3 is out of range"),
        ("interval_value", "121", "Interval: 121 is out of range; allowed: a whole number from 1 to 120"),
        ("interval_value", "abc", "Interval: 'abc' is not a whole number"),
        ("interval_value", "1e400", "Interval: '1e400' is not a whole number"),
        ("interval_value", "", "Interval is required"),
        ("grace_days", "366", "Grace days before overdue: 366 is out of range; allowed: a whole number from 0 to 365"),
        ("grace_days", "-1", "Grace days before overdue: -1 is out of range"),
        ("interval_unit", "fortnights", "Interval unit: 'fortnights' is not offered"),
    ],
)
def test_a_bad_number_is_refused_at_its_field_and_nothing_saved(scenario, login, name, typed, words):
    client = login(scenario.supervisor)
    before = saved_rules()
    post = {"task_code": "filter_check", "action": "numbers", "interval_value": "1", "interval_unit": "months"}
    post.update({"grace_days": "7", "reason": "trying", name: typed})
    res = client.post(RULES, post)
    assert res.status_code == 400
    page = res.content.decode()
    assert words in field_error(page, "filter_check", name)
    assert f'id="filter_check-{name}"' in page and 'aria-invalid="true"' in page
    if name != "interval_unit":
        assert f'value="{typed}"' in page  # what was typed stays
    assert saved_rules() == before


def test_a_unit_gets_its_own_interval_and_the_page_says_whose_value_is_in_force(scenario, login):
    client = login(scenario.supervisor)
    url = unit_rules(scenario.unit_a)
    page = client.get(url).content.decode()
    assert "Maintenance rules for AHU-01" in page
    post = {"task_code": "filter_check", "action": "numbers", "interval_value": "2", "interval_unit": "weeks"}
    res = client.post(url, {**post, "reason": ""})
    assert res.status_code == 400 and "Reason is required" in field_error(
        res.content.decode(), "filter_check", "reason"
    )
    assert not UnitTaskSetting.objects.exists()
    res = client.post(url, {**post, "grace_days": "", "reason": "Next to a building yard"}, follow=True)
    page = res.content.decode()
    assert "Filter check on AHU-01: Every 2 weeks" in page or "on AHU-01: Every 2 weeks" in page
    setting = UnitTaskSetting.objects.get(ahu=scenario.unit_a, task_code="filter_check")
    assert (setting.interval_value, setting.interval_unit, setting.grace_days, setting.enabled) == (
        2,
        "weeks",
        None,
        True,
    )
    card = page[page.index('id="rule-filter_check"') :]
    card = card[: card.index("</section>")]
    assert "this unit&#x27;s own value" in card or "this unit's own value" in card
    assert "Every 1 month" in card  # the library default still beside it
    assert AuditEvent.objects.get(action="unit_task_rule_set").changes["reason"] == "Next to a building yard"
    # The other unit keeps the organisation's rule.
    other = client.get(unit_rules(scenario.unit_b)).content.decode()
    other_card = other[other.index('id="rule-filter_check"') :]
    assert "the organisation's" in other_card[: other_card.index("</section>")].replace("&#x27;", "'")


@pytest.mark.parametrize(
    ("name", "typed", "words"),
    [
        ("interval_value", "0", "allowed: a whole number from 1 to 521 weeks"),
        ("interval_value", "522", "Interval: 522 is out of range"),
        ("interval_value", "abc", "is not a whole number"),
        ("interval_value", "1e400", "is not a whole number"),
        ("grace_days", "-2", "Grace days before overdue: -2 is out of range"),
    ],
)
def test_a_units_bad_number_is_refused_at_its_field(scenario, login, name, typed, words):
    client = login(scenario.supervisor)
    before = saved_rules()
    post = {"task_code": "filter_check", "action": "numbers", "interval_value": "2", "interval_unit": "weeks"}
    post.update({"reason": "trying", name: typed})
    res = client.post(unit_rules(scenario.unit_a), post)
    assert res.status_code == 400
    assert words in field_error(res.content.decode(), "filter_check", name)
    assert saved_rules() == before


def test_a_season_rules_lead_time_and_a_run_hour_rules_hours_are_editable(scenario, login):
    client = login(scenario.supervisor)
    tasks = effective_tasks(organisation=scenario.org)
    season = next(t for t in tasks.values() if t.trigger == TaskDefinition.Trigger.SEASON)
    runtime = next((t for t in tasks.values() if t.trigger == TaskDefinition.Trigger.RUNTIME), None)
    res = client.post(
        unit_rules(scenario.unit_a),
        {"task_code": season.code, "action": "numbers", "lead_days": "181", "reason": "earlier"},
    )
    assert "Lead time before the season (days): 181 is out of range; allowed: a whole number from 0 to 180" in (
        field_error(res.content.decode(), season.code, "lead_days")
    )
    res = client.post(
        unit_rules(scenario.unit_a),
        {"task_code": season.code, "action": "numbers", "lead_days": "30", "reason": "Exposed intake"},
    )
    assert res.status_code == 302
    assert UnitTaskSetting.objects.get(ahu=scenario.unit_a, task_code=season.code).lead_days == 30
    if runtime is not None:
        res = client.post(
            RULES,
            {"task_code": runtime.code, "action": "numbers", "run_hours": "87661", "grace_days": "7", "reason": "x"},
        )
        assert "Run-hours between tasks (h): 87661 is out of range" in field_error(
            res.content.decode(), runtime.code, "run_hours"
        )


def test_switching_a_task_off_still_works_with_its_reason(scenario, login):
    client = login(scenario.supervisor)
    res = client.post(
        unit_rules(scenario.unit_a), {"task_code": "filter_check", "enabled": "0", "reason": "Filters removed"}
    )
    assert res.status_code == 302
    setting = UnitTaskSetting.objects.get(ahu=scenario.unit_a, task_code="filter_check")
    assert (setting.enabled, setting.reason) == (False, "Filters removed")


@pytest.mark.parametrize("who", ["technician", "manager_a"])
def test_people_who_do_not_manage_cannot_change_rules(scenario, login, who):
    client = login(getattr(scenario, who))
    before = saved_rules()
    post = {"task_code": "filter_check", "action": "numbers", "interval_value": "2", "interval_unit": "weeks"}
    post["reason"] = "x"
    assert client.post(RULES, post).status_code == 403
    assert client.post(unit_rules(scenario.unit_a), post).status_code in (403, 404)
    assert saved_rules() == before
