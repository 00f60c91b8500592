"""Registry pages over HTTP: the supervisor adds, moves and retires sites, buildings, units and parts; every bad
value is refused at its field in plain words with nothing saved; technicians and property managers are refused."""

import datetime as dt
import html
import re

import pytest
import time_machine
from django.urls import reverse

from accounts.models import AuditEvent, Role
from frontend.views.registry_units import unit_form_initial
from inventory.models import AHU, Building, Component, Site
from scheduling.engine import work_orders_generate
from scheduling.models import WorkOrder, WorkOrderTask
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

# A number typed with an exponent (accounts.typed_numbers.exponent_words), before the field's range.
PLAIN = "is not a plain number; type digits with an optional decimal point or comma"

pytestmark = pytest.mark.django_db
NOW = dt.datetime(2026, 3, 9, 9, 30, tzinfo=dt.UTC)  # a Monday morning; any fixed moment would do


@pytest.fixture(autouse=True)
def _clock():
    with time_machine.travel(NOW, tick=False):
        yield


def _text(response) -> str:
    return re.sub(r"\s+", " ", html.unescape(response.content.decode()))


def _visible(response) -> str:
    """The page's words without its markup."""
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html.unescape(response.content.decode())))


def _field_errors(response, field_id: str) -> str:
    """The refusals shown at one field (the block right under it)."""
    page = html.unescape(response.content.decode())
    found = re.search(rf'<div id="{field_id}-errors">(.*?)</div>', page, re.S)
    return re.sub(r"<[^>]+>", " ", found.group(1)) if found else ""


def _counts():
    return (Site.objects.count(), Building.objects.count(), AHU.objects.count(), Component.objects.count())


UNIT = {
    "tag": "AHU-02",
    "location": "Roof plant room",
    "area_served": "Offices 1–3",
    "design_supply_airflow_m3s": "2500",  # L/s for an SI person
    "design_min_oa_fraction": "30",
    "ventilation_zones": "single_zone",
    "air_distribution": "ceiling_supply_cool",
    "heat_recovery": "plate",
    "supply_air_setpoint_c": "18",
    "duct_static_setpoint_pa": "250",
}
FILTERS = {
    "kind": "filter_bank",
    "name": "Final filters",
    "spec_stage": "final",
    "spec_merv": "14",
    "spec_size": "592x592x600",
    "spec_count": "6",
    "spec_clean_dp_pa": "90",
    "spec_final_dp_pa": "250",
    "spec_design_airflow_m3s": "2500",
}


def test_the_supervisor_adds_a_site_a_building_a_unit_and_its_parts(scenario, login):
    """From the registry list: a site with access notes, a building under it, a unit in L/s, a filter bank, a
    supply fan and an electric preheater; each write leaves an audit event by the supervisor."""
    client = login(scenario.supervisor)
    page = _text(client.get(reverse("frontend:registry")))
    assert "Add site" in page and "Add unit" in page and "Add building" in page
    r = client.post(
        reverse("frontend:registry_site_new"),
        {"name": "Quayside Depot", "address": "1 Quay Road", "latitude": "53.55", "longitude": "9.99",
         "time_zone": "Europe/Berlin", "access_notes": "Keys at the gatehouse; roof hatch code from the caretaker."},
    )  # fmt: skip
    site = Site.objects.get(name="Quayside Depot")
    assert r.status_code == 302 and site.organisation == scenario.org
    assert site.access_notes.startswith("Keys at the gatehouse") and site.time_zone == "Europe/Berlin"
    client.post(reverse("frontend:registry_building_new", args=[site.pk]), {"name": "Store A", "floors": "2"})
    building = site.buildings.get()
    r = client.post(reverse("frontend:registry_unit_new"), {**UNIT, "building": str(building.pk)})
    ahu = AHU.objects.get(building=building)
    assert r.status_code == 302
    assert ahu.design_supply_airflow_m3s == pytest.approx(2.5)  # 2500 L/s
    assert ahu.supply_air_setpoint_c == 18 and ahu.heat_recovery == "plate"
    new_part = reverse("frontend:registry_component_new", args=[ahu.pk])
    assert client.post(new_part, FILTERS).status_code == 302
    fan = {"kind": "fan", "name": "Supply fan", "spec_role": "supply", "spec_fan_type": "plug", "spec_drive": "direct",
           "spec_vsd": "1", "spec_motor_power_w": "5.5", "spec_design_flow_m3s": "2500",
           "spec_design_pressure_pa": "800"}  # fmt: skip
    assert client.post(new_part, fan).status_code == 302
    heater = {"kind": "electric_preheater", "name": "Frost heater", "spec_power_w": "24", "spec_stages": "3",
              "spec_switch_on_c": "-5"}  # fmt: skip
    assert client.post(new_part, heater).status_code == 302
    parts = {c.name: c for c in ahu.components.all()}
    assert parts["Final filters"].specs["design_airflow_m3s"] == pytest.approx(2.5)
    assert parts["Supply fan"].specs["vsd"] is True
    assert parts["Frost heater"].specs["power_w"] == pytest.approx(24000)  # typed as 24 kW
    actions = set(AuditEvent.objects.filter(actor=scenario.supervisor).values_list("action", flat=True))
    assert {"site_create", "building_create", "ahu_create", "component_create"} <= actions
    unit_page = _text(client.get(reverse("frontend:registry_unit", args=[ahu.pk])))
    for link in ("Add component", "Edit unit", "Move", "Retire"):
        assert link in unit_page


