"""Label URLs and their QR codes."""

import pytest
from django.test import override_settings
from django.urls import NoReverseMatch, reverse

from accounts.models import Role
from inventory.services import label_absolute_url, label_qr_svg


@override_settings(PLENUM_PUBLIC_URL="https://plenum.example.invalid/")
def test_label_url_and_qr_use_the_public_address():
    """The printed address is the public base URL plus /l/<code>/; the QR SVG is a standalone image."""
    assert label_absolute_url(code="U234567") == "https://plenum.example.invalid/l/U234567/"
    svg = label_qr_svg(code="U234567")
    assert svg.startswith("<svg") and 'xmlns="http://www.w3.org/2000/svg"' in svg
    assert "Label U234567" in svg


def test_label_redirects_to_the_frontend_unit_page(world, client):
    """With the frontend's unit page present, a unit label goes there and a component label to its place on it."""
    try:
        target = reverse("frontend:unit", kwargs={"code": world.units["own"].label_code})
    except NoReverseMatch:
        pytest.skip("the frontend has no unit page yet")
    client.force_login(world.people[Role.SUPERVISOR])
    ahu = world.units["own"]
    response = client.get(reverse("inventory:label", kwargs={"code": ahu.label_code.lower()}))
    assert response.status_code == 302 and response["Location"] == target
    comp = ahu.components.get(name="Supply fan")
    response = client.get(reverse("inventory:label", kwargs={"code": comp.label_code}))
    assert response["Location"] == f"{target}#component-{comp.label_code}"


@override_settings(ROOT_URLCONF="tests.inventory.urls_without_frontend")
def test_own_unit_page_when_the_frontend_has_none(world, client):
    """Without a frontend unit page, the label shows the unit, its tree, the safety caution and its QR."""
    client.force_login(world.people[Role.PROPERTY_MANAGER])
    ahu = world.units["own"]
    comp = ahu.components.get(name="Cooling coil")
    page = client.get(reverse("inventory:label", kwargs={"code": comp.label_code}))
    assert page.status_code == 200
    html = page.content.decode()
    assert ahu.tag in html and "Supply fan" in html and "80000 W" in html
    assert "lock out and tag out" in html and "licensed practice" in html
    assert f'id="component-{comp.label_code}" class="focus"' in html
    assert reverse("inventory:label-qr", kwargs={"code": ahu.label_code}) in html
    other = world.units["other"]
    assert client.get(reverse("inventory:label", kwargs={"code": other.label_code})).status_code == 404
