"""Registry CSV import: every problem of every row at once, in plain words; exports without float noise; a
retired part's day carried both ways (a new user's tryout of /registry/files/)."""

import datetime as dt
import io

import pytest

from engineering.units import from_display
from inventory import csv_io
from inventory.models import AHU, Component, Site
from inventory.services import component_retire
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import SiteFactory, make_full_unit

UNITS_HEADER = (
    "site_code,building_code,building_name,tag,design_supply_airflow_m3s,design_min_oa_fraction,"
    "heat_recovery,service_start,status\n"
)
COMPONENTS_HEADER = (
    "site_code,building_code,ahu_tag,name,kind,spec.stage,spec.merv,spec.count,spec.clean_dp_pa,"
    "spec.final_dp_pa,spec.design_airflow_m3s,spec.size\n"
)


def _problems(kind, text, org):
    with pytest.raises(csv_io.ImportFailed) as exc:
        csv_io.registry_import(kind=kind, source=io.StringIO(text), organisation=org)
    return {(e.line, e.column): e for e in exc.value.errors}


@pytest.mark.django_db
def test_a_units_row_reports_all_its_bad_cells_at_once():
    """A bad date no longer hides a fraction of 1.7, heat recovery 'magic' and status 'running'."""
    site = SiteFactory(code="harbour")
    text = UNITS_HEADER + "harbour,hall,Hall,AHU-09,2.5,1.7,magic,2020-13-01,running\n"
    found = _problems("ahus", text, site.organisation)
    assert set(found) == {
        (2, "service_start"),
        (2, "design_min_oa_fraction"),
        (2, "heat_recovery"),
        (2, "status"),
    }
    assert found[(2, "service_start")].reason.startswith(
        "Service start: '2020-13-01' is not a date; allowed: a date as YYYY-MM-DD from 1950-01-01 to "
    )
    assert found[(2, "design_min_oa_fraction")].reason == (
        "Design minimum outdoor-air fraction: 1.7 is out of range; allowed: a number from 0 to 1"
    )
    assert found[(2, "heat_recovery")].reason == (
        "Heat recovery: 'magic' is not one of the choices; allowed: one of none, wheel, plate, run_around"
    )
    assert "Status: 'running' is not one of the choices; allowed: one of in_service, standby" in (
        found[(2, "status")].reason
    )
    assert AHU.objects.count() == 0


@pytest.mark.django_db
def test_units_numbers_are_said_with_their_unit_not_djangos_words():
    site = SiteFactory(code="harbour")
    text = UNITS_HEADER + "harbour,hall,Hall,AHU-09,0.001,0.5,none,,\nharbour,hall,Hall,AHU-10,,0.5,none,,\n"
    found = _problems("ahus", text, site.organisation)
    assert found[(2, "design_supply_airflow_m3s")].reason == (
        "Design supply airflow: 0.001 m³/s is out of range; allowed: a number from 0.01 to 100 m³/s"
    )
    assert found[(3, "design_supply_airflow_m3s")].reason == (
        "Design supply airflow is required; allowed: a number from 0.01 to 100 m³/s"
    )
    assert not any("Ensure this value" in e.reason or "cannot be null" in e.reason for e in found.values())


@pytest.mark.django_db
def test_an_unknown_site_lists_the_organisations_codes_and_still_checks_the_other_cells():
    org = OrganisationFactory(slug="saltmarrow")
    SiteFactory(organisation=org, code="gullwharf")
    SiteFactory(organisation=org, code="ostry")
    text = UNITS_HEADER + "nowhere,hall,Hall,AHU-09,-3,1.7,magic,,\n"
    found = _problems("ahus", text, org)
    assert found[(2, "site_code")].value == "nowhere"
    reason = found[(2, "site_code")].reason
    assert reason.startswith("Site code: no site with code 'nowhere' in your organisation; your site codes: ")
    assert "gullwharf, ostry" in reason and "saltmarrow" not in reason
    assert {(2, "design_supply_airflow_m3s"), (2, "design_min_oa_fraction"), (2, "heat_recovery")} <= set(found)


@pytest.mark.django_db
def test_a_components_row_reports_bad_cells_and_the_pressure_drop_rule_together():
    """Clean 300 Pa above final 250 Pa is said beside MERV 25, count 'six' and a size without its depth, in the
    form's words."""
    ahu = make_full_unit()
    key = f"{ahu.building.site.code},{ahu.building.code},{ahu.tag}"
    text = COMPONENTS_HEADER + f"{key},New filters,filter_bank,final,25,six,300,250,3,592x592\n"
    found = _problems("components", text, ahu.building.site.organisation)
    assert set(found) == {(2, "spec.merv"), (2, "spec.count"), (2, "spec.final_dp_pa"), (2, "spec.size")}
    assert found[(2, "spec.size")].reason.startswith(
        "Nominal size (W×H×D mm): '592x592' is not three whole numbers of mm as width × height × depth; "
        "allowed: width × height × depth in whole mm"
    )
    assert found[(2, "spec.merv")].reason.startswith(
        "MERV class (ASHRAE 52.2): '25' is not one of the choices; allowed: one of 1, 2, 3"
    )
    assert found[(2, "spec.count")].reason == (
        "Number of filters: 'six' is not a number; allowed: a whole number from 1 to 200"
    )
    assert found[(2, "spec.final_dp_pa")].reason == (
        "Final (change) pressure drop: 250 Pa is not above the clean (initial) pressure drop of 300 Pa; "
        "allowed: a final pressure drop above the clean filter's"
    )
    assert "(merv)=" not in found[(2, "spec.merv")].reason


