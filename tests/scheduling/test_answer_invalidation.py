"""Kept answers go stale by what they show: each service family that changes what today or the board shows moves
the matching version in its own transaction (``accounts.changes``), so the next poll of an answer it concerns is
built afresh at once, while another organisation's kept answers, and another technician's today, stay kept (one
query, same ETag).

Each organisation has two technicians with a visit each: ``today`` is the first one's (whose visit the tests
change), ``other`` the second one's; ``board`` is the supervisor's. After every write each answer that stayed kept
is checked against one built afresh with the cache emptied: a kept answer is never stale.

These tests commit (``transaction=True``) as the server does. Dates are fixed (``?day=`` and ``?week=`` of the
visit's day), never today's.
"""

import datetime as dt
from decimal import Decimal
from types import SimpleNamespace

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext
from rest_framework.authtoken.models import Token
from rest_framework.test import APIClient

from accounts.answers import answer_cache_clear
from accounts.models import Membership, Role
from accounts.services import PersonInput, person_deactivate, person_update, site_grants_set
from inspections.models import Inspection
from inspections.services import inspection_verify
from inspections.services.sync import inspection_sync
from inventory.models import AHU
from inventory.services import ahu_update, component_update, site_update
from inventory.today import today_for
from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrder
from scheduling.services import (
    corrective_work_order_approve,
    corrective_work_order_propose,
    corrective_work_order_reject,
    meter_reading_record,
    task_definition_override,
    unit_task_set,
    work_order_assign,
    work_order_cancel,
    work_order_schedule,
    work_order_transition,
)
from scheduling.services.made_work import OneOffTask, work_order_create
from tests.factories.accounts import make_person
from tests.factories.inspections import FINISHED, component, make_visit, r, sync_form

pytestmark = pytest.mark.django_db(transaction=True)
DAY = FINISHED.date()
TODAY_URL = f"/api/scheduling/today/?day={DAY.isoformat()}"
BOARD_URL = f"/api/scheduling/board/?week={DAY.isoformat()}"
ANSWERS = ("today", "other", "board")  # the first technician's today, the second one's, the supervisor's board
EVERY = ANSWERS  # a write every answer of the organisation depends on (registry, people, rules, generation)


def client_for(user) -> APIClient:
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {Token.objects.get_or_create(user=user)[0].key}")
    return client


def _organisation(name: str) -> SimpleNamespace:
    wo, tech = make_visit(tasks=["filter_check"])
    org = wo.organisation
    other_wo, other = make_visit(tasks=["filter_check"], organisation=org)  # another site, another technician
    sup = make_person(organisation=org, role=Role.SUPERVISOR)
    return SimpleNamespace(
        name=name,
        org=org,
        ahu=wo.ahu,
        wo=wo,
        tech=tech,
        other_wo=other_wo,
        other_tech=other,
        sup=sup,
        today=client_for(tech),
        other=client_for(other),
        board=client_for(sup),
    )


@pytest.fixture
def world():
    answer_cache_clear()
    yield SimpleNamespace(a=_organisation("a"), b=_organisation("b"))
    answer_cache_clear()


def _reads(side) -> dict:
    return {"today": (side.today, TODAY_URL), "other": (side.other, TODAY_URL), "board": (side.board, BOARD_URL)}


def poll(client, url):
    """(response, queries it cost)."""
    with CaptureQueriesContext(connection) as seen:
        response = client.get(url)
    assert response.status_code == 200, response.content
    return response, len(seen)


def kept_all(world) -> dict:
    """Every answer of both organisations polled twice: the second poll is kept (one query). Their ETags."""
    etags = {}
    for side in (world.a, world.b):
        for what, (client, url) in _reads(side).items():
            poll(client, url)
            response, queries = poll(client, url)
            assert queries == 1, f"{side.name}'s {what} is kept"
            etags[side.name, what] = response["ETag"]
    return etags


def assert_none_stale(world, served: dict) -> None:
    """Every answer just served (kept or built) is the one a build from the database gives now."""
    answer_cache_clear()
    for side in (world.a, world.b):
        for what, (client, url) in _reads(side).items():
            assert client.get(url)["ETag"] == served[side.name, what], f"{side.name}'s kept {what} is not stale"


