"""The supervisor's board in Chromium at 360 px and 1280 px, on a fixed clock (Wednesday 5 March 2025; see
tests/flows/board_world.py).

She sees today's six planned visits in this week's Assigned column and both AHU-01s with their buildings; assigning
the Friday fan visit to Tess for today warns her before anything is saved (Tess's 8.4 h of tasks plus travel against
7.5 h) and offers Omar, the least-loaded technician with the skill; on a phone she confirms anyway, at a desk she takes
the suggestion. She finds the completed work in "To verify" and opens the flagged form from its card. The page never
scrolls sideways at 360 px.

Travel time: great-circle km x 1.3 road detour at 40 km/h (common practice for urban service rounds).
"""

import pytest
import time_machine
from playwright.sync_api import expect

from scheduling.models import WorkOrder
from tests.flows import board_world

from .conftest import DESKTOP, PHONE

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

TESS_AFTER_H = 6.0 + 100 / 60 + 22.24 * 1.3 / 40  # 8.39 h (board_world's sites are 22.24 km apart)
OMAR_AFTER_H = 3.0 + 100 / 60 + 22.24 * 1.3 / 40  # 5.39 h


@pytest.fixture
def board(transactional_db):
    # tick=True: the live server and the browser talk in real time, starting at the fixed moment.
    with time_machine.travel(board_world.NOW, tick=True):
        yield board_world.build()


def sign_in(page, url, user):
    page.goto(f"{url}/login/")
    page.get_by_label("Username").fill(user.username)
    page.get_by_label("Password").fill(board_world.PASSWORD)
    page.get_by_role("button", name="Sign in").click()
    page.wait_for_load_state("load")


def no_sideways_scroll(page, size):
    width = page.evaluate("document.scrollingElement.scrollWidth")
    assert width <= size["width"], f"the page scrolls sideways at {size['width']} px: {width} px wide"


@pytest.mark.parametrize("size,name", [(PHONE, "360"), (DESKTOP, "1280")])
def test_the_supervisors_week_on_the_board(browser, live_server, board, screenshots, size, name):
    context = browser.new_context(viewport=size)
    page = context.new_page()
    try:
        sign_in(page, live_server.url, board.supervisor)
        page.goto(f"{live_server.url}/board/")
        expect(page.get_by_role("heading", name="Assigned (6)")).to_be_visible()
        assigned = page.get_by_role("region", name="Assigned")
        for wo in board.planned_today:
            expect(assigned.locator(f'tr[data-work-order="{wo.public_id}"]')).to_be_visible()
        expect(assigned.get_by_role("rowheader", name="AHU-01 (Mill Block)").first).to_be_visible()
        expect(assigned.get_by_role("rowheader", name="AHU-01 (Granary)").first).to_be_visible()
        no_sideways_scroll(page, size)

        # Give Friday's fan visit to Tess for today instead: a warning, nothing saved.
        row = page.locator(f'tr[data-work-order="{board.fan_visit.public_id}"]')
        # On its due Friday nobody has work yet: Tess (more capacity) is offered and chosen in the list.
        expect(row.locator("[data-suggested]")).to_contain_text("Suggested: Tess Field, least loaded with the skills")
        expect(row.locator("select[name=assignee] option:checked")).to_have_text("Tess Field")
        page.screenshot(path=screenshots / f"board-week-{name}.png", full_page=True)
        row.locator("select[name=assignee]").select_option(label="Tess Field")
        row.locator("input[name=scheduled_for]").fill("2025-03-05")
        row.get_by_role("button", name="Assign").click()
        warning = page.locator("[data-over-capacity]")
        expect(warning).to_contain_text("Tess Field on Wed 5 Mar would have")
        expect(warning).to_contain_text(f"{TESS_AFTER_H:.1f} h")
        expect(warning).to_contain_text("travel")
        expect(warning).to_contain_text("capacity of 7.5 h a day")
        expect(warning).to_contain_text(f"Least loaded with the skills: Omar Vent, {OMAR_AFTER_H:.1f} h of 7.0 h")
        no_sideways_scroll(page, size)
        page.screenshot(path=screenshots / f"board-over-capacity-{name}.png", full_page=True)
        board.fan_visit.refresh_from_db()
        assert board.fan_visit.assignee_id is None and board.fan_visit.version == 1, "saved before confirming"

        if size is PHONE:
            page.get_by_role("button", name="Assign to Tess Field anyway").click()
            who = board.tess
        else:
            page.get_by_role("button", name="Assign to Omar Vent instead").click()
            who = board.omar
        expect(page.locator(".messages")).to_contain_text(f"assigned to {who}")
        board.fan_visit.refresh_from_db()
        assert board.fan_visit.assignee_id == who.pk and board.fan_visit.state == WorkOrder.State.ASSIGNED
        expect(page.get_by_role("heading", name="Assigned (7)")).to_be_visible()

        # Completed work waits in "To verify"; the flagged card opens its work order's page.
        expect(page.get_by_role("heading", name="To verify (2)")).to_be_visible()
        to_verify = page.locator("[data-to-verify]")
        expect(to_verify.locator(f'tr[data-work-order="{board.completed.public_id}"]')).to_contain_text(
            "AHU-01 (Granary)"
        )
        card = page.locator(f'[data-flagged="{board.flagged.public_id}"]')
        expect(card).to_contain_text("AHU-01 (Mill Block) — Damper stroke test")
        no_sideways_scroll(page, size)
        page.screenshot(path=screenshots / f"board-journey-{name}.png", full_page=True)
        card.get_by_role("link", name="Open the form").click()
        page.wait_for_url(f"**/w/{board.flagged.public_id}/")
        expect(page.get_by_role("heading", level=1)).to_contain_text("AHU-01")
        no_sideways_scroll(page, size)
        page.screenshot(path=screenshots / f"board-flagged-form-{name}.png", full_page=True)
    finally:
        context.close()
