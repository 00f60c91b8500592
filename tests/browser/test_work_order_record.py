"""A done work order on a phone: its signed record to read, never a second "Finish and sign"."""

import re

import pytest
from playwright.sync_api import expect

from inspections.models import Inspection
from inspections.selectors import checklist_for
from inspections.services import inspection_sync
from scheduling.models import WorkOrder
from tests.factories.inspections import data_url, image_bytes, sync_form
from tests.flows.test_work_order_record import DESIGN_FLOW, filled_readings

from .conftest import PHONE
from .test_pwa import _serious, draw_signature, fill_checklist, wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def complete_from_another_phone(world) -> Inspection:
    """The technician's quarterly service synced as the phone does it, with a photo of the filter bank."""
    wo = world.work_a
    final = world.unit_a.components.get(name="Final filters")
    readings = filled_readings(
        checklist_for(work_order=wo, user=world.technician), {**DESIGN_FLOW, "filter_check.dp": 150}
    )
    photo = {"client_uuid": "5d0c5f5e-0000-4000-8000-0000000000a1", "item": "filter_check.photo",
             "component": final.label_code, "data": data_url(image_bytes("JPEG", (320, 240)))}  # fmt: skip
    result = inspection_sync(user=world.technician, forms=[sync_form(wo, readings, photos=[photo])])[0]
    assert result["status"] == "stored", result
    wo.refresh_from_db()
    assert wo.state == WorkOrder.State.COMPLETED
    return Inspection.objects.get(work_order=wo)


def test_completed_work_order_shows_its_record_and_no_finish_on_a_phone(
    browser, live_server, world, sign_in, screenshots
):
    """At 360 px the technician reads the signed record (reading in their units with its verdict, photo
    thumbnail, signature) and is not offered the form; nothing scrolls sideways."""
    complete_from_another_phone(world)
    ctx = browser.new_context(viewport=PHONE)
    page = sign_in(ctx.new_page(), world.technician)
    page.goto(f"{live_server.url}/w/{world.work_a.public_id}/")
    wait_app(page)
    record = page.locator("[data-record]").first
    expect(record).to_contain_text("Signed record")
    expect(record.locator("[data-status]")).to_have_text("completed")
    expect(record.locator("[data-reading]").filter(has_text="Pressure drop across the bank")).to_contain_text("150 Pa")
    expect(record.locator("[data-signature]")).to_contain_text("Ana Field")
    thumb = record.locator("[data-photos] img").first
    thumb.scroll_into_view_if_needed()
    page.wait_for_function("img => img.complete && img.naturalWidth > 0", arg=thumb.element_handle(), timeout=10000)
    expect(page.get_by_role("button", name="Finish and sign")).to_have_count(0)
    expect(page.locator("form[data-checklist]")).to_have_count(0)
    assert page.evaluate("document.documentElement.scrollWidth") <= PHONE["width"]
    page.screenshot(path=screenshots / "technician-record-360.png", full_page=True)
    assert _serious(page) == []
    ctx.close()


def test_phone_copy_stops_offering_finish_once_the_server_has_the_work_done(
    browser, live_server, world, sign_in, screenshots
):
    """The page was opened while the work was open; meanwhile another form completed it. The form
    finished offline here is still sent and kept (flagged, not lost); once the server says the work
    order is completed the phone hides "Finish and sign"."""
    ctx = browser.new_context(viewport=PHONE)
    page = sign_in(ctx.new_page(), world.technician)
    page.goto(f"{live_server.url}/w/{world.work_a.public_id}/")
    wait_app(page)
    expect(page.get_by_role("button", name="Finish and sign")).to_be_visible()
    complete_from_another_phone(world)

    ctx.set_offline(True)
    fill_checklist(page)
    draw_signature(page)
    page.get_by_role("button", name="Finish and sign").click()
    expect(page.locator("[data-outbox-count]")).to_have_text("1")
    ctx.set_offline(False)
    page.evaluate("window.dispatchEvent(new Event('online'))")
    expect(page.locator("[data-outbox-count]")).to_have_text("0", timeout=20000)
    expect(page.locator("[data-server-result]")).to_contain_text(re.compile("flagged"), timeout=20000)
    expect(page.get_by_role("button", name="Finish and sign")).to_be_hidden()
    expect(page.locator("[data-server-done]")).to_be_visible()
    page.screenshot(path=screenshots / "technician-checklist-done-elsewhere-360.png", full_page=True)
    assert Inspection.objects.filter(work_order=world.work_a).count() == 2
    ctx.close()
