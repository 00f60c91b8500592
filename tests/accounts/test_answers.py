"""Kept answers: a repeat costs one query (the token, its person and their versions), and a change made through a
service is seen at once (tests/scheduling/test_answer_invalidation.py: per service family, and not by another
organisation nor in another technician's today).

These tests commit (``transaction=True``) as the server does; inside one test transaction the cache
stands aside, since it cannot know uncommitted writes.
"""

import pytest
from django.db import connection
from django.test import override_settings
from django.test.utils import CaptureQueriesContext
from django.utils import timezone
from rest_framework.authtoken.models import Token
from rest_framework.test import APIClient

from accounts import answers
from accounts.answers import answer_cache_clear
from accounts.services import api_token_revoke
from inventory.services import site_update
from scheduling.models import WorkOrder
from scheduling.services import work_order_assign, work_order_cancel
from tests.factories.inventory import make_full_unit
from tests.factories.scheduling import WorkOrderFactory, make_supervisor, make_technician

pytestmark = [
    pytest.mark.django_db(transaction=True),
    pytest.mark.usefixtures("clock"),
]  # dates made today are the clock's
TODAY_URL = "/api/scheduling/today/"
BOARD_URL = "/api/scheduling/board/"


@pytest.fixture(autouse=True)
def fresh_cache():
    answer_cache_clear()
    yield
    answer_cache_clear()


@pytest.fixture
def world():
    ahu = make_full_unit()
    org = ahu.building.site.organisation
    sup, tech = make_supervisor(org), make_technician(org)
    today = timezone.localdate()
    wo = WorkOrderFactory(organisation=org, ahu=ahu, due_date=today, title="Filter change")
    work_order_assign(work_order=wo, assignee=tech, by=sup)
    return {"ahu": ahu, "org": org, "sup": sup, "tech": tech, "wo": wo, "today": today}


def client_for(user) -> APIClient:
    client = APIClient()
    client.credentials(HTTP_AUTHORIZATION=f"Token {Token.objects.get_or_create(user=user)[0].key}")
    return client


def titles(response) -> list[str]:
    return [w["title"] for v in response.json() for w in v["work_orders"]]


def test_a_repeat_costs_one_read_and_is_the_same_answer(world, django_assert_num_queries):
    """The second GET reads only the versions and gives the same bytes and headers as the first."""
    client = client_for(world["tech"])
    first = client.get(TODAY_URL)
    assert first.status_code == 200 and titles(first) == ["Filter change"]
    with django_assert_num_queries(1):
        second = client.get(TODAY_URL)
    assert second.content == first.content
    for header in ("Content-Type", "ETag", "Cache-Control", "Vary", "Allow"):
        assert second[header] == first[header], header


def test_a_change_made_through_a_service_is_seen_by_the_next_request(world):
    """A new assignment and a site's rename (services) each show at once; a QuerySet.update() that skips the
    services is not seen until the answer's time limit (no SQL is watched)."""
    client = client_for(world["tech"])
    assert titles(client.get(TODAY_URL)) == ["Filter change"]
    extra = WorkOrderFactory(organisation=world["org"], ahu=world["ahu"], due_date=world["today"], title="Belt")
    work_order_assign(work_order=extra, assignee=world["tech"], by=world["sup"])
    assert sorted(titles(client.get(TODAY_URL))) == ["Belt", "Filter change"]
    WorkOrder.objects.filter(pk=extra.pk).update(title="Belt and pulleys")
    assert sorted(titles(client.get(TODAY_URL))) == ["Belt", "Filter change"], "kept: no service said so"
    site_update(site=world["ahu"].building.site, by=world["sup"], name="North Annex")
    body = client.get(TODAY_URL).json()
    assert body[0]["site"]["name"] == "North Annex"
    assert sorted(w["title"] for v in body for w in v["work_orders"]) == ["Belt and pulleys", "Filter change"]


def test_a_revoked_token_or_deactivated_person_is_refused_at_once(world):
    """A kept answer is never a way around revocation: the next request with the token is a 401."""
    client = client_for(world["tech"])
    assert client.get(TODAY_URL).status_code == 200
    assert client.get(TODAY_URL).status_code == 200  # now kept
    api_token_revoke(user=world["tech"])
    assert client.get(TODAY_URL).status_code == 401
    client = client_for(world["tech"])
    assert client.get(TODAY_URL).status_code == 200
    type(world["tech"]).objects.filter(pk=world["tech"].pk).update(is_active=False)
    assert client.get(TODAY_URL).status_code == 401


