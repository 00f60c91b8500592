"""Tryout (HIGH): the form showed a unit's last meter reading as "last: 12,075 h" and read a typed comma as a decimal
comma, so "12,075" typed as shown stored 12.075 h and dated runtime tasks from it.

A number is never shown grouped with a comma (engineering.formatting.format_number), and a comma before exactly
three digits after a whole part that is not zero is refused wherever a typed number arrives (accounts.inputs
parse_number, comma_words): here the phone's sync, which takes a reading's number as a JSON number or as typed
text, and the form the technician reads (the last value)."""

import datetime as dt

import pytest

from accounts.inputs import FieldErrors, check_number
from inspections.models import Inspection, Reading
from inspections.services import inspection_sync
from scheduling.models import MeterReading
from tests.factories.inspections import FINISHED, make_visit, r, sync_form

SYNC = "/api/inspections/sync/"
BOTH = "“12,075” could be 12075 or 12.075: type 12075 or 12.075"


def post(client, user, forms):
    client.force_authenticate(user)
    res = client.post(SYNC, {"forms": forms}, format="json")
    assert res.status_code == 200, res.content
    return res.json()["results"]


@pytest.mark.django_db
def test_a_synced_run_hour_value_with_a_comma_that_may_group_thousands_is_refused_naming_both(api_client):
    """ "12,075" as a string is refused whole, naming the run-hour item, the value and both readings; nothing is
    stored. Resent as 12075 the form is stored at 12075 h; "12,5" (a decimal comma) still reads 12.5."""
    wo, tech = make_visit(tasks=["controls_check"])
    form = sync_form(wo, [r("visit.run_hours", "12,075")])
    [res] = post(api_client, tech, [form])
    assert res["status"] == "refused", res
    [message] = res["errors"]["readings[0].value"]
    assert message == f"Run-hour meter: {BOTH}"
    assert Inspection.objects.count() == 0 and Reading.objects.count() == 0 and MeterReading.objects.count() == 0

    form["readings"][0]["value"] = "12075"
    [res] = post(api_client, tech, [form])
    assert res["status"] in {"stored", "flagged"}, res
    assert MeterReading.objects.get().hours == 12075


@pytest.mark.django_db
def test_the_last_meter_value_on_the_form_reads_back_as_the_same_number(client):
    """The next visit's form shows "last: 12075 h", never "12,075 h": typed as shown it is the same number."""
    wo, tech = make_visit(tasks=["controls_check"])
    [res] = inspection_sync(user=tech, forms=[sync_form(wo, [r("visit.run_hours", 12075)])])
    assert res["status"] in {"stored", "flagged"}, res
    later, _ = make_visit(tasks=["controls_check"], ahu=wo.ahu, organisation=wo.organisation, technician=tech)
    later.due_date = FINISHED.date() + dt.timedelta(days=30)
    later.save(update_fields=["due_date"])
    client.force_login(tech)
    html = client.get(f"/w/{later.public_id}/").content.decode()
    assert "last: 12075 h on" in html and "12,075" not in html


def test_every_number_check_names_the_field_and_both_readings():
    """The input policy's check_number (meter CSV, registry, API numbers read as text) says the same words."""
    errors = FieldErrors()
    assert check_number("1,250", key="hours", label="Run hours", minimum=0, maximum=1e6, errors=errors) is None
    assert errors["hours"] == ["Run hours: “1,250” could be 1250 or 1.250: type 1250 or 1.250"]
    assert check_number("0,125", key="x", label="X", minimum=0, maximum=1, errors=FieldErrors()) == 0.125
