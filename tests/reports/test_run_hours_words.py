"""Tryout: the phone said "plausible: 615 h since the last reading of 12000 h on …" beside a typed run-hour value,
while the stored record, the record page and the inspection PDF said "Recorded — no limit applies to this reading"
for the same reading. Now all say what the meter rule checked, as of the form's finish time: a meter reading taken
after the visit does not change what the visit found (``scheduling.services.meter_reading_words``)."""

import datetime as dt

import pytest

from scheduling.models import MeterReading
from tests.factories.inspections import FINISHED, make_visit, r, sync_form

from .conftest import pdf_text

pytestmark = pytest.mark.django_db

SYNC = "/api/inspections/sync/"
LAST_AT = FINISHED - dt.timedelta(days=30)
SAID = "plausible: 615 h since the last reading of 12000 h on 1 Feb 2025 10:30 CET"


@pytest.fixture
def visit(api_client):
    """Run-hours 12615 typed a month after a reading of 12000 h, sent through the phone's sync; a reading of
    14000 h logged after the visit."""
    wo, tech = make_visit(tasks=["controls_check"])
    site = wo.ahu.building.site
    site.time_zone = "Europe/Berlin"
    site.save(update_fields=["time_zone"])
    MeterReading.objects.create(ahu=wo.ahu, hours=12000, taken_at=LAST_AT, source="manual")
    api_client.force_authenticate(tech)
    res = api_client.post(SYNC, {"forms": [sync_form(wo, [r("visit.run_hours", 12615)])]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] in {"stored", "flagged"}, result
    MeterReading.objects.create(ahu=wo.ahu, hours=14000, taken_at=FINISHED + dt.timedelta(days=20), source="manual")
    return wo


def flat(text: str) -> str:
    return " ".join(text.split())


def test_the_record_page_says_what_the_phone_said(visit, client):
    client.force_login(visit.assignee)
    page = client.get(f"/w/{visit.public_id}/").content.decode()
    record = flat(page[page.index("data-record=") :])
    assert f'<span class="verdict recorded">Recorded</span> — {SAID}' in record
    assert "no limit applies to this reading" not in record.split("Run-hour meter", 1)[1].split("</li>", 1)[0]


def test_the_inspection_report_says_what_the_phone_said(visit, make_report):
    report = make_report(user=visit.assignee, kind="inspection", parameters={"work_order": str(visit.public_id)})
    text = flat(pdf_text(report))
    assert SAID in text


BELOW = "below the last reading of 12000 h on 1 Feb 2025 10:30 CET — meter replaced or misread?"


@pytest.fixture
def below_visit(api_client):
    """Run-hours 11000 typed a month after a reading of 12000 h: the phone says "Watch — below the last reading …";
    the server keeps the form and flags it (meter_reading_refused)."""
    wo, tech = make_visit(tasks=["controls_check"])
    site = wo.ahu.building.site
    site.time_zone = "Europe/Berlin"
    site.save(update_fields=["time_zone"])
    MeterReading.objects.create(ahu=wo.ahu, hours=12000, taken_at=LAST_AT, source="manual")
    api_client.force_authenticate(tech)
    res = api_client.post(SYNC, {"forms": [sync_form(wo, [r("visit.run_hours", 11000)])]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] == "flagged", result
    assert "meter_reading_refused" in str(result), result
    return wo


def test_the_record_page_says_the_phones_watch_for_a_value_below_the_last_reading(below_visit, client):
    client.force_login(below_visit.assignee)
    page = client.get(f"/w/{below_visit.public_id}/").content.decode()
    record = flat(page[page.index("data-record=") :])
    row = record.split("Run-hour meter", 1)[1].split("</li>", 1)[0]
    assert f'<span class="verdict watch">Watch</span> — {BELOW}' in row
    assert "no limit applies" not in row and "Recorded" not in row


def test_the_inspection_report_says_the_phones_watch_for_a_value_below_the_last_reading(below_visit, make_report):
    report = make_report(
        user=below_visit.assignee, kind="inspection", parameters={"work_order": str(below_visit.public_id)}
    )
    text = flat(pdf_text(report))
    assert BELOW in text
    assert "no limit applies to this reading" not in text.split("Run-hour meter", 1)[1][:300]
