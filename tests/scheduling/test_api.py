"""Scheduling API and the calendar feed, driven through real endpoints."""

import datetime as dt

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from icalendar import Calendar

from scheduling.engine import work_orders_generate
from scheduling.models import TaskDefinition, WorkOrder
from scheduling.services import calendar_feed_issue, calendar_feed_revoke, work_order_assign
from tests.conftest import TEST_NOW
from tests.factories.inventory import make_full_unit
from tests.factories.scheduling import make_supervisor, make_technician

SKILLS = TaskDefinition.Skill.values  # the technician has every skill: no missing-skill warning to confirm

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 3, 3)


@pytest.fixture
def world(library):
    ahu = make_full_unit(service_start=dt.date(2024, 1, 15))
    org = ahu.building.site.organisation
    work_orders_generate(organisation=org, today=TODAY)
    other = make_full_unit(service_start=dt.date(2024, 1, 15))
    work_orders_generate(organisation=other.building.site.organisation, today=TODAY)
    return {
        "ahu": ahu,
        "org": org,
        "sup": make_supervisor(org),
        "tech": make_technician(org, skills=SKILLS),
        "other": other,
    }


def test_work_orders_of_another_organisation_are_invisible(api_client, world):
    """A supervisor lists only their organisation's work; another tenant's order is a 404."""
    api_client.force_authenticate(world["sup"])
    rows = api_client.get("/api/scheduling/work-orders/").json()
    assert rows and {r["unit"]["tag"] for r in rows} == {world["ahu"].tag}
    foreign = WorkOrder.objects.filter(ahu=world["other"]).first()
    assert api_client.get(f"/api/scheduling/work-orders/{foreign.public_id}/").status_code == 404


def test_technician_sees_the_work_of_the_sites_where_they_work(api_client, world):
    """A technician sees nothing until work is assigned to them, then the work on that site, colleagues' too
    (the unit's history matters on the job), and nothing of another organisation."""
    api_client.force_authenticate(world["tech"])
    assert api_client.get("/api/scheduling/work-orders/").json() == []
    wo = WorkOrder.objects.filter(ahu=world["ahu"]).first()
    work_order_assign(work_order=wo, assignee=world["tech"], by=world["sup"])
    rows = api_client.get("/api/scheduling/work-orders/").json()
    site = world["ahu"].building.site
    expected = {str(x.public_id) for x in WorkOrder.objects.filter(ahu__building__site=site)}
    assert str(wo.public_id) in expected and {r["id"] for r in rows} == expected


def test_assign_and_transition_with_version(api_client, world):
    """Assigning needs the current version; a stale one is a 409; the technician may start their own visit."""
    wo = WorkOrder.objects.filter(ahu=world["ahu"]).first()
    api_client.force_authenticate(world["sup"])
    url = f"/api/scheduling/work-orders/{wo.public_id}/"
    r = api_client.post(url + "assign/", {"assignee": world["tech"].username, "version": 1}, format="json")
    assert r.status_code == 200 and r.json()["state"] == "assigned" and r.json()["version"] == 2
    r = api_client.post(url + "assign/", {"assignee": world["tech"].username, "version": 1}, format="json")
    assert r.status_code == 409 and r.json()["current_version"] == 2
    api_client.force_authenticate(world["tech"])
    r = api_client.post(url + "transition/", {"to_state": "verified", "version": 2}, format="json")
    assert r.status_code == 403
    r = api_client.post(url + "transition/", {"to_state": "in_progress", "version": 2}, format="json")
    assert r.status_code == 200 and r.json()["state"] == "in_progress"
    r = api_client.post(url + "transition/", {"to_state": "planned", "version": 3}, format="json")
    assert r.status_code == 403


def test_illegal_transition_gives_a_field_error(api_client, world):
    """An illegal move answers 400 naming to_state and what is allowed."""
    wo = WorkOrder.objects.filter(ahu=world["ahu"]).first()
    api_client.force_authenticate(world["sup"])
    r = api_client.post(
        f"/api/scheduling/work-orders/{wo.public_id}/transition/",
        {"to_state": "completed", "version": 1},
        format="json",
    )
    assert r.status_code == 400
    assert "cannot move from planned to completed; allowed: assigned" in r.json()["errors"]["to_state"][0]


