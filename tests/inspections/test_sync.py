"""The sync endpoint: each form stored once, never dropped, impossible values refused whole."""

import threading
import uuid

import pytest
from django.db import connection

from accounts.models import AuditEvent, Role
from inspections.models import Inspection, Reading
from inspections.selectors import flagged_forms_for
from inspections.services import flagged_form_resolve
from scheduling.models import MeterReading, WorkOrder
from scheduling.services import work_order_assign, work_order_cancel
from tests.conftest import service_missing
from tests.factories.accounts import make_person
from tests.factories.inspections import component, make_visit, r, sync_form

SYNC = "/api/inspections/sync/"


def complete_filter_form(wo, **kw):
    ahu = wo.ahu
    pre, final = component(ahu, "Pre-filters"), component(ahu, "Final filters")
    readings = [r("visit.run_hours", 1200)]
    for bank, dp in ((pre, 80), (final, 150)):
        readings += [
            r("filter_check.dp", dp, bank),
            r("filter_check.seated", "ok", bank),
            r("filter_check.media", "loaded", bank),
        ]
    return sync_form(wo, readings, **kw)


def post(client, user, forms):
    client.force_authenticate(user)
    res = client.post(SYNC, {"forms": forms}, format="json")
    assert res.status_code == 200, res.content
    return res.json()["results"]


@pytest.mark.django_db
def test_a_complete_form_is_stored_and_completes_the_work_order(api_client):
    """A complete, signed form is stored, records the run-hour meter and completes the work order."""
    wo, tech = make_visit(tasks=["filter_check"])
    [res] = post(api_client, tech, [complete_filter_form(wo)])
    assert res["status"] == "stored", res
    assert res["flags"] == []
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.COMPLETED
    insp = Inspection.objects.get(pk=res["inspection_id"])
    assert insp.template_versions == {"visit": 1, "filter_check": 1}
    assert insp.readings.count() == 7
    assert MeterReading.objects.get(ahu=wo.ahu).hours == 1200
    assert AuditEvent.objects.filter(object_type="inspections.inspection", action="inspection_submit").exists()


@pytest.mark.django_db
def test_the_same_batch_posted_100_times_stores_each_form_once(api_client):
    """Retrying a batch a hundred times stores every form once and answers with the first result."""
    wo1, tech = make_visit(tasks=["filter_check"])
    wo2, _ = make_visit(tasks=["filter_check"], organisation=wo1.organisation, technician=tech)
    batch = [complete_filter_form(wo1), complete_filter_form(wo2)]
    first = post(api_client, tech, batch)
    assert [x["status"] for x in first] == ["stored", "stored"]
    for _ in range(99):
        again = post(api_client, tech, batch)
        assert [x["status"] for x in again] == ["duplicate", "duplicate"]
        assert [x["inspection_id"] for x in again] == [x["inspection_id"] for x in first]
        assert [x["first_status"] for x in again] == ["stored", "stored"]
    assert Inspection.objects.count() == 2
    assert Reading.objects.count() == 14
    assert MeterReading.objects.count() == 2