def assert_only_a_moved(world, etags, *, rebuilt: tuple[str, ...], changed: tuple[str, ...] = ()) -> dict:
    """a's answers named in ``rebuilt`` are built afresh (more than the one query), a's others stay kept (one query,
    same ETag), and b's all stay kept; the answers named in ``changed`` have a new ETag for a. No answer served is
    stale. Returns a's new answers."""
    fresh, served = {}, {}
    for what, (client, url) in _reads(world.a).items():
        response, queries = poll(client, url)
        if what in rebuilt:
            assert queries > 1, f"a's {what} is built again at once"
        else:
            assert queries == 1, f"a's {what} stays kept"
            assert response["ETag"] == etags["a", what]
        if what in changed:
            assert response["ETag"] != etags["a", what], f"a's {what} changed"
        fresh[what] = response.json()
        served["a", what] = response["ETag"]
    for what, (client, url) in _reads(world.b).items():
        response, queries = poll(client, url)
        assert queries == 1, f"b's {what} stays kept"
        assert response["ETag"] == etags["b", what]
        served["b", what] = response["ETag"]
    assert_none_stale(world, served)
    return fresh


def today_titles(body) -> list[str]:
    return sorted(w["title"] for v in body for w in v["work_orders"])


def today_ids(body) -> set[str]:
    return {w["id"] for v in body for w in v["work_orders"]}


def board_ids(body) -> set[str]:
    return {row["id"] for section in ("overdue", "due", "assigned") for row in body[section]}


# --- work orders ---------------------------------------------------------------------------------------------
def test_assigning_work_shows_on_a_today_at_once_and_not_elsewhere(world):
    etags = kept_all(world)
    extra = WorkOrder.objects.create(organisation=world.a.org, ahu=world.a.ahu, due_date=DAY, title="Belt check")
    work_order_assign(work_order=extra, assignee=world.a.tech, by=world.a.sup)
    fresh = assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("today", "board"))
    assert today_titles(fresh["today"]) == ["Belt check", "Quarterly service"]


def test_scheduling_and_cancelling_work_move_only_its_organisation(world):
    etags = kept_all(world)
    later = today_for(world.a.ahu.building.site) + dt.timedelta(days=30)  # the service refuses a past day
    work_order_schedule(work_order=world.a.wo, day=later, by=world.a.sup)
    fresh = assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("today",))
    assert today_titles(fresh["today"]) == []  # planned for a later day now
    etags = kept_all(world)
    work_order_cancel(work_order=world.a.wo, by=world.a.sup, reason="unit replaced")
    fresh = assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("board",))
    assert str(world.a.wo.public_id) not in board_ids(fresh["board"])


def test_a_transition_moves_only_its_organisation(world):
    etags = kept_all(world)
    work_order_transition(work_order=world.a.wo, to_state=WorkOrder.State.IN_PROGRESS, by=world.a.tech)
    assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("today", "board"))


def test_corrective_work_proposed_approved_and_rejected(world):
    etags = kept_all(world)
    proposed = corrective_work_order_propose(
        ahu=world.a.ahu, title="Replace belt", reason="belt worn", by=world.a.tech, observed_on=DAY
    )
    # Nobody's own work: the technicians' todays stay kept (and right); the board is built again.
    assert_only_a_moved(world, etags, rebuilt=("board",))
    etags = kept_all(world)
    corrective_work_order_approve(work_order=proposed, by=world.a.sup)
    assert_only_a_moved(world, etags, rebuilt=("board",))
    other = corrective_work_order_propose(
        ahu=world.a.ahu, title="Repaint casing", reason="rust", by=world.a.tech, observed_on=DAY
    )
    etags = kept_all(world)
    corrective_work_order_reject(work_order=other, by=world.a.sup, reason="cosmetic only")
    assert_only_a_moved(world, etags, rebuilt=("board",))


def test_made_work_and_call_outs(world):
    etags = kept_all(world)
    due_by = dt.datetime.combine(DAY, dt.time(16), tzinfo=dt.UTC)
    work_order_create(
        ahu=world.a.ahu,
        by=world.a.sup,
        kind=WorkOrder.Kind.AD_HOC,
        title="Call-out: noisy fan",
        priority=WorkOrder.Priority.HIGH,
        due_by=due_by,
        one_off=[OneOffTask(name="Find the noise", minutes=45, skill="mechanical")],
        assignee=world.a.tech,
        now=due_by - dt.timedelta(hours=4),
    )
    # Its one-off task is a task definition of the organisation: the broader move, every answer built again.
    fresh = assert_only_a_moved(world, etags, rebuilt=EVERY, changed=("today", "board"))
    assert "Call-out: noisy fan" in today_titles(fresh["today"])