def test_the_unit_form_speaks_plain_words_in_the_persons_units(scenario, login):
    """Labels name the quantity and its unit (L/s, °C, Pa for SI; cfm, °F, in. w.c. for US), never a field name."""
    client = login(scenario.supervisor)
    page = _text(client.get(reverse("frontend:registry_unit_edit", args=[scenario.unit_a.pk])))
    assert "Design supply airflow (L/s)" in page and "Supply-air setpoint (°C)" in page
    assert "Duct static pressure setpoint (Pa)" in page
    words = _visible(client.get(reverse("frontend:registry_unit_edit", args=[scenario.unit_a.pk])))
    assert "m3s" not in words and "Supply air setpoint c" not in words and "m³/s" not in words
    scenario.supervisor.unit_system = "us"
    scenario.supervisor.save(update_fields=["unit_system"])
    page = _text(client.get(reverse("frontend:registry_unit_edit", args=[scenario.unit_a.pk])))
    assert "Design supply airflow (cfm)" in page and "Supply-air setpoint (°F)" in page
    assert "Duct static pressure setpoint (in. w.c.)" in page
    form = {k: "1" if v is True else "" if v in (None, False) else str(v)
            for k, v in unit_form_initial(ahu=scenario.unit_a, system="us").items()}  # fmt: skip
    r = client.post(
        reverse("frontend:registry_unit_edit", args=[scenario.unit_a.pk]), {**form, "design_supply_airflow_m3s": "4000"}
    )
    assert r.status_code == 302
    scenario.unit_a.refresh_from_db()
    assert scenario.unit_a.design_supply_airflow_m3s == pytest.approx(4000 * 0.00047194745, rel=1e-6)  # 1 cfm


@pytest.mark.parametrize(
    ("field", "typed", "said"),
    [
        ("design_supply_airflow_m3s", "-2", "Design supply airflow: -2 L/s is out of range; allowed: a number from 10 to 100000 L/s"),  # noqa: E501
        # Typed with an exponent: the value as typed and the field's range (never read as 1e400 or 100000).
        ("design_supply_airflow_m3s", "1e400", f"Design supply airflow: “1e400” {PLAIN}, allowed: a number from 10 to 100000 L/s"),  # noqa: E501
        ("design_supply_airflow_m3s", "1e3", f"Design supply airflow: “1e3” {PLAIN}, allowed: a number from 10 to 100000 L/s"),  # noqa: E501
        ("design_supply_airflow_m3s", "NaN", "Design supply airflow: 'NaN' is not a finite number"),
        ("tag", "", "Tag is required"),
        ("tag", "AHU\x00-9", "Tag: the text contains control characters (such as NUL)"),
        ("tag", "ahu-01", "Tag: 'ahu-01' is already used by AHU-01 in North block"),
        ("supply_air_setpoint_c", "six", "Supply-air setpoint: 'six' is not a finite number"),
    ],
)  # fmt: skip
def test_a_bad_unit_value_is_refused_at_its_field_and_nothing_is_saved(scenario, login, field, typed, said):
    """Negative or non-finite airflow, an empty tag, NUL, a tag already used in the building, a word for a number:
    each is said at its field naming the value and what is allowed; the typed value stays; nothing is stored."""
    client = login(scenario.supervisor)
    building = scenario.unit_a.building
    before = _counts()
    r = client.post(reverse("frontend:registry_unit_new"), {**UNIT, "building": str(building.pk), field: typed})
    assert r.status_code == 400
    assert said in _field_errors(r, f"f-{field}")
    assert "Nothing was saved" in _text(r)
    if "\x00" not in typed:
        assert f'value="{typed}"' in html.unescape(r.content.decode())
    assert _counts() == before


