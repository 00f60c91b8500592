"""Tryout (HIGH): the run-hour item showed the last reading as "last: 12,075 h" while the field reads a comma as a
decimal comma, so "12,075" typed as shown became 12.075 h with only a "meter replaced or misread?" watch.

At 360 px: the last reading reads "last: 12075 h" (never grouped, engineering.formatting.format_number); typed
"12,075", the field says at once that it could be 12075 or 12.075 and which to type (numbers.js commaWords, the
server's accounts.inputs.comma_words), and "Finish and sign" queues nothing. Typed 12100, it is a number again.
"""

import datetime as dt

import pytest
from django.utils import timezone
from playwright.sync_api import expect

from inspections.models import Inspection
from inspections.services import inspection_sync
from scheduling.models import WorkOrder
from tests.factories.inspections import r, sync_form, tasks_add
from tests.frontend.scenario import make_work

from .conftest import PHONE
from .test_pwa import draw_signature, wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

BOTH = "“12,075” could be 12075 or 12.075: type 12075 or 12.075"


def _meter_read_a_month_ago(world) -> None:
    """The unit's last visit, 30 days ago: its run-hour meter read 12075 h (invented demo value)."""
    before = timezone.now() - dt.timedelta(days=30)
    wo = make_work(
        ahu=world.unit_a, assignee=world.technician, title="Autumn service", due=before.date(),
        state=WorkOrder.State.IN_PROGRESS,
    )  # fmt: skip
    tasks_add(wo, ["controls_check"], key="before")
    [result] = inspection_sync(
        user=world.technician, forms=[sync_form(wo, [r("visit.run_hours", 12075)], finished_at=before)]
    )
    assert result["status"] in ("stored", "flagged"), result


def test_a_run_hour_value_typed_with_a_thousands_comma_is_said_at_once_and_never_queued(
    page, live_server, world, sign_in, screenshots
):
    _meter_read_a_month_ago(world)
    stored = Inspection.objects.count()
    tasks_add(world.work_a, ["controls_check"], key="now")
    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    page.goto(f"{live_server.url}/w/{world.work_a.public_id}/")
    wait_app(page)
    page.wait_for_function("'draftReady' in document.querySelector('form[data-checklist]').dataset")

    block = page.locator("[data-item='visit.run_hours']")
    expect(block.locator("[data-last]")).to_contain_text("last: 12075 h on")
    assert "12,075" not in page.locator("main").inner_text()

    field = block.locator("input[data-number]")
    field.scroll_into_view_if_needed()
    field.click()
    page.keyboard.type("12,075")
    verdict = block.locator("[data-verdict]")
    expect(verdict).to_contain_text(BOTH)
    expect(field).to_have_attribute("aria-invalid", "true")
    expect(verdict).not_to_contain_text("meter replaced or misread")
    page.screenshot(path=screenshots / "thousands-comma-360.png")

    draw_signature(page)
    page.get_by_role("button", name="Finish and sign").click()
    expect(page.locator("[data-finish-problems] [data-refusals]")).to_contain_text(f"Run-hour meter: {BOTH}")
    page.wait_for_timeout(500)
    expect(page.locator("[data-outbox-count]")).to_have_text("0")
    assert (
        page.evaluate(
            """async () => (await (await import(document.querySelector("script[type=module]").src
            .replace("app.js", "outbox.js"))).outboxAll()).length"""
        )
        == 0
    )
    assert Inspection.objects.count() == stored

    # Typed as it was shown, without the comma, it is a number again: no refusal beside the field.
    field.fill("12100")
    expect(field).not_to_have_attribute("aria-invalid", "true")
    expect(verdict).not_to_contain_text("could be")
