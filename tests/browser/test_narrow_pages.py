"""The supervisor's findings and board on a 360 px phone and a 1280 px desktop, and the technician's phone
writing its own times on the site's clock.

At 360 px nothing runs off the side: the page does not scroll sideways (document.scrollingElement.scrollWidth
<= 360), no table hides columns in a sideways-scrolling box, and the board's caption is on screen whole; the
tables stack one card per row, each value labelled. At 1280 px they are ordinary tables with their headers.
"""

import datetime as dt
import json
import re

import pytest
from django.urls import reverse
from django.utils import timezone
from playwright.sync_api import expect

from inspections.services import inspection_sync
from tests.browser.conftest import DESKTOP, PHONE
from tests.factories.inspections import r, sync_form

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

# Every table box's own overflow and the widest right edge of any caption, in CSS pixels.
MEASURE = """() => ({
  page: document.scrollingElement.scrollWidth,
  boxes: [...document.querySelectorAll('.table-wrap')].map((b) => b.scrollWidth - b.clientWidth),
  captions: [...document.querySelectorAll('caption')].map((c) => c.getBoundingClientRect().right),
  headers: [...document.querySelectorAll('thead')].map((h) => h.getBoundingClientRect().height),
})"""


def wait_app(page):
    page.wait_for_function("document.documentElement.dataset.app === 'ready'", timeout=15000)


@pytest.fixture
def with_finding(world):
    """work_a's final filters read 400 Pa (common practice: far past a final pressure drop of about 250 Pa):
    an open finding with a reason long enough to need wrapping."""
    final = world.unit_a.components.get(name="Final filters")
    form = sync_form(
        world.work_a, [r("filter_check.dp", 400.0, final)], finished_at=timezone.now() - dt.timedelta(hours=1)
    )
    [result] = inspection_sync(user=world.technician, forms=[form])
    assert result["status"] in {"stored", "flagged"}, result
    return world


def test_findings_and_board_are_readable_at_360_and_1280_px(page, live_server, with_finding, sign_in, screenshots):
    sign_in(page, with_finding.supervisor)
    for size, name in ((PHONE, "360"), (DESKTOP, "1280")):
        page.set_viewport_size(size)
        for url, what in ((reverse("frontend:findings"), "findings"), (reverse("frontend:board"), "board")):
            page.goto(f"{live_server.url}{url}")
            wait_app(page)
            page.screenshot(path=screenshots / f"supervisor-{what}-{name}.png", full_page=True)
            m = page.evaluate(MEASURE)
            assert m["page"] <= size["width"], (what, name, m)
            assert all(extra <= 0 for extra in m["boxes"]), (what, name, m)
            assert all(right <= size["width"] for right in m["captions"]), (what, name, m)
            if size is PHONE:
                assert all(h <= 1 for h in m["headers"]), (what, "column headers shown on a phone", m)
            else:
                assert all(h > 10 for h in m["headers"]), (what, "no column headers on a desktop", m)
    page.set_viewport_size(PHONE)
    page.goto(f"{live_server.url}{reverse('frontend:findings')}")
    first_seen = page.locator("[data-findings] td[data-label='First seen']").first
    expect(first_seen).to_have_text(re.compile(r"^\d{1,2} [A-Z][a-z]{2} \d{4} \d{2}:\d{2} CES?T$"))
    page.goto(f"{live_server.url}{reverse('frontend:board')}")
    expect(page.locator("[data-load] td").first).to_be_visible()
    assert page.locator("[data-load] caption").evaluate("(c) => c.scrollWidth <= c.clientWidth")


def test_the_phone_writes_its_times_on_the_sites_clock_not_its_own(browser, live_server, world, sign_in, screenshots):
    """A phone set to New York at an Amsterdam site: a form waiting in the outbox reads 'Finished 14 Jan 2026
    06:30 CET' (05:30 UTC; CET is UTC+1 in January, IANA tz database), and the last sync is on CET/CEST too."""
    context = browser.new_context(viewport=PHONE, timezone_id="America/New_York")
    page = context.new_page()
    try:
        sign_in(page, world.technician)
        page.goto(f"{live_server.url}/w/{world.work_a.public_id}/")
        wait_app(page)
        form = sync_form(
            world.work_a, [r("visit.run_hours", 1200)], finished_at=dt.datetime(2026, 1, 14, 5, 30, tzinfo=dt.UTC)
        )
        context.set_offline(True)
        page.evaluate(
            """async (form) => {
              const { outboxPut } = await import(document.querySelector("script[type=module]").src
                .replace("app.js", "outbox.js"));
              await outboxPut({ client_uuid: form.client_uuid, state: "waiting", form });
            }""",
            json.loads(json.dumps(form)),
        )
        page.reload()
        wait_app(page)
        expect(page.locator("[data-pending=waiting]")).to_contain_text(
            "Finished 14 Jan 2026 06:30 CET; waiting in the outbox to be sent."
        )
        page.screenshot(path=screenshots / "technician-outbox-site-clock-360.png", full_page=True)
        context.set_offline(False)
        page.evaluate("window.dispatchEvent(new Event('online'))")
        expect(page.locator("[data-outbox-count]")).to_have_text("0", timeout=20000)
        expect(page.locator("[data-outbox-last]")).to_have_text(
            re.compile(r"^\d{1,2} [A-Z][a-z]{2} \d{4} \d{2}:\d{2} CES?T$"), timeout=20000
        )
    finally:
        context.close()