@pytest.mark.parametrize(
    ("field", "typed", "said"),
    [
        ("spec_design_airflow_m3s", "-2500", "Design airflow: -2500 L/s is out of range; allowed: a number from 10 to 100000 L/s"),  # noqa: E501
        ("spec_clean_dp_pa", "300", "Clean (initial) pressure drop: 300 Pa is not below the final (change) pressure drop of 250 Pa"),  # noqa: E501
        ("spec_count", "six", "Number of filters: 'six' is not a whole number; allowed: a whole number from 1 to 200"),
        ("spec_merv", "25", "MERV class (ASHRAE 52.2): '25' is not one of the choices; allowed: one of 1, 2"),
        ("spec_size", "592\x00", "control characters"),
        ("spec_final_dp_pa", "1e400", f"Final (change) pressure drop: “1e400” {PLAIN}, allowed: a number from"),
        ("spec_clean_dp_pa", "nan", "Clean (initial) pressure drop: 'nan' is not a finite number"),
        ("name", "", "Name is required"),
    ],
)  # fmt: skip
def test_a_bad_spec_is_refused_at_its_field_and_no_part_is_added(scenario, login, field, typed, said):
    client = login(scenario.supervisor)
    ahu = scenario.unit_a
    before = _counts()
    r = client.post(reverse("frontend:registry_component_new", args=[ahu.pk]), {**FILTERS, field: typed})
    assert r.status_code == 400
    field_id = f"spec-{field.removeprefix('spec_')}" if field.startswith("spec_") else f"f-{field}"
    assert said in _field_errors(r, field_id), _text(r)
    assert _counts() == before


def test_a_site_with_bad_values_is_not_added(scenario, login):
    client = login(scenario.supervisor)
    before = _counts()
    r = client.post(
        reverse("frontend:registry_site_new"),
        {"name": "Harbour House", "latitude": "1e400", "longitude": "NaN", "time_zone": "Mars/Olympus",
         "access_notes": "code \x00 1234"},
    )  # fmt: skip
    assert r.status_code == 400
    assert "Site name: 'Harbour House' is already a site of" in _field_errors(r, "f-name")
    assert f"Latitude: “1e400” {PLAIN}, allowed: a number from -90 to 90 °" in _field_errors(r, "f-latitude")
    assert "Longitude: 'NaN' is not a finite number" in _field_errors(r, "f-longitude")
    assert "Time zone: 'Mars/Olympus' is not one of the choices" in _field_errors(r, "f-time_zone")
    assert "control characters" in _field_errors(r, "f-access_notes")
    assert _counts() == before


def test_retiring_a_unit_cancels_its_open_visits_keeps_its_records_and_stops_new_work(scenario, login):
    client = login(scenario.supervisor)
    ahu = scenario.unit_a
    page = _text(client.get(reverse("frontend:registry_unit_retire", args=[ahu.pk])))
    assert "Quarterly service" in page  # the open visit that will be cancelled is named
    r = client.post(reverse("frontend:registry_unit_retire", args=[ahu.pk]), {"reason": "Replaced by AHU-05"})
    assert r.status_code == 302
    ahu.refresh_from_db()
    assert ahu.status == AHU.Status.RETIRED
    scenario.work_a.refresh_from_db()
    assert scenario.work_a.state == WorkOrder.State.CANCELLED and "Replaced by AHU-05" in scenario.work_a.cancel_reason
    assert ahu.components.count() > 0  # nothing deleted
    assert AuditEvent.objects.filter(action="ahu_retire", object_id=str(ahu.pk)).exists()
    work_orders_generate(organisation=scenario.org, today=dt.date(2026, 3, 9))
    assert not ahu.work_orders.exclude(state=WorkOrder.State.CANCELLED).exists()
    assert scenario.unit_b.work_orders.count() > 1  # the other unit still gets its plan
    registry = _text(client.get(reverse("frontend:registry")))
    assert "Retired" in registry and "AHU-01" in registry


