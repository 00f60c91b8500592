"""Sync, form by form: a careless or hostile form is refused on its own with field errors; its neighbours are stored.

Each form of a batch is parsed and judged alone (inspections/check.py): a bad value answers
``refused`` with errors naming the field, the value and what is allowed, nothing of that
form is saved, and the forms before and after it are stored. Only a body that is not a batch
at all (not JSON, nested too deep, too big, not ``{"forms": [...]}``) is refused whole, as
JSON in the API's error shape. Phone clocks never refuse a form: the skew is recorded and
the visit placed on the server's timeline.
"""

import datetime as dt
import json

import pytest
import time_machine
from django.test import override_settings

from inspections.models import Inspection, Reading
from scheduling.models import WorkOrder
from tests.factories.inspections import FINISHED, component, filter_form, make_visit

SYNC = "/api/inspections/sync/"
NOW = FINISHED + dt.timedelta(minutes=2)  # the server's clock in these tests


def three_visits():
    wo1, tech = make_visit(tasks=["filter_check"])
    wo2, _ = make_visit(tasks=["filter_check"], organisation=wo1.organisation, technician=tech)
    wo3, _ = make_visit(tasks=["filter_check"], organisation=wo1.organisation, technician=tech)
    return (wo1, wo2, wo3), tech


def post_raw(client, user, body: str):
    client.force_authenticate(user)
    return client.generic("POST", SYNC, body, content_type="application/json")


def set_path(form: dict, path: tuple, value) -> None:
    target = form
    for step in path[:-1]:
        target = target[step]
    target[path[-1]] = value


MARK = "__HOSTILE__"
YEAR_1 = "0001-01-01T08:00:00Z"

# (case, where in the form, the hostile value or raw JSON text, the field error expected)
HOSTILE = [
    ("nul_in_note", ("readings", 1, "note"), "gauge\x00broken", "readings[1].note"),
    ("control_char_in_text_name", ("signature", "name"), "Ana\x07Field", "signature.name"),
    ("version_2_31", ("work_order_version",), 2**31, "work_order_version"),
    ("version_2_63", ("work_order_version",), 2**63, "work_order_version"),
    ("version_as_float", ("work_order_version",), 1.0, "work_order_version"),
    ("item_as_list", ("readings", 1, "item"), ["filter_check.dp"], "readings[1].item"),
    ("component_as_object", ("readings", 1, "component"), {"a": 1}, "readings[1].component"),
    ("value_as_list", ("readings", 2, "value"), ["ok"], "readings[2].value"),
    ("signature_name_as_number", ("signature", "name"), 12345, "signature.name"),
    ("started_in_year_1", ("started_at",), YEAR_1, "started_at"),
    ("finished_in_year_1", ("finished_at",), YEAR_1, "finished_at"),
    ("signed_in_year_1", ("signature", "signed_at"), YEAR_1, "signature.signed_at"),
    ("sent_in_year_1", ("sent_at",), YEAR_1, "sent_at"),
    ("time_not_a_day", ("finished_at",), "2025-02-30T08:00:00Z", "finished_at"),
    ("client_uuid_as_list", ("client_uuid",), ["3f5e9c6e-1b2a-4c3d-8e9f-0a1b2c3d4e5f"], "client_uuid"),
    ("work_order_as_number", ("work_order",), 7, "work_order"),
    ("value_1e309", ("readings", 1, "value"), "1e309", "readings[1].value"),
    ("value_minus_1e309", ("readings", 1, "value"), "-1e309", "readings[1].value"),
    ("version_1e309", ("work_order_version",), "1e309", "work_order_version"),
    ("huge_note", ("readings", 1, "note"), "x" * 5000, "readings[1].note"),
    ("readings_as_object", ("readings",), {"item": "x"}, "readings"),
    (
        "photo_item_as_list",
        ("photos",),
        [{"client_uuid": "3f5e9c6e-1b2a-4c3d-8e9f-0a1b2c3d4e5f", "item": []}],
        "photos[0].item",
    ),
]


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
@pytest.mark.parametrize(("case", "path", "value", "field"), HOSTILE, ids=[h[0] for h in HOSTILE])
def test_a_bad_form_in_the_middle_is_refused_alone(api_client, case, path, value, field):
    """Forms 1 and 3 are stored; form 2 is refused naming the field and what is allowed; nothing of it is saved."""
    (wo1, wo2, wo3), tech = three_visits()
    forms = [filter_form(wo1), filter_form(wo2), filter_form(wo3)]
    raw_number = isinstance(value, str) and value.lstrip("-") == "1e309"
    set_path(forms[1], path, MARK if raw_number else value)
    body = json.dumps({"forms": forms})
    if raw_number:
        body = body.replace(f'"{MARK}"', value)
    res = post_raw(api_client, tech, body)
    assert res.status_code == 200, res.content
    first, bad, last = res.json()["results"]
    assert (first["status"], bad["status"], last["status"]) == ("stored", "refused", "stored"), bad
    assert field in bad["errors"], bad["errors"]
    message = " ".join(bad["errors"][field])
    assert "allowed" in message or "is not" in message or "remove them" in message, message
    assert bad["inspection_id"] is None
    assert set(Inspection.objects.values_list("work_order_id", flat=True)) == {wo1.pk, wo3.pk}
    assert not Reading.objects.filter(inspection__work_order=wo2).exists()
    wo2.refresh_from_db()
    assert wo2.state == WorkOrder.State.ASSIGNED
    # Fixed and sent again with the same client UUID, it is stored.
    fixed = filter_form(wo2, client_uuid=forms[1]["client_uuid"]) if field != "client_uuid" else filter_form(wo2)
    again = post_raw(api_client, tech, json.dumps({"forms": [fixed]})).json()["results"][0]
    assert again["status"] == "stored", again


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
def test_year_1_and_version_messages_name_the_value_and_the_allowed_window(api_client):
    """The errors say the value sent and the window allowed, in words a technician can act on."""
    wo, tech = make_visit(tasks=["filter_check"])
    form = filter_form(wo)
    form["started_at"] = YEAR_1
    form["work_order_version"] = 2**31
    res = post_raw(api_client, tech, json.dumps({"forms": [form]})).json()["results"][0]
    assert "'0001-01-01T08:00:00Z' is not a plausible date; allowed from 2000-01-01" in res["errors"]["started_at"][0]
    assert (
        "2147483648 is not allowed; allowed a whole number from 1 to 2147483647"
        in (res["errors"]["work_order_version"][0])
    )


