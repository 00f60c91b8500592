"""Records: every change to work orders and inspections is in the audit trail; signed inspections never change;
two people changing the same work order get a conflict, not a silent overwrite."""

import pytest
from django.core.exceptions import ValidationError

from accounts.models import AuditEvent, Role
from inspections.models import Inspection
from inspections.services import flagged_form_resolve, inspection_amend, inspection_edit
from scheduling.models import TaskDefinition, WorkOrder
from tests.factories.accounts import make_person
from tests.factories.inspections import component, make_visit, r
from tests.tenancy.world import filter_form


def events(obj) -> list[str]:
    return list(
        AuditEvent.objects.filter(object_type=obj._meta.label_lower, object_id=str(obj.pk))
        .order_by("at", "id")
        .values_list("action", flat=True)
    )


@pytest.fixture
def visit(db):
    wo, tech = make_visit(tasks=["filter_check"])
    supervisor = make_person(organisation=wo.organisation, role=Role.SUPERVISOR)
    # Has every skill: the assignments here are saved at once (no missing-skill warning to confirm).
    other = make_person(organisation=wo.organisation, role=Role.TECHNICIAN, skills=TaskDefinition.Skill.values)
    return wo, tech, supervisor, other


def test_every_step_of_a_visit_is_in_the_audit_trail(api_client, visit):
    """Assign, transitions, the synced form, completion, verification and an amendment each leave an event
    naming who did it."""
    wo, tech, supervisor, other = visit
    api_client.force_authenticate(supervisor)
    base = f"/api/scheduling/work-orders/{wo.public_id}"
    res = api_client.post(f"{base}/assign/", {"assignee": other.username, "version": wo.version}, format="json")
    assert res.status_code == 200, res.content
    v = res.json()["version"]
    # Ana has no skills recorded: the reassignment is confirmed past its missing-skill warning.
    body = {"assignee": tech.username, "version": v, "confirm_warnings": True}
    res = api_client.post(f"{base}/assign/", body, format="json")
    v = res.json()["version"]
    api_client.force_authenticate(tech)
    res = api_client.post(f"{base}/transition/", {"to_state": "in_progress", "version": v}, format="json")
    assert res.status_code == 200, res.content
    wo.refresh_from_db()
    res = api_client.post("/api/inspections/sync/", {"forms": [filter_form(wo)]}, format="json")
    [result] = res.json()["results"]
    assert result["status"] == "stored", result
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.COMPLETED
    insp = Inspection.objects.get(pk=result["inspection_id"])
    bank = component(wo.ahu, "Final filters")
    res = api_client.post(
        f"/api/inspections/{insp.pk}/amendments/",
        {"reason": "gauge misread", "unit_system": "si", "readings": [r("filter_check.dp", 160, bank)]},
        format="json",
    )
    assert res.status_code == 201, res.content
    api_client.force_authenticate(supervisor)
    assert api_client.post(f"/api/inspections/{insp.pk}/verify/").status_code == 200
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.VERIFIED

    wo_events = events(wo)
    assert wo_events[:3] == ["assign", "assign", "transition"]
    assert wo_events.count("transition") >= 3  # started, completed (by the sync), verified
    assert events(insp) == ["inspection_submit", "inspection_amend", "inspection_verify"]
    trail = AuditEvent.objects.filter(object_type="scheduling.workorder", object_id=str(wo.pk)).order_by("at", "id")
    assert [e.actor for e in trail][:3] == [supervisor, supervisor, tech]
    assert trail.last().changes == {"from": "completed", "to": "verified", "reason": ""}
    assert all(e.organisation_id == wo.organisation_id for e in trail)


def test_resolving_a_flag_is_audited(visit):
    wo, _tech, supervisor, other = visit
    from inspections.services import inspection_sync

    # Omar has work of his own on the site (so he sees it) and covers Ana's visit: not the assignee, so the
    # form is stored and flagged. A technician without the site is refused (tests/tenancy/test_field_writes.py).
    make_visit(tasks=["filter_check"], ahu=wo.ahu, organisation=wo.organisation, technician=other)
    [res] = inspection_sync(user=other, forms=[filter_form(wo)])
    assert res["status"] == "flagged"
    insp = Inspection.objects.get(pk=res["inspection_id"])
    flagged_form_resolve(inspection=insp, by=supervisor, note="Omar covered for Ana; fine")
    assert events(insp) == ["inspection_submit", "flag_resolve"]


