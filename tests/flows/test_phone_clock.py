"""Journey: a technician whose phone clock is days off, and a batch with a careless form, through to the supervisor.

Ana's phone is 3 days behind. Her form (start time from the server's page, finish and
signature from the phone, the phone's clock sent with the batch) is stored, not refused;
the work order is completed; the visit sits on the server's timeline; the supervisor's
flagged list says in words how far the phone's clock was off, and the API gives the skew
and the phone's own times. Then a batch of three where the middle form has a start time in
year 1: the other two are stored, the middle one refused naming the field, and every page
that lists or shows the visits still answers.
"""

import datetime as dt
import json

import pytest
import time_machine

from accounts.models import Role
from inspections.models import Inspection
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.factories.inspections import FINISHED, component, make_visit, r, sync_form

SYNC = "/api/inspections/sync/"
NOW = FINISHED + dt.timedelta(minutes=2)


def filter_form(wo, *, finished_at=FINISHED) -> dict:
    readings = [r("visit.run_hours", 1200)]
    for name, dp in (("Pre-filters", 80), ("Final filters", 150)):
        bank = component(wo.ahu, name)
        readings += [r("filter_check.dp", dp, bank), r("filter_check.seated", "ok", bank)]
        readings += [r("filter_check.media", "loaded", bank)]
    return sync_form(wo, readings, finished_at=finished_at)


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
def test_a_phone_days_behind_and_a_careless_form_reach_the_supervisor(api_client, client):
    wo, tech = make_visit(tasks=["filter_check"])
    boss = make_person(organisation=wo.organisation, role=Role.SUPERVISOR, first_name="Sam", last_name="Lead")

    # Ana's phone reads three days ago; the page she opened 45 minutes ago gave the start time.
    phone_now = NOW - dt.timedelta(days=3)
    form = filter_form(wo, finished_at=phone_now - dt.timedelta(minutes=1))
    form["started_at"] = (NOW - dt.timedelta(minutes=45)).isoformat()
    api_client.force_authenticate(tech)
    res = api_client.post(SYNC, {"sent_at": phone_now.isoformat(), "forms": [form]}, format="json")
    assert res.status_code == 200
    [result] = res.json()["results"]
    assert result["status"] == "flagged" and result["work_order_state"] == "completed"
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.COMPLETED
    insp = Inspection.objects.get(pk=result["inspection_id"])
    assert insp.started_at < insp.finished_at == NOW - dt.timedelta(minutes=1)

    # The supervisor sees why it is flagged, in words, and the skew through the API.
    client.force_login(boss)
    page = client.get("/flagged/")
    assert page.status_code == 200
    assert "3 days behind the server" in page.content.decode()
    api_client.force_authenticate(boss)
    [flagged] = api_client.get("/api/inspections/flagged/").json()
    assert flagged["clock_skew_s"] == -3 * 86400
    detail = api_client.get(f"/api/inspections/{insp.pk}/").json()
    assert detail["clock_skew_s"] == -3 * 86400
    assert detail["phone_times"]["finished_at"] == form["finished_at"]
    assert detail["finished_at"].startswith("2025-03-03T09:31")

    # A batch of three, the middle one started in year 1: refused alone, the others stored.
    works = [make_visit(tasks=["filter_check"], organisation=wo.organisation, technician=tech)[0] for _ in range(3)]
    forms = [filter_form(w) for w in works]
    forms[1]["started_at"] = "0001-01-01T00:00:00Z"
    api_client.force_authenticate(tech)
    res = api_client.generic("POST", SYNC, json.dumps({"forms": forms}), content_type="application/json")
    assert res.status_code == 200
    statuses = [x["status"] for x in res.json()["results"]]
    assert statuses == ["stored", "refused", "stored"]
    assert "not a plausible date" in res.json()["results"][1]["errors"]["started_at"][0]

    # Every page and list that shows the visits still answers.
    api_client.force_authenticate(boss)
    assert api_client.get("/api/inspections/flagged/").status_code == 200
    for w in (wo, works[0], works[2]):
        assert client.get(f"/w/{w.public_id}/").status_code == 200
        insp = Inspection.objects.get(work_order=w)
        assert api_client.get(f"/api/inspections/{insp.pk}/").status_code == 200
