"""Two coils' leak-by tests read as two coils: each part's items under its own sub-heading.

Tryout: on the coil valve leak-by test of a unit with two coils the phone asked the same four items twice, the
part only at the end of a long label ("… (valve shut) — Heating coil"), easy to miss on a small screen. The form
now heads each part's run with its name, what it is and its label code (``inspections.display.place_heading``),
and the signed record on the work order's page heads the same runs the same way, as the inspection report heads
each part of its readings table.
"""

import datetime as dt
import re

import pytest
import time_machine

from accounts.models import Role
from inspections.display import place_heading
from reports.services import report_request
from tests.factories.accounts import make_person
from tests.factories.inspections import SYNC_URL, make_visit, r, sync_form
from tests.reports.conftest import pdf_text

pytestmark = pytest.mark.django_db

LEAK = ("valve_closed", "settled", "leak_air_in", "leak_air_out")
FINISHED = dt.datetime(2026, 4, 14, 10, tzinfo=dt.UTC)


def heading_words(component) -> str:
    h = place_heading(component)
    return f"{h['title']} — {h['sub']}"


def flat(html: str) -> str:
    return " ".join(re.sub(r"<[^>]+>", " ", html).split())


@pytest.fixture
def leak_test():
    wo, tech = make_visit(tasks=["coil_valve_leak"])
    coils = sorted(wo.ahu.components.filter(kind="coil"), key=lambda c: (c.position, c.pk))
    assert [c.name for c in coils] == ["Heating coil", "Cooling coil"]
    return wo, tech, coils


def test_the_form_heads_each_coils_items(leak_test, client):
    wo, tech, coils = leak_test
    client.force_login(tech)
    page = client.get(f"/w/{wo.public_id}/").content.decode()
    section = page[page.index('data-section="coil_valve_leak"') :]
    section = section[: section.index("</fieldset>\n  <fieldset") if "</fieldset>\n  <fieldset" in section else None]
    marks = re.findall(
        r'data-part-heading>(.*?)</h3>|data-item="coil_valve_leak\.([^"]+)" data-component="([^"]*)"', section
    )
    asked = [flat(h) if h else (key, code) for h, key, code in marks]
    expected = []
    for coil in coils:
        expected += [heading_words(coil), *((key, coil.label_code) for key in LEAK)]
    assert asked == expected


def test_a_section_of_the_units_items_has_no_sub_heading(client):
    wo, tech = make_visit(tasks=["controls_check"])
    client.force_login(tech)
    page = client.get(f"/w/{wo.public_id}/").content.decode()
    assert "data-part-heading" not in page[page.index('data-section="controls_check"') :]


def test_the_record_and_the_report_head_each_coil_alike(
    leak_test, api_client, client, django_capture_on_commit_callbacks
):
    wo, tech, coils = leak_test
    readings = [r("visit.run_hours", 5_000)]
    for coil in coils:
        readings += [
            r("coil_valve_leak.valve_closed", "ok", coil),
            r("coil_valve_leak.settled", "ok", coil),
            r("coil_valve_leak.leak_air_in", 14.4, coil),
            r("coil_valve_leak.leak_air_out", 15.0, coil),
        ]
    api_client.force_authenticate(tech)
    with time_machine.travel(FINISHED + dt.timedelta(minutes=5), tick=False):
        res = api_client.post(SYNC_URL, {"forms": [sync_form(wo, readings, finished_at=FINISHED)]}, format="json")
    assert res.status_code == 200, res.content

    client.force_login(tech)
    with time_machine.travel(FINISHED + dt.timedelta(hours=1), tick=False):
        page = client.get(f"/w/{wo.public_id}/").content.decode()
    record = page[page.index("data-record=") :]
    marks = re.findall(r"data-part-heading>(.*?)</h4>|<li data-reading><span>(.*?):</span>", record)
    shown = [flat(h) if h else flat(label) for h, label in marks if h or "(valve shut)" in label]
    expected = []
    for coil in coils:
        expected += [
            heading_words(coil),
            f"Air temperature entering the coil (valve shut) — {coil.name}",
            f"Air temperature leaving the coil (valve shut) — {coil.name}",
        ]
    assert shown == expected

    # The inspection report heads each part of its readings table with the same words.
    supervisor = make_person(organisation=wo.organisation, role=Role.SUPERVISOR, first_name="Mira", last_name="Okafor")
    with django_capture_on_commit_callbacks(execute=True):
        report = report_request(user=supervisor, kind="inspection", parameters={"work_order": str(wo.public_id)})
    report.refresh_from_db()
    text = " ".join(pdf_text(report).split())
    at = [text.index(f"{heading_words(coil)} Valve commanded closed") for coil in coils]
    assert at == sorted(at)