def test_a_unit_with_a_visit_under_way_is_not_retired(scenario, login):
    WorkOrder.objects.filter(pk=scenario.work_a.pk).update(state=WorkOrder.State.IN_PROGRESS)
    client = login(scenario.supervisor)
    r = client.post(reverse("frontend:registry_unit_retire", args=[scenario.unit_a.pk]), {"reason": ""})
    assert r.status_code == 400
    assert "has a visit under way: Quarterly service" in _text(r)
    scenario.unit_a.refresh_from_db()
    assert scenario.unit_a.status == AHU.Status.IN_SERVICE


def test_a_retired_part_keeps_its_records_and_gets_no_new_work(scenario, login):
    client = login(scenario.supervisor)
    final = scenario.unit_a.components.get(name="Final filters")
    assert WorkOrderTask.objects.filter(component=final).exists()  # the scenario's planned check
    r = client.post(reverse("frontend:registry_component_retire", args=[final.pk]), {"reason": "Bank removed"})
    assert r.status_code == 302
    final.refresh_from_db()
    assert final.retired_on == dt.date(2026, 3, 9)
    assert WorkOrderTask.objects.filter(component=final).exists()  # history kept
    work_orders_generate(organisation=scenario.org, today=dt.date(2026, 3, 9))
    new_tasks = WorkOrderTask.objects.exclude(work_order__in=[scenario.work_a, scenario.work_b])
    pre = scenario.unit_a.components.get(name="Pre-filters")
    assert new_tasks.filter(component=pre).exists()  # its still-working neighbour is planned as before
    assert not new_tasks.filter(component=final).exists()
    page = _visible(client.get(reverse("frontend:registry_unit", args=[scenario.unit_a.pk])))
    assert "Final filters Retired 9 Mar 2026" in page
    again = client.post(reverse("frontend:registry_component_retire", args=[final.pk]), {"reason": ""})
    assert again.status_code == 400 and "was retired on 09 Mar 2026" in _text(again)


def test_a_unit_moves_to_another_building_unless_its_tag_is_taken_there(scenario, login):
    client = login(scenario.supervisor)
    annex = BuildingFactory(site=scenario.site_a, name="South annex")
    make_full_unit(building=annex, tag="AHU-01")
    url = reverse("frontend:registry_unit_move", args=[scenario.unit_a.pk])
    r = client.post(url, {"building": str(annex.pk)})
    assert r.status_code == 400
    assert "South annex already has a unit tagged AHU-01" in _field_errors(r, "f-building")
    other = BuildingFactory(site=scenario.site_b, name="West wing")
    assert client.post(url, {"building": str(other.pk)}).status_code == 302
    scenario.unit_a.refresh_from_db()
    assert scenario.unit_a.building == other


def test_two_units_with_one_tag_on_a_site_are_told_apart_by_building(scenario, login):
    annex = BuildingFactory(site=scenario.site_a, name="South annex")
    twin = make_full_unit(building=annex, tag="AHU-01")
    client = login(scenario.supervisor)
    site_page = _text(client.get(reverse("frontend:registry_site", args=[scenario.site_a.pk])))
    assert "AHU-01 (North block)" in site_page and "AHU-01 (South annex)" in site_page
    assert "Edit AHU-01 (South annex)" in _text(client.get(reverse("frontend:registry_unit_edit", args=[twin.pk])))


