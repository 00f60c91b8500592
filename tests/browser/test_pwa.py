"""The PWA in a real browser: installable, offline-first, role pages, tenancy, accessibility, screenshots."""

import json
import re

import pytest
from axe_playwright_python.sync_playwright import Axe
from playwright.sync_api import expect

from inspections.models import Evaluation, Inspection, Reading
from scheduling.models import WorkOrder
from tests.frontend.scenario import make_work

from .conftest import DESKTOP, PHONE

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def wait_app(page):
    page.wait_for_function("document.documentElement.dataset.app === 'ready'", timeout=15000)


def draw_signature(page):
    canvas = page.locator("canvas.signature")
    canvas.scroll_into_view_if_needed()
    box = canvas.bounding_box()
    page.mouse.move(box["x"] + 20, box["y"] + box["height"] / 2)
    page.mouse.down()
    for k in range(1, 12):
        page.mouse.move(box["x"] + 20 + k * 18, box["y"] + box["height"] / 2 + (12 if k % 2 else -12))
    page.mouse.up()


def fill_checklist(page):
    """Answer every question: the first choice of each group, and plausible numbers in SI."""
    numbers = {"filter_check.dp": "180"}
    for block in page.locator("form[data-checklist] [data-item]").all():
        kind = block.get_attribute("data-kind")
        key = block.get_attribute("data-item")
        if kind == "number":
            field = block.locator("input[data-number]")
            low = ((json.loads(field.get_attribute("data-limits") or "null") or {}).get("physical") or {}).get("min")
            field.fill(numbers.get(key, str(max(float(low), 1.0)) if low is not None else "1"))
        elif kind in ("check", "choice"):
            block.locator("input[type=radio]").first.check()


def test_manifest_loads_and_service_worker_registers(page, live_server, world):
    """The manifest names the app with 192, 512 and maskable icons, and the service worker takes control."""
    page.goto(f"{live_server.url}/login/")
    href = page.locator("link[rel=manifest]").get_attribute("href")
    manifest = page.request.get(f"{live_server.url}{href}").json()
    assert manifest["name"] == "Plenum"
    sizes = {(i["sizes"], i["purpose"]) for i in manifest["icons"]}
    assert {("192x192", "any"), ("512x512", "any"), ("192x192", "maskable"), ("512x512", "maskable")} <= sizes
    for icon in manifest["icons"]:
        response = page.request.get(f"{live_server.url}{icon['src']}")
        assert response.ok and response.headers["content-type"] == "image/png"
    page.wait_for_function("document.documentElement.dataset.sw === 'ready'", timeout=15000)
    page.reload()
    assert page.evaluate("navigator.serviceWorker.controller !== null")
    sw = page.request.get(f"{live_server.url}/sw.js")
    assert sw.headers["service-worker-allowed"] == "/"
    assert "const VERSION" in sw.text()


def test_offline_checklist_reaches_server_once_with_evaluation(page, live_server, world, screenshots, offline):
    """Filled and signed offline, kept through an offline reload, sent once on reconnect and judged by the server."""
    page.set_viewport_size(PHONE)
    page.goto(f"{live_server.url}/login/")
    page.get_by_label("Username").fill("tess")
    page.get_by_label("Password").fill("pass-for-tests-123")
    page.get_by_role("button", name="Sign in").click()
    expect(page).to_have_url(re.compile(r"/today/$"))
    page.wait_for_function("Number(document.documentElement.dataset.offlineSaved) >= 3", timeout=20000)
    page.screenshot(path=screenshots / "technician-today-360.png", full_page=True)

    page.get_by_role("link", name=re.compile("AHU-01")).first.click()
    wait_app(page)
    offline(True)
    fill_checklist(page)
    # Judged on the phone: said once for the whole form, not "(phone check)" after every verdict.
    final_verdict = page.locator(
        "#r-filter_check-dp-" + world.unit_a.components.get(name="Final filters").label_code + "-verdict"
    )
    expect(final_verdict).not_to_be_empty()
    expect(final_verdict).not_to_contain_text("phone check")
    expect(page.locator("[data-judged-where]")).to_contain_text("judged on the phone; the server confirms")
    draw_signature(page)
    page.get_by_role("button", name="Finish and sign").click()
    expect(page.locator("[data-outbox-count]")).to_have_text("1")
    assert Inspection.objects.filter(work_order=world.work_a).count() == 0

    page.reload()
    wait_app(page)
    expect(page.locator("form[data-checklist]")).to_be_visible()
    expect(page.locator("[data-outbox-count]")).to_have_text("1")
    expect(page.locator("[data-pending]")).to_contain_text("waiting in the outbox")
    page.screenshot(path=screenshots / "technician-checklist-offline-360.png", full_page=True)
    assert Inspection.objects.filter(work_order=world.work_a).count() == 0

    offline(False)
    page.evaluate("window.dispatchEvent(new Event('online'))")
    expect(page.locator("[data-outbox-count]")).to_have_text("0", timeout=20000)
    expect(page.locator("[data-server-result]")).to_contain_text("Evaluation by the server", timeout=20000)
    page.get_by_role("button", name="Sync now").click()
    page.reload()
    wait_app(page)
    page.screenshot(path=screenshots / "technician-checklist-synced-360.png", full_page=True)

    inspections = Inspection.objects.filter(work_order=world.work_a)
    assert inspections.count() == 1
    inspection = inspections.get()
    dp = Reading.objects.get(inspection=inspection, item__template__code="filter_check", item__key="dp")
    assert dp.value_si == pytest.approx(180.0)
    assert dp.verdict in {"ok", "watch", "fail"}
    assert Evaluation.objects.filter(inspection=inspection).exists()


