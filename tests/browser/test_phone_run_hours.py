"""Tryout: typed "1e5" for the unit's run-hours, the phone read 100000 h; typed a plausible value, the phone said
"plausible: … since the last reading" while the record said "no limit applies to this reading".

At 360 px, a month after the meter read 12075 h (invented demo value): typed 12615, the field says "Recorded —
plausible: 540 h since the last reading of 12075 h on …", the words the record page and the PDFs give the stored
reading (scheduling.services.meter_plausible_words). Typed "1e5", the field says it is not a plain number with the
field's range, in the server's words, and "Finish and sign" refuses it and queues nothing.
"""

import datetime as dt

import pytest
from django.utils import timezone
from playwright.sync_api import expect

from inspections.models import Inspection
from inspections.services import inspection_sync
from scheduling.models import MeterReading, WorkOrder
from scheduling.services import meter_plausible_words
from tests.factories.inspections import r, sync_form, tasks_add
from tests.frontend.scenario import make_work

from .conftest import PHONE
from .test_pwa import draw_signature, wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

EXPONENT = (
    "Run-hour meter: “1e5” is not a plain number; type digits with an optional decimal point or comma, "
    "allowed 0 to 1000000 h"
)  # the sync's refusal, tests/inspections/test_exponent_refusal.py


def _meter_read_a_month_ago(world) -> None:
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


def test_run_hours_say_what_the_record_says_and_an_exponent_is_refused_with_the_range(
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
    field = block.locator("input[data-number]")
    verdict = block.locator("[data-verdict]")
    field.scroll_into_view_if_needed()
    field.click()
    page.keyboard.type("12615")
    last = MeterReading.objects.get(ahu=world.unit_a)
    said = meter_plausible_words(
        hours=12615,
        last_hours=last.hours,
        last_at=last.taken_at,
        at=timezone.now(),
        zone=world.unit_a.building.site.time_zone,
    )
    assert said.startswith("plausible: 540 h since the last reading of 12075 h on ")
    expect(verdict).to_have_text(f"Recorded — {said}")

    field.fill("1e5")
    expect(verdict).to_contain_text(EXPONENT.removeprefix("Run-hour meter: "))
    expect(field).to_have_attribute("aria-invalid", "true")
    page.screenshot(path=screenshots / "run-hours-exponent-360.png")

    draw_signature(page)
    page.get_by_role("button", name="Finish and sign").click()
    expect(page.locator("[data-finish-problems] [data-refusals]")).to_contain_text(EXPONENT)
    page.wait_for_timeout(500)
    expect(page.locator("[data-outbox-count]")).to_have_text("0")
    assert Inspection.objects.count() == stored
