"""The admin: every registry model is there, and bad component specs show their error on the form."""

import json

import pytest
from django.urls import reverse

from inventory.models import AHU, Building, Component, Site
from tests.factories.accounts import UserFactory
from tests.factories.inventory import make_full_unit


@pytest.fixture
def admin_client(client, db):
    client.force_login(UserFactory(is_staff=True, is_superuser=True))
    return client


@pytest.mark.parametrize("model", [Site, Building, AHU, Component])
def test_changelist_and_change_pages_open(admin_client, model):
    """Each registry model has a working list and change page."""
    make_full_unit()
    opts = model._meta
    assert admin_client.get(reverse(f"admin:{opts.app_label}_{opts.model_name}_changelist")).status_code == 200
    obj = model.objects.first()
    url = reverse(f"admin:{opts.app_label}_{opts.model_name}_change", args=[obj.pk])
    assert admin_client.get(url).status_code == 200


def _component_form(comp, **changes):
    data = {
        "ahu": comp.ahu_id,
        "parent": comp.parent_id or "",
        "kind": comp.kind,
        "name": comp.name,
        "specs": '{"role": "supply", "fan_type": "plug", "drive": "chain", "motor_power_w": 5500, '
        '"design_flow_m3s": 3.0, "design_pressure_pa": 800}',
        "position": comp.position,
        "installed_on": "",
    }
    data.update(changes)
    return data


def test_bad_specs_show_the_field_error_and_save_nothing(admin_client):
    """Saving a fan with drive='chain' re-shows the form with the spec error; the old specs stay."""
    comp = make_full_unit().components.get(name="Supply fan")
    url = reverse("admin:inventory_component_change", args=[comp.pk])
    response = admin_client.post(url, _component_form(comp))
    assert response.status_code == 200
    errors = response.context["adminform"].form.errors
    assert "specs" in errors
    assert "'chain'" in errors["specs"][0] and "belt, direct" in errors["specs"][0]
    comp.refresh_from_db()
    assert comp.specs["drive"] == "direct"


def test_good_specs_save_from_admin(admin_client):
    """Correct specs save, normalised to their types."""
    comp = make_full_unit().components.get(name="Supply fan")
    url = reverse("admin:inventory_component_change", args=[comp.pk])
    specs = '{"role": "supply", "fan_type": "plug", "drive": "belt", "motor_power_w": "7500", ' \
        '"design_flow_m3s": 3.0, "design_pressure_pa": 800}'  # fmt: skip
    response = admin_client.post(url, _component_form(comp, specs=specs))
    assert response.status_code == 302
    comp.refresh_from_db()
    assert comp.specs["drive"] == "belt"
    assert comp.specs["motor_power_w"] == 7500.0


def test_bad_specs_in_unit_inline_show_the_error(admin_client):
    """The component rows inside the unit's page are checked the same way."""
    ahu = make_full_unit()
    response = admin_client.get(reverse("admin:inventory_ahu_change", args=[ahu.pk]))
    form = response.context["adminform"].form
    data = {name: ("" if value is None else value) for name, value in form.initial.items()}
    data["building"] = ahu.building_id
    data["status"] = ahu.status
    data["heat_recovery"] = ahu.heat_recovery
    comps = list(ahu.components.all())
    prefix = "components"
    data.update({f"{prefix}-TOTAL_FORMS": len(comps), f"{prefix}-INITIAL_FORMS": len(comps),
                 f"{prefix}-MIN_NUM_FORMS": 0, f"{prefix}-MAX_NUM_FORMS": 1000})  # fmt: skip
    for i, c in enumerate(comps):
        specs = dict(c.specs)
        if c.name == "Final filters":
            specs["final_dp_pa"] = 10
        data.update({f"{prefix}-{i}-id": c.pk, f"{prefix}-{i}-ahu": ahu.pk, f"{prefix}-{i}-kind": c.kind,
                     f"{prefix}-{i}-name": c.name, f"{prefix}-{i}-parent": c.parent_id or "",
                     f"{prefix}-{i}-position": c.position, f"{prefix}-{i}-specs": json.dumps(specs)})  # fmt: skip
    data = {k: v for k, v in data.items() if not isinstance(v, bool) or v}
    response = admin_client.post(reverse("admin:inventory_ahu_change", args=[ahu.pk]), data)
    assert response.status_code == 200
    errors = [e for fs in response.context["inline_admin_formsets"] for e in fs.formset.errors if e]
    assert len(errors) == 1
    assert "Final (change) pressure drop: 10 Pa" in errors[0]["specs"][0] and "20 to 1000 Pa" in errors[0]["specs"][0]
    assert ahu.components.get(name="Final filters").specs["final_dp_pa"] == 250