def test_list_and_board_take_a_constant_number_of_queries(api_client, world):
    """Listing work orders costs the same number of queries for one unit or three."""
    api_client.force_authenticate(world["sup"])
    with CaptureQueriesContext(connection) as one:
        api_client.get("/api/scheduling/work-orders/")
    for _ in range(2):
        make_full_unit(building=world["ahu"].building, service_start=dt.date(2024, 1, 15))
    work_orders_generate(organisation=world["org"], today=TODAY)
    with CaptureQueriesContext(connection) as three:
        rows = api_client.get("/api/scheduling/work-orders/").json()
    assert len({r["unit"]["tag"] for r in rows}) == 3
    assert len(three) == len(one)
    r = api_client.get("/api/scheduling/board/?week=2025-03-10")
    assert r.status_code == 200 and r.json()["week_start"] == "2025-03-10"


def test_today_lists_visits_with_tasks_in_order(api_client, world):
    """The technician's day lists each site once with its work orders and tasks."""
    wo = WorkOrder.objects.filter(ahu=world["ahu"]).order_by("due_date").first()
    work_order_assign(work_order=wo, assignee=world["tech"], by=world["sup"])
    api_client.force_authenticate(world["tech"])
    r = api_client.get(f"/api/scheduling/today/?day={wo.due_date.isoformat()}")
    assert r.status_code == 200
    visits = r.json()
    assert [v["order"] for v in visits] == [1]
    assert visits[0]["work_orders"][0]["tasks"]


def test_calendar_feed_lists_assigned_visits_and_revoked_token_is_404(client, world):
    """The secret feed carries the technician's visits; after revocation the URL answers 404."""
    wo = WorkOrder.objects.filter(ahu=world["ahu"]).order_by("due_date").first()
    work_order_assign(work_order=wo, assignee=world["tech"], by=world["sup"])
    feed = calendar_feed_issue(user=world["tech"])
    r = client.get(f"/calendar/{feed.token}.ics")
    assert r.status_code == 200 and r["Content-Type"].startswith("text/calendar")
    events = list(Calendar.from_ical(r.content).walk("VEVENT"))
    assert len(events) == 1
    assert events[0]["uid"] == f"{wo.public_id}@plenum"
    assert events[0].decoded("dtstart") == wo.due_date
    assert world["ahu"].tag in str(events[0]["summary"])
    calendar_feed_revoke(feed=feed)
    assert client.get(f"/calendar/{feed.token}.ics").status_code == 404
    assert client.get("/calendar/not-a-token.ics").status_code == 404


def test_meter_reading_api_refuses_backwards(api_client, world):
    """Pushing a lower reading through the API is a 400 naming hours."""
    api_client.force_authenticate(world["sup"])
    label = world["ahu"].label_code
    ok = api_client.post(
        "/api/scheduling/meter-readings/",
        {"unit_label": label, "hours": 100, "taken_at": "2025-01-01T08:00:00Z"},
        format="json",
    )
    assert ok.status_code == 201
    bad = api_client.post(
        "/api/scheduling/meter-readings/",
        {"unit_label": label, "hours": 50, "taken_at": "2025-01-02T08:00:00Z"},
        format="json",
    )
    assert bad.status_code == 400 and "below the previous reading" in bad.json()["errors"]["hours"][0]


def test_generate_command_prints_counts(world, capsys):
    """The command reports created, moved and unchanged; a second run creates nothing."""
    from django.core.management import call_command

    call_command("generate_work_orders", organisation=world["org"].slug, dry_run=True)
    out = capsys.readouterr().out
    assert "created" in out and "(dry run)" in out
    call_command("generate_work_orders", organisation=world["org"].slug, horizon=30)
    call_command("generate_work_orders", organisation=world["org"].slug, horizon=30)
    assert f"{world['org'].slug}: created 0, moved 0" in capsys.readouterr().out.splitlines()[-2]


