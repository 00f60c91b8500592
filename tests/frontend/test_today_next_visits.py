"""A technician with nothing today sees the next day with visits of theirs, to look at and prepare.

A demo tried on a Saturday showed the technician "No visits for you today" and nothing else: the round planned
for Monday could not be reached from the phone's first page. On the controlled clock (tests/conftest.TEST_NOW,
Wednesday 10 June 2026, 10:00 UTC = 12:00 in Amsterdam, the test sites' zone).
"""

import datetime as dt
import json
import re

import pytest
from django.urls import reverse

from scheduling.models import WorkOrder
from tests.frontend import scenario

pytestmark = [pytest.mark.django_db, pytest.mark.usefixtures("clock")]

SATURDAY = dt.datetime(2026, 6, 13, 10, 0, tzinfo=dt.UTC)
MONDAY = dt.date(2026, 6, 15)


@pytest.fixture
def world():
    return scenario.build()


def _today(client, user) -> str:
    client.force_login(user)
    response = client.get(reverse("frontend:today"))
    assert response.status_code == 200
    return response.content.decode()


def _offline_urls(page: str) -> list[str]:
    found = re.search(r'<script id="offline-urls" type="application/json">(.*?)</script>', page, re.S)
    assert found, "the today page carries no offline list"
    return json.loads(found.group(1))


def test_nothing_today_shows_the_next_day_with_its_visits(client, world):
    """Omar's filter round is due tomorrow (Thursday), unplanned: today is empty, tomorrow is offered."""
    page = _today(client, world.other_technician)
    assert "No visits for you today." in page
    assert "Next visits: Thursday 11 June" in page
    assert f'data-work-order="{world.work_b.public_id}"' in page
    assert "Filter round" in page
    checklist = reverse("frontend:checklist", kwargs={"public_id": world.work_b.public_id})
    assert checklist in page and checklist in _offline_urls(page)


def test_on_a_saturday_the_round_planned_for_monday_is_offered(client, world, clock):
    clock.move_to(SATURDAY)
    # Tess's quarterly service (due Wednesday) is planned for Monday: nothing is open for her this weekend.
    WorkOrder.objects.filter(pk=world.work_a.pk).update(scheduled_for=MONDAY)
    page = _today(client, world.technician)
    assert "Today, Saturday 13 June" in page
    assert "No visits for you today." in page
    assert "Next visits: Monday 15 June" in page
    assert f'data-work-order="{world.work_a.public_id}"' in page
    # Her work planned further out is not mixed in: only Monday's visits.
    later = scenario.make_work(ahu=world.unit_b, assignee=world.technician, title="Coil clean", due=MONDAY)
    WorkOrder.objects.filter(pk=later.pk).update(scheduled_for=MONDAY + dt.timedelta(days=2))
    page = _today(client, world.technician)
    assert f'data-work-order="{world.work_a.public_id}"' in page
    assert f'data-work-order="{later.public_id}"' not in page


def test_a_day_with_visits_offers_no_next_day(client, world):
    page = _today(client, world.technician)
    assert f'data-work-order="{world.work_a.public_id}"' in page
    assert "Next visits" not in page


def test_no_open_work_at_all_says_so_and_offers_nothing(client, world):
    WorkOrder.objects.filter(assignee=world.other_technician).update(state=WorkOrder.State.COMPLETED)
    page = _today(client, world.other_technician)
    assert "No visits for you today." in page
    assert "Next visits" not in page


def test_a_visit_in_progress_planned_for_monday_is_on_saturdays_today(client, api_client, world, clock):
    """Tess started Monday's visit on Saturday: it is on her today (page and API), not under Monday; her other
    visit planned for Monday (not started) and Omar's visit in progress stay off her today."""
    clock.move_to(SATURDAY)
    started = world.work_a
    WorkOrder.objects.filter(pk=started.pk).update(scheduled_for=MONDAY, state=WorkOrder.State.IN_PROGRESS)
    waiting = scenario.make_work(ahu=world.unit_b, assignee=world.technician, title="Coil clean", due=MONDAY)
    WorkOrder.objects.filter(pk=waiting.pk).update(scheduled_for=MONDAY)
    WorkOrder.objects.filter(pk=world.work_b.pk).update(
        assignee=world.other_technician, scheduled_for=MONDAY, state=WorkOrder.State.IN_PROGRESS
    )
    page = _today(client, world.technician)
    assert "Today, Saturday 13 June" in page
    assert "No visits for you today." not in page and "Next visits" not in page
    assert f'data-work-order="{started.public_id}"' in page
    assert f'data-work-order="{waiting.public_id}"' not in page
    assert f'data-work-order="{world.work_b.public_id}"' not in page
    api_client.force_authenticate(world.technician)
    for path in ("/api/scheduling/today/", "/api/scheduling/today/?day=2026-06-13"):
        visits = api_client.get(path).json()
        assert [w["id"] for v in visits for w in v["work_orders"]] == [str(started.public_id)], path
    # Monday's list holds the visit still waiting for it, not the one started: that one is listed once, on her today.
    monday = api_client.get(f"/api/scheduling/today/?day={MONDAY.isoformat()}").json()
    assert [w["id"] for v in monday for w in v["work_orders"]] == [str(waiting.public_id)]


def test_the_lists_are_marked_by_named_flags_never_by_attribute_text(client, world, clock):
    """The today page's list of visits carries ``data-visits``, the next day's ``data-next-visits``: the include
    takes a plain flag (``next=True``), so no attribute text is handed to the template as a string."""
    from django.template.loader import render_to_string

    assert '<ol class="visits" data-visits>' in _today(client, world.technician)
    clock.move_to(SATURDAY)
    WorkOrder.objects.filter(pk=world.work_a.pk).update(scheduled_for=MONDAY)
    assert '<ol class="visits" data-next-visits>' in _today(client, world.technician)
    include = "frontend/technician/_visits.html"
    assert '<ol class="visits" data-visits>' in render_to_string(include, {"list": []})
    assert '<ol class="visits" data-next-visits>' in render_to_string(include, {"list": [], "next": True})
    hostile = render_to_string(include, {"list": [], "marker": 'onclick="x()"'})
    assert "onclick" not in hostile