# --- one technician's work and another's today -----------------------------------------------------------------
def test_one_technicians_synced_form_leaves_anothers_today_kept(world):
    """The first technician sends the finished form of their visit: their today and the board change at once;
    the second technician's today stays kept (one query, the same ETag) and is still right."""
    etags = kept_all(world)
    [result] = inspection_sync(user=world.a.tech, forms=[complete_form(world.a.wo)])
    assert result["status"] == "stored", result
    fresh = assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("today", "board"))
    assert today_titles(fresh["today"]) == []  # completed: off the day's list
    assert today_titles(fresh["other"]) == ["Quarterly service"]


def test_one_technicians_changed_visit_leaves_anothers_today_kept(world):
    """A supervisor plans the first technician's visit for another day, then takes the plan off: each time that
    technician's today and the board are built again, the second technician's today stays kept."""
    etags = kept_all(world)
    later = today_for(world.a.ahu.building.site) + dt.timedelta(days=30)
    work_order_schedule(work_order=world.a.wo, day=later, by=world.a.sup)
    assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("today",))
    etags = kept_all(world)
    work_order_schedule(work_order=world.a.wo, day=None, by=world.a.sup)
    fresh = assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("today",))
    assert today_titles(fresh["today"]) == ["Quarterly service"]


def test_a_reassigned_visit_moves_to_the_other_technicians_today(world):
    """Reassigned from the first technician to the second: both todays change at once (it leaves one and joins
    the other) and so does the board (its assignee); the other organisation's stay kept."""
    etags = kept_all(world)
    work_order_assign(work_order=world.a.wo, assignee=world.a.other_tech, by=world.a.sup)
    fresh = assert_only_a_moved(world, etags, rebuilt=ANSWERS, changed=ANSWERS)
    moved = str(world.a.wo.public_id)
    assert moved not in today_ids(fresh["today"])
    assert today_ids(fresh["other"]) == {moved, str(world.a.other_wo.public_id)}
    [row] = [row for section in ("overdue", "due", "assigned") for row in fresh["board"][section] if row["id"] == moved]
    assert row["assignee"]["username"] == world.a.other_tech.username


# --- generation ------------------------------------------------------------------------------------------------
def test_generation_moves_only_its_organisation(world):
    etags = kept_all(world)
    AHU.objects.filter(pk=world.a.ahu.pk).update(service_start=dt.date(2024, 1, 15))
    result = work_orders_generate(organisation=world.a.org, today=DAY)
    assert result.created > 0
    assert_only_a_moved(world, etags, rebuilt=EVERY, changed=("board",))


# --- inspections -----------------------------------------------------------------------------------------------
def complete_form(wo):
    ahu = wo.ahu
    readings = [r("visit.run_hours", 1200)]
    for name, dp in (("Pre-filters", 80), ("Final filters", 150)):
        bank = component(ahu, name)
        readings += [r("filter_check.dp", dp, bank), r("filter_check.seated", "ok", bank)]
        readings += [r("filter_check.media", "loaded", bank)]
    return sync_form(wo, readings)


def test_a_synced_form_and_its_sign_off(world):
    etags = kept_all(world)
    [result] = inspection_sync(user=world.a.tech, forms=[complete_form(world.a.wo)])
    assert result["status"] in {"stored", "flagged"}
    assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("today", "board"))
    etags = kept_all(world)
    inspection_verify(inspection=Inspection.objects.get(work_order=world.a.wo), by=world.a.sup)
    assert_only_a_moved(world, etags, rebuilt=("today", "board"), changed=("board",))


# --- registry --------------------------------------------------------------------------------------------------
def test_renaming_a_site_shows_at_once(world):
    etags = kept_all(world)
    site_update(site=world.a.ahu.building.site, by=world.a.sup, name="North Annex")
    fresh = assert_only_a_moved(world, etags, rebuilt=EVERY, changed=("today",))
    assert fresh["today"][0]["site"]["name"] == "North Annex"


