"""The supervisor sets up a new customer's plant in the registry pages, in Chromium, on a 360 px phone and a
1280 px desktop.

From the registry list: a site with access notes, a building under it, a unit (airflow in L/s), then the unit's
component tree: a filter bank whose first try has a negative airflow and a clean pressure drop above the final one
(each refused at its field, the typed values kept, nothing saved), fixed and saved; a supply fan; an electric
preheater. Then the preheater is retired: it stays on the unit's page marked retired. Nothing runs off the side
at 360 px. Screenshots of the refused form and of the journey's end go to test-output/screenshots/.
"""

import re

import pytest
from playwright.sync_api import expect

from inventory.models import AHU, Component, Site
from tests.browser.conftest import DESKTOP, PHONE

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def _no_sideways_scroll(page, width: int) -> None:
    assert page.evaluate("document.scrollingElement.scrollWidth") <= width


def _label(page, text: str):
    return page.get_by_label(re.compile(rf"^{re.escape(text)}"))


@pytest.mark.parametrize(("size", "name"), [(PHONE, "360"), (DESKTOP, "1280")])
def test_the_supervisor_adds_a_unit_with_a_component_tree_and_retires_a_part(
    page, live_server, world, sign_in, screenshots, size, name
):
    page.set_viewport_size(size)
    sign_in(page, world.supervisor)
    page.goto(f"{live_server.url}/registry/")

    # A site, with what a technician needs to get in.
    page.get_by_role("link", name="Add site").click()
    _label(page, "Site name").fill("Quayside Depot")
    _label(page, "Address").fill("1 Quay Road, Harbourtown")
    _label(page, "Latitude").fill("53.55")
    _label(page, "Longitude").fill("9.99")
    _label(page, "Time zone").select_option("Europe/Berlin")
    _label(page, "Access notes for technicians").fill("Keys at the gatehouse. Roof hatch code from the caretaker.")
    page.get_by_role("button", name="Add site").click()
    expect(page.locator(".messages")).to_contain_text("Site Quayside Depot added")

    # A building under it, then a unit in it.
    page.get_by_role("link", name="Add building").first.click()
    _label(page, "Building name").fill("Store A")
    page.get_by_role("button", name="Add building").click()
    expect(page.locator(".messages")).to_contain_text("Building Store A added to Quayside Depot")
    page.get_by_role("link", name="Add unit to Store A").click()
    expect(_label(page, "Site and building")).to_have_value(
        str(Site.objects.get(name="Quayside Depot").buildings.get().pk)
    )
    _label(page, "Tag").fill("AHU-01")
    _label(page, "Location").fill("Roof plant room")
    _label(page, "Design supply airflow (L/s)").fill("2500")
    _label(page, "Design minimum outdoor-air fraction").fill("30")
    _label(page, "Supply-air setpoint (°C)").fill("18")
    page.get_by_role("button", name="Add unit").click()
    expect(page.locator(".messages")).to_contain_text("AHU-01 (Store A) added")
    ahu = AHU.objects.get(building__site__name="Quayside Depot")
    assert ahu.design_supply_airflow_m3s == pytest.approx(2.5)

    # A filter bank: a negative airflow and a clean pressure drop above the final one are refused at their fields.
    page.get_by_role("link", name="Add component").click()
    _label(page, "Kind of part").select_option("filter_bank")
    page.get_by_role("button", name="Next").click()
    _label(page, "Name").fill("Final filters")
    _label(page, "Stage").select_option("final")
    _label(page, "MERV class").select_option("14")
    _label(page, "Nominal size").fill("592x592x600")
    _label(page, "Number of filters").fill("6")
    _label(page, "Clean (initial) pressure drop (Pa)").fill("300")
    _label(page, "Final (change) pressure drop (Pa)").fill("250")
    _label(page, "Design airflow (L/s)").fill("-2500")
    page.get_by_role("button", name="Add part").click()
    expect(page.locator("#spec-design_airflow_m3s-errors")).to_contain_text(
        "Design airflow: -2500 L/s is out of range; allowed: a number from 10 to 100000 L/s"
    )
    expect(page.locator("#spec-clean_dp_pa-errors")).to_contain_text(
        "Clean (initial) pressure drop: 300 Pa is not below the final (change) pressure drop of 250 Pa"
    )
    expect(_label(page, "Design airflow (L/s)")).to_have_value("-2500")
    expect(_label(page, "Design airflow (L/s)")).to_have_attribute("aria-invalid", "true")
    expect(_label(page, "Number of filters")).to_have_value("6")
    assert not Component.objects.filter(ahu=ahu).exists()
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=screenshots / f"registry-refused-spec-{name}.png", full_page=True)
    _label(page, "Design airflow (L/s)").fill("2500")
    _label(page, "Clean (initial) pressure drop (Pa)").fill("90")
    page.get_by_role("button", name="Add part").click()
    expect(page.locator(".messages")).to_contain_text("Final filters added to AHU-01 (Store A)")

    # A supply fan and an electric preheater.
    page.get_by_role("link", name="Add component").click()
    _label(page, "Kind of part").select_option("fan")
    page.get_by_role("button", name="Next").click()
    _label(page, "Name").fill("Supply fan")
    _label(page, "Role").select_option("supply")
    _label(page, "Fan type").select_option("plug")
    _label(page, "Drive").select_option("direct")
    page.get_by_label("Variable-speed drive").check()
    _label(page, "Motor rated power (kW)").fill("5.5")
    _label(page, "Design airflow (L/s)").fill("2500")
    _label(page, "Design total pressure (Pa)").fill("800")
    page.get_by_role("button", name="Add part").click()
    expect(page.locator(".messages")).to_contain_text("Supply fan added")
    page.get_by_role("link", name="Add component").click()
    _label(page, "Kind of part").select_option("electric_preheater")
    page.get_by_role("button", name="Next").click()
    _label(page, "Name").fill("Frost heater")
    _label(page, "Rated power (kW)").fill("24")
    _label(page, "Stages").fill("3")
    _label(page, "Switch-on threshold").fill("-5")
    page.get_by_role("button", name="Add part").click()
    expect(page.locator(".messages")).to_contain_text("Frost heater added")
    assert sorted(ahu.components.values_list("name", flat=True)) == ["Final filters", "Frost heater", "Supply fan"]

    # Retire the preheater: it stays, marked, with its history.
    page.get_by_role("link", name="Retire Frost heater").click()
    expect(page.get_by_role("heading", name="Retire Frost heater of AHU-01 (Store A)")).to_be_visible()
    _label(page, "Reason").fill("Removed in the refit")
    page.get_by_role("button", name="Retire part").click()
    expect(page.locator(".messages")).to_contain_text("Frost heater retired; its records are kept.")
    expect(page.locator(".tree")).to_contain_text("Retired")
    assert Component.objects.get(name="Frost heater").retired_on is not None
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=screenshots / f"registry-journey-end-{name}.png", full_page=True)
