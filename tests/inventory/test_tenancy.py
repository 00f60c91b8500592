"""The tenancy rule as a matrix: role × whose site × every way of looking at it."""

import pytest
from django.urls import NoReverseMatch, reverse

from accounts.models import Role
from inventory import selectors

# What each role sees: its own site (work/grant), another site of its organisation, another organisation's site.
VISIBLE = {
    Role.TECHNICIAN: {"own": True, "other": False, "foreign": False},
    Role.SUPERVISOR: {"own": True, "other": True, "foreign": False},
    Role.PROPERTY_MANAGER: {"own": True, "other": False, "foreign": False},
    Role.ADMIN: {"own": True, "other": True, "foreign": False},
}


def shown(response) -> bool:
    """The label page was shown: rendered here, or redirected to the frontend's unit page when it exists."""
    try:
        reverse("frontend:unit", kwargs={"code": "U222222"})
    except NoReverseMatch:
        return response.status_code == 200
    return response.status_code == 302


MATRIX = [(role, where) for role in VISIBLE for where in ("own", "other", "foreign")]


@pytest.mark.parametrize(("role", "where"), MATRIX)
@pytest.mark.parametrize("surface", ["list", "detail", "api_list", "api_detail", "label", "qr"])
def test_visibility_matrix(world, client, api_client, role, where, surface):
    """Each role sees exactly the sites the rule allows, the same way on every surface."""
    user = world.people[role]
    site, ahu = world.sites[where], world.units[where]
    expected = VISIBLE[role][where]
    client.force_login(user)
    api_client.force_authenticate(user)
    if surface == "list":
        assert (site in selectors.sites_visible_to(user=user)) is expected
        assert (ahu in selectors.ahus_visible_to(user=user)) is expected
        comps = set(selectors.components_visible_to(user=user).values_list("pk", flat=True))
        assert (
            set(ahu.components.values_list("pk", flat=True)) <= comps
            if expected
            else not (comps & set(ahu.components.values_list("pk", flat=True)))
        )
    elif surface == "detail":
        response = client.get(reverse("inventory:label", kwargs={"code": ahu.label_code}))
        assert shown(response) if expected else response.status_code == 404
        if expected and response.status_code == 200:
            assert ahu.tag in response.content.decode()
    elif surface == "api_list":
        sites = [s["code"] for s in api_client.get("/api/inventory/sites/").json()["results"]]
        tags = [a["tag"] for a in api_client.get("/api/inventory/ahus/").json()["results"]]
        comps = api_client.get("/api/inventory/components/", {"ahu": ahu.pk}).json()["results"]
        assert (site.code in sites) is expected
        assert (ahu.tag in tags) is expected
        assert (len(comps) == ahu.components.count()) if expected else comps == []
    elif surface == "api_detail":
        want = 200 if expected else 404
        assert api_client.get(f"/api/inventory/sites/{site.pk}/").status_code == want
        assert api_client.get(f"/api/inventory/ahus/{ahu.pk}/").status_code == want
        assert api_client.get(f"/api/inventory/ahus/{ahu.pk}/tree/").status_code == want
        comp = ahu.components.first()
        assert api_client.get(f"/api/inventory/components/{comp.pk}/").status_code == want
    elif surface == "label":
        comp = ahu.components.first()
        response = client.get(reverse("inventory:label", kwargs={"code": comp.label_code}))
        assert shown(response) if expected else response.status_code == 404
    elif surface == "qr":
        response = client.get(reverse("inventory:label-qr", kwargs={"code": ahu.label_code}))
        assert response.status_code == (200 if expected else 404)
        if expected:
            assert response["Content-Type"] == "image/svg+xml"


@pytest.mark.parametrize(("role", "where"), MATRIX)
def test_write_matrix(world, api_client, role, where):
    """Only supervisors and admins change their own organisation's registry; others get 403, unseen rows 404."""
    user = world.people[role]
    ahu = world.units[where]
    api_client.force_authenticate(user)
    response = api_client.patch(f"/api/inventory/ahus/{ahu.pk}/", {"notes": "checked"}, format="json")
    if not VISIBLE[role][where]:
        assert response.status_code == 404
    elif role in (Role.SUPERVISOR, Role.ADMIN):
        assert response.status_code == 200
    else:
        assert response.status_code == 403
    ahu.refresh_from_db()
    assert (ahu.notes == "checked") is (response.status_code == 200)


def test_technician_loses_sight_when_work_is_reassigned(world):
    """A technician's view follows the work assigned to them: reassign it and the site disappears."""
    tech = world.people[Role.TECHNICIAN]
    assert selectors.sites_visible_to(user=tech).count() == 1
    tech.assigned_work_orders.update(assignee=world.people[Role.SUPERVISOR])
    assert selectors.sites_visible_to(user=tech).count() == 0


@pytest.mark.parametrize("surface", ["label", "qr", "api"])
def test_anonymous_is_sent_to_sign_in(world, client, surface):
    """Someone not signed in is sent to sign in (pages) or refused (API), never shown a unit."""
    code = world.units["own"].label_code
    if surface == "api":
        assert client.get("/api/inventory/ahus/").status_code in (401, 403)
        return
    name = "inventory:label" if surface == "label" else "inventory:label-qr"
    response = client.get(reverse(name, kwargs={"code": code}))
    assert response.status_code == 302
    assert reverse("frontend:login") in response["Location"]


def test_unknown_label_is_404(world, client):
    """A label code that does not exist is a 404, as for one the person may not see."""
    client.force_login(world.people[Role.ADMIN])
    assert client.get(reverse("inventory:label", kwargs={"code": "UZZZZZZ"})).status_code == 404
    assert client.get(reverse("inventory:label", kwargs={"code": "nonsense"})).status_code == 404