def test_the_audit_trail_is_append_only_through_the_api(api_client, visit):
    """No API route edits or deletes audit events: the schema names none."""
    _wo, _tech, supervisor, _other = visit
    api_client.force_authenticate(supervisor)
    schema = api_client.get("/api/schema/", HTTP_ACCEPT="application/json").json()
    assert not [p for p in schema["paths"] if "audit" in p]


@pytest.fixture
def signed(visit):
    wo, tech, supervisor, _other = visit
    from inspections.services import inspection_sync

    [res] = inspection_sync(user=tech, forms=[filter_form(wo)])
    return Inspection.objects.get(pk=res["inspection_id"]), tech, supervisor


def test_a_signed_inspection_cannot_be_saved_changed(signed):
    """The model refuses to save a signed inspection's readings-level fields; the service refuses any edit."""
    insp, _tech, supervisor = signed
    insp.signature_name = "Someone Else"
    with pytest.raises(ValidationError, match="signed"):
        insp.save()
    with pytest.raises(ValidationError, match="signed"):
        insp.save(update_fields=["finished_at"])
    with pytest.raises(ValidationError, match="amendment"):
        inspection_edit(inspection=insp, by=supervisor, signature_name="x")
    insp.refresh_from_db()
    assert insp.signature_name != "Someone Else"


def test_the_api_offers_no_way_to_edit_a_signed_inspection(api_client, signed):
    """PUT, PATCH and DELETE on an inspection are refused (405); the record is unchanged."""
    insp, _tech, supervisor = signed
    before = Inspection.objects.filter(pk=insp.pk).values().get()
    api_client.force_authenticate(supervisor)
    url = f"/api/inspections/{insp.pk}/"
    for method in ("put", "patch", "delete"):
        res = getattr(api_client, method)(url, {"signature_name": "x"}, format="json")
        assert res.status_code == 405, (method, res.status_code)
    assert Inspection.objects.filter(pk=insp.pk).values().get() == before


def test_an_amendment_leaves_the_original_readings_untouched(signed):
    insp, _tech, supervisor = signed
    bank = component(insp.ahu, "Final filters")
    original = list(insp.readings.order_by("pk").values("pk", "value_si", "value_text", "verdict", "note"))
    amendment = inspection_amend(
        inspection=insp, by=supervisor, reason="wrong bank read", unit_system="si",
        readings=[r("filter_check.dp", 175, bank)],
    )  # fmt: skip
    assert amendment.changes[0]["after"]["value_si"] == 175
    assert list(insp.readings.order_by("pk").values("pk", "value_si", "value_text", "verdict", "note")) == original


def test_the_second_of_two_people_changing_a_work_order_gets_a_409(api_client, visit):
    """Both read version v; the first change wins; the second gets 409 naming the versions, and nothing of it
    is saved."""
    wo, _tech, supervisor, other = visit
    second_supervisor = make_person(organisation=wo.organisation, role=Role.SUPERVISOR)
    base = f"/api/scheduling/work-orders/{wo.public_id}"
    api_client.force_authenticate(supervisor)
    seen = api_client.get(f"{base}/").json()["version"]
    api_client.force_authenticate(second_supervisor)
    assert api_client.get(f"{base}/").json()["version"] == seen

    api_client.force_authenticate(supervisor)
    first = api_client.post(f"{base}/assign/", {"assignee": other.username, "version": seen}, format="json")
    assert first.status_code == 200
    api_client.force_authenticate(second_supervisor)
    second = api_client.post(
        f"{base}/transition/", {"to_state": "cancelled", "version": seen, "reason": "duplicate"}, format="json"
    )
    assert second.status_code == 409, second.content
    body = second.json()
    assert body["current_version"] == seen + 1
    assert f"version {seen + 1}, not {seen}" in body["detail"] and "reload" in body["detail"]
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.ASSIGNED and wo.assignee == other  # the first change stands
    assert events(wo).count("transition") == 0
    # After reloading, the second person's change goes through.
    again = api_client.post(
        f"{base}/transition/", {"to_state": "cancelled", "version": seen + 1, "reason": "duplicate"}, format="json"
    )
    assert again.status_code == 200


def test_a_stale_version_on_assign_is_a_conflict_too(api_client, visit):
    wo, tech, supervisor, other = visit
    api_client.force_authenticate(supervisor)
    base = f"/api/scheduling/work-orders/{wo.public_id}"
    v = wo.version
    assert (
        api_client.post(f"{base}/assign/", {"assignee": other.username, "version": v}, format="json").status_code == 200
    )
    stale = api_client.post(f"{base}/assign/", {"assignee": tech.username, "version": v}, format="json")
    assert stale.status_code == 409
    wo.refresh_from_db()
    assert wo.assignee == other
