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
        readings += [
            r("filter_check.dp", dp, bank),
            r("filter_check.seated", "ok", bank),
            r("filter_check.media", "loaded", bank),
        ]
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
    res = api_client.post(
        f"/api/inspections/{insp.pk}/amendments/",
        {"reason": "gauge read wrong way round", "unit_system": "si", "readings": [r("filter_check.dp", 240, final)]},
        format="json",
    )
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
        inspection_amend(
            inspection=insp,
            by=tech,
            reason="x",
            unit_system="si",
            readings=[r("filter_check.dp", -5, component(insp.ahu, "Final filters"))],
        )
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


@pytest.mark.django_db
def test_an_amendment_that_newly_fails_opens_a_finding_pointing_to_it(api_client):
    """150 Pa (38 % of the 90–250 Pa span: ok) corrected to 260 Pa: (260 − 90)/160 = 106 % → fail (from 95 %).

    The amendment's failure becomes a finding of this amendment with corrective work proposed; the original
    reading and its ok judgement stay in the record beside the amended one.
    """
    from inspections.models import Evaluation, Finding

    insp, tech = stored_inspection(api_client)
    final = component(insp.ahu, "Final filters")
    [original] = Evaluation.objects.filter(inspection=insp, check_name="filter_loading", component=final)
    assert original.verdict == "ok" and not insp.findings.exists()
    api_client.force_authenticate(tech)
    res = api_client.post(
        f"/api/inspections/{insp.pk}/amendments/",
        {"reason": "read the wrong gauge", "unit_system": "si", "readings": [r("filter_check.dp", 260, final)]},
        format="json",
    )
    assert res.status_code == 201, res.content
    body = res.json()
    [found] = body["findings"]
    finding = Finding.objects.get(pk=found["id"])
    assert finding.amendment_id == body["id"] and finding.inspection == insp and finding.component == final
    assert finding.evaluation.amendment_id == body["id"] and finding.evaluation.verdict == "fail"
    cwo = finding.corrective_work_order
    assert cwo.condition_code == "filter_loaded" and cwo.approval == WorkOrder.Approval.PENDING
    assert cwo.source_ref == f"inspection:{insp.pk} amendment:{body['id']}"
    assert body["changes"][0]["finding"] == finding.pk
    # Both stay: the original reading and verdict, and the amended judgement.
    original.refresh_from_db()
    assert original.verdict == "ok" and original.amendment is None
    assert insp.readings.get(component=final, item__key="dp").value_si == 150
    detail = api_client.get(f"/api/inspections/{insp.pk}/").json()
    verdicts = {
        (e["verdict"], e["amendment"])
        for e in detail["evaluations"]
        if e["check"] == "filter_loading" and e["component"] == final.label_code
    }
    assert verdicts == {("ok", None), ("fail", body["id"])}
    assert detail["amendments"][0]["findings"] == [finding.pk]


@pytest.mark.django_db
def test_an_amendment_repeating_a_known_failure_opens_no_second_finding(api_client):
    """A second amendment that still fails the same check adds no finding: it failed already."""
    insp, tech = stored_inspection(api_client)
    final = component(insp.ahu, "Final filters")
    first = inspection_amend(
        inspection=insp, by=tech, reason="wrong gauge", unit_system="si", readings=[r("filter_check.dp", 260, final)]
    )
    second = inspection_amend(
        inspection=insp, by=tech, reason="re-read", unit_system="si", readings=[r("filter_check.dp", 270, final)]
    )
    assert first.findings.count() == 1 and second.findings.count() == 0
    assert insp.findings.count() == 1


@pytest.mark.django_db
def test_an_amendment_that_clears_or_keeps_ok_opens_nothing(api_client):
    insp, tech = stored_inspection(api_client)
    a = inspection_amend(
        inspection=insp,
        by=tech,
        reason="typo",
        unit_system="si",
        readings=[r("filter_check.dp", 160, component(insp.ahu, "Final filters"))],
    )
    assert a.findings.count() == 0 and a.evaluations.count() == 0
