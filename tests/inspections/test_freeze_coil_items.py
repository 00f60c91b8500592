"""The freeze-protection test as the phone fetches and sends it: how to prove a preheater's stages on a mild day,
a preheat coil's valve and pump, and a glycol coil's freezing point judged against its design concentration.

Sources: stages made to call through the controller (test mode, lowered set point, simulated sensor input),
contactors watched and currents clamped: manufacturers' commissioning practice, common practice. Lockout of the
heater's disconnecting means: NFPA 70 424.19/424.65, IEC 60204-1 5.3 (from memory). A preheat valve fails open to
the coil in freezing air: common practice. Freezing points by mass (Melinder 2010 via CoolProp, checked against
Lange's Handbook table 5.13): propylene glycol 30 % −12.8 °C, 40 % −20.6 °C, so 35 % −16.7 °C; ok up to 2 K warmer,
watch up to 4 K warmer, warmer fails (common practice).
"""

import datetime as dt

import pytest

from inspections.models import Finding
from tests.factories.inspections import make_visit, r, sync_form
from tests.factories.inventory import ComponentFactory

pytestmark = pytest.mark.django_db

SYNC = "/api/inspections/sync/"
FINISHED = dt.datetime(2025, 10, 3, 10, tzinfo=dt.UTC)
GLYCOL = {"duty": "preheat", "fluid": "glycol", "glycol_pct": 35, "glycol_kind": "propylene"}


def _doc(api_client, tech, wo) -> dict:
    api_client.force_authenticate(tech)
    return api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()


def _items(doc: dict, code: str) -> dict[tuple[str, str | None], dict]:
    [template] = [t for t in doc["templates"] if t["code"] == code]
    return {(it["key"].split(".", 1)[1], (it["component"] or {}).get("name")): it for it in template["items"]}


def _preheat_coil(wo, **specs):
    return ComponentFactory(
        ahu=wo.ahu,
        kind="coil",
        name="Preheat coil",
        position=5,
        specs={"duty": "preheat", "design_capacity_w": 40_000, **specs},
    )


def test_the_stage_test_says_how_to_make_stages_call_on_a_mild_day_safely(api_client):
    wo, tech = make_visit(tasks=["preheater_freeze"])
    ComponentFactory(
        ahu=wo.ahu,
        kind="electric_preheater",
        name="Electric preheater",
        position=5,
        specs={"power_w": 24_000, "stages": 3, "switch_on_c": -3.0},
    )
    doc = _doc(api_client, tech, wo)
    [template] = [t for t in doc["templates"] if t["code"] == "preheater_freeze"]
    assert any("Never bypass" in c and "airflow interlock" in c for c in doc["cautions"])
    items = _items(doc, "preheater_freeze")
    stage_on = items[("stage_on_temp", "Electric preheater")]
    assert "simulate the entering-air sensor" in stage_on["help"]
    stages = items[("stages", "Electric preheater")]
    assert "Lock out and tag out" in stages["help"] and "clamp meter" in stages["help"]
    assert "NFPA 70" in stages["limits_source"] and "from memory" in stages["limits_source"]
    restored = items[("set_points_restored", "Electric preheater")]
    assert restored["required"] and restored["kind"] == "check"
    assert template["version"] >= 4


def test_a_glycol_preheat_coil_is_asked_its_valve_pump_and_freezing_point_with_the_design_band(api_client):
    wo, tech = make_visit(tasks=["preheater_freeze"])
    coil = _preheat_coil(wo, **GLYCOL)
    items = _items(_doc(api_client, tech, wo), "preheater_freeze")
    assert items[("coil_valve_fail_open", "Preheat coil")]["required"]
    assert ("coil_pump_runs", "Preheat coil") in items
    fp = items[("glycol_freeze_point", "Preheat coil")]
    limits = fp["limits"]["si"]
    design = -12.8 + 0.5 * (-20.6 + 12.8)  # 35 % propylene glycol by mass
    assert limits["ok"]["max"] == pytest.approx(design + 2.0, abs=0.05)
    assert limits["watch"]["max"] == pytest.approx(design + 4.0, abs=0.05)
    assert "−12.8 °C" in fp["limits_source"] and "−20.6 °C" in fp["limits_source"]
    assert coil.pk  # asked of this coil


def _send(api_client, tech, wo, coil, freeze_point: float) -> dict:
    api_client.force_authenticate(tech)
    readings = [
        r("visit.run_hours", 1200),
        r("preheater_freeze.coil_valve_fail_open", "ok", coil),
        r("preheater_freeze.coil_pump_runs", "ok", coil),
        r("preheater_freeze.glycol_freeze_point", freeze_point, coil, note="sample at the coil drain"),
        r("preheater_freeze.freeze_trip_temp", 4.0),
        r("preheater_freeze.freeze_trip_test", "ok"),
    ]
    form = sync_form(wo, readings, finished_at=FINISHED)
    [out] = api_client.post(SYNC, {"forms": [form]}, format="json").json()["results"]
    assert out["status"] == "stored", out
    return {e["item"]: e for e in out["evaluation"]}


def test_a_weak_glycol_fails_the_freeze_test_and_a_design_one_passes(api_client):
    wo, tech = make_visit(tasks=["preheater_freeze"])
    coil = _preheat_coil(wo, **GLYCOL)
    judged = _send(api_client, tech, wo, coil, freeze_point=-10.0)  # about 24 % instead of 35 %
    assert judged["preheater_freeze.glycol_freeze_point"]["verdict"] == "fail"
    finding = Finding.objects.get(ahu=wo.ahu, component=coil, state=Finding.State.OPEN)
    assert finding.condition_code == "freeze_protection_failed"

    wo2, _ = make_visit(tasks=["preheater_freeze"], ahu=wo.ahu, organisation=wo.organisation, technician=tech)
    judged = _send(api_client, tech, wo2, coil, freeze_point=-16.5)
    assert judged["preheater_freeze.glycol_freeze_point"]["verdict"] == "ok"


def test_a_water_preheat_coil_has_no_freezing_point_and_a_glycol_heating_coil_is_asked_it_yearly(api_client):
    wo, tech = make_visit(tasks=["preheater_freeze", "coil_clean"])
    _preheat_coil(wo, fluid="water")
    ComponentFactory(
        ahu=wo.ahu,
        kind="coil",
        name="Glycol heating coil",
        position=7,
        specs={
            "duty": "heating",
            "fluid": "glycol",
            "glycol_pct": 30,
            "glycol_kind": "ethylene",
            "design_capacity_w": 30_000,
        },
    )
    doc = _doc(api_client, tech, wo)
    freeze = _items(doc, "preheater_freeze")
    assert ("coil_valve_fail_open", "Preheat coil") in freeze
    assert not any(key == "glycol_freeze_point" for key, _ in freeze)
    coils = _items(doc, "coil_clean")
    assert ("glycol_freeze_point", "Glycol heating coil") in coils
    assert ("glycol_freeze_point", "Heating coil") not in coils  # water
