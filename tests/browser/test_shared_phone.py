"""A shared phone: one browser, two technicians, one after the other.

Tess signs in, her day is saved for offline use, she fills and signs a form
offline and signs out while the server cannot take it: the phone warns her, she
signs out anyway, her saved pages go and her form stays in the outbox under her
name. Omar signs in on the same browser: none of Tess's pages come out of the
cache (offline either), his outbox is empty, and his sync sends nothing of hers.
Tess signs in again and her form is sent under her own session. The installed
app opened offline at its start address shows the person's saved day, or, with
nobody signed in, the page that says to sign in.
"""

import re

import pytest
from playwright.sync_api import expect
from rest_framework.response import Response

from inspections.api import SyncView
from inspections.models import Inspection
from tests.frontend.scenario import make_work

from .conftest import PHONE
from .test_pwa import draw_signature, fill_checklist

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

OUTBOX = """async () => {
  const { outboxAll } = await import(document.querySelector("script[type=module]").src.replace("app.js", "outbox.js"));
  return (await outboxAll()).map((i) => [i.client_uuid, i.owner || null, i.form.work_order]);
}"""
DATA_CACHES = """async () => {
  const out = {};
  for (const name of (await caches.keys()).filter((n) => n.startsWith("plenum-data"))) {
    out[name] = (await (await caches.open(name)).keys()).map((r) => r.url);
  }
  return out;
}"""


def wait_app(page):
    page.wait_for_function("() => document.documentElement.dataset.app === 'ready'", timeout=15000)


def wait_saved(page):
    page.wait_for_function("() => Number(document.documentElement.dataset.offlineSaved) >= 3", timeout=20000)


def server_down(monkeypatch):
    """The sync endpoint answers 503 (the database is away): nothing the phone sends is stored."""

    def refuse(self, request):
        return Response({"detail": "The database could not store this just now"}, status=503)

    monkeypatch.setattr(SyncView, "post", refuse)


def test_two_technicians_one_phone(page, live_server, world, sign_in, monkeypatch, offline):
    base = live_server.url
    tess, omar = world.technician, world.other_technician
    omars = make_work(ahu=world.unit_b, assignee=omar, title="Belt and bearing check")
    tess_marks = [str(world.work_a.public_id), world.unit_a.label_code]
    page.set_viewport_size(PHONE)

    # Tess: her day saved, a form filled and signed offline, still in the outbox.
    sign_in(page, tess)
    expect(page).to_have_url(re.compile(r"/today/$"))
    wait_saved(page)
    page.goto(f"{base}/w/{world.work_a.public_id}/")
    wait_app(page)
    offline(True)
    fill_checklist(page)
    draw_signature(page)
    page.get_by_role("button", name="Finish and sign").click()
    expect(page.locator("[data-outbox-count]")).to_have_text("1")

    # The start address, opened offline: her saved day, not the error page.
    page.goto(f"{base}/start/")
    expect(page.locator("h1")).not_to_have_text("No connection")
    expect(page.locator(f"[data-work-order='{world.work_a.public_id}']")).to_be_visible()

    # Back online but the server cannot store forms: sign-out warns, she signs out anyway.
    server_down(monkeypatch)
    offline(False)
    page.goto(f"{base}/today/")
    wait_app(page)
    warnings = []

    def accept(dialog):
        warnings.append(dialog.message)
        dialog.accept()

    # First she chooses to stay (Cancel): still signed in, her day and her form as they were.
    # Wait for each warning itself: the sign-out first tries to send, so the dialog can come late.
    with page.expect_event("dialog") as first:
        page.get_by_role("button", name="Sign out").click()
    first.value.dismiss()
    expect(page.locator("[data-outbox-count]")).to_have_text("1")
    expect(page).to_have_url(re.compile(r"/today/$"))
    assert len(page.evaluate(DATA_CACHES)) == 1

    with page.expect_event("dialog") as second:
        page.get_by_role("button", name="Sign out").click()
    accept(second.value)
    expect(page).to_have_url(re.compile(r"/login/"))
    assert warnings and "1 finished form of yours has not reached the server yet" in warnings[0]
    assert "next time you sign in" in warnings[0]
    assert page.evaluate(DATA_CACHES) == {}
    [(uuid, tess_owner, work)] = page.evaluate(OUTBOX)
    assert tess_owner and work == str(world.work_a.public_id)
    assert Inspection.objects.count() == 0

    # Offline with nobody signed in, the start address says to sign in (not an error, not Tess's day).
    offline(True)
    page.goto(f"{base}/start/")
    expect(page.get_by_role("link", name="Sign in")).to_be_visible()
    assert not [m for m in tess_marks if m in page.content()]
    offline(False)

    # Omar on the same browser: his day only, an empty outbox, and his sync sends nothing of Tess's.
    monkeypatch.undo()
    sign_in(page, omar)
    expect(page).to_have_url(re.compile(r"/today/$"))
    wait_saved(page)
    expect(page.locator("[data-outbox-count]")).to_have_text("0")
    page.get_by_role("button", name="Sync now").click()
    page.wait_for_function("() => document.querySelector('[data-outbox-last]').textContent !== 'never'", timeout=15000)
    assert Inspection.objects.count() == 0
    assert page.evaluate(OUTBOX) == [[uuid, tess_owner, str(world.work_a.public_id)]]
    saved = page.evaluate(DATA_CACHES)
    assert len(saved) == 1
    [urls] = saved.values()
    assert f"{base}/w/{omars.public_id}/" in urls
    assert not [u for u in urls if any(m in u for m in tess_marks)]

    offline(True)
    for url in ["/today/", f"/w/{world.work_a.public_id}/", f"/u/{world.unit_a.label_code}/", "/start/"]:
        page.goto(f"{base}{url}")
        assert not [m for m in tess_marks if m in page.content()], url
    expect(page.locator(f"[data-work-order='{omars.public_id}']")).to_be_visible()  # /start/ opened his day
    offline(False)

    # Tess again: her form goes, under her session.
    page.goto(f"{base}/today/")
    wait_app(page)
    page.get_by_role("button", name="Sign out").click()
    expect(page).to_have_url(re.compile(r"/login/"))
    sign_in(page, tess)
    expect(page.locator("[data-outbox-count]")).to_have_text("0", timeout=20000)
    inspection = Inspection.objects.get()
    assert str(inspection.client_uuid) == uuid
    assert inspection.work_order_id == world.work_a.pk
    assert inspection.technician_id == tess.pk
    assert page.evaluate(OUTBOX) == []
