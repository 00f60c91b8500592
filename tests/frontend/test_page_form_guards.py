"""Page forms hold the API's line: a stale or unreadable version, control characters in free text and a
refused component edit are each refused with a message naming the field, and nothing is saved."""

import html
import re

import pytest
from django.contrib.messages import get_messages
from django.urls import reverse

from inspections.models import Inspection
from inventory.models import Component
from scheduling.models import WorkOrder
from scheduling.services import work_order_assign
from tests.factories.inventory import ComponentFactory
from tests.frontend.test_records import finished_visit

pytestmark = pytest.mark.django_db

CHANGED = "someone changed it meanwhile"


def _messages(response) -> str:
    return " ".join(str(m) for m in get_messages(response.wsgi_request))


def _text(page: str) -> str:
    return html.unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", page)))


# --- 1. The version a page was read at ---------------------------------------------------------------------------
@pytest.mark.parametrize("version", [None, "", "x", "1.0", "1e309", "0", "-1"])
def test_assign_without_a_readable_version_is_refused_as_changed_meanwhile(scenario, login, version):
    """The board's row form with no version, or one that is not a whole number, saves nothing: the check that
    someone else changed the work meanwhile is never skipped."""
    wo = scenario.work_a
    before = (wo.assignee_id, wo.version)
    post = {"assignee": str(scenario.other_technician.pk), "week": ""}
    if version is not None:
        post["version"] = version
    response = login(scenario.supervisor).post(reverse("frontend:assign", kwargs={"public_id": wo.public_id}), post)
    assert response.status_code == 302
    assert CHANGED in _messages(response)
    wo.refresh_from_db()
    assert (wo.assignee_id, wo.version) == before


def test_verify_with_a_stale_version_is_refused_when_the_work_has_a_form(scenario, login):
    """Verify on a page read before someone else changed the work order: refused, the form stays unverified."""
    finished_visit(scenario)
    wo = scenario.work_a
    assert wo.state == WorkOrder.State.COMPLETED
    url = reverse("frontend:verify", kwargs={"public_id": wo.public_id})
    client = login(scenario.supervisor)
    for version in (wo.version - 1, wo.version + 3, None, "x"):
        response = client.post(url, {} if version is None else {"version": version})
        assert response.status_code == 302
        assert CHANGED in _messages(response), version
        wo.refresh_from_db()
        assert wo.state == WorkOrder.State.COMPLETED
        assert Inspection.objects.get(work_order=wo).verified_at is None
    response = client.post(url, {"version": wo.version})
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.VERIFIED


# --- 2. Free text through the one text policy --------------------------------------------------------------------
def _flagged(scenario) -> Inspection:
    seen = scenario.work_a.version
    work_order_assign(work_order=scenario.work_a, assignee=scenario.other_technician, by=scenario.supervisor)
    scenario.work_a.version = seen  # the phone still had the old version: the form arrives flagged
    return Inspection.objects.get(pk=finished_visit(scenario)["inspection_id"])


@pytest.mark.parametrize("note", ["\x00", "a\x07b", "checked\x1b[31m"])
def test_a_flag_note_with_control_characters_is_refused_and_named(scenario, login, note):
    inspection = _flagged(scenario)
    response = login(scenario.supervisor).post("/flagged/", {"inspection": inspection.pk, "note": note}, follow=True)
    text = _text(response.content.decode())
    assert "Note: the text contains control characters" in text
    inspection.refresh_from_db()
    assert inspection.flag_resolved_at is None and inspection.flag_resolution_note == ""


def test_a_rejection_reason_with_control_characters_is_refused_beside_the_proposal(scenario, login):
    finished_visit(scenario, dp=400.0)  # final filters loaded: corrective work proposed
    [wo] = WorkOrder.objects.filter(kind=WorkOrder.Kind.CORRECTIVE, approval=WorkOrder.Approval.PENDING)
    client = login(scenario.supervisor)
    response = client.post("/corrective/", {"work_order": str(wo.public_id), "decision": "reject", "reason": "\x00bad"})
    assert response.status_code == 400
    assert "Reason: the text contains control characters" in _text(response.content.decode())
    wo.refresh_from_db()
    assert wo.approval == WorkOrder.Approval.PENDING and wo.cancel_reason == ""


# --- 3. The component edit page ----------------------------------------------------------------------------------
@pytest.fixture
def heater(scenario):
    return ComponentFactory(
        ahu=scenario.unit_a,
        kind="electric_preheater",
        name="Preheater",
        specs={"power_w": 24000, "stages": 3, "switch_on_c": -5},
    )


