"""A work order's page tells the state it is in: the signed record once done, the form only while open.

Walked as each person does it: the technician syncs through the API (as the phone), then the
technician, the supervisor and the property manager open the work order's page.
"""

import io
import re
import uuid

import pytest

from inspections.models import Amendment, Inspection
from scheduling.models import WorkOrder
from tests.factories.inspections import make_visit, sync_form
from tests.frontend import scenario as scenario_module

FINISH = "Finish and sign"
# The unit running at its design airflow (3 m³/s = 3000 L/s) and speed, so the filter loading is judged.
DESIGN_FLOW = {"visit.run_hours": 4200, "visit.supply_airflow": 3000, "visit.supply_fan_speed": 1450}
CHECKLIST_FORM = re.compile(r"<form[^>]*data-checklist")


def page(client, user, wo):
    client.force_login(user)
    return client.get(f"/w/{wo.public_id}/").content.decode()


def record_section(html: str) -> str:
    """The first signed record on the page (the form that did the work)."""
    start = html.index("data-record=")
    end = html.index("</section>", start)
    return html[start:end]


def checklist_doc(api_client, user, wo) -> dict:
    api_client.force_authenticate(user)
    doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    api_client.force_authenticate(None)
    return doc


def filled_readings(doc: dict, values: dict) -> list[dict]:
    """Every asked item answered: the given values, OK checks, the first good choice, a number in the ok band."""
    out = []
    for template in doc["templates"]:
        for item in template["items"]:
            comp = (item["component"] or {}).get("label_code")
            if item["kind"] == "photo":
                continue
            if item["key"] in values:
                value = values[item["key"]]
            elif item["kind"] == "check":
                value = "ok"
            elif item["kind"] == "choice":
                value = next(c["value"] for c in item["choices"] if c["ok"])
            elif item["kind"] == "text":
                value = "all in order"
            else:
                lim = item["limits"]["display"]
                lo = lim["ok"]["min"] if lim["ok"]["min"] is not None else lim["plausible"]["min"]
                hi = lim["ok"]["max"] if lim["ok"]["max"] is not None else lim["plausible"]["max"]
                value = round((lo + hi) / 2, 1)
            out.append({"item": item["key"], "component": comp, "value": value, "note": ""})
    return out


def submit(api_client, user, wo, readings, *, client_uuid=None) -> dict:
    api_client.force_authenticate(user)
    wo.refresh_from_db()
    response = api_client.post(
        "/api/inspections/sync/", {"forms": [sync_form(wo, readings, client_uuid=client_uuid)]}, format="json"
    )
    api_client.force_authenticate(None)
    assert response.status_code == 200, response.content
    return response.json()["results"][0]


@pytest.fixture
def world(db):
    return scenario_module.build()


@pytest.fixture
def completed(world, api_client):
    """The technician's quarterly service done from the phone: the filter bank read at 150 Pa."""
    doc = checklist_doc(api_client, world.technician, world.work_a)
    readings = filled_readings(doc, {**DESIGN_FLOW, "filter_check.dp": 150})
    result = submit(api_client, world.technician, world.work_a, readings)
    assert result["status"] == "stored", result
    world.work_a.refresh_from_db()
    assert world.work_a.state == WorkOrder.State.COMPLETED
    return world


@pytest.mark.django_db
def test_completed_work_order_shows_its_signed_record_and_no_form_to_every_role(completed, client):
    """Technician, supervisor and property manager each read the record (readings with values, verdicts,
    derived values, signature) and none of them is offered the form or "Finish and sign"."""
    w = completed
    for person in (w.technician, w.supervisor, w.manager_a):
        html = page(client, person, w.work_a)
        assert FINISH not in html, person
        assert not CHECKLIST_FORM.search(html), person
        record = record_section(html)
        assert "Signed record" in record
        assert "Pressure drop across the bank — Final filters" in record
        assert "150 Pa" in record
        assert 'class="verdict ok"' in record
        assert "Signed by <strong>Ana Field</strong>" in record
        assert "data-derived" in record  # the filter loading evaluation with its derived values
        assert "Status: <strong data-status>completed</strong>" in record
        assert "Work order completed" in html


