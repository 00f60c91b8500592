"""A new supervisor's tryout of the registry pages: a filter size is a checked W×H×D in mm, unlikely specs are saved
with a warning on the page that follows (a filter bank's airflow against its unit's, a motor against its fan's
design point), a motor below the fan's air power is refused, an emptied place in the airstream is refused, and the
unit page shows each fan's design speed beside whether it has a variable-speed drive."""

import datetime as dt
import html
import re

import pytest
import time_machine
from django.urls import reverse

from inventory.models import AHU, Component

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 3, 9, 9, 30, tzinfo=dt.UTC)  # any fixed moment would do


@pytest.fixture(autouse=True)
def _clock():
    with time_machine.travel(NOW, tick=False):
        yield


def _visible(response) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html.unescape(response.content.decode())))


def _field_errors(response, field_id: str) -> str:
    found = re.search(rf'<div id="{field_id}-errors">(.*?)</div>', response.content.decode(), re.S)
    return re.sub(r"\s+", " ", html.unescape(re.sub(r"<[^>]+>", " ", found.group(1)))) if found else _visible(response)


FILTERS = {
    "kind": "filter_bank",
    "name": "Bag filters",
    "spec_stage": "final",
    "spec_merv": "14",
    "spec_size": "592x592x600",
    "spec_count": "6",
    "spec_clean_dp_pa": "90",
    "spec_final_dp_pa": "250",
    "spec_design_airflow_m3s": "6500",  # L/s for an SI person
    "position": "5",
}
FAN = {
    "kind": "fan",
    "name": "Second supply fan",
    "spec_role": "supply",
    "spec_fan_type": "centrifugal",
    "spec_drive": "belt",
    "spec_motor_power_w": "11",  # kW
    "spec_design_flow_m3s": "6500",
    "spec_design_pressure_pa": "900",
    "spec_design_speed_rpm": "1120",
    "position": "6",
}


@pytest.fixture
def big_unit(scenario) -> AHU:
    AHU.objects.filter(pk=scenario.unit_a.pk).update(design_supply_airflow_m3s=6.5)
    return AHU.objects.get(pk=scenario.unit_a.pk)


@pytest.mark.parametrize(
    ("typed", "said"),
    [
        ("abc", "'abc' is not three whole numbers of mm as width × height × depth"),
        ("-3", "'-3' is not three whole numbers of mm"),
        ("150", "'150' is not three whole numbers of mm"),
        ("<b>x</b>", "'<b>x</b>' is not three whole numbers of mm"),
        ("592x592x5000", "has a depth of 5000 mm, outside 10–1000 mm"),
        ("20x592x292", "has a width of 20 mm, outside 100–3000 mm"),
    ],
)
def test_a_filter_size_that_is_not_w_h_d_in_mm_is_refused_naming_field_value_and_allowed(
    scenario, login, big_unit, typed, said
):
    client = login(scenario.supervisor)
    before = Component.objects.count()
    r = client.post(reverse("frontend:registry_component_new", args=[big_unit.pk]), {**FILTERS, "spec_size": typed})
    assert r.status_code == 400
    errors = _field_errors(r, "spec-size")
    assert "Nominal size (W×H×D mm)" in errors and said in errors, errors
    assert "width × height × depth in whole mm, e.g. 592x592x292" in errors
    assert Component.objects.count() == before


@pytest.mark.parametrize("typed", ["592×592×292", "592 x 592 X 292", " 592X592x292 mm"])
def test_a_filter_size_with_x_or_times_and_spaces_is_kept_in_one_form(scenario, login, big_unit, typed):
    client = login(scenario.supervisor)
    r = client.post(reverse("frontend:registry_component_new", args=[big_unit.pk]), {**FILTERS, "spec_size": typed})
    assert r.status_code == 302, _visible(r)
    assert big_unit.components.get(name="Bag filters").specs["size"] == "592x592x292"


def test_a_filter_bank_far_from_its_units_airflow_is_saved_with_a_warning(scenario, login, big_unit):
    """150 L/s on a 6500 L/s unit: saved (odd plants exist) and said on the unit page that follows."""
    client = login(scenario.supervisor)
    r = client.post(
        reverse("frontend:registry_component_new", args=[big_unit.pk]),
        {**FILTERS, "spec_design_airflow_m3s": "150"},
        follow=True,
    )
    assert r.status_code == 200
    page = _visible(r)
    assert "Saved, but check Bag filters: Design airflow: 150 L/s is 2% of the unit's design supply airflow" in page
    assert "of 6500 L/s" in page and "50%–110%" in page
    assert big_unit.components.filter(name="Bag filters").exists()
    # Within the band: no warning.
    r = client.post(
        reverse("frontend:registry_component_new", args=[big_unit.pk]), {**FILTERS, "name": "B"}, follow=True
    )
    assert "Saved, but check" not in _visible(r)


