"""The board's Day is a text field read by the server (accounts.inputs.parse_day), whatever the browser's locale.

In an en-US Chromium a native date field read "06.03.2025" as 3 June or not at all and saved another day without a
word. On the board of tests/flows/board_world.py (Wednesday 5 March 2025) a supervisor types 06.03.2025 into the
fan visit's Day and sees Thursday 6 March saved; she types 06/03/2025 and sees the refusal beside the field naming
the field and the value as typed, still in the field, and nothing saved. At 360 px and 1280 px.
"""

import datetime as dt

import pytest
import time_machine
from playwright.sync_api import expect

from tests.flows import board_world

from .conftest import DESKTOP, PHONE
from .test_board_journey import no_sideways_scroll, sign_in

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


@pytest.fixture
def board(transactional_db):
    with time_machine.travel(board_world.NOW, tick=True):
        yield board_world.build()


@pytest.mark.parametrize("size", [PHONE, DESKTOP], ids=["360", "1280"])
def test_a_typed_day_is_saved_as_typed_or_refused_beside_the_field(browser, live_server, board, size):
    context = browser.new_context(viewport=size, locale="en-US")
    page = context.new_page()
    visit = board.fan_visit
    try:
        sign_in(page, live_server.url, board.supervisor)
        page.goto(f"{live_server.url}/board/")
        row = page.locator(f'tr[data-work-order="{visit.public_id}"]')
        day = row.locator("input[name=scheduled_for]")
        expect(day).to_have_value("2025-03-07")  # its due Friday, in ISO
        expect(day).to_have_attribute("placeholder", "YYYY-MM-DD or DD.MM.YYYY")

        # Slashes: day or month first? Refused beside the field, the text kept, nothing saved.
        row.locator("select[name=assignee]").select_option(label="Omar Vent")
        day.fill("06/03/2025")
        row.get_by_role("button", name="Assign").click()
        row = page.locator(f'tr[data-work-order="{visit.public_id}"]')
        refusal = row.locator("[data-day-refusal]")
        expect(refusal).to_contain_text("Day: '06/03/2025' is not a date")
        expect(refusal).to_contain_text("YYYY-MM-DD or DD.MM.YYYY")
        expect(row.locator("input[name=scheduled_for]")).to_have_value("06/03/2025")
        expect(row.locator("input[name=scheduled_for]")).to_have_attribute("aria-invalid", "true")
        # The technician chosen is kept too, and the refusal is said once: the top only points to the row.
        expect(row.locator("select[name=assignee]")).to_have_value(str(board.omar.pk))
        expect(page.locator(".messages")).to_contain_text("not saved; the day is refused beside it")
        expect(page.locator(".messages")).not_to_contain_text("is not a date")
        no_sideways_scroll(page, size)
        visit.refresh_from_db()
        assert visit.assignee_id is None and visit.scheduled_for is None and visit.version == 1, "saved"

        # Day first with dots: Thursday 6 March, saved as typed (not 3 June, not the due Friday).
        row.locator("select[name=assignee]").select_option(label="Omar Vent")
        row.locator("input[name=scheduled_for]").fill("06.03.2025")
        row.get_by_role("button", name="Assign").click()
        expect(page.locator(".messages")).to_contain_text("assigned to Omar Vent")
        visit.refresh_from_db()
        assert visit.assignee_id == board.omar.pk and visit.scheduled_for == dt.date(2025, 3, 6)
    finally:
        context.close()