@pytest.mark.django_db
@pytest.mark.parametrize(
    ("body", "status", "says"),
    [
        ("{not json", 400, "not JSON"),
        ('{"forms": [NaN]}', 400, "not JSON"),
        ("[" * 10_000 + "]" * 10_000, 400, "deep"),
        ('{"forms": ' + "[" * 50 + "]" * 50 + "}", 400, "deep"),
        ('[{"client_uuid": "x"}]', 400, "dictionary"),
        ('{"forms": {"a": 1}}', 400, "list"),
        ('{"forms": "all of them"}', 400, "list"),
    ],
    ids=["not_json", "nan", "nested_10000", "nested_50", "list_at_top", "forms_object", "forms_string"],
)
def test_a_body_that_is_not_a_batch_is_refused_whole_in_the_error_shape(api_client, body, status, says):
    """Only the body as a whole gets a 4xx, as JSON {"detail", "errors"}; nothing is stored."""
    _, tech = make_visit(tasks=["filter_check"])
    res = post_raw(api_client, tech, body)
    assert res.status_code == status, res.content
    doc = res.json()
    assert set(doc) == {"detail", "errors"} and says in doc["detail"]
    assert Inspection.objects.count() == 0


@pytest.mark.django_db
@override_settings(DATA_UPLOAD_MAX_MEMORY_SIZE=10_000)
def test_a_body_over_the_size_limit_is_a_413_in_the_error_shape(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    form = filter_form(wo)
    form["readings"][1]["note"] = "x" * 20_000
    res = post_raw(api_client, tech, json.dumps({"forms": [form]}))
    assert res.status_code == 413
    assert "too large" in res.json()["detail"] and res.json()["errors"] == {}
    assert Inspection.objects.count() == 0


def _clock_form(wo, *, phone_offset: dt.timedelta, send_clock: bool = True) -> dict:
    """The page's start time (server clock) 45 min ago; finish, signature and sent_at from a phone off by the offset."""
    phone_now = NOW + phone_offset
    form = filter_form(wo, finished_at=phone_now - dt.timedelta(seconds=60))
    form["started_at"] = (NOW - dt.timedelta(minutes=45)).isoformat()
    if send_clock:
        form["sent_at"] = phone_now.isoformat()
    return form


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
@pytest.mark.parametrize("days", [-3, 3], ids=["phone_3_days_behind", "phone_3_days_ahead"])
def test_a_phone_clock_days_off_stores_the_form_on_the_servers_timeline(api_client, days):
    """Skew recorded (phone minus server), finish and signature placed on the server's clock, work completed."""
    wo, tech = make_visit(tasks=["filter_check"])
    form = _clock_form(wo, phone_offset=dt.timedelta(days=days))
    res = post_raw(api_client, tech, json.dumps({"forms": [form]})).json()["results"][0]
    assert res["status"] == "flagged", res
    assert [f["code"] for f in res["flags"]] == ["phone_clock"]
    word = "behind" if days < 0 else "ahead of"
    assert f"3 days {word} the server's" in res["flags"][0]["reason"]
    assert res["clock_skew_s"] == days * 86400
    assert res["work_order_state"] == "completed"
    insp = Inspection.objects.get(pk=res["inspection_id"])
    assert insp.clock_skew == dt.timedelta(days=days)
    assert insp.started_at == NOW - dt.timedelta(minutes=45)  # the page's (server) time, never shifted
    assert insp.finished_at == NOW - dt.timedelta(seconds=60)  # the phone's minute before sending, kept
    assert insp.signed_at == NOW - dt.timedelta(seconds=60)
    assert insp.received_at == NOW
    assert insp.phone_times["finished_at"] == form["finished_at"]
    assert insp.phone_times["skew_from"] == "sent_at"


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
def test_a_phone_clock_within_tolerance_is_taken_as_it_is(api_client):
    """Two minutes off: skew recorded, times unchanged, no flag."""
    wo, tech = make_visit(tasks=["filter_check"])
    form = _clock_form(wo, phone_offset=dt.timedelta(minutes=2))
    res = post_raw(api_client, tech, json.dumps({"forms": [form]})).json()["results"][0]
    assert res["status"] == "stored", res
    insp = Inspection.objects.get(pk=res["inspection_id"])
    assert insp.clock_skew == dt.timedelta(minutes=2)
    assert insp.finished_at == NOW + dt.timedelta(minutes=1)  # as the phone said (within tolerance)


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
@pytest.mark.parametrize("days", [-3, 3], ids=["behind", "ahead"])
def test_an_older_phone_without_its_clock_is_stored_and_the_skew_inferred(api_client, days):
    """No sent_at (older pages): a finish before the page's start or after now shows the skew; never refused."""
    wo, tech = make_visit(tasks=["filter_check"])
    form = _clock_form(wo, phone_offset=dt.timedelta(days=days), send_clock=False)
    res = post_raw(api_client, tech, json.dumps({"forms": [form]})).json()["results"][0]
    assert res["status"] == "flagged", res
    assert "at least" in res["flags"][0]["reason"]
    insp = Inspection.objects.get(pk=res["inspection_id"])
    assert insp.started_at <= insp.finished_at <= NOW
    assert insp.phone_times["skew_from"] == "times"


@pytest.mark.django_db
@time_machine.travel(NOW, tick=False)
def test_a_batch_clock_applies_to_each_form(api_client):
    """The phone may send its clock once for the batch ({"sent_at", "forms"})."""
    wo, tech = make_visit(tasks=["filter_check"])
    form = _clock_form(wo, phone_offset=dt.timedelta(days=-3), send_clock=False)
    body = {"sent_at": (NOW - dt.timedelta(days=3)).isoformat(), "forms": [form]}
    res = post_raw(api_client, tech, json.dumps(body)).json()["results"][0]
    assert res["clock_skew_s"] == -3 * 86400


@pytest.mark.django_db
def test_an_amendment_item_given_as_a_list_is_refused_with_a_field_error(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    [res] = post_raw(api_client, tech, json.dumps({"forms": [filter_form(wo)]})).json()["results"]
    assert res["status"] == "stored", res
    bank = component(wo.ahu, "Final filters")
    answer = api_client.post(
        f"/api/inspections/{res['inspection_id']}/amendments/",
        {
            "reason": "wrong gauge",
            "unit_system": "si",
            "readings": [{"item": ["filter_check.dp"], "value": 200, "component": bank.label_code}],
        },
        format="json",
    )
    assert answer.status_code == 400, answer.content
    assert "is not an item key" in answer.json()["errors"]["readings[0].item"][0]
    deep = api_client.generic(
        "POST",
        f"/api/inspections/{res['inspection_id']}/amendments/",
        "[" * 10_000 + "]" * 10_000,
        content_type="application/json",
    )
    assert deep.status_code == 400 and "deep" in deep.json()["detail"]