@pytest.mark.django_db
def test_record_is_shown_in_the_readers_units(completed, client):
    """A reader who works in US units reads the same record in in. w.c. (150 Pa = 0.60 in. w.c.,
    1 in. w.c. = 249.09 Pa, NIST SP 811)."""
    w = completed
    w.supervisor.unit_system = "us"
    w.supervisor.save(update_fields=["unit_system"])
    record = record_section(page(client, w.supervisor, w.work_a))
    assert "0.60 in. w.c." in record and "150 Pa" not in record


@pytest.mark.django_db
def test_only_the_signer_and_a_supervisor_may_amend_the_record(completed, client):
    """The amend action shows for the signing technician and the supervisor, never for the property
    manager; an amendment made from the page is listed under the record, which stays as signed."""
    w = completed
    assert "Amend this record" in page(client, w.technician, w.work_a)
    assert "Amend this record" in page(client, w.supervisor, w.work_a)
    assert "Amend this record" not in page(client, w.manager_a, w.work_a)
    insp = Inspection.objects.get(work_order=w.work_a)
    final = w.unit_a.components.get(name="Final filters")
    body = {
        "inspection": insp.pk,
        "item": f"filter_check.dp|{final.label_code}",
        "value": "160",
        "note": "gauge re-zeroed",
        "reason": "misread the gauge",
    }
    client.force_login(w.manager_a)
    client.post(f"/w/{w.work_a.public_id}/amend/", body)
    assert not Amendment.objects.exists()
    client.force_login(w.technician)
    response = client.post(f"/w/{w.work_a.public_id}/amend/", body, follow=True)
    assert Amendment.objects.filter(inspection=insp).count() == 1
    record = record_section(response.content.decode())
    amendments = record[record.index("data-amendments") : record.index("</ul>", record.index("data-amendments"))]
    assert "misread the gauge" in amendments
    assert "Pressure drop across the bank: 150 Pa → 160 Pa" in amendments
    assert "filter_check.dp" not in amendments  # plain words, no internal codes
    assert "150 Pa" in record.split("data-amendments")[0]  # the signed reading itself stays as it was


@pytest.mark.django_db
def test_property_manager_sees_no_form_on_planned_work(world, client):
    """Open work reads as "not done yet" with what will be checked; a posted form stores nothing."""
    html = page(client, world.manager_a, world.work_a)
    assert "Not done yet" in html and "Pressure drop across the bank" in html
    assert FINISH not in html and not CHECKLIST_FORM.search(html)
    client.post(f"/w/{world.work_a.public_id}/", {"signature_name": "Manu Keeper", "visit.run_hours": "1"})
    assert not Inspection.objects.exists()
    # The technician it is assigned to still gets the form.
    assert FINISH in page(client, world.technician, world.work_a)


@pytest.mark.django_db
def test_second_submission_is_stored_and_flagged_and_after_verification_the_status_reads_verified(
    completed, client, api_client
):
    """A form sent again for the done work order is kept and flagged, never lost; once the supervisor
    verifies, the record reads "verified" and "flagged" only stays on the later form until resolved."""
    w = completed
    doc_readings = filled_readings(
        checklist_doc(api_client, w.technician, w.work_a), {**DESIGN_FLOW, "filter_check.dp": 150}
    )
    again = submit(api_client, w.technician, w.work_a, doc_readings, client_uuid=uuid.uuid4())
    assert again["status"] == "flagged"
    assert any(f["code"] == "work_order_closed" for f in again["flags"])
    assert Inspection.objects.filter(work_order=w.work_a).count() == 2

    client.force_login(w.supervisor)
    client.post(f"/w/{w.work_a.public_id}/verify/", {"version": w.work_a.version})
    w.work_a.refresh_from_db()
    assert w.work_a.state == WorkOrder.State.VERIFIED
    html = page(client, w.supervisor, w.work_a)
    assert "Work order verified" in html
    assert "Status: <strong data-status>verified</strong>" in record_section(html)
    assert "flagged for the supervisor" in html  # the later form, still unresolved

    later = Inspection.objects.filter(work_order=w.work_a, work_order_completed=False).get()
    client.post("/flagged/", {"inspection": later.pk, "note": "sent twice from the phone"})
    later.refresh_from_db()
    assert later.flag_resolved_at is not None
    html = page(client, w.technician, w.work_a)
    assert "flagged for the supervisor" not in html
    assert FINISH not in html
    # The result the phone fetches after a sync tells the status of today, not the first answer's.
    result = client.get(f"/w/{w.work_a.public_id}/result/").content.decode()
    assert "flagged" not in result.split("Status:")[1].split("</p>")[0]


