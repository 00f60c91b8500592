"""A unit's ventilation configuration (zones served, air distribution, occupant diversity, system
ventilation efficiency): the same fields and the same refusals through the API, the CSV files and the
supervisor's unit form; messages name the field in plain words, the value and what is allowed."""

import csv
import io

import pytest

from accounts.models import Role
from inventory import csv_io
from inventory.models import AHU, Site


@pytest.fixture
def supervisor_client(world, api_client):
    api_client.force_authenticate(world.people[Role.SUPERVISOR])
    return api_client


def test_api_reads_and_writes_the_ventilation_configuration(world, supervisor_client):
    ahu = world.units["own"]
    url = f"/api/inventory/ahus/{ahu.pk}/"
    got = supervisor_client.get(url).json()
    assert got["ventilation_zones"] == "single_zone"
    assert got["air_distribution"] == "ceiling_supply_cool"
    assert got["occupant_diversity"] is None and got["system_ventilation_efficiency"] is None
    body = {
        "ventilation_zones": "multi_zone",
        "air_distribution": "ceiling_supply_warm_8k_ceiling_return",
        "occupant_diversity": 0.7,
    }
    response = supervisor_client.patch(url, body, format="json")
    assert response.status_code == 200, response.json()
    ahu.refresh_from_db()
    assert (ahu.ventilation_zones, ahu.air_distribution, ahu.occupant_diversity) == (
        "multi_zone",
        "ceiling_supply_warm_8k_ceiling_return",
        0.7,
    )
    assert ahu.ventilation_system == "multi_zone"


def test_api_refuses_diversity_on_one_zone_and_out_of_range_values_saving_nothing(world, supervisor_client):
    ahu = world.units["own"]
    url = f"/api/inventory/ahus/{ahu.pk}/"
    response = supervisor_client.patch(url, {"occupant_diversity": 0.7}, format="json")
    assert response.status_code == 400
    text = str(response.json())
    assert "Occupant diversity 0.7 applies only to a unit serving several zones" in text
    response = supervisor_client.patch(
        url, {"ventilation_zones": "multi_zone", "system_ventilation_efficiency": 1.4}, format="json"
    )
    assert response.status_code == 400
    assert "System ventilation efficiency 1.4 is outside what is allowed: a number from 0.1 to 1" in str(
        response.json()
    )
    response = supervisor_client.patch(url, {"air_distribution": "sideways"}, format="json")
    assert response.status_code == 400
    assert "sideways" in response.json()["errors"]["air_distribution"][0]
    ahu.refresh_from_db()
    assert ahu.ventilation_zones == "single_zone" and ahu.occupant_diversity is None


@pytest.mark.django_db
def test_csv_round_trip_keeps_the_configuration_and_a_bad_cell_names_its_column(world):
    ahu = world.units["other"]
    AHU.objects.filter(pk=ahu.pk).update(
        ventilation_zones="multi_zone",
        air_distribution="floor_supply_warm_ceiling_return",
        occupant_diversity=0.55,
        system_ventilation_efficiency=0.8,
    )
    sites = Site.objects.filter(pk=ahu.building.site_id)
    out = io.StringIO()
    csv_io.registry_export(kind="ahus", sites=sites, out=out)
    text = out.getvalue()
    row = next(r for r in csv.DictReader(io.StringIO(text.lstrip("\ufeff"))) if r["tag"] == ahu.tag)
    assert row["ventilation_zones"] == "multi_zone"
    assert row["air_distribution"] == "floor_supply_warm_ceiling_return"
    assert float(row["occupant_diversity"]) == 0.55 and float(row["system_ventilation_efficiency"]) == 0.8
    AHU.objects.filter(pk=ahu.pk).delete()
    csv_io.registry_import(kind="ahus", source=io.StringIO(text), organisation=world.org_a)
    copy = AHU.objects.get(building__site=ahu.building.site, tag=ahu.tag)
    assert (copy.ventilation_zones, copy.air_distribution, copy.occupant_diversity) == (
        "multi_zone",
        "floor_supply_warm_ceiling_return",
        0.55,
    )
    bad = text.replace("0.55", "3.5")
    with pytest.raises(csv_io.ImportFailed) as exc:
        csv_io.registry_import(kind="ahus", source=io.StringIO(bad), organisation=world.org_a)
    messages = [str(e) for e in exc.value.errors]
    said = "Occupant diversity: 3.5 is out of range; allowed: a number from 0.05 to 1"
    assert any("occupant_diversity" in m and said in m for m in messages), messages


@pytest.mark.django_db
def test_supervisor_sets_the_configuration_on_the_unit_form_in_plain_words(world, client):
    ahu = world.units["own"]
    client.force_login(world.people[Role.SUPERVISOR])
    url = f"/registry/unit/{ahu.pk}/edit/"
    page = client.get(url).content.decode()
    assert "Zones served" in page and "Air distribution in the space" in page
    assert "Ceiling supply of warm air 8 K (15 °F) or more above space and ceiling return (effectiveness 0.8)" in page
    assert "Several zones with recirculated air" in page
    form = {
        "tag": ahu.tag,
        "location": ahu.location,
        "area_served": ahu.area_served,
        "design_supply_airflow_m3s": "3000",  # L/s: the form speaks the person's units
        "design_min_oa_fraction": "0.25",
        "ventilation_zones": "single_zone",
        "air_distribution": "ceiling_supply_cool",
        "occupant_diversity": "0.6",
        "system_ventilation_efficiency": "",
        "supply_air_setpoint_c": "17",
        "duct_static_setpoint_pa": "250",
        "status": "in_service",
        "notes": "",
    }
    refused = client.post(url, form)
    assert refused.status_code == 200
    assert "Occupant diversity 0.6 applies only to a unit serving several zones" in refused.content.decode()
    ahu.refresh_from_db()
    assert ahu.occupant_diversity is None
    saved = client.post(url, {**form, "ventilation_zones": "multi_zone"})
    assert saved.status_code == 302
    ahu.refresh_from_db()
    assert ahu.ventilation_zones == "multi_zone" and ahu.occupant_diversity == 0.6