def _edit(client, heater, **changes):
    # The page shows rated power in kW (24 kW as stored 24000 W).
    post = {"name": heater.name, "spec_power_w": "24", "spec_stages": "3", "spec_switch_on_c": "-5"}
    post.update(changes)
    return client.post(reverse("frontend:registry_component_edit", kwargs={"pk": heater.pk}), post)


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"spec_stages": "2.5"}, "Stages: '2.5' is not a whole number; allowed: a whole number from 1 to 12"),
        ({"spec_stages": "12.0000001"}, "Stages: '12.0000001' is not a whole number"),
        ({"spec_stages": "13"}, "Stages: 13 is out of range; allowed: a whole number from 1 to 12"),
        ({"spec_switch_on_c": "15.0000001"}, "15.0000001 °C is out of range"),
        ({"name": "x" * 1000}, "Name: 1000 characters is too long; allowed: at most 120 characters"),
        ({"name": "  "}, "Name is required"),
        ({"name": "Pre\x00heater"}, "Name: the text contains control characters"),
    ],
)
def test_a_refused_component_edit_says_why_beside_the_field(scenario, login, heater, changes, message):
    response = _edit(login(scenario.supervisor), heater, **changes)
    assert response.status_code == 400
    text = _text(response.content.decode())
    assert message in text
    assert "12 is out of range" not in text
    heater.refresh_from_db()
    assert heater.name == "Preheater" and heater.specs["stages"] == 3


def test_the_component_edit_form_tells_the_browser_its_limits(scenario, login, heater):
    page = login(scenario.supervisor).get(reverse("frontend:registry_component_edit", kwargs={"pk": heater.pk}))
    page = page.content.decode()
    assert re.search(r'<input[^>]*name="name"[^>]*maxlength="120"[^>]*required', page)
    # Numbers are text fields read by the server's one reader (a number field would drop "12a" to "" unseen),
    # the allowed range said beside each and tied to it.
    assert re.search(
        r'<input type="text" inputmode="numeric"[^>]*id="spec-stages"[^>]*aria-describedby="spec-stages-allowed"', page
    )
    assert re.search(r'<input type="text" inputmode="decimal"[^>]*id="spec-power_w"', page)
    assert re.search(r'id="spec-stages-allowed">Allowed: a whole number from 1 to 12', page)
    assert 'type="number"' not in page


def test_a_good_component_edit_is_saved(scenario, login, heater):
    response = _edit(login(scenario.supervisor), heater, name="Preheater 1", spec_stages="4")
    assert response.status_code == 302
    heater = Component.objects.get(pk=heater.pk)
    assert heater.name == "Preheater 1" and heater.specs["stages"] == 4


def test_an_amendment_reason_with_control_characters_is_refused_and_named(scenario, login):
    """The record's amendment form: a reason carrying NUL is refused with the field named; no amendment."""
    from inspections.models import Amendment

    inspection = Inspection.objects.get(pk=finished_visit(scenario)["inspection_id"])
    final = scenario.unit_a.components.get(name="Final filters")
    post = {
        "inspection": inspection.pk,
        "item": f"filter_check.dp|{final.label_code}",
        "value": "160",
        "note": "gauge re-zeroed",
        "reason": "misread\x00the gauge",
    }
    url = reverse("frontend:amend", kwargs={"public_id": scenario.work_a.public_id})
    response = login(scenario.technician).post(url, post)
    assert "Why it is corrected: the text contains control characters" in _messages(response)
    assert not Amendment.objects.exists()
    response = login(scenario.technician).post(url, {**post, "reason": "misread the gauge"})
    assert Amendment.objects.filter(inspection=inspection).count() == 1


# --- 2b. The same text rule through the API (the services both reach) --------------------------------------------
def test_the_api_refuses_control_characters_in_a_flag_note_and_a_rejection_reason(scenario, api_client):
    inspection = _flagged(scenario)
    api_client.force_authenticate(scenario.supervisor)
    res = api_client.post(f"/api/inspections/{inspection.pk}/resolve-flag/", {"note": "a\x07b"}, format="json")
    assert res.status_code == 400 and "control characters" in res.json()["errors"]["note"][0], res.json()
    inspection.refresh_from_db()
    assert inspection.flag_resolved_at is None

    finished_visit(scenario, dp=400.0)
    [wo] = WorkOrder.objects.filter(kind=WorkOrder.Kind.CORRECTIVE, approval=WorkOrder.Approval.PENDING)
    res = api_client.post(
        f"/api/scheduling/work-orders/{wo.public_id}/reject/",
        {"version": wo.version, "reason": "a\x07b"},
        format="json",
    )
    assert res.status_code == 400 and "control characters" in res.json()["errors"]["reason"][0], res.json()
    wo.refresh_from_db()
    assert wo.approval == WorkOrder.Approval.PENDING