@pytest.mark.parametrize("role", ["technician", "manager_a"])
def test_technicians_and_property_managers_may_not_change_the_registry(scenario, login, role):
    client = login(getattr(scenario, role))
    before = _counts()
    posts = [
        (reverse("frontend:registry_site_new"), {"name": "X", "latitude": "1", "longitude": "1", "time_zone": "UTC"}),
        (reverse("frontend:registry_unit_new"), {**UNIT, "building": str(scenario.unit_a.building_id)}),
        (reverse("frontend:registry_component_new", args=[scenario.unit_a.pk]), FILTERS),
        (reverse("frontend:registry_unit_retire", args=[scenario.unit_a.pk]), {"reason": ""}),
        (reverse("frontend:registry_component_retire", args=[scenario.unit_a.components.first().pk]), {"reason": ""}),
    ]
    for url, body in posts:
        assert client.post(url, body).status_code in (403, 404), url
    assert _counts() == before
    assert AHU.objects.get(pk=scenario.unit_a.pk).status == AHU.Status.IN_SERVICE


def test_another_organisations_records_are_not_found(scenario, login):
    theirs = OrganisationFactory(name="Elsewhere Air")
    their_site = SiteFactory(organisation=theirs, name="Their Site")
    their_unit = make_full_unit(building=BuildingFactory(site=their_site, name="Their block"), tag="AHU-99")
    make_person(organisation=theirs, role=Role.SUPERVISOR, username="them")
    client = login(scenario.supervisor)
    assert client.get(reverse("frontend:registry_site", args=[their_site.pk])).status_code == 404
    assert client.post(reverse("frontend:registry_unit_retire", args=[their_unit.pk]), {}).status_code == 404
    r = client.post(reverse("frontend:registry_unit_new"), {**UNIT, "building": str(their_unit.building_id)})
    assert r.status_code == 400 and "is not one of the choices" in _field_errors(r, "f-building")
    assert not AHU.objects.filter(tag="AHU-02").exists()


def test_every_registry_form_refuses_hostile_values_without_a_server_error_or_a_half_save():
    """The hostile values of tests/security/test_form_fuzz.py (NaN, ±Infinity, 1e309, NUL, control characters,
    years 1 and 9999, 2³¹, 2⁶³, a bracket, 20 000 characters) in every field of every registry form, in turn:
    never a server error, and a form that is not accepted stores nothing. Retiring comes last."""
    from django.test import Client

    from tests.security.test_api_fuzz import row_counts
    from tests.security.test_form_fuzz import FORM_VALUES, post_forms
    from tests.tenancy.world import build

    world = build()
    a = world.a
    pages = [
        "/registry/site/new/",
        f"/registry/site/{a.site.pk}/",
        f"/registry/site/{a.site.pk}/building/new/",
        f"/registry/building/{a.building.pk}/edit/",
        f"/registry/unit/new/?building={a.building.pk}",
        f"/registry/unit/{a.ahu.pk}/edit/",
        f"/registry/unit/{a.ahu.pk}/component/new/?kind=filter_bank",
        f"/registry/unit/{a.ahu.pk}/component/new/?kind=electric_preheater",
        f"/registry/unit/{a.ahu.pk}/move/",
        f"/registry/component/{a.component.pk}/retire/",
        f"/registry/unit/{a.ahu.pk}/retire/",
    ]
    BuildingFactory(site=a.site, name="Fuzz annex")  # so the move form has somewhere to go
    client = Client(raise_request_exception=False)
    client.force_login(world.supervisor)
    problems = []
    for page in pages:
        shown = client.get(page)
        assert shown.status_code == 200, (page, shown.status_code)
        forms = [(action or page, fields) for action, fields in post_forms(shown.content.decode())]
        forms = [(action, fields) for action, fields in forms if not action.startswith("/logout")]
        assert forms, f"{page} shows no post form"
        for action, fields in forms:
            for name in [n for n in fields if n != "csrfmiddlewaretoken"]:
                for value in FORM_VALUES:
                    before = row_counts()
                    response = client.post(action, {**fields, name: value})
                    what = f"POST {action} {name}={value!r:.30}"
                    if response.status_code >= 500:
                        problems.append(f"{what} -> {response.status_code}")
                    elif response.status_code not in (301, 302, 303) and row_counts() != before:
                        problems.append(f"{what} -> {response.status_code} but rows changed")
    assert not problems, f"{len(problems)} problems:\n" + "\n".join(problems[:60])


