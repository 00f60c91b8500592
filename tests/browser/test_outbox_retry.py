"""Signal back before the network is: the phone's first send fails, and it tries again by itself.

A technician walks out of the plant room with a finished form in the outbox. The phone hears "online" at once,
but the server is not reachable yet (captive portal, a flaky first second, the server restarting): the first
send fails. Nobody taps "Sync now": a few seconds later, with the server back, the phone sends the form by
itself, the server stores it once, and the outbox bar clears its trouble.
"""

import datetime as dt
import json

import pytest
from django.utils import timezone
from playwright.sync_api import expect

from inspections.models import Inspection
from tests.factories.inspections import r, sync_form

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def wait_app(page):
    page.wait_for_function("document.documentElement.dataset.app === 'ready'", timeout=15000)


def test_a_failed_send_is_tried_again_without_a_tap(page, live_server, world, sign_in, offline):
    tech = world.technician
    form = sync_form(world.work_a, [r("visit.run_hours", 1200)], finished_at=timezone.now() - dt.timedelta(minutes=5))
    sign_in(page, tech)
    page.goto(f"{live_server.url}/w/{world.work_a.public_id}/")
    wait_app(page)
    offline(True)
    page.evaluate(
        """async (form) => {
          const { outboxPut } = await import(document.querySelector("script[type=module]").src
            .replace("app.js", "outbox.js"));
          await outboxPut({ client_uuid: form.client_uuid, state: "waiting", form });
          document.dispatchEvent(new CustomEvent("plenum:outbox"));
        }""",
        json.loads(json.dumps(form)),
    )
    expect(page.locator("[data-outbox-count]")).to_have_text("1")

    offline(False, server=False)  # signal back, the server not reachable yet: the send on "online" fails
    expect(page.locator("[data-outbox-error]")).to_contain_text("tries again by itself", timeout=10000)
    expect(page.locator("[data-outbox-count]")).to_have_text("1")
    assert not Inspection.objects.filter(client_uuid=form["client_uuid"]).exists()

    offline.server_back()  # no event, no tap: the phone's own retry sends the form
    expect(page.locator("[data-outbox-count]")).to_have_text("0", timeout=20000)
    expect(page.locator("[data-outbox-error]")).to_have_text("")
    assert Inspection.objects.filter(client_uuid=form["client_uuid"]).count() == 1
