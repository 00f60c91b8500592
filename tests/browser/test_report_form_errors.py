"""A refused report request on a phone: the site page again, the typed days kept, the message under To, nothing
scrolling sideways."""

import pytest
from playwright.sync_api import expect

from reports.models import Report

from .conftest import PHONE
from .test_pwa import wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def test_to_before_from_is_said_under_to_at_360(browser, live_server, world, sign_in, screenshots):
    ctx = browser.new_context(viewport=PHONE)
    page = sign_in(ctx.new_page(), world.manager_a)
    page.goto(f"{live_server.url}/dashboard/site/{world.site_a.pk}/")
    wait_app(page)
    form = page.locator("form", has=page.locator('input[name="kind"][value="compliance"]'))
    form.get_by_label("From").fill("2026-06-01")
    form.get_by_label("To").fill("2026-01-01")
    form.get_by_role("button", name="Request compliance report").click()
    page.wait_for_load_state("load")
    to = page.locator("form", has=page.locator('input[name="kind"][value="compliance"]')).get_by_label("To")
    expect(to).to_have_attribute("aria-invalid", "true")
    expect(to).to_have_value("2026-01-01")
    expect(page.locator(".errorlist").first).to_contain_text("To: 1 Jan 2026 is before From: 1 Jun 2026")
    assert page.evaluate("document.documentElement.scrollWidth") <= PHONE["width"]
    assert not Report.objects.exists()
    page.screenshot(path=screenshots / "report-form-error-360.png", full_page=True)
    ctx.close()