def test_unit_and_part_changes_move_only_their_organisation(world):
    etags = kept_all(world)
    ahu_update(ahu=world.a.ahu, by=world.a.sup, tag="AHU-99")
    assert_only_a_moved(world, etags, rebuilt=EVERY)
    etags = kept_all(world)
    component_update(component=component(world.a.ahu, "Pre-filters"), by=world.a.sup, name="Pre-filters, left")
    assert_only_a_moved(world, etags, rebuilt=EVERY)


# --- people ----------------------------------------------------------------------------------------------------
def test_a_technicians_capacity_and_deactivation(world):
    etags = kept_all(world)
    data = PersonInput(
        first_name=world.a.tech.first_name,
        last_name=world.a.tech.last_name,
        email=world.a.tech.email,
        role=Role.TECHNICIAN,
        capacity_hours=Decimal("4.0"),
        skills=["mechanical"],
    )
    admin = make_person(organisation=world.a.org, role=Role.ADMIN)
    person_update(by=admin, organisation=world.a.org, person=world.a.tech, data=data)
    assert_only_a_moved(world, etags, rebuilt=EVERY, changed=("board",))
    etags = kept_all(world)
    site_grants_set(by=admin, organisation=world.a.org, person=world.a.sup, sites=[world.a.ahu.building.site])
    assert_only_a_moved(world, etags, rebuilt=EVERY)
    other = make_person(organisation=world.a.org, role=Role.TECHNICIAN)
    etags = kept_all(world)
    person_deactivate(by=admin, organisation=world.a.org, person=other)
    assert_only_a_moved(world, etags, rebuilt=EVERY)
    assert not Membership.objects.get(user=other).user.is_active


# --- rules and meters ------------------------------------------------------------------------------------------
def test_rule_changes_move_only_their_organisation(world):
    etags = kept_all(world)
    task_definition_override(organisation=world.a.org, code="filter_check", by=world.a.sup, estimated_minutes=50)
    assert_only_a_moved(world, etags, rebuilt=EVERY)
    etags = kept_all(world)
    unit_task_set(ahu=world.a.ahu, task_code="filter_check", enabled=False, reason="filters removed", by=world.a.sup)
    assert_only_a_moved(world, etags, rebuilt=EVERY)


def test_a_meter_reading_leaves_every_answer_kept_and_right(world):
    """No polled answer reads meter readings (run-hour due dates reach work orders through generation, which
    moves the organisation's version): every answer stays kept, and each is what a fresh build gives."""
    etags = kept_all(world)
    meter_reading_record(ahu=world.a.ahu, hours=1500, taken_at=FINISHED, by=world.a.tech)
    assert_only_a_moved(world, etags, rebuilt=())


# --- ETag round trip -------------------------------------------------------------------------------------------
def test_etag_round_trip(world):
    """200 with an ETag; the same ETag in If-None-Match gets 304 with no body (kept or not); after a change,
    200 with a new ETag, and the old one no longer matches. Another technician's ETag still gets 304 from their
    kept answer (one query)."""
    client = world.a.today
    first = client.get(TODAY_URL)
    assert first.status_code == 200 and first["ETag"]
    theirs = world.a.other.get(TODAY_URL)["ETag"]
    for _ in range(2):  # built by the view, then from the kept answer
        again = client.get(TODAY_URL, HTTP_IF_NONE_MATCH=first["ETag"])
        assert again.status_code == 304 and again.content == b""
    extra = WorkOrder.objects.create(organisation=world.a.org, ahu=world.a.ahu, due_date=DAY, title="Belt check")
    work_order_assign(work_order=extra, assignee=world.a.tech, by=world.a.sup)
    changed = client.get(TODAY_URL, HTTP_IF_NONE_MATCH=first["ETag"])
    assert changed.status_code == 200 and changed["ETag"] != first["ETag"]
    assert "Belt check" in today_titles(changed.json())
    assert client.get(TODAY_URL, HTTP_IF_NONE_MATCH=changed["ETag"]).status_code == 304
    assert world.b.today.get(TODAY_URL, HTTP_IF_NONE_MATCH=first["ETag"]).status_code == 200
    with CaptureQueriesContext(connection) as seen:
        unchanged = world.a.other.get(TODAY_URL, HTTP_IF_NONE_MATCH=theirs)
    assert unchanged.status_code == 304 and len(seen) == 1