def test_a_motor_far_from_its_fans_design_point_is_saved_with_a_warning_and_one_below_air_power_refused(
    scenario, login, big_unit
):
    client = login(scenario.supervisor)
    new = reverse("frontend:registry_component_new", args=[big_unit.pk])
    r = client.post(new, {**FAN, "spec_motor_power_w": "150"}, follow=True)
    page = _visible(r)
    assert "Saved, but check Second supply fan: Motor rated power: 150.0 kW is far from" in page
    assert "6500 L/s at 900 Pa" in page and "0.4–0.8" in page
    fan = big_unit.components.get(name="Second supply fan")
    # An ordinary motor on edit: saved without a warning.
    from tests.frontend.test_registry_pages import _edit_post

    r = client.post(
        reverse("frontend:registry_component_edit", args=[fan.pk]),
        _edit_post(fan, spec_motor_power_w="11"),
        follow=True,
    )
    assert "Saved, but check" not in _visible(r) and "Second supply fan saved" in _visible(r)
    # 3 kW cannot move 6.5 m³/s against 900 Pa (5.85 kW of air power): refused at the field, nothing changed.
    r = client.post(reverse("frontend:registry_component_edit", args=[fan.pk]), _edit_post(fan, spec_motor_power_w="3"))
    assert r.status_code == 400
    assert "below the fan's air power of 5.85 kW" in _visible(r)
    fan.refresh_from_db()
    assert fan.specs["motor_power_w"] == pytest.approx(11000)


def test_a_us_supervisor_hears_the_motor_refusal_in_hp_cfm_and_in_wc(scenario, login, big_unit):
    scenario.supervisor.unit_system = "us"
    scenario.supervisor.save(update_fields=["unit_system"])
    client = login(scenario.supervisor)
    us_fan = {**FAN, "spec_motor_power_w": "3", "spec_design_flow_m3s": "13773", "spec_design_pressure_pa": "3.61"}
    r = client.post(reverse("frontend:registry_component_new", args=[big_unit.pk]), us_fan)
    assert r.status_code == 400
    errors = _field_errors(r, "spec-motor_power_w")
    assert "Motor rated power: 3.00 hp is below the fan's air power of 7.84 hp" in errors, errors
    assert "13773 cfm" in errors


def test_an_emptied_place_in_the_airstream_is_refused_not_kept(scenario, login):
    from tests.frontend.test_registry_pages import _edit_post

    client = login(scenario.supervisor)
    coil = scenario.unit_a.components.get(name="Cooling coil")
    place = coil.position
    r = client.post(reverse("frontend:registry_component_edit", args=[coil.pk]), _edit_post(coil, position=""))
    assert r.status_code == 400
    errors = _field_errors(r, "f-position")
    assert "Place in the airstream is required" in errors and "0 to 32767" in errors, errors
    coil.refresh_from_db()
    assert coil.position == place
    # The same on the add form: an emptied place is refused, nothing added.
    before = Component.objects.count()
    r = client.post(reverse("frontend:registry_component_new", args=[scenario.unit_a.pk]), {**FAN, "position": ""})
    assert r.status_code == 400 and "Place in the airstream is required" in _field_errors(r, "f-position")
    assert Component.objects.count() == before


def test_the_unit_page_shows_each_fans_design_speed_and_its_drive(scenario, login, big_unit):
    client = login(scenario.supervisor)
    client.post(reverse("frontend:registry_component_new", args=[big_unit.pk]), FAN)
    page = _visible(client.get(reverse("frontend:registry_unit", args=[big_unit.pk])))
    assert "design speed 1120 rpm" in page
    assert "variable-speed drive: no" in page


def test_changing_a_units_design_airflow_warns_of_its_filter_banks_anew_after_saving(scenario, login, big_unit):
    """Bag filters sized for the unit's 6500 L/s: the unit raised to 20000 L/s leaves them at 32 %, said on the page
    that follows the save (saved all the same); back at 6500 L/s, nothing said of them."""
    from frontend.views.registry_units import unit_form_initial

    client = login(scenario.supervisor)
    assert client.post(reverse("frontend:registry_component_new", args=[big_unit.pk]), FILTERS).status_code == 302
    form = {k: "1" if v is True else "" if v in (None, False) else str(v)
            for k, v in unit_form_initial(ahu=big_unit, system="si").items()}  # fmt: skip
    edit = reverse("frontend:registry_unit_edit", args=[big_unit.pk])
    r = client.post(edit, {**form, "design_supply_airflow_m3s": "20000"}, follow=True)
    page = _visible(r)
    assert "saved." in page
    assert "Saved, but check Bag filters: Design airflow: 6500 L/s is 32% of the unit's design supply airflow" in page
    assert 'class="warning" data-warning' in r.content.decode()
    big_unit.refresh_from_db()
    assert big_unit.design_supply_airflow_m3s == pytest.approx(20.0)
    r = client.post(edit, {**form, "design_supply_airflow_m3s": "6500"}, follow=True)
    assert "Saved, but check Bag filters" not in _visible(r)