@pytest.mark.django_db
def test_a_form_twice_in_one_batch_is_stored_once(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    form = complete_filter_form(wo)
    a, b = post(api_client, tech, [form, form])
    assert (a["status"], b["status"]) == ("stored", "duplicate")
    assert a["inspection_id"] == b["inspection_id"]


@pytest.mark.postgres
@pytest.mark.django_db(transaction=True)
def test_concurrent_posts_of_one_form_store_it_once():
    """Eight phones' retries racing each other store the form once (database unique constraint)."""
    if connection.vendor != "postgresql":
        service_missing("concurrent writes need PostgreSQL (set DATABASE_URL)")
    from rest_framework.test import APIClient

    wo, tech = make_visit(tasks=["filter_check"])
    form = complete_filter_form(wo)
    results, barrier = [], threading.Barrier(8)

    def send():
        client = APIClient()
        client.force_authenticate(tech)
        barrier.wait()
        results.append(client.post(SYNC, {"forms": [form]}, format="json").json()["results"][0])
        connection.close()

    threads = [threading.Thread(target=send) for _ in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert Inspection.objects.filter(client_uuid=form["client_uuid"]).count() == 1, results
    assert sorted(x["status"] for x in results) == ["duplicate"] * 7 + ["stored"]
    assert len({x["inspection_id"] for x in results}) == 1


@pytest.mark.django_db
def test_form_for_a_reassigned_work_order_is_kept_and_flagged(api_client):
    """A form for work reassigned meanwhile is stored, flagged with the reason, and does not complete it."""
    wo, tech = make_visit(tasks=["filter_check"])
    boss = make_person(organisation=wo.organisation, role=Role.SUPERVISOR)
    other = make_person(organisation=wo.organisation, role=Role.TECHNICIAN, first_name="Ben", last_name="Other")
    seen = wo.version
    work_order_assign(work_order=wo, assignee=other, by=boss)
    [res] = post(api_client, tech, [complete_filter_form(wo, version=seen)])
    assert res["status"] == "flagged"
    codes = {f["code"] for f in res["flags"]}
    assert {"work_order_reassigned", "work_order_changed"} <= codes
    assert "Ben Other" in next(f["reason"] for f in res["flags"] if f["code"] == "work_order_reassigned")
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.ASSIGNED
    insp = Inspection.objects.get(pk=res["inspection_id"])
    assert insp.readings.count() == 7
    assert list(flagged_forms_for(user=boss)) == [insp]
    assert list(flagged_forms_for(user=tech)) == []
    flagged_form_resolve(inspection=insp, by=boss, note="Ben's visit cancelled; Ana's readings accepted.")
    assert list(flagged_forms_for(user=boss)) == []


@pytest.mark.django_db
def test_form_for_a_cancelled_work_order_is_kept_and_flagged(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    boss = make_person(organisation=wo.organisation, role=Role.SUPERVISOR)
    seen = wo.version
    work_order_cancel(work_order=wo, by=boss, reason="unit replaced")
    [res] = post(api_client, tech, [complete_filter_form(wo, version=seen)])
    assert res["status"] == "flagged"
    assert "work_order_cancelled" in {f["code"] for f in res["flags"]}
    assert "unit replaced" in res["flags"][0]["reason"]
    assert Inspection.objects.filter(pk=res["inspection_id"]).exists()
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.CANCELLED


@pytest.mark.django_db
def test_form_for_a_changed_work_order_is_stored_flagged_and_completes(api_client):
    """A work order that changed (version differs) but is still the sender's is completed and flagged."""
    wo, tech = make_visit(tasks=["filter_check"])
    [res] = post(api_client, tech, [complete_filter_form(wo, version=wo.version - 0 + 5)])
    assert res["status"] == "flagged"
    assert [f["code"] for f in res["flags"]] == ["work_order_changed"]
    assert "version 6" in res["flags"][0]["reason"]
    assert res["work_order_state"] == "completed"


@pytest.mark.django_db
def test_impossible_value_refuses_the_whole_form_naming_item_and_range(api_client):
    """−300 °C is refused with the item and the allowed range; nothing of the form is saved."""
    wo, tech = make_visit(tasks=["controls_check"])
    form = sync_form(
        wo, [r("visit.run_hours", 1200), r("controls_check.supply_air", -300), r("controls_check.supply_setpoint", 17)]
    )
    [res] = post(api_client, tech, [form])
    assert res["status"] == "refused"
    assert res["inspection_id"] is None
    msg = res["errors"]["readings[1].value"][0]
    assert "Supply-air temperature" in msg and "−300 °C is impossible" in msg and "−60 to 120 °C" in msg
    assert Inspection.objects.count() == 0 and Reading.objects.count() == 0 and MeterReading.objects.count() == 0
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.ASSIGNED
    # Fixed and resent with the same client_uuid: stored.
    form["readings"][1]["value"] = 17.4
    [res] = post(api_client, tech, [form])
    assert res["status"] in {"stored", "flagged"}


@pytest.mark.django_db
def test_impossible_values_in_us_units_name_the_range_in_us_units(api_client):
    """Negative filter pressure drop and RH above 100 % are refused, the range stated in the form's units."""
    wo, tech = make_visit(tasks=["filter_check"])
    bank = component(wo.ahu, "Final filters")
    form = sync_form(wo, [r("filter_check.dp", -0.5, bank), r("visit.supply_airflow", "many")], unit_system="us")
    [res] = post(api_client, tech, [form])
    assert res["status"] == "refused"
    assert "−0.5 in. w.c. is impossible; allowed 0 to 20.07 in. w.c." in res["errors"]["readings[0].value"][0]
    assert "'many' is not a number" in res["errors"]["readings[1].value"][0]
    wo2, tech2 = make_visit(tasks=["humidifier"])
    wo2.ahu.components.create(kind="humidifier", name="Steam humidifier", specs={})
    [res] = post(
        api_client,
        tech2,
        [sync_form(wo2, [r("humidifier.rh_downstream", 104, wo2.ahu.components.get(kind="humidifier"))])],
    )
    assert "104 % is impossible; allowed 0 to 100 %" in res["errors"]["readings[0].value"][0]


@pytest.mark.django_db
def test_us_values_are_converted_to_si(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    bank = component(wo.ahu, "Final filters")
    form = complete_filter_form(wo, unit_system="us")
    for reading in form["readings"]:
        if reading["item"] == "filter_check.dp":
            # 0.6 in. w.c. = 149.45 Pa (1 in. w.c. = 249.0889 Pa, the conventional inch of water)
            reading["value"] = 0.6 if reading["component"] == bank.label_code else 0.3
    [res] = post(api_client, tech, [form])
    assert res["status"] == "stored", res
    dp = Reading.objects.get(inspection_id=res["inspection_id"], item__key="dp", component=bank)
    assert dp.value_si == pytest.approx(149.453, abs=0.01)


@pytest.mark.django_db
def test_improbable_value_is_accepted_and_flagged(api_client):
    """75 °C supply air is possible but improbable: stored and flagged for review."""
    wo, tech = make_visit(tasks=["controls_check"])
    form = sync_form(
        wo,
        [
            r("visit.run_hours", 1200),
            r("controls_check.supply_air", 75, note="heater stuck on?"),
            r("controls_check.supply_setpoint", 17),
            r("controls_check.alarms", "ok"),
            r("controls_check.schedule", "ok"),
        ],
    )
    [res] = post(api_client, tech, [form])
    assert res["status"] == "flagged"
    flag = next(f for f in res["flags"] if f["code"] == "improbable_value")
    assert "75 °C is outside the plausible −40 to 60 °C" in flag["reason"]


@pytest.mark.django_db
def test_incomplete_form_is_stored_flagged_and_leaves_work_open(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    [res] = post(api_client, tech, [sync_form(wo, [r("visit.run_hours", 1200)])])
    assert res["status"] == "flagged"
    assert res["flags"][0]["code"] == "incomplete"
    assert "Pressure drop across the bank (Pre-filters)" in res["flags"][0]["reason"]
    assert res["work_order_state"] == "assigned"


@pytest.mark.django_db
def test_unsigned_or_malformed_forms_are_refused_with_named_fields(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    bad = sync_form(wo, [r("filter_check.nonsense", 1)], sign=False)
    bad["finished_at"] = "2025-03-03T09:30:00"
    bad["unit_system"] = "imperial"
    [res] = post(api_client, tech, [bad])
    assert res["status"] == "refused"
    assert "no time-zone offset" in res["errors"]["finished_at"][0]
    assert "unit_system" in res["errors"]
    bad = sync_form(wo, [r("filter_check.nonsense", 1)], sign=False)
    [res] = post(api_client, tech, [bad])
    assert "is not on this work order's checklist" in res["errors"]["readings[0].item"][0]
    assert "signature" in res["errors"]


@pytest.mark.django_db
def test_other_organisations_work_order_is_not_found(api_client):
    """Tenancy: another organisation's work order is 404 for the checklist and refused in the sync."""
    wo, _ = make_visit(tasks=["filter_check"])
    _, outsider = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(outsider)
    assert api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").status_code == 404
    [res] = post(api_client, outsider, [complete_filter_form(wo)])
    assert res["status"] == "refused"
    assert "no such work order that you may see" in res["errors"]["work_order"][0]
    assert Inspection.objects.count() == 0


@pytest.mark.django_db
def test_a_client_uuid_of_another_persons_form_is_not_leaked(api_client):
    wo, tech = make_visit(tasks=["filter_check"])
    form = complete_filter_form(wo)
    post(api_client, tech, [form])
    wo2, other = make_visit(tasks=["filter_check"])
    [res] = post(api_client, other, [complete_filter_form(wo2, client_uuid=uuid.UUID(form["client_uuid"]))])
    assert res["status"] == "refused" and "already used" in res["errors"]["client_uuid"][0]
    assert res["evaluation"] == []


@pytest.mark.django_db
def test_anonymous_sync_is_refused(api_client):
    assert api_client.post(SYNC, {"forms": []}, format="json").status_code == 401


@pytest.mark.django_db
def test_checklist_repeats_items_per_bank_with_limits_in_the_users_units(api_client):
    """Each filter bank gets its own pressure-drop item; bands come from its clean/final pressure drop."""
    wo, tech = make_visit(tasks=["filter_check", "preheater_freeze"])
    tech.unit_system = "us"
    tech.save(update_fields=["unit_system"])
    api_client.force_authenticate(tech)
    doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    assert [t["code"] for t in doc["templates"]] == ["visit", "filter_check", "preheater_freeze"]
    dps = [i for t in doc["templates"] for i in t["items"] if i["key"] == "filter_check.dp"]
    assert [i["component"]["name"] for i in dps] == ["Pre-filters", "Final filters"]
    final = dps[1]
    assert final["unit"] == "in. w.c." and final["unit_si"] == "Pa"
    # Final bank: clean 90 Pa, final 250 Pa → watch from 90 + 0.75 × 160 = 210 Pa, fail from 242 Pa.
    assert final["limits"]["si"]["ok"]["max"] == pytest.approx(210)
    assert final["limits"]["si"]["watch"]["max"] == pytest.approx(242)
    assert final["limits"]["display"]["ok"]["max"] == pytest.approx(210 / 249.0889, rel=1e-4)
    assert any("Lock out and tag out" in c for c in doc["cautions"])
    assert any("Local codes" in c for c in doc["cautions"])
    assert doc["work_order"]["unit"]["tag"] == wo.ahu.tag
    trip = next(i for t in doc["templates"] for i in t["items"] if i["key"] == "preheater_freeze.freeze_trip_temp")
    assert trip["unit"] == "°F"
    # Frost thermostat ok from 2.5 °C = 2.5 × 9/5 + 32 = 36.5 °F (band in inspections.checklists).
    assert trip["limits"]["display"]["ok"]["min"] == pytest.approx(36.5)


def test_batch_over_fifty_forms_is_a_400(api_client, db):
    _, tech = make_visit(tasks=["filter_check"])
    api_client.force_authenticate(tech)
    res = api_client.post(SYNC, {"forms": [{}] * 51}, format="json")
    assert res.status_code == 400
    assert "forms" in res.json()["errors"]


@pytest.mark.django_db
def test_checklist_query_count_does_not_grow_with_items(api_client, django_assert_max_num_queries):
    """No N+1: the full checklist of a unit with every task is a handful of queries."""
    from tests.flows.test_inspection_visit import ALL_TASKS

    wo, tech = make_visit(tasks=ALL_TASKS)
    api_client.force_authenticate(tech)
    api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/")  # installs the library once
    with django_assert_max_num_queries(12):
        assert api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").status_code == 200


def test_fan_proving_checklist_warns_that_fans_start_without_warning(api_client, db):
    """Proving a fan runs it live, so its checklist carries the running-fan caution besides codes-first."""
    wo, tech = make_visit(tasks=["fan_proving"])
    api_client.force_authenticate(tech)
    doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    [template] = [t for t in doc["templates"] if t["code"] == "fan_proving"]
    assert any("start and stop" in c and "lock out and tag out" in c for c in template["cautions"])
    assert any("Local codes" in c for c in doc["cautions"] + template["cautions"])


@pytest.mark.django_db
def test_two_forms_for_one_unit_in_one_request_each_judge_the_meter_as_the_form_before_left_it(api_client):
    """Two visits of one unit sent together: the second form's run-hour value is judged against the reading the
    first form stored a moment before in the same request (the meter is read once per form, under the request's
    lock of the unit), so a value below it is kept and flagged, not recorded as if the first were not there."""
    import datetime as dt

    from tests.factories.inspections import FINISHED

    first, tech = make_visit(tasks=["filter_check"])
    second, _ = make_visit(tasks=["filter_check"], ahu=first.ahu, organisation=first.organisation, technician=tech)
    later = FINISHED + dt.timedelta(hours=3)
    forms = [complete_filter_form(first), complete_filter_form(second, finished_at=later)]
    forms[1]["readings"][0] = r("visit.run_hours", 1100)  # below the 1,200 h the first form reads
    one, two = post(api_client, tech, forms)
    assert one["status"] == "stored", one
    assert two["status"] == "flagged" and [f["code"] for f in two["flags"]] == ["meter_reading_refused"], two
    assert "below the previous reading of 1200 h" in two["flags"][0]["reason"], two["flags"]
    assert list(MeterReading.objects.filter(ahu=first.ahu).values_list("hours", flat=True)) == [1200]
