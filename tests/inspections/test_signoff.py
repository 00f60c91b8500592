"""Sign-off: a signed inspection is never edited; amendments keep both; supervisors verify."""

import pytest
from django.core.exceptions import ValidationError

from accounts.models import AuditEvent, Role
from inspections.models import Inspection
from inspections.services import inspection_amend, inspection_edit, inspection_verify
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.factories.inspections import component, make_visit, r, sync_form


def stored_inspection(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    pre, final = component(wo.ahu, "Pre-filters"), component(wo.ahu, "Final filters")
    readings = [r("visit.run_hours", 1200)]
    for bank, dp in ((pre, 80), (final, 150)):
        readings += [r("filter_check.dp", dp, bank), r("filter_check.seated", "ok", bank),
                     r("filter_check.media", "loaded", bank)]
    api_client.force_authenticate(tech)
    res = api_client.post("/api/inspections/sync/", {"forms": [sync_form(wo, readings)]}, format="json")
    return Inspection.objects.get(pk=res.json()["results"][0]["inspection_id"]), tech


@pytest.mark.django_db
def test_a_signed_inspection_refuses_edits(api_client):
    insp, tech = stored_inspection(api_client)
    with pytest.raises(ValidationError, match=r"signed by Ana Field .* cannot be edited; add an amendment"):
        inspection_edit(inspection=insp, by=tech, signature_name="Someone else")
    insp.signature_name = "Someone else"
    with pytest.raises(ValidationError, match="cannot be edited"):
        insp.save()
    insp.refresh_from_db()
    assert insp.signature_name == "Ana Field"


@pytest.mark.django_db
def test_an_amendment_keeps_the_original_and_the_correction(api_client):
    """A mistyped 150 Pa corrected to 240 Pa: the reading stays 150, the amendment holds both and re-judges."""
    insp, tech = stored_inspection(api_client)
    final = component(insp.ahu, "Final filters")
    api_client.force_authenticate(tech)
    res = api_client.post(f"/api/inspections/{insp.pk}/amendments/", {
        "reason": "gauge read wrong way round", "unit_system": "si",
        "readings": [r("filter_check.dp", 240, final)]}, format="json")
    assert res.status_code == 201, res.content
    [change] = res.json()["changes"]
    assert change["before"]["value_si"] == 150 and change["after"]["value_si"] == 240
    assert change["after"]["verdict"] == "watch"  # (240 − 90)/160 = 94 %: watch, fail from 95 %
    assert insp.readings.get(component=final, item__key="dp").value_si == 150
    detail = api_client.get(f"/api/inspections/{insp.pk}/").json()
    assert len(detail["amendments"]) == 1
    assert any(x["value_si"] == 150 for x in detail["readings"] if x["item"] == "filter_check.dp")
    assert AuditEvent.objects.filter(action="inspection_amend", object_id=str(insp.pk)).exists()


@pytest.mark.django_db
def test_an_amendment_with_an_impossible_value_is_refused(api_client):
    insp, tech = stored_inspection(api_client)
    with pytest.raises(ValidationError, match="impossible"):
        inspection_amend(inspection=insp, by=tech, reason="x", unit_system="si",
                         readings=[r("filter_check.dp", -5, component(insp.ahu, "Final filters"))])
    assert insp.amendments.count() == 0


@pytest.mark.django_db
def test_a_supervisor_verifies_and_the_work_order_follows(api_client):
    insp, tech = stored_inspection(api_client)
    boss = make_person(organisation=insp.organisation, role=Role.SUPERVISOR)
    api_client.force_authenticate(tech)
    assert api_client.post(f"/api/inspections/{insp.pk}/verify/").status_code == 403
    inspection_verify(inspection=insp, by=boss)
    insp.refresh_from_db()
    assert insp.verified_by == boss
    assert insp.work_order.state == WorkOrder.State.VERIFIED
    assert AuditEvent.objects.filter(action="inspection_verify", object_id=str(insp.pk)).exists()


@pytest.mark.django_db
def test_other_organisation_cannot_read_or_amend(api_client):
    insp, _ = stored_inspection(api_client)
    _, outsider = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(outsider)
    assert api_client.get(f"/api/inspections/{insp.pk}/").status_code == 404
    assert api_client.post(f"/api/inspections/{insp.pk}/amendments/", {}, format="json").status_code == 404
