"""The technician's today and the supervisor's board: plain-row reads, board pages and counts, ETags."""

import datetime as dt
import json

import pytest
import time_machine
from django.utils import timezone
from rest_framework.utils.encoders import JSONEncoder

from scheduling import serializers as s
from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrder
from scheduling.selectors import board_page_for, today_visits_for, work_orders_visible_to
from scheduling.services import work_order_assign
from tests.factories.inventory import AHUFactory, make_full_unit
from tests.factories.scheduling import WorkOrderFactory, make_supervisor, make_technician

pytestmark = [pytest.mark.django_db, pytest.mark.usefixtures("clock")]  # dates made today are the clock's
TODAY = dt.date(2025, 3, 5)  # a Wednesday
MONDAY = dt.date(2025, 3, 3)


def as_json(data):
    return json.loads(json.dumps(data, cls=JSONEncoder))


@pytest.fixture
def world(library):
    ahu = make_full_unit(service_start=dt.date(2024, 1, 15))
    org = ahu.building.site.organisation
    work_orders_generate(organisation=org, today=MONDAY)
    return {"ahu": ahu, "org": org, "sup": make_supervisor(org), "tech": make_technician(org)}


def test_today_rows_match_what_the_serializer_shows(world):
    """The today answer shows each work order as the work-order serializer does, grouped by its site."""
    orders = list(WorkOrder.objects.filter(ahu__building__site__organisation=world["org"]).order_by("due_date")[:3])
    second = make_full_unit(building=AHUFactory(building__site__organisation=world["org"]).building)
    orders.append(WorkOrderFactory(ahu=second, due_date=orders[0].due_date, title="Loose belt", reason="noise"))
    for wo in orders:
        work_order_assign(work_order=wo, assignee=world["tech"], by=world["sup"])
    day = max(wo.due_date for wo in orders)
    new = today_visits_for(technician=world["tech"], day=day, start=(52.0, 4.0))
    assert len(new) == 2 and any(wo["tasks"] for v in new for wo in v["work_orders"])
    assert any(not wo["tasks"] for v in new for wo in v["work_orders"]), "a work order without tasks is kept"
    shown = [wo for v in new for wo in v["work_orders"]]
    instances = {
        wo.public_id: wo for wo in work_orders_visible_to(user=world["sup"]).filter(pk__in=[o.pk for o in orders])
    }
    assert sorted(wo["id"] for wo in shown) == sorted(instances)
    for wo in shown:
        assert as_json(wo) == as_json(s.WorkOrderOutput(instances[wo["id"]]).data)
    for visit in new:
        site = instances[visit["work_orders"][0]["id"]].ahu.building.site
        assert visit["site"] == {
            "id": site.pk,
            "code": site.code,
            "name": site.name,
            "address": site.address,
            "latitude": site.latitude,
            "longitude": site.longitude,
        }
        assert {wo["site"]["id"] for wo in visit["work_orders"]} == {site.pk}


def test_today_lists_only_the_callers_own_open_work(api_client, world):
    """Another technician's work and finished work stay off a technician's day."""
    wo, theirs, done = WorkOrder.objects.filter(ahu=world["ahu"]).order_by("due_date")[:3]
    other = make_technician(world["org"])
    work_order_assign(work_order=wo, assignee=world["tech"], by=world["sup"])
    work_order_assign(work_order=theirs, assignee=other, by=world["sup"])
    WorkOrder.objects.filter(pk=done.pk).update(assignee=world["tech"], state=WorkOrder.State.COMPLETED)
    api_client.force_authenticate(world["tech"])
    visits = api_client.get(f"/api/scheduling/today/?day={done.due_date.isoformat()}").json()
    assert [w["id"] for v in visits for w in v["work_orders"]] == [str(wo.public_id)]


def _board_orders(org, ahu, assignee):
    """Overdue (past the grace window), late but within grace, due this week unassigned and assigned, next week."""
    make = lambda **kw: WorkOrderFactory(organisation=org, ahu=ahu, **kw)  # noqa: E731
    return {
        "overdue": [
            make(due_date=TODAY - dt.timedelta(days=20), overdue_on=TODAY - dt.timedelta(days=3)),
            make(due_date=TODAY - dt.timedelta(days=1), overdue_on=None),
        ],
        "in_grace": [make(due_date=MONDAY, overdue_on=TODAY + dt.timedelta(days=2))],
        "due": [make(due_date=TODAY), make(due_date=TODAY + dt.timedelta(days=2)), make(due_date=TODAY)],
        "assigned": [make(due_date=TODAY + dt.timedelta(days=1), assignee=assignee, state=WorkOrder.State.ASSIGNED)],
        "later": [make(due_date=MONDAY + dt.timedelta(days=9))],
        "pending": [make(due_date=TODAY, approval=WorkOrder.Approval.PENDING)],
    }