def test_a_checklist_made_after_a_part_is_retired_leaves_it_out_and_an_earlier_one_keeps_it(scenario):
    """A visit planned before the part was retired still reads as it was (its items and record keep the part);
    one made after it does not ask about the part."""
    from inspections.selectors import checklist_build
    from inventory.services import component_retire
    from tests.frontend.scenario import make_work

    final = scenario.unit_a.components.get(name="Final filters")
    with time_machine.travel(NOW + dt.timedelta(days=1), tick=False):
        component_retire(component=final, on=dt.date(2026, 3, 10), by=scenario.supervisor, reason="removed")
    with time_machine.travel(NOW + dt.timedelta(days=2), tick=False):
        later = make_work(ahu=scenario.unit_a, title="Later visit")

    def parts(wo):
        return {slot.component.name for slot in checklist_build(work_order=wo).slots if slot.component}

    assert "Final filters" in parts(scenario.work_a)
    assert "Final filters" not in parts(later)


def test_a_us_supervisor_adds_parts_in_cfm_in_wc_hp_and_kw(scenario, login):
    """In US units the spec form reads cfm, in. w.c., °F, a motor in hp and an electric heater in kW; the values
    are stored in SI (1 hp = 745.7 W, 1 in. w.c. = 249.09 Pa, 1 cfm = 0.471947 L/s; engineering.units)."""
    scenario.supervisor.unit_system = "us"
    scenario.supervisor.save(update_fields=["unit_system"])
    client = login(scenario.supervisor)
    url = reverse("frontend:registry_component_new", args=[scenario.unit_a.pk])
    fan_page = _visible(client.get(url + "?kind=fan"))
    assert "Motor rated power (hp)" in fan_page and "Design airflow (cfm)" in fan_page
    assert "Design total pressure (in. w.c.)" in fan_page
    heater_page = _visible(client.get(url + "?kind=electric_preheater"))
    assert "Rated power (kW)" in heater_page and "Switch-on threshold (outdoor/entering air) (°F)" in heater_page
    fan = {"kind": "fan", "name": "Return fan", "spec_role": "return", "spec_fan_type": "plug", "spec_drive": "direct",
           "spec_motor_power_w": "7.5", "spec_design_flow_m3s": "5000", "spec_design_pressure_pa": "2"}  # fmt: skip
    assert client.post(url, fan).status_code == 302
    specs = scenario.unit_a.components.get(name="Return fan").specs
    assert specs["motor_power_w"] == pytest.approx(7.5 * 745.7, rel=1e-3)
    assert specs["design_flow_m3s"] == pytest.approx(5000 * 0.000471947, rel=1e-5)
    assert specs["design_pressure_pa"] == pytest.approx(2 * 249.0889, rel=1e-5)
    refused = client.post(
        url, {**FILTERS, "spec_clean_dp_pa": "1.2", "spec_final_dp_pa": "1", "spec_design_airflow_m3s": "5000"}
    )
    assert (
        "Clean (initial) pressure drop: 1.2 in. w.c. is not below the final (change) pressure drop of 1 in. w.c."
        in (_field_errors(refused, "spec-clean_dp_pa"))
    )


def test_a_building_moves_to_another_site_of_the_organisation_with_its_units(scenario, login):
    """Editing a building, another site of the organisation may be chosen: its units go with it; a name already
    used at the new site is refused at the name field and nothing moves."""
    client = login(scenario.supervisor)
    building = scenario.unit_a.building
    url = reverse("frontend:registry_building_edit", args=[building.pk])
    BuildingFactory(site=scenario.site_b, name="North block")
    refused = client.post(url, {"name": "North block", "site": str(scenario.site_b.pk)})
    assert refused.status_code == 400
    assert "Building name: 'North block' is already a building of Linden Court" in _field_errors(refused, "f-name")
    building.refresh_from_db()
    assert building.site == scenario.site_a
    moved = client.post(url, {"name": "North block (old)", "site": str(scenario.site_b.pk)})
    assert moved.status_code == 302
    scenario.unit_a.refresh_from_db()
    assert scenario.unit_a.building.site == scenario.site_b
    theirs = SiteFactory(organisation=OrganisationFactory(name="Elsewhere Air"), name="Their Site")
    r = client.post(url, {"name": "North block (old)", "site": str(theirs.pk)})
    assert r.status_code == 400 and "is not one of the choices" in _field_errors(r, "f-site")


