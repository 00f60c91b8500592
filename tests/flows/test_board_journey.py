"""The supervisor's board walked over HTTP on a fixed clock (Wednesday 5 March 2025; see board_world).

She sees today's six planned visits in this week's Assigned column (not under their due weeks), both AHU-01s
with their buildings, is warned before overloading Tess (tasks plus travel between the day's sites against
her capacity) with nothing saved until she confirms, is offered the least-loaded qualified technician,
and finds completed work in a "To verify" list and the flagged form's card linking to its work order.
The board API says the same.

Travel time: great-circle km x 1.3 road detour at 40 km/h (common practice for urban service rounds).
"""

import datetime as dt

import pytest
import time_machine
from django.contrib.messages import get_messages
from django.urls import reverse

from accounts.models import AuditEvent
from scheduling.models import WorkOrder

from . import board_world

pytestmark = pytest.mark.django_db

# 22.24 km great-circle between the two sites (board_world), x 1.3 road detour / 40 km/h = 0.723 h.
TRAVEL_H = 22.24 * 1.3 / 40
TESS_AFTER_H = 6.0 + 100 / 60 + TRAVEL_H  # 8.39 h against her 7.5 h
OMAR_AFTER_H = 3.0 + 100 / 60 + TRAVEL_H  # 5.39 h against his 7.0 h


@pytest.fixture
def world(db):
    with time_machine.travel(board_world.NOW, tick=False):
        yield board_world.build()


@pytest.fixture
def clock():
    with time_machine.travel(board_world.NOW, tick=False):
        yield


def test_the_supervisors_week_on_the_board(client, world, clock):
    client.force_login(world.supervisor)
    page = client.get(reverse("frontend:board"))
    assert page.status_code == 200
    html = page.content.decode()
    assigned = next(c for c in page.context["columns"] if c["key"] == "assigned")
    # Work shows in the week it is planned for: six visits planned today, due 17 to 26 March.
    assert assigned["total"] == 6 and "Assigned (6)" in html
    assert {r["id"] for r in assigned["rows"]} == {wo.public_id for wo in world.planned_today}
    # Two AHU-01s on one site: each carries its building.
    assert "AHU-01 (Mill Block)" in html and "AHU-01 (Granary)" in html
    # The load counts travel: Tess drives Quayside -> Orchard Park.
    (tess,) = [r for r in page.context["load"] if r["technician"] == world.tess]
    today = {d["date"]: d for d in tess["days"]}[board_world.TODAY]
    assert today["hours"] == pytest.approx(6.0 + TRAVEL_H, abs=0.02)
    assert today["travel_minutes"] == pytest.approx(TRAVEL_H * 60, abs=1)
    # Completed work waits in "To verify", each linked to its work order's page; the flagged card links too.
    for wo in (world.completed, world.flagged):
        assert f'href="{reverse("frontend:checklist", kwargs={"public_id": wo.public_id})}"' in html
    assert "To verify (2)" in html and "Flagged forms (1)" in html
    # The unassigned fan visit, on its due Friday when nobody has work yet, offers Tess: 1.7 h is the smaller
    # share of her 7.5 h than of Omar's 7.0 h; Pia lacks the mechanical skill whatever her load.
    (row,) = [r for c in page.context["columns"] for r in c["rows"] if r["id"] == world.fan_visit.public_id]
    assert row["suggested"]["id"] == world.tess.pk
    assert f"Suggested: Tess Field, least loaded with the skills ({100 / 60:.1f} h of 7.5 h on Fri 7 Mar" in html

    # The API says the same: the week of the plan, units with their buildings, the same load.
    api = client.get("/api/scheduling/board/").json()
    assert api["counts"]["assigned"] == 6
    names = {r["unit"]["name"] for r in api["assigned"]}
    assert {"AHU-01 (Mill Block)", "AHU-01 (Granary)", "AHU-02 (Glasshouse)"} <= names
    assert all(r["unit"]["building"]["name"] for r in api["assigned"])
    (api_tess,) = [r for r in api["load"] if r["technician"]["username"] == "tess"]
    api_today = {d["date"]: d for d in api_tess["days"]}["2025-03-05"]
    assert api_today["hours"] == today["hours"] and api_today["travel_minutes"] == today["travel_minutes"]
    assert [r["id"] for r in api["to_verify"]] == [str(world.completed.public_id), str(world.flagged.public_id)]
    (fan,) = [r for r in api["due"] if r["id"] == str(world.fan_visit.public_id)]
    assert (
        fan["suggested"]["username"] == "tess"
        and fan["suggested"]["load"]["hours"] == row["suggested"]["load"]["hours"]
    )