@pytest.mark.django_db
def test_an_empty_name_does_not_hide_a_negative_airflow():
    ahu = make_full_unit()
    key = f"{ahu.building.site.code},{ahu.building.code},{ahu.tag}"
    text = COMPONENTS_HEADER + f"{key},,filter_bank,final,13,6,90,250,-2,592x592x292\n"
    found = _problems("components", text, ahu.building.site.organisation)
    assert set(found) == {(2, "name"), (2, "spec.design_airflow_m3s")}
    assert found[(2, "name")].reason.startswith("Name is required; allowed:")
    assert found[(2, "spec.design_airflow_m3s")].reason == (
        "Design airflow: -2 m³/s is out of range; allowed: a number from 0.01 to 100 m³/s"
    )


@pytest.mark.django_db
def test_an_unknown_unit_still_checks_the_parts_cells():
    ahu = make_full_unit()
    site = ahu.building.site
    text = (
        COMPONENTS_HEADER + f"{site.code},{ahu.building.code},AHU-NOPE,X,filter_bank,final,25,6,90,250,3,592x592x292\n"
    )
    found = _problems("components", text, site.organisation)
    assert found[(2, "ahu_tag")].reason.startswith(f"Unit tag: no unit 'AHU-NOPE' in building '{ahu.building.code}'")
    assert ahu.tag in found[(2, "ahu_tag")].reason
    assert (2, "spec.merv") in found


@pytest.mark.django_db
def test_export_has_no_float_noise_and_the_round_trip_is_unchanged():
    """2400 L/s typed on the unit's form is stored as 2.4000000000000004 m³/s; the file says 2.4."""
    stored = from_display(value=2400, quantity="airflow", system="si")
    assert stored == 2.4000000000000004  # the noise the conversion from L/s leaves
    ahu = make_full_unit(design_supply_airflow_m3s=stored)
    sites = Site.objects.filter(pk=ahu.building.site.pk)
    out = io.StringIO()
    csv_io.registry_export(kind="ahus", sites=sites, out=out)
    text = out.getvalue()
    assert ",2.4," in text and "2.4000000000000004" not in text
    csv_io.registry_import(kind="ahus", source=io.StringIO(text), organisation=ahu.building.site.organisation)
    again = io.StringIO()
    csv_io.registry_export(kind="ahus", sites=sites, out=again)
    assert again.getvalue() == text


@pytest.mark.django_db
def test_a_retired_part_keeps_its_day_through_export_and_import():
    ahu = make_full_unit()
    pan = ahu.components.get(name="Drain pan")
    component_retire(component=pan, on=dt.date(2024, 5, 2))
    sites = Site.objects.filter(pk=ahu.building.site.pk)
    out = io.StringIO()
    csv_io.registry_export(kind="components", sites=sites, out=out)
    text = out.getvalue()
    assert "retired_on" in text.splitlines()[0]
    assert ",2024-05-02," in next(line for line in text.splitlines() if "Drain pan" in line)
    Component.objects.filter(pk=pan.pk).update(retired_on=None)
    csv_io.registry_import(kind="components", source=io.StringIO(text), organisation=ahu.building.site.organisation)
    pan.refresh_from_db()
    assert pan.retired_on == dt.date(2024, 5, 2)
    assert ahu.components.filter(retired_on__isnull=False).count() == 1


@pytest.mark.django_db
def test_a_bad_retired_day_is_refused_like_other_dates():
    ahu = make_full_unit()
    key = f"{ahu.building.site.code},{ahu.building.code},{ahu.tag}"
    text = (
        "site_code,building_code,ahu_tag,name,kind,installed_on,retired_on\n"
        f"{key},Drain pan,drain_pan,,2024-02-30\n"
        f"{key},Drain pan,drain_pan,2020-01-01,2019-06-01\n"
        f"{key},Drain pan,drain_pan,,1900-01-01\n"
    )
    found = _problems("components", text, ahu.building.site.organisation)
    assert found[(2, "retired_on")].reason.startswith("Retired on: '2024-02-30' is not a date; allowed: a date")
    assert found[(3, "retired_on")].reason.startswith("Retired on: 2019-06-01 is before installed on 2020-01-01")
    assert found[(4, "retired_on")].reason.startswith("Retired on 1900-01-01 is out of range; allowed: 1950-01-01 to ")