def test_supervisor_assignment_shows_on_technician_today(browser, live_server, world, sign_in, screenshots):
    """A work order assigned on the board appears in the technician's list for today."""
    extra = make_work(ahu=world.unit_a, title="Coil and drain pan check")
    boss = browser.new_context(viewport=DESKTOP)
    page = sign_in(boss.new_page(), world.supervisor)
    expect(page).to_have_url(re.compile(r"/board/"))
    row = page.locator(f"tr[data-work-order='{extra.public_id}']")
    row.get_by_label(re.compile("Technician for")).select_option(label="Tess Field")
    row.get_by_role("button", name="Assign").click()
    # Tess has no skills on record: the board says so before anything is saved, and the supervisor confirms.
    expect(page.get_by_text("Tess Field lacks the skill this work needs")).to_be_visible()
    page.get_by_role("button", name="Assign to Tess Field anyway").click()
    expect(page.locator(".messages")).to_contain_text("assigned to Tess Field")
    page.screenshot(path=screenshots / "supervisor-board-1280.png", full_page=True)
    boss.close()
    assert WorkOrder.objects.get(pk=extra.pk).assignee == world.technician

    phone = browser.new_context(viewport=PHONE)
    tech = sign_in(phone.new_page(), world.technician)
    expect(tech.locator(f"[data-work-order='{extra.public_id}']")).to_contain_text("Coil and drain pan check")
    wait_app(tech)  # the day's pages are saved for offline by now: no request still running at teardown
    phone.close()


def _leaks(text: str, world, asked: str = "") -> list[str]:
    """Markers of the other site in a response, except those the request itself carried (echoed in an error)."""
    markers = [world.site_b.name, world.unit_b.label_code, str(world.work_b.public_id), world.site_b.code]
    markers += list(world.unit_b.components.values_list("label_code", flat=True))
    return [m for m in markers if m in text and m not in asked]


def test_property_manager_sees_no_other_site(page, live_server, world, sign_in):
    """A manager of Harbour House gets nothing of Linden Court from any page or API call."""
    sign_in(page, world.manager_a)
    expect(page).to_have_url(re.compile(r"/dashboard/"))
    assert world.site_a.name in page.content()
    base = live_server.url
    b = world
    comp_b = b.unit_b.components.first()
    pages = [
        "/",
        "/dashboard/",
        "/today/",
        "/board/",
        "/registry/",
        "/findings/",
        "/corrective/",
        "/flagged/",
        "/calc/",
        f"/dashboard/site/{b.site_b.pk}/",
        f"/u/{b.unit_b.label_code}/",
        f"/u/{comp_b.label_code}/",
        f"/w/{b.work_b.public_id}/",
        f"/registry/unit/{b.unit_b.pk}/",
        f"/registry/component/{comp_b.pk}/edit/",
        f"/l/{b.unit_b.label_code}/",
    ]
    schema = page.request.get(f"{base}/api/schema/?format=json")
    assert schema.ok
    api_paths = [p for p, ops in schema.json()["paths"].items() if "get" in ops]
    ids = {"uuid": str(b.work_b.public_id), "code": b.unit_b.label_code}
    checked = 0
    for path in api_paths:
        params = re.findall(r"\{(\w+)\}", path)
        candidates = [path]
        if params:
            values = [ids["uuid"], ids["code"], str(b.site_b.pk), str(b.unit_b.pk), str(comp_b.pk)]
            candidates = [re.sub(r"\{\w+\}", v, path) for v in values]
        pages += candidates
    for url in pages:
        response = page.request.get(f"{base}{url}")
        body = response.text()
        assert not _leaks(body, b, url), f"{url} ({response.status}) shows {_leaks(body, b, url)}"
        checked += 1
    assert checked > 20
    response = page.request.get(f"{base}/dashboard/site/{b.site_b.pk}/")
    assert response.status == 404


def _serious(page):
    results = Axe().run(page)
    return [
        (v["id"], v["impact"], v["help"])
        for v in results.response["violations"]
        if v["impact"] in ("serious", "critical")
    ]


@pytest.mark.parametrize("viewport", [PHONE, DESKTOP], ids=["360", "1280"])
def test_accessibility_and_screenshots(browser, live_server, world, sign_in, screenshots, viewport):
    """axe-core finds no serious or critical problem on the checklist, the board and the dashboard."""
    size = viewport["width"]
    found = {}
    for user, url, name in [
        (world.technician, f"/w/{world.work_a.public_id}/", "technician-checklist"),
        (world.technician, "/calc/", "technician-calculator"),
        (world.supervisor, "/board/", "supervisor-board"),
        (world.supervisor, f"/registry/unit/{world.unit_a.pk}/", "supervisor-unit"),
        (world.manager_a, "/dashboard/", "manager-dashboard"),
        (world.manager_a, f"/dashboard/site/{world.site_a.pk}/", "manager-site"),
    ]:
        ctx = browser.new_context(viewport=viewport)
        page = sign_in(ctx.new_page(), user)
        page.goto(f"{live_server.url}{url}")
        wait_app(page)
        page.screenshot(path=screenshots / f"{name}-{size}.png", full_page=True)
        found[name] = _serious(page)
        ctx.close()
    assert found == {k: [] for k in found}
