"""The registry API: round trips, field-named errors, nothing half-saved, tokens, kinds, tree."""

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from accounts.models import Role
from accounts.services import api_token_issue, api_token_revoke
from inventory.models import AHU, Component, Site
from tests.factories.inventory import FILTER_SPECS


@pytest.fixture
def supervisor_client(world, api_client):
    api_client.force_authenticate(world.people[Role.SUPERVISOR])
    return api_client


def test_site_create_read_update(world, supervisor_client):
    """A supervisor adds a site, reads it back, changes it; the organisation is theirs without naming it."""
    body = {"code": "quay-4", "name": "Quay Four", "latitude": 53.1, "longitude": 9.9, "time_zone": "Europe/Berlin"}
    response = supervisor_client.post("/api/inventory/sites/", body, format="json")
    assert response.status_code == 201, response.json()
    site_id = response.json()["id"]
    got = supervisor_client.get(f"/api/inventory/sites/{site_id}/").json()
    assert got["organisation"] == "air-a"
    assert got["normals_min_c"][0] == -2.0
    response = supervisor_client.patch(f"/api/inventory/sites/{site_id}/", {"name": "Quay 4"}, format="json")
    assert response.status_code == 200
    assert Site.objects.get(pk=site_id).name == "Quay 4"


def test_site_bad_latitude_names_field_and_value(world, supervisor_client):
    """A latitude of 95 is refused with a message naming the field and the value; nothing is saved."""
    body = {"code": "bad", "name": "Bad", "latitude": 95, "longitude": 9.9}
    response = supervisor_client.post("/api/inventory/sites/", body, format="json")
    assert response.status_code == 400
    assert "latitude" in response.json()["errors"]
    assert "95" in response.json()["errors"]["latitude"][0]
    assert not Site.objects.filter(code="bad").exists()


def test_site_bad_time_zone_names_allowed(world, supervisor_client):
    """An unknown time zone is refused by the model, saying what a valid one looks like."""
    body = {"code": "tz", "name": "TZ", "latitude": 50, "longitude": 9, "time_zone": "Mars/Olympus"}
    response = supervisor_client.post("/api/inventory/sites/", body, format="json")
    assert response.status_code == 400
    message = response.json()["errors"]["time_zone"][0]
    assert "Mars/Olympus" in message
    assert "Europe/Berlin" in message


def test_unit_create_and_tree(world, supervisor_client):
    """A new unit reads back with its label URL; its tree lists components nested in airstream order."""
    building = world.units["own"].building
    body = {"building": building.pk, "tag": "AHU-NEW", "design_supply_airflow_m3s": 2.5, "design_min_oa_fraction": 0.3}
    response = supervisor_client.post("/api/inventory/ahus/", body, format="json")
    assert response.status_code == 201, response.json()
    ahu_id = response.json()["id"]
    assert response.json()["label_url"].endswith(f"/l/{response.json()['label_code']}/")
    coil = supervisor_client.post(
        "/api/inventory/components/",
        {"ahu": ahu_id, "kind": "coil", "name": "Cooling coil", "position": 2,
         "specs": {"duty": "cooling", "fluid": "water", "design_capacity_w": 40000}},
        format="json",
    )  # fmt: skip
    assert coil.status_code == 201, coil.json()
    pan = supervisor_client.post(
        "/api/inventory/components/",
        {"ahu": ahu_id, "kind": "drain_pan", "name": "Pan", "parent": coil.json()["id"], "specs": {"has_trap": "yes"}},
        format="json",
    )
    assert pan.status_code == 201, pan.json()
    assert pan.json()["specs"] == {"has_trap": True}
    tree = supervisor_client.get(f"/api/inventory/ahus/{ahu_id}/tree/").json()
    assert tree["unit"]["tag"] == "AHU-NEW"
    assert [n["component"]["name"] for n in tree["components"]] == ["Cooling coil"]
    assert tree["components"][0]["children"][0]["component"]["name"] == "Pan"


def test_tree_query_count_does_not_grow_with_components(world, supervisor_client):
    """The tree of a 12-part unit takes a fixed handful of queries (no query per component)."""
    ahu = world.units["own"]
    with CaptureQueriesContext(connection) as ctx:
        assert supervisor_client.get(f"/api/inventory/ahus/{ahu.pk}/tree/").status_code == 200
    before = len(ctx.captured_queries)
    for n in range(10):
        Component.objects.create(ahu=ahu, kind="damper", name=f"Extra {n}",
                                 specs={"role": "exhaust", "actuator": "manual", "stroke_time_s": 60})  # fmt: skip
    with CaptureQueriesContext(connection) as ctx:
        supervisor_client.get(f"/api/inventory/ahus/{ahu.pk}/tree/")
    assert len(ctx.captured_queries) == before
    with CaptureQueriesContext(connection) as ctx:
        supervisor_client.get("/api/inventory/components/")
    assert len(ctx.captured_queries) <= before + 2


