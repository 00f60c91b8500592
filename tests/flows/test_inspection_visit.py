"""A visit end to end, as the phone does it: fetch the checklist, fill every item from it, sync, retry."""

import pytest

from accounts.models import Role
from inspections.models import Finding
from scheduling.models import WorkOrder
from scheduling.services import corrective_work_order_approve
from tests.factories.accounts import make_person
from tests.factories.inspections import make_visit, sync_form

ALL_TASKS = [
    "filter_check",
    "fan_proving",
    "coil_clean",
    "drain_pan",
    "damper_actuator",
    "sensor_calibration",
    "intake_screen",
    "controls_check",
    "ventilation_check",
]


def fill(item: dict, broken: set[str]):
    """What a careful technician enters: a value inside the ok band (from the checklist's own limits)."""
    if item["kind"] == "check":
        return "not_ok" if item["key"] in broken else "ok"
    if item["kind"] == "choice":
        return next(c["value"] for c in item["choices"] if c["ok"])
    if item["kind"] == "text":
        return "all in order"
    if item["kind"] == "photo":
        return None
    lim = item["limits"]["display"]
    ok, plaus = lim["ok"], lim["plausible"]
    lo = ok["min"] if ok["min"] is not None else plaus["min"]
    hi = ok["max"] if ok["max"] is not None else plaus["max"]
    return round((lo + hi) / 2, 2) if lo is not None and hi is not None else (lo or hi or 1)


@pytest.mark.django_db
def test_technician_visit_from_checklist_to_completed_work_and_approved_corrective_work(api_client):
    wo, tech = make_visit(tasks=ALL_TASKS)
    boss = make_person(organisation=wo.organisation, role=Role.SUPERVISOR)
    api_client.force_authenticate(tech)
    doc = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    broken = {"drain_pan.drains_freely"}
    readings, overrides = (
        [],
        {
            "visit.run_hours": 4200,
            "ventilation_check.outdoor_air": 2,
            "ventilation_check.return_air": 22,
            "ventilation_check.mixed_air": 16,
            "controls_check.supply_air": 17.2,
            "controls_check.supply_setpoint": 17,
            "damper_actuator.command": 60,
            "damper_actuator.position": 58,
            "sensor_calibration.co2_sensor": 820,
            "sensor_calibration.co2_reference": 800,
            "sensor_calibration.temp_sensor": 17.1,
            "sensor_calibration.temp_reference": 17.0,
            "coil_clean.air_in": 12,
            "coil_clean.air_out": 14,
            "coil_clean.water_in": 14,
            "coil_clean.water_out": 12,
            "coil_clean.water_flow": 0.9,
            "visit.supply_airflow": 3000,
            "visit.supply_fan_speed": 1450,
            "ventilation_check.outdoor_co2": 420,
            "ventilation_check.return_co2": 900,
            "ventilation_check.supply_co2": 780,
        },
    )
    for t in doc["templates"]:
        for item in t["items"]:
            if item["kind"] == "photo":
                continue
            value = overrides.get(item["key"], fill(item, broken))
            readings.append(
                {
                    "item": item["key"],
                    "component": (item["component"] or {}).get("label_code"),
                    "value": value,
                    "note": "pan drain blocked with debris" if item["key"] in broken else "",
                }
            )
    form = sync_form(wo, readings, version=doc["work_order"]["version"])
    first = api_client.post("/api/inspections/sync/", {"forms": [form]}, format="json").json()["results"][0]
    assert first["status"] == "stored", first["flags"] or first["errors"]
    assert first["work_order_state"] == "completed"
    verdicts = {e["check"] for e in first["evaluation"]}
    assert {
        "filter_loading",
        "oa_fraction_temperature",
        "supply_temperature",
        "damper_position",
        "sensor_drift",
    } <= verdicts
    [finding] = first["findings"]
    assert finding["title"] == "Condensate drain pan: Water poured into the pan drains away freely — Drain pan"
    assert "times_seen" in finding and finding["times_seen"] == 1
    cwo = Finding.objects.get(pk=finding["id"]).corrective_work_order
    assert cwo.approval == WorkOrder.Approval.PENDING
    corrective_work_order_approve(work_order=cwo, by=boss)
    # The phone lost the answer and sends again: same result, nothing new.
    again = api_client.post("/api/inspections/sync/", {"forms": [form]}, format="json").json()["results"][0]
    assert again["status"] == "duplicate" and again["inspection_id"] == first["inspection_id"]
    assert Finding.objects.count() == 1
    api_client.force_authenticate(boss)
    assert api_client.get("/api/inspections/flagged/").json() == []
