"""The technician's "Start visit" on the phone (frontend/views/visit_start.py, app.js startVisitWhenOnline).

Online she opens her assigned visit and presses "Start visit": the page says the visit started, the board's state
is in progress and the form is still there to fill. Offline the button is hidden and a note says starting needs a
connection and that the sent form marks the visit started and done; back online the button is there again.
"""

import re

import pytest
from playwright.sync_api import expect

from scheduling.models import WorkOrder

from .conftest import PHONE
from .test_pwa import draw_signature, fill_checklist

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def wait_app(page):
    page.wait_for_function("() => document.documentElement.dataset.app === 'ready'", timeout=15000)


def test_start_visit_online_and_its_note_offline(page, live_server, world, sign_in, offline):
    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.get_by_role("link", name=re.compile("AHU-01")).first.click()
    wait_app(page)
    public_id = page.url.rstrip("/").split("/")[-1]
    button = page.get_by_role("button", name="Start visit")
    note = page.locator("[data-start-offline]")
    expect(button).to_be_visible()
    expect(note).to_be_hidden()

    offline(True)
    expect(button).to_be_hidden()
    expect(note).to_be_visible()
    expect(note).to_contain_text("starting the visit needs a connection")
    offline(False)
    expect(button).to_be_visible()
    expect(note).to_be_hidden()

    button.click()
    wait_app(page)
    expect(page.locator("[data-visit-started]")).to_contain_text("Visit started")
    expect(page.get_by_role("button", name="Start visit")).to_have_count(0)
    expect(page.locator("form[data-checklist]")).to_be_visible()
    wo = WorkOrder.objects.get(public_id=public_id)
    assert wo.state == WorkOrder.State.IN_PROGRESS and wo.started_at is not None


def test_a_form_finished_offline_ends_the_start_offer_and_online_the_done_note_links_the_record(
    page, live_server, world, sign_in, offline
):
    """Offline she fills and signs without starting: the form waits in the outbox and the page no longer offers
    "Start visit". Back online it is sent and completes the work order: still no "Start visit", and the done note
    links the signed record instead of asking for a connection the phone has."""
    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    page.get_by_role("link", name=re.compile("AHU-01")).first.click()
    wait_app(page)
    public_id = page.url.rstrip("/").split("/")[-1]
    start = page.locator("[data-start-visit]")
    expect(start).to_be_visible()

    offline(True)
    fill_checklist(page)
    draw_signature(page)
    page.get_by_role("button", name="Finish and sign").click()
    expect(page.locator("[data-outbox-count]")).to_have_text("1")
    expect(start).to_be_hidden()

    offline(False)
    page.evaluate("window.dispatchEvent(new Event('online'))")
    expect(page.locator("[data-outbox-count]")).to_have_text("0", timeout=20000)
    expect(page.locator("[data-server-done]")).to_be_visible(timeout=20000)
    expect(start).to_be_hidden()
    expect(page.get_by_role("button", name="Start visit")).to_be_hidden()
    expect(page.locator("[data-done-offline]")).to_be_hidden()
    expect(page.locator("[data-done-online]")).to_be_visible()
    expect(page.locator("[data-server-done]")).not_to_contain_text("with a connection", use_inner_text=True)
    assert WorkOrder.objects.get(public_id=public_id).state == WorkOrder.State.COMPLETED
