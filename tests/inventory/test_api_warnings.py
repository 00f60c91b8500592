"""The registry API says what the pages say after a save: values taken but unlikely (a filter bank's airflow
far from its unit's, a fan motor far from its design point) are listed in the answer's `warnings`, keyed as a
refusal would be, in the shape the schema documents; changing a unit's design supply airflow judges its parts
against it anew."""

from typing import Any

import pytest
from drf_spectacular.generators import SchemaGenerator

from accounts.models import Role
from tests.api.test_typed_answers import _check
from tests.factories.inventory import FILTER_SPECS


@pytest.fixture
def supervisor_client(world, api_client):
    api_client.force_authenticate(world.people[Role.SUPERVISOR])
    return api_client


@pytest.fixture
def documented() -> dict[str, Any]:
    schema: dict[str, Any] = SchemaGenerator().get_schema(request=None, public=True)  # type: ignore[no-untyped-call]
    return schema


def test_a_filter_bank_far_from_its_units_airflow_is_saved_and_the_answer_warns(world, supervisor_client, documented):
    unit = world.units["own"]  # 3.0 m³/s design supply airflow
    body = {
        "ahu": unit.pk,
        "kind": "filter_bank",
        "name": "Odd bags",
        "position": 40,
        "specs": {**FILTER_SPECS, "design_airflow_m3s": 0.15},
    }
    r = supervisor_client.post("/api/inventory/components/", body, format="json")
    assert r.status_code == 201, r.json()
    _check(documented, "post", "/api/inventory/components/", r)
    [warning] = r.json()["warnings"]
    assert warning["component"] == r.json()["id"] and warning["component_name"] == "Odd bags"
    assert warning["field"] == "specs.design_airflow_m3s"
    assert "150 L/s is 5% of the unit's design supply airflow" in warning["message"], warning
    assert "50%–110%" in warning["message"]
    # Back within the band on edit: saved, no warning.
    pk = r.json()["id"]
    r = supervisor_client.patch(
        f"/api/inventory/components/{pk}/", {"specs": {**FILTER_SPECS, "design_airflow_m3s": 3.0}}, format="json"
    )
    assert r.status_code == 200, r.json()
    _check(documented, "patch", "/api/inventory/components/{id}/", r)
    assert r.json()["warnings"] == []


def test_a_motor_far_from_its_fans_design_point_is_saved_and_the_answer_warns(world, supervisor_client):
    fan = world.units["own"].components.get(name="Supply fan")  # 3.0 m³/s at 800 Pa: 2.4 kW of air power
    r = supervisor_client.patch(
        f"/api/inventory/components/{fan.pk}/", {"specs": {**fan.specs, "motor_power_w": 45000}}, format="json"
    )
    assert r.status_code == 200, r.json()
    [warning] = r.json()["warnings"]
    assert warning["field"] == "specs.motor_power_w" and "is far from" in warning["message"], warning
    fan.refresh_from_db()
    assert fan.specs["motor_power_w"] == 45000


def test_changing_a_units_design_airflow_judges_its_filter_banks_anew(world, supervisor_client, documented):
    """Both filter banks are sized for 3.0 m³/s: a unit raised to 10 m³/s leaves them at 30 %, said per bank."""
    unit = world.units["own"]
    r = supervisor_client.patch(f"/api/inventory/ahus/{unit.pk}/", {"design_supply_airflow_m3s": 10.0}, format="json")
    assert r.status_code == 200, r.json()
    _check(documented, "patch", "/api/inventory/ahus/{id}/", r)
    warnings = r.json()["warnings"]
    assert {w["component_name"] for w in warnings} == {"Pre-filters", "Final filters"}, warnings
    assert all(w["field"] == "specs.design_airflow_m3s" for w in warnings)
    assert all("30% of the unit's design supply airflow" in w["message"] for w in warnings), warnings
    unit.refresh_from_db()
    assert unit.design_supply_airflow_m3s == 10.0
    r = supervisor_client.patch(f"/api/inventory/ahus/{unit.pk}/", {"design_supply_airflow_m3s": 3.0}, format="json")
    assert r.json()["warnings"] == []


def test_the_schema_documents_the_warnings_of_a_save(documented):
    parts = documented["components"]["schemas"]
    for name in ("ComponentSavedOutput", "AHUSavedOutput"):
        warnings = parts[name]["properties"]["warnings"]
        assert warnings["type"] == "array" and warnings["items"]["$ref"].endswith("/PartWarningOutput"), warnings
    assert set(parts["PartWarningOutput"]["required"]) == {"component", "component_name", "field", "message"}
    ok = documented["paths"]["/api/inventory/components/"]["post"]["responses"]["201"]
    assert ok["content"]["application/json"]["schema"]["$ref"].endswith("/ComponentSavedOutput")