@pytest.mark.django_db
def test_full_outdoor_air_unit_is_not_asked_for_return_or_mixed_air(api_client, client):
    """A 100 % outdoor-air unit has no return or mixed air: its ventilation check (API and page) asks
    neither, and a form without them is complete (not flagged as missing items)."""
    wo, tech = make_visit(tasks=["ventilation_check"], full_outdoor_air=True, design_min_oa_fraction=1.0)
    doc = checklist_doc(api_client, tech, wo)
    keys = {i["key"] for t in doc["templates"] for i in t["items"]}
    assert "ventilation_check.outdoor_air" in keys
    assert not keys & {"ventilation_check.return_air", "ventilation_check.mixed_air", "ventilation_check.return_co2"}
    html = page(client, tech, wo)
    assert "Outdoor air temperature" in html
    assert "Return air temperature" not in html and "Mixed air temperature" not in html
    result = submit(api_client, tech, wo, filled_readings(doc, {"visit.run_hours": 1200}))
    assert result["status"] == "stored", result["flags"]


@pytest.mark.django_db
def test_mixed_air_unit_is_still_asked_for_return_and_mixed_air(api_client):
    """The same check on a recirculating unit keeps the return and mixed air temperatures."""
    wo, tech = make_visit(tasks=["ventilation_check"])
    keys = {i["key"] for t in checklist_doc(api_client, tech, wo)["templates"] for i in t["items"]}
    assert {"ventilation_check.return_air", "ventilation_check.mixed_air"} <= keys


@pytest.mark.django_db
def test_no_heat_recovery_items_without_a_heat_recovery_component(api_client):
    """A heat-recovery task on a unit with no exchanger in its tree asks nothing about heat recovery."""
    wo, tech = make_visit(tasks=["heat_recovery"])
    doc = checklist_doc(api_client, tech, wo)
    assert not [i for t in doc["templates"] for i in t["items"] if i["key"].startswith("heat_recovery.")]


@pytest.mark.django_db
def test_demo_done_work_reads_as_its_record_to_every_role(client):
    """In the demo, a completed visit on a site the property manager may see: the supervisor verifies it
    from its page; then the supervisor, the technician who signed it and the property manager each read
    its record with "verified", and none of them gets the form."""
    from django.core.management import call_command

    from accounts.models import User
    from inventory.selectors import sites_visible_to

    call_command("load_demo", stdout=io.StringIO())
    pm = User.objects.get(username="helena.pm")
    boss = User.objects.get(username="ruth.supervisor")
    wo = (
        WorkOrder.objects.filter(
            state=WorkOrder.State.COMPLETED,
            ahu__building__site__in=sites_visible_to(user=pm),
            inspections__work_order_completed=True,
            inspections__flags=[],
        )
        .order_by("-due_date")
        .first()
    )
    assert wo is not None
    signer = Inspection.objects.get(work_order=wo, work_order_completed=True).technician
    for person in (boss, signer, pm):
        html = page(client, person, wo)
        assert FINISH not in html and not CHECKLIST_FORM.search(html), person
        assert "Status: <strong data-status>completed</strong>" in record_section(html)
    client.force_login(boss)
    client.post(f"/w/{wo.public_id}/verify/", {"version": wo.version})
    for person in (boss, signer, pm):
        html = page(client, person, wo)
        assert FINISH not in html and not CHECKLIST_FORM.search(html), person
        assert "Work order verified" in html
        record = record_section(html)
        assert "Status: <strong data-status>verified</strong>" in record
        assert "data-reading" in record and "data-signature" in record
