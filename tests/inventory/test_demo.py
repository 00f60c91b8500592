"""The invented demo registry loads, twice without change, with the configurations the scenario promises."""

import pytest
from django.core.management import call_command

from accounts.models import Role
from inventory import selectors
from inventory.demo import demo_registry_load
from inventory.models import AHU, Component


@pytest.fixture
def demo(db):
    return demo_registry_load()


def test_second_load_changes_nothing(demo):
    """Loading again creates and changes nothing and returns the same logins and label codes."""
    counts = (AHU.objects.count(), Component.objects.count())
    labels = sorted(AHU.objects.values_list("label_code", flat=True))
    again = demo_registry_load()
    assert again["changed"] == 0
    assert again["logins"] == demo["logins"]
    assert (AHU.objects.count(), Component.objects.count()) == counts
    assert sorted(AHU.objects.values_list("label_code", flat=True)) == labels


def test_scale_and_people(demo):
    """At least 10 units on 3 sites in 3+ buildings; two technicians, a supervisor, an admin, a property manager."""
    assert len(demo["ahus"]) >= 10
    assert len(demo["sites"]) >= 3
    assert len(demo["buildings"]) >= 3
    roles = [role for role, _, _ in demo["logins"]]
    assert roles.count(Role.TECHNICIAN) == 2
    assert {Role.SUPERVISOR, Role.ADMIN, Role.PROPERTY_MANAGER} <= set(roles)
    for site in demo["sites"].values():
        assert site.time_zone == "Europe/Berlin"
        assert all(t < 0 for t in (site.normals_min_c[0], site.normals_min_c[1], site.normals_min_c[11]))


def _kinds(ahu):
    return [(c.kind, c.specs) for c in ahu.components.all()]


def test_required_configurations(demo):
    """The scenario has each configuration the other parts of Plenum are exercised on."""
    ahus = list(AHU.objects.prefetch_related("components"))

    def some(predicate):
        return [a for a in ahus if predicate(a)]

    doas = some(lambda a: a.full_outdoor_air)
    assert doas
    assert any(not any(k == "damper" and s["role"] in ("return", "mixing") for k, s in _kinds(a)) for a in doas), (
        "a 100 % outdoor-air unit without return or mixing dampers"
    )
    assert some(lambda a: a.heat_recovery in ("wheel", "plate") and any(k == "heat_recovery" for k, _ in _kinds(a)))
    assert some(lambda a: any(k == "electric_preheater" for k, _ in _kinds(a)))
    assert some(lambda a: sum(k == "filter_bank" for k, _ in _kinds(a)) == 2)
    assert some(lambda a: any(k == "fan" and s["drive"] == "belt" for k, s in _kinds(a)))
    assert some(lambda a: any(k == "fan" and s["drive"] == "direct" for k, s in _kinds(a)))
    assert some(lambda a: any(k == "coil" and s["fluid"] == "glycol" and s["duty"] == "preheat" for k, s in _kinds(a)))
    assert some(lambda a: any(k == "sensor" and s["measures"] == "co2" for k, s in _kinds(a)))
    assert some(lambda a: any(k == "sensor" and s["measures"] == "temperature" for k, s in _kinds(a)))
    for ahu in ahus:
        assert ahu.space_kind and ahu.floor_area_m2 and ahu.supply_air_setpoint_c is not None
        for coil in ahu.components.filter(kind="coil", specs__duty="cooling"):
            assert coil.children.filter(kind="drain_pan").exists(), f"{ahu}: drain pan under {coil.name}"
        for comp in ahu.components.all():
            comp.full_clean()


def test_property_manager_sees_only_granted_sites(demo):
    """The demo property manager sees the two granted sites and not the third."""
    pm = next(demo["people"][u] for role, u, _ in demo["logins"] if role == Role.PROPERTY_MANAGER)
    visible = set(selectors.sites_visible_to(user=pm).values_list("code", flat=True))
    assert visible == {"gullwharf", "elderbank"}
    assert set(demo["sites"]) - visible == {"tanners-yard"}


def test_logins_work(demo, client):
    """Every printed login signs in with its demo password."""
    for _, username, password in demo["logins"]:
        assert client.login(username=username, password=password), username
        client.logout()


def test_command_prints_logins_twice_the_same(db, capsys):
    """load_demo_registry prints the login table, the same on a second run, and says nothing changed."""
    call_command("load_demo_registry")
    first = capsys.readouterr().out
    call_command("load_demo_registry")
    second = capsys.readouterr().out
    assert "role" in first and "ruth.supervisor" in first and "plenum-demo-1" in first
    assert first.splitlines()[1:] == second.splitlines()[1:]
    assert "0 records created or changed" in second
