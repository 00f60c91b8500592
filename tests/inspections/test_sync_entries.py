"""Sync answers each entry of a batch on its own, and names everything wrong with a form at once.

A batch whose entries are not forms (a number, text, null, a list, true) is still a batch: the answer is
200 with one refused result per entry saying which entry it is and what it got, and the good forms
beside them are stored. A form with several bad fields is refused with an error for each of them, not
only the first ones met.
"""

import datetime as dt
import uuid

import pytest
import time_machine
from django.core.files.uploadedfile import SimpleUploadedFile

from accounts.models import Role
from inspections.models import Inspection, Photo
from scheduling.services import work_order_assign, work_order_cancel
from tests.factories.accounts import make_person
from tests.factories.inspections import FINISHED, filter_form, image_bytes, make_visit

SYNC = "/api/inspections/sync/"
NOW = FINISHED + dt.timedelta(minutes=2)  # the server's clock in these tests
YEAR_1 = "0001-01-01T08:00:00Z"


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
def test_entries_that_are_not_forms_are_each_refused_on_their_own(api_client):
    """[1, "x", null, [], true, a good form] answers 200: five refusals naming the entry, one stored form."""
    wo, tech = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(tech)
    good = filter_form(wo)
    res = api_client.post(SYNC, {"forms": [1, "x", None, [], True, good]}, format="json")
    assert res.status_code == 200, res.content
    results = res.json()["results"]
    assert [x["status"] for x in results] == ["refused"] * 5 + ["stored"]
    got = ["a number", "text", "null", "a list", "true/false"]
    for n, (result, kind) in enumerate(zip(results, got, strict=False), start=1):
        assert f"form {n} is not an object (got {kind})" in result["errors"]["form"][0]
    assert "ErrorDetail" not in res.content.decode()
    assert Inspection.objects.filter(client_uuid=good["client_uuid"]).exists()


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
def test_a_form_with_many_bad_fields_names_each_of_them(api_client):
    """Version too big, year-1 start, NUL in a note, a list as an item, a number as the signer's name and a
    year-1 signing time: all six are named in one answer."""
    wo, tech = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(tech)
    form = filter_form(wo)
    form["work_order_version"] = 2**31
    form["started_at"] = YEAR_1
    form["readings"][1]["note"] = "gauge\x00broken"
    form["readings"][2]["item"] = ["filter_check.seated"]
    form["signature"]["name"] = 42
    form["signature"]["signed_at"] = YEAR_1
    res = api_client.post(SYNC, {"forms": [form]}, format="json")
    assert res.status_code == 200, res.content
    [result] = res.json()["results"]
    assert result["status"] == "refused"
    assert {
        "work_order_version",
        "started_at",
        "readings[1].note",
        "readings[2].item",
        "signature.name",
        "signature.signed_at",
    } <= set(result["errors"]), result["errors"]
    assert Inspection.objects.count() == 0


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
def test_a_form_with_a_bad_unit_system_still_judges_its_readings(api_client):
    """Without a unit system numbers cannot be held to limits, but the other readings are still judged."""
    wo, tech = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(tech)
    form = filter_form(wo, unit_system="furlongs")
    form["readings"][2]["value"] = "maybe"
    form["readings"][1]["value"] = "lots"
    [result] = api_client.post(SYNC, {"forms": [form]}, format="json").json()["results"]
    assert result["status"] == "refused"
    assert {"unit_system", "readings[1].value", "readings[2].value"} <= set(result["errors"]), result["errors"]


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
def test_the_former_assignee_still_sends_photos_and_forms_for_work_taken_from_him(api_client):
    """Reassigned or cancelled after the phone took it: the photo is kept and the form stored and flagged."""
    wo, tech = make_visit(tasks=["filter_check"])
    wo2, _ = make_visit(tasks=["filter_check"], organisation=wo.organisation, technician=tech)
    boss = make_person(organisation=wo.organisation, role=Role.SUPERVISOR)
    other = make_person(organisation=wo.organisation, role=Role.TECHNICIAN, first_name="Ben", last_name="Other")
    seen, seen2 = wo.version, wo2.version
    work_order_assign(work_order=wo, assignee=other, by=boss)
    work_order_cancel(work_order=wo2, by=boss, reason="unit replaced")
    api_client.force_authenticate(tech)
    for w in (wo, wo2):
        body = {
            "work_order": str(w.public_id),
            "client_uuid": str(uuid.uuid4()),
            "file": SimpleUploadedFile("p.jpg", image_bytes(), content_type="image/jpeg"),
        }
        assert api_client.post("/api/inspections/photos/", body, format="multipart").status_code == 201
    assert Photo.objects.count() == 2
    res = api_client.post(
        SYNC, {"forms": [filter_form(wo, version=seen), filter_form(wo2, version=seen2)]}, format="json"
    )
    first, second = res.json()["results"]
    assert first["status"] == second["status"] == "flagged"
    assert "work_order_reassigned" in {f["code"] for f in first["flags"]}
    assert "work_order_cancelled" in {f["code"] for f in second["flags"]}