def test_assigning_past_capacity_warns_first_and_saves_only_when_confirmed(client, world, clock):
    client.force_login(world.supervisor)
    visit = world.fan_visit
    url = reverse("frontend:assign", kwargs={"public_id": visit.public_id})
    form = {"assignee": world.tess.pk, "version": visit.version, "scheduled_for": "2025-03-05", "week": ""}
    warned = client.post(url, form)
    assert warned.status_code == 200, "the warning is a page of its own, not a redirect after saving"
    text = warned.content.decode()
    # Names the technician, the day, the hours (tasks plus travel) and the capacity.
    assert "Tess Field" in text and "Wed 5 Mar" in text
    assert f"{TESS_AFTER_H:.1f} h" in text and "7.5 h" in text and "travel" in text
    # The least-loaded technician who has the skill (Pia has none of the mechanical work, so not her).
    assert "Omar Vent" in text and f"{OMAR_AFTER_H:.1f} h of 7.0 h" in text
    assert warned.context["check"].suggestion[0] == world.omar
    visit.refresh_from_db()
    assert (visit.assignee, visit.scheduled_for, visit.version) == (None, None, 1), "nothing saved yet"
    assert not AuditEvent.objects.filter(action="assign").exists()

    # Confirmed: saved through the services, version moved on, audited.
    done = client.post(url, {**form, "confirm_over_capacity": "1"})
    assert done.status_code == 302
    visit.refresh_from_db()
    assert (visit.assignee, visit.scheduled_for) == (world.tess, board_world.TODAY)
    assert visit.state == WorkOrder.State.ASSIGNED and visit.version > 1
    assert AuditEvent.objects.filter(action="assign").count() == 1
    said = [str(m) for m in get_messages(done.wsgi_request)]
    assert any("over her capacity" in m or "over capacity" in m for m in said), said


def test_the_suggested_technician_is_taken_without_a_warning(client, world, clock):
    """Assigning the suggested Omar for today stays within his capacity: saved at once."""
    client.force_login(world.supervisor)
    visit = world.fan_visit
    url = reverse("frontend:assign", kwargs={"public_id": visit.public_id})
    r = client.post(url, {"assignee": world.omar.pk, "version": visit.version, "scheduled_for": "2025-03-05"})
    assert r.status_code == 302
    visit.refresh_from_db()
    assert visit.assignee == world.omar and visit.scheduled_for == dt.date(2025, 3, 5)


def test_the_api_warns_the_same_and_assigns_when_confirmed(api_client, world, clock):
    api_client.force_authenticate(world.supervisor)
    visit = world.fan_visit
    url = f"/api/scheduling/work-orders/{visit.public_id}/assign/"
    body = {"assignee": "tess", "version": 1, "scheduled_for": "2025-03-05"}
    r = api_client.post(url, body, format="json")
    assert r.status_code == 409, r.content
    data = r.json()
    assert "Tess Field" in data["detail"] and f"{TESS_AFTER_H:.1f} h" in data["detail"] and "7.5 h" in data["detail"]
    assert data["errors"]["confirm_warnings"] and [w["code"] for w in data["warnings"]] == ["over_capacity"]
    assert data["suggestion"]["username"] == "omar"
    assert data["load"]["hours"] == pytest.approx(TESS_AFTER_H, abs=0.02)
    visit.refresh_from_db()
    assert visit.assignee is None and visit.version == 1
    ok = api_client.post(url, {**body, "confirm_over_capacity": True}, format="json")
    assert ok.status_code == 200 and ok.json()["assignee"]["username"] == "tess"


def test_a_day_past_the_plan_window_is_refused_in_words_not_a_500(client, api_client, world, clock):
    """9999-12-31 (the last date there is) gets the schedule's refusal naming the field and the allowed days."""
    client.force_login(world.supervisor)
    visit = world.fan_visit
    url = reverse("frontend:assign", kwargs={"public_id": visit.public_id})
    r = client.post(url, {"assignee": world.tess.pk, "version": 1, "scheduled_for": "9999-12-31"}, follow=True)
    assert r.status_code == 200
    row = r.content.decode().split(f'id="row-{visit.public_id}"')[1].split("</tr>")[0]
    said = row.split("data-day-refusal>")[1].split("</p>")[0]
    assert "9999-12-31" in said and "allowed" in said, said
    api_client.force_authenticate(world.supervisor)
    body = {"assignee": "tess", "version": 1, "scheduled_for": "9999-12-31"}
    r = api_client.post(f"/api/scheduling/work-orders/{visit.public_id}/assign/", body, format="json")
    assert r.status_code == 400 and "scheduled_for" in r.json()["errors"], r.content
    visit.refresh_from_db()
    assert visit.assignee is None and visit.version == 1


def test_a_deactivated_technician_is_neither_offered_nor_suggested(client, world, clock):
    """Pia leaves the company: the admin deactivates her. The board's assignment lists, its load table and its
    suggestions no longer name her; Tess and Omar stay."""
    from accounts.models import User

    User.objects.filter(pk=world.pia.pk).update(is_active=False)
    client.force_login(world.supervisor)
    page = client.get(reverse("frontend:board"))
    assert page.status_code == 200
    offered = {t.pk for t in page.context["technicians"]}
    assert world.pia.pk not in offered and {world.tess.pk, world.omar.pk} <= offered
    assert world.pia not in [r["technician"] for r in page.context["load"]]
    assert "Pia Wire" not in page.content.decode()
