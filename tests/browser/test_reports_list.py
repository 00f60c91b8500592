"""The reports page in a real browser, on a phone and at a desk: each report says what it covers and its pages
and size, nothing scrolls sideways, and axe-core finds no serious problem."""

import pytest
from playwright.sync_api import expect

from reports.services import report_request

from .conftest import DESKTOP, PHONE
from .test_pwa import _serious, wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


@pytest.mark.parametrize("viewport", [PHONE, DESKTOP], ids=["360", "1280"])
def test_reports_list_says_what_each_covers(browser, live_server, world, sign_in, screenshots, viewport):
    """A unit history, a two-site compliance report and a label sheet, listed with what they cover."""
    period = {"start": "2025-12-01", "end": "2026-11-30"}
    for kind, parameters in (
        ("unit_history", {"unit": world.unit_a.pk, **period}),
        ("compliance", {"sites": [world.site_a.pk, world.site_b.pk], **period}),
        ("labels", {"units": [world.unit_a.pk]}),
    ):
        report_request(user=world.supervisor, kind=kind, parameters=parameters)  # rendered in-process on commit
    ctx = browser.new_context(viewport=viewport)
    page = sign_in(ctx.new_page(), world.supervisor)
    page.goto(f"{live_server.url}/records/")
    wait_app(page)
    items = page.locator("[data-report]")
    expect(items).to_have_count(3)
    expect(page.locator("[data-covers]").nth(1)).to_contain_text("Harbour House and Linden Court")
    expect(page.locator("[data-covers]").first).to_contain_text("Labels of 1 unit · Harbour House")
    expect(page.locator("[data-file]").first).to_contain_text(" kB")
    assert page.evaluate("document.documentElement.scrollWidth") <= viewport["width"]
    page.screenshot(path=screenshots / f"supervisor-reports-list-{viewport['width']}.png", full_page=True)
    assert _serious(page) == []
    ctx.close()
