"""The property manager's findings in Chromium at 360 px and 1280 px, on a fixed clock (2 Dec 2026; see
tests/frontend/findings_world.py).

Manu Keeper looks after Harbour House. From her menu she opens Findings, narrows them to her site, opens the loaded
final filters of AHU-01 and sees their photo (the image really loads), the two visits that saw them and the corrective
work planned for 9 Dec 2026; she has nothing to change on the page. Linden Court's finding, which is not hers, is a
404. The page never scrolls sideways at 360 px.
"""

import pytest
from playwright.sync_api import expect

from tests.frontend.findings_world import NOW, build

from .conftest import DESKTOP, PHONE
from .test_pwa import _serious

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


@pytest.fixture
def findings(transactional_db, time_machine):
    world = build(time_machine)
    # tick=True: the live server and the browser talk in real time, starting at the fixed moment.
    time_machine.move_to(NOW, tick=True)
    return world


def no_sideways_scroll(page, size):
    width = page.evaluate("document.scrollingElement.scrollWidth")
    assert width <= size["width"], f"the page scrolls sideways at {size['width']} px: {width} px wide"


@pytest.mark.parametrize("size,name", [(PHONE, "360"), (DESKTOP, "1280")])
def test_the_property_manager_opens_a_finding_with_its_photo(
    browser, live_server, findings, sign_in, screenshots, size, name
):
    w = findings
    context = browser.new_context(viewport=size)
    blocked: list[str] = []
    first = context.new_page()
    first.on("console", lambda m: blocked.append(m.text) if "Content Security Policy" in m.text else None)
    page = sign_in(first, w.s.manager_a)
    try:
        page.get_by_role("navigation", name="Main").get_by_role("link", name="Findings").click()
        expect(page.get_by_role("heading", name="Findings on your sites")).to_be_visible()
        page.get_by_label("Site").select_option(label="Harbour House")
        page.get_by_role("button", name="Show").click()
        row = page.locator(f'tr[data-finding="{w.finding_a.pk}"]')
        expect(row).to_contain_text("Final filters: Filter loaded")
        expect(row.locator("[data-value]")).to_contain_text("430 Pa")
        expect(row.locator("[data-limit]")).to_contain_text("final 250 Pa")
        expect(row.locator("[data-progress]")).to_contain_text("Planned for 9 Dec 2026")
        expect(page.locator(f'tr[data-finding="{w.finding_b.pk}"]')).to_have_count(0)
        no_sideways_scroll(page, size)
        page.screenshot(path=screenshots / f"manager-findings-{name}.png", full_page=True)
        assert _serious(page) == []  # axe-core: no serious or critical problem

        row.get_by_role("link", name="AHU-01 (North block)").click()
        expect(page.get_by_role("heading", level=1)).to_contain_text("Filter loaded")
        photo = page.locator("[data-photos] img").first
        photo.scroll_into_view_if_needed()
        page.wait_for_function("img => img.complete && img.naturalWidth > 0", arg=photo.element_handle(), timeout=10000)
        expect(page.locator("[data-observation]")).to_have_count(2)
        expect(page.locator("[data-corrective] [data-progress]")).to_contain_text("Planned for 9 Dec 2026")
        main = page.locator("main")
        for verb in ("Approve", "Reject", "Assign", "Edit", "Close"):
            expect(main.get_by_role("button", name=verb)).to_have_count(0)
        no_sideways_scroll(page, size)
        page.screenshot(path=screenshots / f"manager-finding-{name}.png", full_page=True)
        assert _serious(page) == []

        page.get_by_role("link", name="Unit AHU-01 (North block)").click()
        expect(page.get_by_role("heading", level=1)).to_contain_text("AHU-01")
        expect(page.locator("[data-unit-findings]")).to_contain_text("planned for 9 Dec 2026")
        expect(page.get_by_role("button", name="Request unit history")).to_be_visible()
        no_sideways_scroll(page, size)
        page.screenshot(path=screenshots / f"manager-unit-{name}.png", full_page=True)
        assert _serious(page) == []

        assert blocked == [], blocked  # the strict policy let everything on these pages load
        other = page.goto(f"{live_server.url}/site-findings/{w.finding_b.pk}/")
        assert other.status == 404
        photo_b = page.goto(f"{live_server.url}/api/inspections/photos/{w.photo_b.client_uuid}/thumbnail/")
        assert photo_b.status == 404
    finally:
        context.close()