def test_board_sections_are_the_pages_board(library):
    """The board (the page and the API read the same ``board_page_for``) puts each work order in its section:
    overdue past its grace window, late within grace and due this week unassigned as due, assigned as assigned."""
    ahu = AHUFactory()
    org = ahu.building.site.organisation
    made = _board_orders(org, ahu, make_technician(org))
    page = board_page_for(organisation=org, week_start=MONDAY, today=TODAY)
    assert {r["id"] for r in page["overdue"]} == {wo.public_id for wo in made["overdue"]}
    assert {r["id"] for r in page["due"]} == {wo.public_id for wo in made["in_grace"] + made["due"]}
    assert [r["id"] for r in page["assigned"]] == [wo.public_id for wo in made["assigned"]]
    assert page["counts"] == {"overdue": 2, "due": 4, "assigned": 1}
    assert {wo.public_id for wo in made["in_grace"]} <= {r["id"] for r in page["due"]}, "late within grace is due"
    shown = {r["id"] for name in ("overdue", "due", "assigned") for r in page[name]}
    assert not shown & {wo.public_id for wo in made["later"] + made["pending"]}


def test_board_pages_each_section_and_keeps_whole_counts(library):
    """With limit=1 each section shows one row, the counts still cover the week, and offset pages on."""
    ahu = AHUFactory()
    org = ahu.building.site.organisation
    _board_orders(org, ahu, make_technician(org))
    whole = board_page_for(organisation=org, week_start=MONDAY, today=TODAY)
    seen = []
    for offset in range(5):
        page = board_page_for(organisation=org, week_start=MONDAY, today=TODAY, limit=1, offset=offset)
        assert page["counts"] == whole["counts"]
        assert all(len(page[name]) <= 1 for name in ("overdue", "due", "assigned"))
        seen += page["due"]
    assert seen == whole["due"]
    only = board_page_for(organisation=org, week_start=MONDAY, today=TODAY, section="overdue")
    assert only["overdue"] == whole["overdue"] and only["due"] == [] and only["assigned"] == []
    per_day = {d["date"]: (d["due"], d["assigned"]) for d in whole["days"]}
    assert len(per_day) == 7 and per_day[MONDAY] == (1, 0)
    assert per_day[TODAY] == (2, 0) and per_day[TODAY + dt.timedelta(days=1)] == (0, 1)
    assert per_day[TODAY + dt.timedelta(days=2)] == (1, 0)


def test_board_api_pages_counts_and_refuses_bad_paging(api_client, world):
    """The board answers a page with whole counts; a limit out of range is a 400 naming limit and the range."""
    api_client.force_authenticate(world["sup"])
    week = timezone.localdate()
    WorkOrderFactory.create_batch(3, organisation=world["org"], ahu=world["ahu"], due_date=week)
    body = api_client.get(f"/api/scheduling/board/?week={week.isoformat()}&limit=1").json()
    assert body["limit"] == 1 and body["counts"]["due"] >= 3 and len(body["due"]) == 1
    assert set(body["due"][0]) >= {"id", "unit", "site", "assignee", "due_date", "version", "allowed_states"}
    r = api_client.get("/api/scheduling/board/?limit=501")
    assert (
        r.status_code == 400
        and "Limit: 501 is out of range" in r.json()["errors"]["limit"][0]
        and "0 to 500" in r.content.decode()
    )
    r = api_client.get("/api/scheduling/board/?section=later")
    assert r.status_code == 400 and "overdue, due, assigned" in r.json()["errors"]["section"][0]


def test_board_is_for_supervisors_of_their_own_organisation(api_client, world):
    """A technician gets 403; another organisation's supervisor sees none of this organisation's work."""
    api_client.force_authenticate(world["tech"])
    assert api_client.get("/api/scheduling/board/").status_code == 403
    stranger = make_supervisor(AHUFactory().building.site.organisation)
    WorkOrderFactory(organisation=world["org"], ahu=world["ahu"], due_date=timezone.localdate())
    api_client.force_authenticate(stranger)
    body = api_client.get("/api/scheduling/board/").json()
    assert body["counts"] == {"overdue": 0, "due": 0, "assigned": 0}


@pytest.mark.parametrize("path", ["/api/scheduling/today/", "/api/scheduling/board/"])
def test_an_unchanged_answer_is_a_304_and_a_change_is_seen(api_client, world, path):
    """Polling with the last ETag costs no body while nothing changed; after a change the new answer comes."""
    wo = WorkOrderFactory(organisation=world["org"], ahu=world["ahu"], due_date=timezone.localdate())
    work_order_assign(work_order=wo, assignee=world["tech"], by=world["sup"])
    api_client.force_authenticate(world["tech"] if "today" in path else world["sup"])
    first = api_client.get(path)
    assert first.status_code == 200 and first["ETag"] and "private" in first["Cache-Control"]
    again = api_client.get(path, HTTP_IF_NONE_MATCH=first["ETag"])
    assert again.status_code == 304 and again.content == b""
    site = world["ahu"].building.site
    site.name = "Harbour Works Annex"
    site.save(update_fields=["name"])
    changed = api_client.get(path, HTTP_IF_NONE_MATCH=first["ETag"])
    assert changed.status_code == 200 and changed["ETag"] != first["ETag"]
    assert "Harbour Works Annex" in changed.content.decode()


