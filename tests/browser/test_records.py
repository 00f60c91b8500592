"""PDF records in a real browser: the property manager asks for a report on the site page and downloads it."""

import re

import pytest
from playwright.sync_api import expect

from reports.models import Report

from .conftest import PHONE
from .test_pwa import _serious, wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def test_manager_requests_a_compliance_pdf_and_downloads_it(browser, live_server, world, sign_in, screenshots):
    """Request from the site page, see it done in the list, and the link answers with a PDF."""
    ctx = browser.new_context(viewport=PHONE, accept_downloads=True)
    page = sign_in(ctx.new_page(), world.manager_a)
    page.goto(f"{live_server.url}/dashboard/site/{world.site_a.pk}/")
    wait_app(page)
    page.get_by_role("button", name="Request compliance report").click()
    expect(page).to_have_url(re.compile(r"/records/"))
    report = Report.objects.get(requested_by=world.manager_a)
    item = page.locator(f"[data-report='{report.public_id}']")
    expect(item).to_contain_text("Site compliance report")
    expect(item).to_contain_text("Done")
    wait_app(page)
    page.screenshot(path=screenshots / "manager-records-360.png", full_page=True)
    assert _serious(page) == []
    link = item.get_by_role("link", name=re.compile("Download PDF"))
    with page.expect_download() as info:
        link.click()
    download = info.value
    assert download.suggested_filename.endswith(".pdf")
    with open(download.path(), "rb") as fh:
        assert fh.read(5) == b"%PDF-"
    response = page.request.get(f"{live_server.url}{link.get_attribute('href')}")
    assert response.ok and response.headers["content-type"] == "application/pdf"
    ctx.close()


def test_dashboard_is_a_stack_of_cards_on_a_phone(browser, live_server, world, sign_in, screenshots):
    """At 360 px nothing scrolls sideways and no outbox bar covers a manager's page."""
    ctx = browser.new_context(viewport=PHONE)
    page = sign_in(ctx.new_page(), world.manager_a)
    wait_app(page)
    assert page.evaluate("document.documentElement.scrollWidth") <= PHONE["width"]
    for wrap in page.locator(".table-wrap.stack-narrow").all():
        assert wrap.evaluate("el => el.scrollWidth <= el.clientWidth + 1"), wrap.get_attribute("aria-label")
    expect(page.locator("#outbox-status")).to_be_hidden()
    expect(page.locator("tr[data-site] td[data-label='Overdue now']")).to_be_visible()
    page.screenshot(path=screenshots / "manager-dashboard-cards-360.png", full_page=True)
    ctx.close()


def test_a_double_tap_on_request_asks_for_one_report(browser, live_server, world, sign_in):
    """An impatient double tap on "Request compliance report" sends the form once: one report in the list."""
    ctx = browser.new_context(viewport=PHONE)
    page = sign_in(ctx.new_page(), world.manager_a)
    page.goto(f"{live_server.url}/dashboard/site/{world.site_a.pk}/")
    wait_app(page)
    page.get_by_role("button", name="Request compliance report").dblclick()
    expect(page).to_have_url(re.compile(r"/records/"))
    wait_app(page)
    assert Report.objects.filter(requested_by=world.manager_a).count() == 1
    expect(page.locator("[data-report]")).to_have_count(1)
    ctx.close()