# ---------------------------------------------------------------------------
# New-user tryout: airstream order, the unit page's design data and part specs, the site's climate and code.
# ---------------------------------------------------------------------------
def _edit_post(component, **changes):
    from frontend.specs_form import spec_initial

    post = {"name": component.name, "parent": str(component.parent_id or ""), "position": str(component.position)}
    post.update({f"spec_{k}": ("1" if v is True else "" if v in (None, False) else str(v))
                 for k, v in spec_initial(component=component, system="si").items()})  # fmt: skip
    post.update(changes)
    return post


def test_a_part_goes_in_at_its_place_in_the_airstream_and_is_moved_inside_another_on_edit(scenario, login):
    """A preheater added after the filters is put first on the add form; on edit a part is moved along the
    airstream, into another part, with its installed-on date; a part cannot go inside itself or its child."""
    client = login(scenario.supervisor)
    ahu = scenario.unit_a
    heater = {"kind": "electric_preheater", "name": "Frost heater", "spec_power_w": "24", "spec_stages": "3",
              "spec_switch_on_c": "-5", "position": "0"}  # fmt: skip
    form = _visible(client.get(reverse("frontend:registry_component_new", args=[ahu.pk]) + "?kind=electric_preheater"))
    assert "Add an electric preheater to" in form and "Place in the airstream" in form
    assert client.post(reverse("frontend:registry_component_new", args=[ahu.pk]), heater).status_code == 302
    added = ahu.components.get(name="Frost heater")
    assert added.position == 0
    assert [c.name for c in ahu.components.all()][:2] == ["Intake screen", "Frost heater"]  # ties: entry order
    # Edit: the drain pan goes inside the cooling coil, at place 1, with the day it was fitted.
    pan = ahu.components.get(name="Drain pan")
    coil = ahu.components.get(name="Cooling coil")
    page = _visible(client.get(reverse("frontend:registry_component_edit", args=[pan.pk])))
    assert "Part of" in page and "Place in the airstream" in page and "Installed on" in page
    # A day is text the server reads (accounts.inputs.parse_day), not a field the browser reads by its locale.
    html = client.get(reverse("frontend:registry_component_edit", args=[pan.pk])).content.decode()
    assert 'type="date"' not in html and 'placeholder="YYYY-MM-DD or DD.MM.YYYY"' in html
    assert "Allowed: a date as YYYY-MM-DD or DD.MM.YYYY" in html
    r = client.post(
        reverse("frontend:registry_component_edit", args=[pan.pk]),
        _edit_post(pan, parent=str(coil.pk), position="1", installed_on="02.05.2024"),  # day first, with dots
    )
    assert r.status_code == 302, _text(r)
    pan.refresh_from_db()
    assert pan.parent == coil and pan.position == 1 and pan.installed_on == dt.date(2024, 5, 2)
    # The coil cannot go inside the pan it now contains, nor inside itself: refused at the field, nothing saved.
    r = client.post(reverse("frontend:registry_component_edit", args=[coil.pk]), _edit_post(coil, parent=str(pan.pk)))
    assert r.status_code == 400
    assert "Part of: Drain pan is inside Cooling coil" in _field_errors(r, "f-parent")
    r = client.post(reverse("frontend:registry_component_edit", args=[coil.pk]), _edit_post(coil, parent=str(coil.pk)))
    assert r.status_code == 400 and "Cooling coil cannot be inside itself" in _field_errors(r, "f-parent")
    r = client.post(reverse("frontend:registry_component_edit", args=[coil.pk]), _edit_post(coil, position="-3"))
    assert r.status_code == 400 and "Place in the airstream" in _field_errors(r, "f-position")
    coil.refresh_from_db()
    assert coil.parent is None
    # The edit form does not offer the part itself nor the parts inside it.
    page = client.get(reverse("frontend:registry_component_edit", args=[coil.pk])).content.decode()
    options = re.search(r'<select id="f-parent".*?</select>', page, re.S).group(0)
    assert f'value="{pan.pk}"' not in options and f'value="{coil.pk}"' not in options


