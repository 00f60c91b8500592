"""The admin's People page and a technician's profile in Chromium, on a 360 px phone and a 1280 px desktop.

The admin invites a technician with skills and capacity, gives the property manager a second site and finds both
in the list; the technician switches to US units on the profile and the calculator answers in °F and cfm.
Nothing runs off the side at 360 px. Screenshots of each journey's end go to test-output/screenshots/.
"""

import re

import pytest
from django.core import mail
from django.urls import reverse
from playwright.sync_api import expect

from accounts.models import Role, SiteGrant, User
from tests.browser.conftest import DESKTOP, PHONE
from tests.factories.accounts import make_person

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def _no_sideways_scroll(page, width: int) -> None:
    assert page.evaluate("document.scrollingElement.scrollWidth") <= width


@pytest.mark.parametrize(("size", "name"), [(PHONE, "360"), (DESKTOP, "1280")])
def test_the_admin_invites_a_technician_and_grants_a_site(page, live_server, world, sign_in, screenshots, size, name):
    admin = make_person(organisation=world.org, role=Role.ADMIN, username="ada", first_name="Ada", last_name="Admin")
    page.set_viewport_size(size)
    sign_in(page, admin)
    page.get_by_role("link", name="People").click()
    expect(page.get_by_role("heading", name=re.compile("^People"))).to_be_visible()
    _no_sideways_scroll(page, size["width"])

    page.get_by_label("Name").fill("Rhea Coil")
    page.get_by_label("E-mail").fill(f"rhea.{name}@example.invalid")
    page.get_by_label("Role").select_option("technician")
    page.get_by_label("Daily capacity").fill("25")
    page.get_by_label("Electrical").check()
    page.get_by_label("Controls").check()
    page.get_by_role("button", name="Invite").click()
    # Refused at the field, naming the value and the range; what was typed stays.
    expect(page.locator("#capacity-errors")).to_contain_text("Daily capacity: 25 h is out of range")
    expect(page.get_by_label("Name")).to_have_value("Rhea Coil")
    expect(page.get_by_label("Electrical")).to_be_checked()
    _no_sideways_scroll(page, size["width"])
    page.locator("#capacity-errors").screenshot(path=screenshots / f"people-refused-capacity-{name}.png")
    page.get_by_label("Daily capacity").fill("6.5")
    page.get_by_role("button", name="Invite").click()
    expect(page.locator(".messages")).to_contain_text("Rhea Coil is invited")
    card = page.locator(".person-card", has_text="Rhea Coil")
    expect(card).to_contain_text("6.5 h")
    expect(card).to_contain_text("Controls, Electrical")
    expect(card).to_contain_text("Invited, no password yet")
    assert [m.to for m in mail.outbox] == [[f"rhea.{name}@example.invalid"]]
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=screenshots / f"people-invited-{name}.png", full_page=True)

    page.locator(".person-card", has_text="Manu Keeper").get_by_role("link", name="Manu Keeper").click()
    page.get_by_label("Linden Court").check()
    page.get_by_role("button", name="Save sites").click()
    expect(page.locator(".messages")).to_contain_text("Manu Keeper now sees: Harbour House, Linden Court")
    assert set(SiteGrant.objects.filter(user=world.manager_a).values_list("site__name", flat=True)) == {
        "Harbour House",
        "Linden Court",
    }
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=screenshots / f"people-person-{name}.png", full_page=True)


@pytest.mark.parametrize(("size", "name"), [(PHONE, "360"), (DESKTOP, "1280")])
def test_a_technician_switches_to_us_units_on_the_profile(page, live_server, world, sign_in, screenshots, size, name):
    page.set_viewport_size(size)
    sign_in(page, world.technician)
    page.get_by_role("link", name="Profile").click()
    page.get_by_label("US customary").check()
    page.get_by_role("button", name="Save units").click()
    expect(page.locator(".messages")).to_contain_text("Units: US customary")
    assert User.objects.get(pk=world.technician.pk).unit_system == "us"
    page.get_by_role("button", name="Make a calendar address").click()
    expect(page.get_by_label("Your calendar address")).to_have_value(re.compile(r"/calendar/.+\.ics$"))
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=screenshots / f"profile-{name}.png", full_page=True)
    page.goto(f"{live_server.url}{reverse('frontend:calculator')}")
    expect(page.locator("main")).to_contain_text("°F")
    expect(page.locator("main")).to_contain_text("cfm")
    page.screenshot(path=screenshots / f"profile-calculator-us-{name}.png", full_page=True)
