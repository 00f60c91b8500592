"""The registry's parts file as a new supervisor meets it: a filter size is checked as W×H×D in mm by the same
rule as the page (refused naming the row, column, value and what is allowed; nothing imported); unlikely values
(a bank's airflow far from its unit's, a motor far from its fan's design point) are imported and listed to check."""

import re

import pytest
from django.urls import reverse

from inventory.models import AHU, Component
from tests.frontend.test_registry_files import CONFIRM, check

pytestmark = pytest.mark.django_db

HEADER = (
    "site_code,building_code,ahu_tag,name,kind,spec.stage,spec.merv,spec.count,spec.clean_dp_pa,"
    "spec.final_dp_pa,spec.design_airflow_m3s,spec.size,spec.role,spec.fan_type,spec.drive,spec.motor_power_w,"
    "spec.design_flow_m3s,spec.design_pressure_pa\n"
)


def _unit(scenario) -> AHU:
    AHU.objects.filter(pk=scenario.unit_a.pk).update(design_supply_airflow_m3s=6.5)
    return AHU.objects.select_related("building__site").get(pk=scenario.unit_a.pk)


def _row(ahu: AHU, name: str, cells: str) -> str:
    return f"{ahu.building.site.code},{ahu.building.code},{ahu.tag},{name},{cells}\n"


def test_a_filter_size_that_is_not_w_h_d_in_mm_refuses_the_file(scenario, login):
    ahu = _unit(scenario)
    client = login(scenario.supervisor)
    text = HEADER + _row(ahu, "Bag filters", "filter_bank,final,14,6,90,250,6.5,abc,,,,,,")
    text += _row(ahu, "Panel filters", "filter_bank,pre,8,6,40,150,6.5,150,,,,,,")
    before = Component.objects.count()
    res = check(client, text, kind="components", name="parts.csv")
    assert res.status_code == 400
    page = re.sub(r"\s+", " ", res.content.decode())
    assert "Nothing was imported: 2 problems in parts.csv" in page
    assert "Nominal size (W×H×D mm): &#x27;abc&#x27; is not three whole numbers of mm" in page
    assert "width × height × depth in whole mm, e.g. 592x592x292" in page
    assert Component.objects.count() == before


def test_unlikely_values_are_imported_and_listed_to_check(scenario, login):
    ahu = _unit(scenario)
    client = login(scenario.supervisor)
    text = HEADER + _row(ahu, "Bag filters", "filter_bank,final,14,6,90,250,0.15,592 × 592 × 600,,,,,,")
    text += _row(ahu, "Second supply fan", "fan,,,,,,,,supply,centrifugal,belt,150000,6.5,900")
    res = check(client, text, kind="components", name="parts.csv")
    assert res.status_code == 200, res.content.decode()
    page = re.sub(r"\s+", " ", res.content.decode())
    assert "ready to import" in page and "To check: 2 values taken but unlikely" in page
    assert "Design airflow: 150 L/s is 2% of the unit&#x27;s design supply airflow of 6500 L/s" in page
    assert "Motor rated power: 150.0 kW is far from what the design point needs" in page
    res = client.post(CONFIRM, {"token": client.session["registry_csv_checked"]["token"]})
    page = re.sub(r"\s+", " ", res.content.decode())
    assert "Imported parts.csv: 2 new, 0 updated" in page and "To check: 2 values" in page
    assert ahu.components.get(name="Bag filters").specs["size"] == "592x592x600"
    assert ahu.components.get(name="Second supply fan").specs["motor_power_w"] == 150000


def test_a_motor_below_its_fans_air_power_refuses_the_file(scenario, login):
    ahu = _unit(scenario)
    client = login(scenario.supervisor)
    text = HEADER + _row(ahu, "Second supply fan", "fan,,,,,,,,supply,centrifugal,belt,3000,6.5,900")
    res = check(client, text, kind="components", name="parts.csv")
    assert res.status_code == 400
    page = re.sub(r"\s+", " ", res.content.decode())
    assert "Motor rated power: 3 kW is below the fan&#x27;s air power of 5.85 kW" in page
    assert not ahu.components.filter(name="Second supply fan").exists()


def test_the_api_import_answers_with_its_warnings(scenario, login):
    ahu = _unit(scenario)
    client = login(scenario.supervisor)
    text = HEADER + _row(ahu, "Bag filters", "filter_bank,final,14,6,90,250,0.15,592x592x600,,,,,,")
    from tests.frontend.test_registry_files import upload

    res = client.post(
        reverse("inventory_api:import", args=["components"]),
        {"file": upload(text, "parts.csv"), "dry_run": "true"},
    )
    assert res.status_code == 200, res.content.decode()
    warning = res.json()["warnings"][0]
    assert warning["line"] == 2 and warning["column"] == "spec.design_airflow_m3s" and warning["value"] == "0.15"
    assert warning["reason"].startswith("Design airflow: 150 L/s is 2%")
