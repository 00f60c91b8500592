"""Tryout: supply air typed 75 °C against its 18 °C set point was set aside as implausible (flagged, no check used
it), yet the record page and the inspection PDF said "Recorded — no limit applies to this reading" beside it. A
limit applies; the value was not judged. Both now say what the phone says (inspections.display
reading_verdict_words): "Not judged — 75.0 °C is outside the plausible −40.0 to 60.0 °C; re-check the reading"."""

import pytest

from inspections.models import Reading
from tests.factories.inspections import make_visit, r, sync_form

from .conftest import pdf_text

pytestmark = pytest.mark.django_db

SYNC = "/api/inspections/sync/"
WHY = "75.0 °C is outside the plausible −40.0 to 60.0 °C; re-check the reading"


@pytest.fixture
def visit(api_client):
    wo, tech = make_visit(tasks=["controls_check"])
    api_client.force_authenticate(tech)
    form = sync_form(wo, [r("controls_check.supply_air", 75), r("controls_check.supply_setpoint", 18)])
    [result] = api_client.post(SYNC, {"forms": [form]}, format="json").json()["results"]
    assert result["status"] == "flagged", result
    assert any(f["code"] == "improbable_value" for f in result["flags"]), result
    reading = Reading.objects.get(inspection__work_order=wo, item__key="supply_air")
    assert reading.improbable and not reading.verdict
    return wo


def flat(text: str) -> str:
    return " ".join(text.split())


def test_the_record_page_says_the_reading_was_not_judged_and_why(visit, client):
    client.force_login(visit.assignee)
    page = client.get(f"/w/{visit.public_id}/").content.decode()
    record = flat(page[page.index("data-record=") :])
    row = record.split("Supply-air temperature — whole unit:</span>", 1)[1].split("</li>", 1)[0]
    assert f'<span class="verdict recorded">Not judged</span> — {WHY}' in row
    assert "no limit applies" not in row


def test_the_inspection_report_says_the_reading_was_not_judged_and_why(visit, make_report):
    report = make_report(user=visit.assignee, kind="inspection", parameters={"work_order": str(visit.public_id)})
    text = flat(pdf_text(report))
    assert "Not judged" in text and WHY in text
    assert "no limit applies" not in text.split("Supply-air temperature", 1)[1].split("Supply-air set point", 1)[0]