@pytest.mark.parametrize(
    ("field", "value", "says"),
    [
        ("interval_value", "nan", ["Interval value", "'nan'", "a whole number of at least 1"]),
        ("interval_value", 1e308, ["Interval value", "1e+308", "a whole number"]),
        ("interval_value", "inf", ["Interval value", "'inf'", "a whole number"]),
        ("grace_days", 366, ["Grace days", "366", "from 0 to 365"]),
        # A negative is a whole number: the range is what it misses (tryout); a non-number is told the range too.
        ("estimated_minutes", -1, ["Estimated minutes: -1 is out of range; allowed: a whole number from 1 to 1440"]),
        ("estimated_minutes", "-1", ["Estimated minutes: -1 is out of range; allowed: a whole number from 1 to 1440"]),
        (
            "estimated_minutes",
            "12a",
            ["Estimated minutes: '12a' is not a whole number; allowed: a whole number from 1 to 1440"],
        ),
    ],
)
def test_task_fields_refused_name_the_field_the_value_and_the_range(api_client, world, field, value, says):
    """PATCH /api/scheduling/tasks/<code>/ with a bad number says which field, what was sent and what is allowed."""
    from scheduling.models import TaskDefinition

    api_client.force_authenticate(world["sup"])
    code = TaskDefinition.objects.filter(trigger="interval").values_list("code", flat=True)[0]
    response = api_client.patch(f"/api/scheduling/tasks/{code}/", {field: value}, format="json")
    assert response.status_code == 400
    message = response.json()["errors"][field][0]
    assert all(part in message for part in says), message


def test_meter_and_schedule_refusals_name_the_value(api_client, world):
    """Negative hours, a year-1 reading time and 30 February are refused with the value as sent and what is allowed."""
    api_client.force_authenticate(world["sup"])
    label = world["ahu"].label_code
    url = "/api/scheduling/meter-readings/"
    negative = api_client.post(
        url, {"unit_label": label, "hours": -1, "taken_at": "2025-01-01T08:00:00Z"}, format="json"
    )
    assert negative.status_code == 400
    assert "-1" in negative.json()["errors"]["hours"][0] and "at least 0" in negative.json()["errors"]["hours"][0]
    year_one = api_client.post(
        url, {"unit_label": label, "hours": 10, "taken_at": "0001-01-01T00:00:00Z"}, format="json"
    )
    assert year_one.status_code == 400
    message = year_one.json()["errors"]["taken_at"][0]
    assert "0001-01-01 00:00" in message and "LMT" not in message and "2000" in message, message

    wo = WorkOrder.objects.filter(ahu=world["ahu"]).first()
    response = api_client.post(
        f"/api/scheduling/work-orders/{wo.public_id}/schedule/",
        {"version": wo.version, "scheduled_for": "2026-02-30"},
        format="json",
    )
    assert response.status_code == 400
    message = response.json()["errors"]["scheduled_for"][0]
    assert "2026-02-30" in message and "YYYY-MM-DD" in message, message


def test_assign_and_plan_reads_and_locks_the_work_order_once(api_client, world, clock):
    """Assigning a technician and planning the day in one request (the board's row form and this route share
    ``work_order_assign_and_plan``) reads the work order's row under its lock once for both changes: both are
    saved, each with its version and audit event, and a refused day leaves it unassigned."""
    wo = WorkOrder.objects.filter(ahu=world["ahu"], state=WorkOrder.State.PLANNED).first()
    api_client.force_authenticate(world["sup"])
    url = f"/api/scheduling/work-orders/{wo.public_id}/assign/"
    day = TEST_NOW.date() + dt.timedelta(days=2)  # the controlled clock's today, every site's
    refused = api_client.post(
        url, {"assignee": world["tech"].username, "version": wo.version, "scheduled_for": "2000-01-03"}, format="json"
    )
    assert refused.status_code == 400 and "scheduled_for" in refused.json()["errors"], refused.json()
    wo.refresh_from_db()
    assert (wo.state, wo.assignee_id, wo.version) == (WorkOrder.State.PLANNED, None, 1)
    body = {"assignee": world["tech"].username, "version": wo.version, "scheduled_for": day.isoformat()}
    with CaptureQueriesContext(connection) as seen:
        answer = api_client.post(url, {**body, "confirm_over_capacity": True}, format="json")
    assert answer.status_code == 200, answer.json()
    assert (answer.json()["state"], answer.json()["version"]) == ("assigned", 3)
    wo.refresh_from_db()
    assert (wo.assignee_id, wo.scheduled_for) == (world["tech"].pk, day)
    # The route reads it by its public id (access, then the answer); the service by its row id, under the lock.
    by_row = [
        q["sql"]
        for q in seen.captured_queries
        if q["sql"].startswith('SELECT "scheduling_workorder"."id"')
        and 'WHERE "scheduling_workorder"."id" = ' in q["sql"]
    ]
    assert len(by_row) == 1, by_row