def _rule(wo, week_start: dt.date, today: dt.date) -> str | None:
    """The board's rule as the product states it, written out in Python to check the SQL against."""
    week_end = week_start + dt.timedelta(days=7)
    if wo.due_date < today and (wo.overdue_on is None or wo.overdue_on <= today):
        return "overdue"
    # The week of today also holds work due before it, past due but inside its grace window.
    if week_start <= wo.due_date < week_end or (week_start <= today < week_end and wo.due_date < week_start):
        return "assigned" if wo.assignee_id else "due"
    return None


def test_board_counts_and_rows_follow_the_rule_on_mixed_work(library):
    """Across due dates before, in and after the week, grace windows passed, ending today and still running,
    and with and without an assignee, the counts, per-day counts and rows are the rule's, row for row."""
    ahu = AHUFactory()
    org = ahu.building.site.organisation
    tech = make_technician(org)
    made = []
    for shift in range(-12, 12, 2):
        due = TODAY + dt.timedelta(days=shift)
        for grace in (None, 0, 2, 6, 12):
            overdue_on = None if grace is None else due + dt.timedelta(days=grace)
            for who in (None, tech):
                state = WorkOrder.State.ASSIGNED if who else WorkOrder.State.PLANNED
                made.append(
                    WorkOrderFactory(
                        organisation=org, ahu=ahu, due_date=due, overdue_on=overdue_on, assignee=who, state=state
                    )
                )
    made.append(WorkOrderFactory(organisation=org, ahu=ahu, due_date=TODAY, state=WorkOrder.State.COMPLETED))
    expected = {name: [] for name in ("overdue", "due", "assigned")}
    for wo in sorted(made[:-1], key=lambda w: (w.due_date, w.pk)):
        name = _rule(wo, MONDAY, TODAY)
        if name:
            expected[name].append(wo.public_id)
    assert all(len(ids) > 3 for ids in expected.values())
    in_grace = [wo for wo in made if wo.due_date < TODAY and wo.overdue_on and wo.overdue_on > TODAY]
    assert any(wo.public_id in expected["due"] for wo in in_grace), "the data set holds late work within grace"
    page = board_page_for(organisation=org, week_start=MONDAY, today=TODAY, limit=500)
    assert page["counts"] == {name: len(ids) for name, ids in expected.items()}
    for name, ids in expected.items():
        assert [r["id"] for r in page[name]] == ids, name
    by_id = {wo.public_id: wo for wo in made}
    for day in page["days"]:
        for name in ("due", "assigned"):
            # Work carried from before the week counts on today.
            on_day = [
                i
                for i in expected[name]
                if max(by_id[i].due_date, TODAY if by_id[i].due_date < MONDAY else MONDAY) == day["date"]
            ]
            assert day[name] == len(on_day), (day, name)
    second = board_page_for(organisation=org, week_start=MONDAY, today=TODAY, limit=3, offset=3, section="due")
    assert [r["id"] for r in second["due"]] == expected["due"][3:6] and second["overdue"] == []
    for week in (MONDAY - dt.timedelta(days=7), MONDAY + dt.timedelta(days=7)):
        other = board_page_for(organisation=org, week_start=week, today=TODAY, limit=500)
        wanted = {name: [] for name in expected}
        for wo in sorted(made[:-1], key=lambda w: (w.due_date, w.pk)):
            name = _rule(wo, week, TODAY)
            if name:
                wanted[name].append(wo.public_id)
        for name in expected:
            assert [r["id"] for r in other[name]] == wanted[name], (week, name)
            assert other["counts"][name] == len(wanted[name])


