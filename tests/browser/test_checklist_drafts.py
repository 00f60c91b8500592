"""Nothing a technician types is lost on the phone.

Readings typed offline stay when the technician leaves for Today and comes back
(a draft per person and work order in IndexedDB, restored when the page opens).
A form the server refused (here: a run-hour value the meter cannot have reached
since its last reading) comes back into the fields, with the server's words
beside the run-hour field, and the phone's own meter check says "fail" too.
"""

import datetime as dt
import json
import re

import pytest
from django.utils import timezone
from playwright.sync_api import expect

from inspections.models import Inspection
from scheduling.models import MeterReading
from tests.factories.inspections import r, sync_form

from .conftest import PHONE

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def wait_app(page):
    page.wait_for_function("() => document.documentElement.dataset.app === 'ready'", timeout=15000)


def wait_draft(page):
    page.wait_for_function(
        "() => document.querySelector('form[data-checklist]').dataset.draftReady !== undefined", timeout=15000
    )


def test_readings_typed_offline_survive_going_to_today_and_back(page, live_server, world, sign_in, offline):
    """Typed offline, away to Today, back: the readings and the choice are in their fields again."""
    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.wait_for_function("() => Number(document.documentElement.dataset.offlineSaved) >= 3", timeout=20000)
    page.get_by_role("link", name=re.compile("AHU-01")).first.click()
    wait_app(page)
    wait_draft(page)
    checklist_url = page.url
    offline(True)

    numbers = page.locator("form[data-checklist] [data-kind=number] input[data-number]")
    assert numbers.count() >= 2
    first, second = numbers.nth(0), numbers.nth(1)
    first.fill("1234")
    second.fill("56.5")
    choice = page.locator("form[data-checklist] [data-kind=check] input[type=radio]").first
    choice.check()
    choice_name, choice_value = choice.get_attribute("name"), choice.get_attribute("value")

    page.locator("nav a[href$='/today/']").first.click()
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.goto(checklist_url)
    wait_app(page)
    wait_draft(page)
    expect(first).to_have_value("1234")
    expect(second).to_have_value("56.5")
    expect(page.locator(f"input[name='{choice_name}'][value='{choice_value}']")).to_be_checked()
    assert Inspection.objects.count() == 0


def test_a_refused_forms_readings_come_back_into_the_fields(page, context, live_server, world, sign_in):
    """41,250 h a month after 11,034 h: the server refuses the form; its readings come back into the fields
    with the refusal beside the run-hour field, and the phone's meter check says "fail" in the same words."""
    wo = world.work_a
    now = timezone.now()
    MeterReading.objects.create(ahu=wo.ahu, hours=11034, taken_at=now - dt.timedelta(days=30), source="manual")
    form = sync_form(
        wo,
        [r("visit.run_hours", 41250, note="read off the panel")],
        finished_at=now - dt.timedelta(minutes=5),
    )
    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    page.goto(f"{live_server.url}/w/{wo.public_id}/")
    wait_app(page)
    wait_draft(page)
    context.set_offline(True)
    page.evaluate(
        """async (form) => {
          const { outboxPut } = await import(document.querySelector("script[type=module]").src
            .replace("app.js", "outbox.js"));
          const owner = document.body.dataset.person;
          await outboxPut({ client_uuid: form.client_uuid, owner, state: "waiting", form });
        }""",
        json.loads(json.dumps(form)),
    )
    context.set_offline(False)
    page.reload()
    wait_app(page)
    page.evaluate("() => window.dispatchEvent(new Event('online'))")
    expect(page.locator("[data-pending=refused]")).to_contain_text("The server refused this form", timeout=20000)

    block = page.locator("form[data-checklist] [data-item='visit.run_hours']")
    expect(block.locator("input[data-number]")).to_have_value("41250", timeout=10000)
    expect(block.locator("input[name^='n:']")).to_have_value("read off the panel")
    expect(block.locator("[data-field-error]")).to_contain_text("more than the meter can have run")
    verdict = block.locator(".verdict.fail")
    expect(verdict).to_have_count(1)
    expect(block).to_contain_text("the server will refuse this form")
    assert Inspection.objects.count() == 0

    # Comes back the same after a reload (from the draft the put-back values were kept in).
    page.reload()
    wait_app(page)
    wait_draft(page)
    expect(block.locator("input[data-number]")).to_have_value("41250", timeout=10000)


def test_a_draft_stays_with_its_person_on_a_shared_phone(page, live_server, world, sign_in):
    """Tess types and signs out; the work order goes to Omar, who opens it on the same phone: the fields are
    empty (Tess's draft is kept under her name only). Back to Tess: her readings are there again."""
    wo = world.work_a
    page.set_viewport_size(PHONE)

    def open_as(person):
        """The work order assigned to ``person``, who signs in on this phone and opens its checklist."""
        if wo.assignee_id != person.pk:
            wo.assignee = person
            wo.save(update_fields=["assignee"])
        sign_in(page, person)
        page.goto(f"{live_server.url}/w/{wo.public_id}/")
        wait_app(page)
        wait_draft(page)

    def sign_out():
        # The sign-out first tries to send the outbox, then submits: wait for the sign-in page it lands on, or
        # the next sign-in's navigation races it.
        page.get_by_role("button", name="Sign out").click()
        expect(page).to_have_url(re.compile(r"/login/"), timeout=15000)
        page.wait_for_load_state("load")

    open_as(world.technician)
    field = page.locator("form[data-checklist] [data-kind=number] input[data-number]").nth(1)
    field_id = field.get_attribute("id")
    field.fill("42.5")
    field.blur()
    page.wait_for_timeout(600)  # past the typing pause (300 ms) the draft is saved after
    sign_out()

    open_as(world.other_technician)
    expect(page.locator(f"#{field_id}")).to_have_value("")
    sign_out()

    open_as(world.technician)
    expect(page.locator(f"#{field_id}")).to_have_value("42.5")