def test_the_unit_page_shows_design_values_and_each_parts_key_specs_in_the_persons_units(scenario, login):
    ahu = scenario.unit_a
    page = _visible(login(scenario.supervisor).get(reverse("frontend:registry_unit", args=[ahu.pk])))
    assert "Design values" in page and "3000 L/s" in page  # 3.0 m³/s
    assert "MERV 13" in page and "clean pressure drop 90 Pa" in page and "change at 250 Pa" in page
    assert "motor 5.5 kW" in page
    scenario.supervisor.unit_system = "us"
    scenario.supervisor.save(update_fields=["unit_system"])
    page = _visible(login(scenario.supervisor).get(reverse("frontend:registry_unit", args=[ahu.pk])))
    assert "6357 cfm" in page  # 3.0 m³/s × 2118.88 (unit conversion, from memory)
    assert "change at 1 in. w.c." in page or "change at 1 in" in page  # 250 Pa ≈ 1.00 in. w.c.


def test_a_unit_with_no_parts_says_so_and_leads_to_the_first(scenario, login):
    client = login(scenario.supervisor)
    building = scenario.unit_a.building
    client.post(reverse("frontend:registry_unit_new"), {**UNIT, "tag": "AHU-77", "building": str(building.pk)})
    ahu = AHU.objects.get(tag="AHU-77")
    page = _visible(client.get(reverse("frontend:registry_unit", args=[ahu.pk])))
    assert "No parts yet: add the first one" in page


def test_a_refused_choice_stays_chosen_on_the_form(scenario, login):
    """The MERV select keeps the value sent (marked as not one of the choices) instead of falling back to '—'."""
    client = login(scenario.supervisor)
    r = client.post(
        reverse("frontend:registry_component_new", args=[scenario.unit_a.pk]), {**FILTERS, "spec_merv": "17"}
    )
    assert r.status_code == 400
    select = re.search(r'<select id="spec-merv".*?</select>', r.content.decode(), re.S).group(0)
    assert '<option value="17" selected>17 (not one of the choices)</option>' in select
    r = client.post(
        reverse("frontend:registry_component_new", args=[scenario.unit_a.pk]), {**FILTERS, "spec_clean_dp_pa": "900"}
    )
    select = re.search(r'<select id="spec-merv".*?</select>', r.content.decode(), re.S).group(0)
    assert '<option value="14" selected>' in select


def test_the_site_page_shows_its_code_climate_normals_and_season_thresholds(scenario, login):
    """The code the CSV import names, the monthly normals (read-only) and the editable altitude and thresholds,
    in the person's units; a bad threshold is refused at its field."""
    scenario.supervisor.unit_system = "us"
    scenario.supervisor.save(update_fields=["unit_system"])
    client = login(scenario.supervisor)
    site = scenario.unit_a.building.site
    page = _visible(client.get(reverse("frontend:registry_site", args=[site.pk])))
    assert f"Site code: {site.code}" in page and "Climate and seasons" in page
    assert "Freeze-season threshold (°F)" in page and "Altitude above sea level (ft)" in page
    values = _site_initial(client, site)
    r = client.post(reverse("frontend:registry_site", args=[site.pk]),
                    {**values, "preheat_threshold_c": "37.4", "altitude_m": "656.168"})  # fmt: skip
    assert r.status_code == 302, _text(r)
    site.refresh_from_db()
    assert site.preheat_threshold_c == pytest.approx(3.0) and site.altitude_m == pytest.approx(200, abs=0.01)
    r = client.post(reverse("frontend:registry_site", args=[site.pk]), {**values, "cooling_threshold_c": "200"})
    assert r.status_code == 400
    assert "Cooling-season threshold: 200 °F is out of range; allowed: a number from 50 to 113 °F" in _field_errors(
        r, "f-cooling_threshold_c"
    )


def _site_initial(client, site) -> dict:
    page = html.unescape(client.get(reverse("frontend:registry_site", args=[site.pk])).content.decode())
    values = dict(re.findall(r'<input type="text"[^>]*id="f-(\w+)" name="\w+" value="([^"]*)"', page))
    values["time_zone"] = site.time_zone
    values["address"] = site.address
    values["access_notes"] = site.access_notes
    return values