def test_component_bad_specs_are_keyed_per_field(world, supervisor_client):
    """Bad specs answer 400 with one message per spec field (field, value, unit, allowed); nothing saved."""
    ahu = world.units["own"]
    specs = {**FILTER_SPECS, "final_dp_pa": 5000, "clean_dp_pa": "lots", "colour": "blue"}
    specs.pop("count")
    response = supervisor_client.post(
        "/api/inventory/components/", {"ahu": ahu.pk, "kind": "filter_bank", "name": "F", "specs": specs}, format="json"
    )
    assert response.status_code == 400
    errors = response.json()["errors"]
    assert "Final (change) pressure drop: 5000 Pa is out of range" in errors["specs.final_dp_pa"][0]
    assert "5000" in errors["specs.final_dp_pa"][0]
    assert "20 to 1000 Pa" in errors["specs.final_dp_pa"][0]
    assert "'lots'" in errors["specs.clean_dp_pa"][0]
    assert "required" in errors["specs.count"][0]
    assert "not a field of a filter_bank" in errors["specs.colour"][0]
    assert not Component.objects.filter(name="F").exists()


def test_component_update_and_delete(world, supervisor_client):
    """A component's specs change through PATCH; a bad change is refused and the old specs stay; delete removes."""
    comp = world.units["own"].components.get(name="Final filters")
    url = f"/api/inventory/components/{comp.pk}/"
    good = {**comp.specs, "final_dp_pa": 300}
    assert supervisor_client.patch(url, {"specs": good}, format="json").status_code == 200
    bad = {**comp.specs, "final_dp_pa": 10}
    response = supervisor_client.patch(url, {"specs": bad}, format="json")
    assert response.status_code == 400
    assert "specs.final_dp_pa" in response.json()["errors"]
    comp.refresh_from_db()
    assert comp.specs["final_dp_pa"] == 300
    assert supervisor_client.delete(url).status_code == 204
    assert not Component.objects.filter(pk=comp.pk).exists()


def test_component_parent_from_another_unit_is_refused(world, supervisor_client):
    """A parent must be in the same unit."""
    other_part = world.units["other"].components.first()
    response = supervisor_client.post(
        "/api/inventory/components/",
        {"ahu": world.units["own"].pk, "kind": "drain_pan", "name": "Pan 2", "parent": other_part.pk,
         "specs": {"has_trap": True}},
        format="json",
    )  # fmt: skip
    assert response.status_code == 400
    assert "another unit" in response.json()["errors"]["parent"][0]


def test_cannot_create_in_invisible_or_unmanaged_place(world, api_client):
    """A unit in another organisation's building is 'not one you may see'; a property manager gets 403."""
    api_client.force_authenticate(world.people[Role.SUPERVISOR])
    body = {"building": world.units["foreign"].building.pk, "tag": "X", "design_supply_airflow_m3s": 1,
            "design_min_oa_fraction": 0.2}  # fmt: skip
    response = api_client.post("/api/inventory/ahus/", body, format="json")
    assert response.status_code == 400
    assert "may see" in response.json()["errors"]["building"][0]
    api_client.force_authenticate(world.people[Role.PROPERTY_MANAGER])
    body["building"] = world.units["own"].building.pk
    assert api_client.post("/api/inventory/ahus/", body, format="json").status_code == 403
    assert not AHU.objects.filter(tag="X").exists()


def test_full_outdoor_air_needs_fraction_one(world, supervisor_client):
    """A 100 % outdoor-air unit with a 0.3 minimum fraction is refused on that field."""
    body = {"building": world.units["own"].building.pk, "tag": "DOAS", "design_supply_airflow_m3s": 1,
            "design_min_oa_fraction": 0.3, "full_outdoor_air": True}  # fmt: skip
    response = supervisor_client.post("/api/inventory/ahus/", body, format="json")
    assert response.status_code == 400
    assert "0.3" in response.json()["errors"]["design_min_oa_fraction"][0]


def test_filters(world, supervisor_client):
    """Lists filter by site, kind and a search on tag or label code."""
    own = world.units["own"]
    got = supervisor_client.get("/api/inventory/ahus/", {"search": own.label_code}).json()["results"]
    assert [a["tag"] for a in got] == [own.tag]
    got = supervisor_client.get("/api/inventory/ahus/", {"site": world.sites["other"].pk}).json()["results"]
    assert [a["tag"] for a in got] == [world.units["other"].tag]
    got = supervisor_client.get("/api/inventory/components/", {"ahu": own.pk, "kind": "fan"}).json()["results"]
    assert [c["name"] for c in got] == ["Supply fan"]
    assert supervisor_client.get("/api/inventory/components/", {"kind": "toaster"}).status_code == 400


