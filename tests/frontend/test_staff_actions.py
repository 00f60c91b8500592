"""Supervisor actions on the staff pages (flags, verification) and the server's evaluation in the reader's units."""

import pytest
from django.urls import reverse

from accounts.models import AuditEvent
from inspections.models import Inspection
from scheduling.models import WorkOrder
from scheduling.services import work_order_assign
from tests.frontend.test_records import finished_visit

pytestmark = pytest.mark.django_db


def test_supervisor_resolves_a_flagged_form_with_a_note(scenario, login):
    """A form for work reassigned meanwhile is listed under flagged forms; resolving it records the note."""
    seen = scenario.work_a.version
    work_order_assign(work_order=scenario.work_a, assignee=scenario.other_technician, by=scenario.supervisor)
    scenario.work_a.version = seen  # the phone still has the old version
    result = finished_visit(scenario)
    assert result["status"] == "flagged"
    client = login(scenario.supervisor)
    page = client.get("/flagged/").content.decode()
    inspection = Inspection.objects.get(pk=result["inspection_id"])
    assert f'name="inspection" value="{inspection.pk}"' in page and "Omar Vent" in page
    response = client.post("/flagged/", {"inspection": inspection.pk, "note": "Omar's visit dropped; readings kept."})
    assert response.status_code == 302
    inspection.refresh_from_db()
    assert inspection.flag_resolved_by == scenario.supervisor
    assert inspection.flag_resolution_note == "Omar's visit dropped; readings kept."
    assert AuditEvent.objects.filter(action="flag_resolve", object_id=str(inspection.pk)).exists()
    assert f'value="{inspection.pk}"' not in client.get("/flagged/").content.decode()


def test_resolving_without_a_note_is_refused_and_named(scenario, login):
    seen = scenario.work_a.version
    work_order_assign(work_order=scenario.work_a, assignee=scenario.other_technician, by=scenario.supervisor)
    scenario.work_a.version = seen
    inspection = Inspection.objects.get(pk=finished_visit(scenario)["inspection_id"])
    client = login(scenario.supervisor)
    response = client.post("/flagged/", {"inspection": inspection.pk, "note": "  "}, follow=True)
    assert "say what was done about the flag" in response.content.decode()
    inspection.refresh_from_db()
    assert inspection.flag_resolved_at is None


def test_technician_cannot_resolve_a_flag(scenario, login):
    assert login(scenario.technician).post("/flagged/", {"inspection": 1, "note": "x"}).status_code == 403


def test_supervisor_verifies_completed_work_from_the_work_order_page(scenario, login):
    """The Verify button moves the inspection and its completed work order to verified."""
    finished_visit(scenario)
    assert scenario.work_a.state == WorkOrder.State.COMPLETED
    client = login(scenario.supervisor)
    url = f"/w/{scenario.work_a.public_id}/"
    assert (
        reverse("frontend:verify", kwargs={"public_id": scenario.work_a.public_id}) in client.get(url).content.decode()
    )
    response = client.post(
        reverse("frontend:verify", kwargs={"public_id": scenario.work_a.public_id}),
        {"version": scenario.work_a.version},  # the page's hidden field: the version it was read at
    )
    assert response.status_code == 302 and response["Location"] == url
    scenario.work_a.refresh_from_db()
    assert scenario.work_a.state == WorkOrder.State.VERIFIED
    inspection = Inspection.objects.get(work_order=scenario.work_a)
    assert inspection.verified_by == scenario.supervisor
    page = client.get(url).content.decode()
    assert "Verified by Sara Plan" in page and "Verify the completed work" not in page


def test_technician_and_manager_cannot_verify(scenario, login):
    finished_visit(scenario)
    url = reverse("frontend:verify", kwargs={"public_id": scenario.work_a.public_id})
    assert (
        "Verify the completed work"
        not in login(scenario.technician).get(f"/w/{scenario.work_a.public_id}/").content.decode()
    )
    # They see the work order, so the refusal says they may not change it (403), not that it is missing.
    assert login(scenario.technician).post(url).status_code == 403
    assert login(scenario.manager_a).post(url).status_code == 403
    scenario.work_a.refresh_from_db()
    assert scenario.work_a.state == WorkOrder.State.COMPLETED


@pytest.mark.parametrize(("system", "unit"), [("si", "Pa"), ("us", "in. w.c.")])
def test_work_order_page_shows_derived_values_in_the_readers_units(scenario, login, system, unit):
    """The server's filter evaluation lists the corrected pressure drop in Pa or in. w.c., as the reader chose."""
    finished_visit(scenario, dp=150.0)
    scenario.supervisor.unit_system = system
    scenario.supervisor.save(update_fields=["unit_system"])
    for url in (f"/w/{scenario.work_a.public_id}/", f"/w/{scenario.work_a.public_id}/result/"):
        html = login(scenario.supervisor).get(url).content.decode()
        assert "Evaluation by the server" in html
        derived = html.split("data-derived>")[1].split("</span>")[0]
        # Sentences, never "label: value; label: value".
        assert "At the design airflow (" in derived and " it would be " in derived, derived
        assert ": " not in derived and "; clean pressure drop" not in derived, derived
        assert unit in derived, derived
        if system == "us":
            assert " Pa" not in derived


def test_outbox_bar_shows_for_technicians_and_waits_hidden_for_others(scenario, login):
    """Technicians always have the outbox bar; a manager's is hidden until a form of theirs waits."""
    tech = login(scenario.technician).get("/today/").content.decode()
    assert 'id="outbox-status" aria-label="Outbox">' in tech
    manager = login(scenario.manager_a).get("/dashboard/").content.decode()
    assert "data-outbox-optional hidden" in manager and 'class="no-outbox"' in manager
