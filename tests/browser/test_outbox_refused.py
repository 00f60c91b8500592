"""The phone's outbox, form by form: a refused form in the middle holds back nothing and shows its errors.

Three finished forms wait in the outbox (IndexedDB) of a real browser; the middle
one carries a note with a NUL character. On reconnecting, the phone sends the
batch: the first and the last are stored and leave the outbox; the middle one is
refused by the server, stays in the outbox marked refused, and its checklist page
says why in words (the item's name, not the server's field keys).
"""

import datetime as dt
import json
import re

import pytest
from django.utils import timezone
from playwright.sync_api import expect

from inspections.models import Inspection
from tests.factories.inspections import r, sync_form
from tests.frontend.scenario import make_work

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def wait_app(page):
    page.wait_for_function("document.documentElement.dataset.app === 'ready'", timeout=15000)


def test_three_forms_the_middle_one_refused(page, context, live_server, world, sign_in, screenshots):
    tech = world.technician
    works = [world.work_a, make_work(ahu=world.unit_a, assignee=tech), make_work(ahu=world.unit_a, assignee=tech)]
    finished = timezone.now() - dt.timedelta(minutes=10)
    forms = [sync_form(wo, [r("visit.run_hours", 1200)], finished_at=finished) for wo in works]
    forms[1]["readings"][0]["note"] = "gauge\x00cracked"
    sign_in(page, tech)
    page.goto(f"{live_server.url}/w/{works[1].public_id}/")
    wait_app(page)
    context.set_offline(True)
    page.evaluate(
        """async (forms) => {
          const { outboxPut } = await import(document.querySelector("script[type=module]").src
            .replace("app.js", "outbox.js"));
          for (const form of forms) await outboxPut({ client_uuid: form.client_uuid, state: "waiting", form });
        }""",
        json.loads(json.dumps(forms)),
    )
    page.reload()
    wait_app(page)
    expect(page.locator("[data-outbox-count]")).to_have_text("3")

    context.set_offline(False)
    page.evaluate("window.dispatchEvent(new Event('online'))")
    expect(page.locator("[data-outbox-count]")).to_have_text("1", timeout=20000)
    pending = page.locator("[data-pending=refused]")
    expect(pending).to_contain_text("The server refused this form", timeout=20000)
    expect(pending).to_contain_text("control characters")
    expect(pending).not_to_contain_text("readings[0]")
    expect(page.locator("[data-outbox-error]")).to_contain_text("1 form needs fixing")
    page.screenshot(path=screenshots / "technician-outbox-refused-360.png", full_page=True)

    stored = set(Inspection.objects.values_list("client_uuid", flat=True))
    assert {str(u) for u in stored} == {forms[0]["client_uuid"], forms[2]["client_uuid"]}
    kept = page.evaluate(
        """async () => {
          const { outboxAll } = await import(document.querySelector("script[type=module]").src
            .replace("app.js", "outbox.js"));
          return (await outboxAll()).map((i) => [i.client_uuid, i.state]);
        }"""
    )
    assert kept == [[forms[1]["client_uuid"], "refused"]]
    assert re.search(r"\d", page.locator("[data-outbox-last]").inner_text())