def test_component_kinds_lists_spec_fields(world, supervisor_client):
    """Each kind lists its spec fields with label, unit, limits, choices and whether required."""
    kinds = {k["kind"]: k for k in supervisor_client.get("/api/inventory/component-kinds/").json()}
    assert set(kinds) >= {"filter_bank", "fan", "coil", "damper", "sensor", "drain_pan"}
    final = next(f for f in kinds["filter_bank"]["fields"] if f["name"] == "final_dp_pa")
    assert final == {**final, "unit": "Pa", "min": 20.0, "max": 1000.0, "required": True, "type": "number"}
    drive = next(f for f in kinds["fan"]["fields"] if f["name"] == "drive")
    assert drive["choices"] == ["belt", "direct"]


def test_token_auth_and_revocation(world, client):
    """A token works for the API; once revoked, the same token is refused."""
    user = world.people[Role.SUPERVISOR]
    token = api_token_issue(user=user).key
    auth = {"HTTP_AUTHORIZATION": f"Token {token}"}
    assert client.get("/api/inventory/ahus/", **auth).status_code == 200
    api_token_revoke(user=user)
    assert client.get("/api/inventory/ahus/", **auth).status_code == 401


def test_token_endpoint_issues_and_revokes(world, api_client):
    """The token endpoint issues a token for the signed-in person and DELETE revokes it."""
    api_client.force_authenticate(world.people[Role.TECHNICIAN])
    token = api_client.post("/api/accounts/token/").json()["token"]
    api_client.force_authenticate(None)
    api_client.credentials(HTTP_AUTHORIZATION=f"Token {token}")
    assert api_client.get("/api/inventory/sites/").status_code == 200
    assert api_client.delete("/api/accounts/token/").status_code == 204
    assert api_client.get("/api/inventory/sites/").status_code == 401


def test_schema_documents_registry_errors(world, supervisor_client):
    """The OpenAPI schema has the registry paths with their 400/403/404 answers."""
    response = supervisor_client.get("/api/schema/", {"format": "json"})
    assert response.status_code == 200
    paths = response.json()["paths"]
    patch = paths["/api/inventory/components/{id}/"]["patch"]["responses"]
    assert {"400", "403", "404"} <= set(patch)
    assert "/api/inventory/import/{kind}/" in paths


@pytest.mark.usefixtures("_on_2_dec_2026")
def test_old_equipment_dates_are_accepted_and_future_installation_refused(world, supervisor_client):
    """A unit in service since 1995 with a part installed in 1990 is normal (air handlers run 20-40 years, common
    practice): saved. Before 1950, or a part installed after today, is refused naming the field, value and range."""
    unit = world.units["own"]
    url = f"/api/inventory/ahus/{unit.pk}/"
    assert supervisor_client.patch(url, {"service_start": "1995-06-01"}, format="json").status_code == 200
    assert supervisor_client.patch(url, {"service_start": "2030-01-01"}, format="json").status_code == 200  # on order
    old = supervisor_client.patch(url, {"service_start": "1949-12-31"}, format="json")
    assert old.status_code == 400
    assert "1949-12-31" in old.json()["errors"]["service_start"][0]
    assert "1950-01-01" in old.json()["errors"]["service_start"][0]
    comp = unit.components.get(name="Final filters")
    comp_url = f"/api/inventory/components/{comp.pk}/"
    assert supervisor_client.patch(comp_url, {"installed_on": "1990-01-01"}, format="json").status_code == 200
    future = supervisor_client.patch(comp_url, {"installed_on": "2027-01-01"}, format="json")
    assert future.status_code == 400
    message = future.json()["errors"]["installed_on"][0]
    assert "2027-01-01" in message and "1950-01-01 to 2026-12-02" in message


@pytest.mark.usefixtures("_on_2_dec_2026")
def test_design_occupants_past_a_physical_range_is_refused(world, supervisor_client):
    """design_occupants 9223372036854775807 is refused naming the field, the value and 0 to 100,000 people."""
    url = f"/api/inventory/ahus/{world.units['own'].pk}/"
    response = supervisor_client.patch(url, {"design_occupants": 9223372036854775807}, format="json")
    assert response.status_code == 400, response.json()
    message = response.json()["errors"]["design_occupants"][0]
    assert "Design occupants" in message and "9223372036854775807" in message and "100000" in message.replace(",", "")
    assert supervisor_client.patch(url, {"design_occupants": 120}, format="json").status_code == 200


@pytest.fixture
def _on_2_dec_2026():
    import time_machine

    with time_machine.travel("2026-12-02 10:00:00+00:00", tick=False):
        yield