def test_work_shows_in_the_week_it_is_planned_for(library):
    """Work due in a later week but planned for Thursday of this week is on this week's board on Thursday (rows
    and per-day counts); work due this week but planned for next week is on next week's board, not this one.
    Overdue work stays overdue whatever day it is planned for."""
    ahu = AHUFactory()
    org = ahu.building.site.organisation
    tech = make_technician(org)
    thursday = MONDAY + dt.timedelta(days=3)
    pulled = WorkOrderFactory(
        organisation=org, ahu=ahu, due_date=MONDAY + dt.timedelta(days=15), scheduled_for=thursday,
        assignee=tech, state=WorkOrder.State.ASSIGNED,
    )  # fmt: skip
    pushed = WorkOrderFactory(organisation=org, ahu=ahu, due_date=TODAY, scheduled_for=MONDAY + dt.timedelta(days=8))
    late = WorkOrderFactory(
        organisation=org, ahu=ahu, due_date=TODAY - dt.timedelta(days=20), overdue_on=TODAY - dt.timedelta(days=3),
        scheduled_for=MONDAY + dt.timedelta(days=9),
    )  # fmt: skip
    page = board_page_for(organisation=org, week_start=MONDAY, today=TODAY)
    assert [r["id"] for r in page["assigned"]] == [pulled.public_id]
    assert page["due"] == [] and [r["id"] for r in page["overdue"]] == [late.public_id]
    assert {d["date"]: d["assigned"] for d in page["days"]}[thursday] == 1
    following = board_page_for(organisation=org, week_start=MONDAY + dt.timedelta(days=7), today=TODAY)
    assert [r["id"] for r in following["due"]] == [pushed.public_id] and following["assigned"] == []
    assert pulled.public_id not in {r["id"] for r in following["assigned"]}


def test_the_default_day_of_both_answers_is_the_callers_not_the_servers(api_client):
    """At 23:30 UTC on Sunday 9 March it is already Monday 10 March in Amsterdam: the board answered there
    without a week is that Monday's week, with that Monday as today, and the technician's today lists the
    visit planned for Monday. Asked an hour earlier (still Sunday there), the board is the week before."""
    ahu = AHUFactory(building__site__time_zone="Europe/Amsterdam")
    org = ahu.building.site.organisation
    sup, tech = make_supervisor(org), make_technician(org)
    monday = dt.date(2025, 3, 10)
    wo = WorkOrderFactory(organisation=org, ahu=ahu, due_date=monday, title="Monday round")
    work_order_assign(work_order=wo, assignee=tech, by=sup)
    late_sunday = dt.datetime(2025, 3, 9, 23, 30, tzinfo=dt.UTC)

    with time_machine.travel(late_sunday, tick=False):
        api_client.force_authenticate(sup)
        board = api_client.get("/api/scheduling/board/").json()
        api_client.force_authenticate(tech)
        visits = api_client.get("/api/scheduling/today/").json()
    assert (board["today"], board["week_start"]) == ("2025-03-10", "2025-03-10")
    assert [w["title"] for v in visits for w in v["work_orders"]] == ["Monday round"]

    with time_machine.travel(late_sunday - dt.timedelta(hours=1), tick=False):
        api_client.force_authenticate(sup)
        board = api_client.get("/api/scheduling/board/").json()
    assert (board["today"], board["week_start"]) == ("2025-03-09", "2025-03-03")


def test_a_started_visit_is_listed_once_on_the_callers_today_and_on_no_other_day(api_client):
    """Saturday 8 March: the technician started the visit planned for Monday 10 March, and still has the one
    started on Thursday 6 March (planned then) in progress. Asked through the API for Saturday (the default) and
    for each planned day, every started visit is listed once, on Saturday; Monday lists only the visit waiting for
    it, Thursday nothing."""
    ahu = AHUFactory(building__site__time_zone="Europe/Amsterdam")
    org = ahu.building.site.organisation
    sup, tech = make_supervisor(org), make_technician(org)
    thursday, monday = dt.date(2025, 3, 6), dt.date(2025, 3, 10)

    def visit(title, day, state):
        wo = WorkOrderFactory(organisation=org, ahu=ahu, due_date=day, title=title)
        work_order_assign(work_order=wo, assignee=tech, by=sup)
        WorkOrder.objects.filter(pk=wo.pk).update(scheduled_for=day, state=state)
        return title

    visit("Started for Monday", monday, WorkOrder.State.IN_PROGRESS)
    visit("Started on Thursday", thursday, WorkOrder.State.IN_PROGRESS)
    visit("Waiting for Monday", monday, WorkOrder.State.ASSIGNED)
    api_client.force_authenticate(tech)
    with time_machine.travel(dt.datetime(2025, 3, 8, 10, tzinfo=dt.UTC), tick=False):
        lists = {
            day: [w["title"] for v in api_client.get(path).json() for w in v["work_orders"]]
            for day, path in (
                ("saturday", "/api/scheduling/today/"),
                ("saturday by name", "/api/scheduling/today/?day=2025-03-08"),
                ("monday", f"/api/scheduling/today/?day={monday.isoformat()}"),
                ("thursday", f"/api/scheduling/today/?day={thursday.isoformat()}"),
            )
        }
    assert (
        sorted(lists["saturday"]) == sorted(lists["saturday by name"]) == ["Started for Monday", "Started on Thursday"]
    )
    assert lists["monday"] == ["Waiting for Monday"]
    assert lists["thursday"] == []