def test_each_person_gets_their_own_answer(world):
    """Two technicians polling the same URL never see each other's day; a technician gets no board."""
    other = make_technician(world["org"])
    mine, theirs = client_for(world["tech"]), client_for(other)
    for _ in range(2):
        assert titles(mine.get(TODAY_URL)) == ["Filter change"]
        assert titles(theirs.get(TODAY_URL)) == []
    for _ in range(2):
        assert mine.get(BOARD_URL).status_code == 403


def test_bad_parameters_are_refused_even_with_a_kept_answer(world):
    """The kept path never swallows a 400: the field, the value and what is allowed are named."""
    client = client_for(world["sup"])
    assert client.get(BOARD_URL).status_code == 200
    assert client.get(BOARD_URL).status_code == 200
    bad = client.get(BOARD_URL + "?limit=9999")
    assert bad.status_code == 400
    assert "Limit: 9999 is out of range; allowed: a whole number from 0 to 500" in bad.json()["detail"]
    assert "day='tomorrow'" in client_for(world["tech"]).get(TODAY_URL + "?day=tomorrow").json()["detail"]


def test_a_kept_answer_answers_a_conditional_get_with_304(world):
    """The phone's If-None-Match gets a 304 with no body from the kept path too."""
    client = client_for(world["sup"])
    first = client.get(BOARD_URL)
    client.get(BOARD_URL)
    again = client.get(BOARD_URL, HTTP_IF_NONE_MATCH=first["ETag"])
    assert again.status_code == 304 and again.content == b""


def test_the_board_sees_a_cancelled_visit_at_once(world):
    """Cancelling a visit takes it off this week's kept board on the next request."""
    client = client_for(world["sup"])
    extra = WorkOrderFactory(organisation=world["org"], ahu=world["ahu"], due_date=world["today"], title="Coil")
    body = client.get(BOARD_URL).json()
    assert str(extra.public_id) in {r["id"] for r in body["due"] + body["overdue"]}
    client.get(BOARD_URL)
    work_order_cancel(work_order=extra, by=world["sup"], reason="done with the belt visit")
    body = client.get(BOARD_URL).json()
    assert str(extra.public_id) not in {r["id"] for r in body["due"] + body["overdue"]}


def test_answers_expire_after_the_time_limit(world, monkeypatch, django_assert_num_queries):
    """A write made outside the services moves no version; the time limit bounds how long it could hide."""
    now = [1000.0]
    monkeypatch.setattr(answers, "_clock", lambda: now[0])
    answer_cache_clear()
    client = client_for(world["tech"])
    client.get(TODAY_URL)
    with django_assert_num_queries(1):
        client.get(TODAY_URL)
    now[0] += 61
    with CaptureQueriesContext(connection) as seen:
        assert client.get(TODAY_URL).status_code == 200
    assert len(seen) > 1, "built again after the limit"


@override_settings(PLENUM_ANSWER_CACHE_SECONDS=0)
def test_the_cache_can_be_turned_off(world):
    """With the time limit at 0 every request builds its answer (the token is looked up each time too)."""
    answer_cache_clear()
    client = client_for(world["tech"])
    client.get(TODAY_URL)
    with CaptureQueriesContext(connection) as seen:
        assert titles(client.get(TODAY_URL)) == ["Filter change"]
    sql = [q["sql"] for q in seen.captured_queries]
    assert not any("answers_version" in q for q in sql), "no version read"
    assert any("authtoken_token" in q for q in sql) and any("scheduling_workorder" in q for q in sql), "all read"


def test_the_browsable_api_is_not_served_from_the_cache(world):
    """Only plain JSON is kept; a browser asking for HTML gets the ordinary page."""
    client = client_for(world["tech"])
    client.get(TODAY_URL)
    page = client.get(TODAY_URL, HTTP_ACCEPT="text/html")
    assert page.status_code == 200 and page["Content-Type"].startswith("text/html")


def test_a_request_without_a_token_reads_no_version(world):
    """Only token requests take the kept path: an anonymous call is a 401 naming Token, with no version read."""
    with CaptureQueriesContext(connection) as seen:
        response = APIClient().get(TODAY_URL)
    assert response.status_code == 401 and response["WWW-Authenticate"].startswith("Token")
    assert not any("answers_version" in q["sql"] for q in seen.captured_queries)
