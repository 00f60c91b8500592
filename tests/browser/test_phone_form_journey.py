"""A technician's phone form that saves time, at 360 px: the last values beside the readings, progress and
jump-to-section, "all pass" for a group of OK/Not OK items with one exception, the site's address and map,
a Finish button the outbox bar never covers; then, in US units, no SI figure anywhere on the form, the results
or the calculator."""

import datetime as dt
import re
import zoneinfo

import pytest
from django.utils import timezone
from playwright.sync_api import expect

from inspections.services import inspection_sync
from scheduling.models import WorkOrder
from tests.factories.inspections import r, sync_form, tasks_add
from tests.frontend.scenario import make_work

from .conftest import DESKTOP, PHONE
from .test_pwa import draw_signature, wait_app

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

# SI unit strings that must not show in a US view (a number then the unit, or the unit as a word).
# A number standing on its own (not the end of a label code such as "UMW6K") followed by an SI unit.
SI_TEXT = re.compile(r"\b\d[\d.,]*\s*(Pa|kPa|K|°C|L/s|m³/s|m3/s|m3s|W|kW)\b|°C|m³/s|L/s|\bPa\b|\bm3s\b")
# Debug-like words that must never reach a person ("ok max: 14.2; physical max: 5000", "allowed error: 0.3").
DEBUG_TEXT = re.compile(r"\b(ok|watch|physical|plausible) (max|min)\b|allowed error|_m3s|_pa\b|_c\b")


def _previous_visit(world, finished_at: dt.datetime) -> WorkOrder:
    """The unit's last service a month before: the final filters at 182 Pa, the supply air at 14.5 °C."""
    wo = make_work(
        ahu=world.unit_a,
        assignee=world.technician,
        title="Autumn service",
        due=finished_at.date(),
        state=WorkOrder.State.IN_PROGRESS,
    )
    tasks_add(wo, ["controls_check"], key="before")
    final = world.unit_a.components.get(name="Final filters")
    readings = [
        r("filter_check.dp", 182, final),
        r("filter_check.seated", "ok", final),
        r("filter_check.media", "loaded", final),
        r("controls_check.supply_air", 14.5),
        r("controls_check.supply_setpoint", 14.0),
        r("controls_check.duct_static", 250),
        r("controls_check.duct_static_setpoint", 250),
        r("controls_check.alarms", "ok"),
        r("controls_check.schedule", "ok"),
    ]
    [result] = inspection_sync(user=world.technician, forms=[sync_form(wo, readings, finished_at=finished_at)])
    assert result["status"] in ("stored", "flagged"), result
    return wo


def _visible_text(page) -> str:
    return page.locator("main").inner_text()


def _answer_the_rest(page):
    """Plausible answers for what is still open (numbers from the field's own range, first choice of a group)."""
    numbers = {"filter_check.dp": "180", "controls_check.supply_air": "14", "controls_check.supply_setpoint": "14"}
    numbers |= {"controls_check.duct_static": "250", "controls_check.duct_static_setpoint": "250"}
    numbers |= {"damper_actuator.command": "50", "damper_actuator.position": "50", "damper_actuator.stroke_time": "90"}
    numbers |= {"sensor_calibration.co2_sensor": "800", "sensor_calibration.co2_reference": "830"}
    numbers |= {"sensor_calibration.temp_sensor": "14", "sensor_calibration.temp_reference": "14.2"}
    numbers |= {"sensor_calibration.rh_sensor": "45", "sensor_calibration.rh_reference": "47"}
    numbers |= {"sensor_calibration.pressure_sensor": "250", "sensor_calibration.pressure_reference": "252"}
    numbers |= {
        "ventilation_check.outdoor_air": "5",
        "ventilation_check.return_air": "22",
        "ventilation_check.mixed_air": "15",
    }
    numbers |= {"ventilation_check.outdoor_co2": "420", "ventilation_check.return_co2": "800"}
    numbers |= {"ventilation_check.supply_co2": "650", "ventilation_check.oa_damper_position": "30"}
    for block in page.locator("form[data-checklist] [data-item]").all():
        kind = block.get_attribute("data-kind")
        if kind == "number":
            field = block.locator("input[data-number]")
            if not field.input_value():
                field.fill(numbers.get(block.get_attribute("data-item"), "1"))
        elif kind in ("check", "choice") and not block.locator("input[type=radio]:checked").count():
            block.locator("input[type=radio]").first.check()


def _not_covered(page, selector: str) -> None:
    """The control at ``selector`` is the topmost element at its own centre (no bar over it)."""
    page.locator(selector).scroll_into_view_if_needed()
    page.evaluate("window.scrollTo(0, document.documentElement.scrollHeight)")
    hit = page.evaluate(
        """(sel) => { const el = document.querySelector(sel); const b = el.getBoundingClientRect();
        const x = b.left + b.width / 2, y = b.top + b.height / 2;
        const top = document.elementFromPoint(x, y);
        return {inView: y > 0 && y < window.innerHeight, hit: top === el || el.contains(top)}; }""",
        selector,
    )
    assert hit == {"inView": True, "hit": True}, (selector, hit)


def test_a_technician_fills_a_visit_faster_and_reads_it_all_in_us_units(
    page, live_server, world, sign_in, screenshots, offline
):
    """At 360 px: last values with their dates, jump to a section, "all pass" with one exception (undone and
    redone), progress to complete, Finish not under the outbox bar; then in US units nothing reads in SI."""
    site = world.site_a
    site.address = "14 Quay Street, Harbour Town"
    site.latitude, site.longitude = 51.4545, -2.5879
    site.save(update_fields=["address", "latitude", "longitude"])
    before = timezone.now() - dt.timedelta(days=30)
    _previous_visit(world, before)
    tasks_add(world.work_a, ["controls_check", "damper_actuator", "sensor_calibration", "ventilation_check"], key="now")
    local_day = before.astimezone(zoneinfo.ZoneInfo(site.time_zone)).date()
    on = f"{local_day.day} {local_day:%b %Y}"

    page.set_viewport_size(PHONE)
    sign_in(page, world.technician)
    url = f"{live_server.url}/w/{world.work_a.public_id}/"
    # The day's pages are kept on the phone: the form, with its last values and the site's address, opens
    # in a plant room with no signal.
    page.wait_for_function("Number(document.documentElement.dataset.offlineSaved) >= 3", timeout=20000)
    offline(True)
    page.goto(url)
    wait_app(page)
    expect(page.locator("[data-site-where]")).to_contain_text("14 Quay Street")
    expect(page.locator("[data-last]").first).to_contain_text("last: ")
    offline(False)
    page.goto(url)
    wait_app(page)

    # Where the site is, and a map link built from its coordinates (no fetch).
    where = page.locator("[data-site-where]")
    expect(where).to_contain_text("14 Quay Street, Harbour Town")
    osm = where.get_by_role("link", name=re.compile("OpenStreetMap")).get_attribute("href")
    assert osm.startswith("https://www.openstreetmap.org/?mlat=51.454500&mlon=-2.587900")
    assert (
        where.get_by_role("link", name=re.compile("map app"))
        .get_attribute("href")
        .startswith("geo:51.454500,-2.587900")
    )

    # The last value and its date beside each reading taken last time; none where nothing was read.
    final = world.unit_a.components.get(name="Final filters")
    dp_block = page.locator(f"[data-item='filter_check.dp'][data-component='{final.label_code}']")
    expect(dp_block.locator("[data-last]")).to_have_text(f"last: 182 Pa on {on}")
    expect(page.locator("[data-item='controls_check.supply_air'] [data-last]")).to_have_text(f"last: 14.5 °C on {on}")
    expect(page.locator("[data-item='controls_check.alarms'] [data-last]")).to_have_text(f"last: OK on {on}")
    assert page.locator("[data-item='damper_actuator.linkage'] [data-last]").count() == 0

    # Progress and the section list at the top.
    progress = page.locator("[data-progress]")
    expect(progress).to_contain_text("0 of")
    jump = page.locator("nav[data-sections]")
    jump.get_by_role("link", name=re.compile("Dampers and actuators", re.I)).click()
    section = page.locator("fieldset[data-section='damper_actuator']")
    expect(section.locator("legend").first).to_be_in_viewport()

    # One exception first, then "all pass" for the rest of the group; undo leaves the exception alone.
    checks = section.locator("[data-kind='check']")
    total_checks = checks.count()
    assert total_checks >= 4
    exception = checks.nth(1)
    exception.locator("input[value='not_ok']").check()
    exception.locator("summary").click()
    exception.locator("input[name^='n:']").fill("Linkage pin worn; replaced next visit")
    all_pass = section.locator("button[data-all-pass]")
    expect(section.locator("button[data-all-pass-undo]")).to_be_hidden()
    all_pass.click()
    expect(section.locator("[data-kind='check'] input[value='ok']:checked")).to_have_count(total_checks - 1)
    expect(exception.locator("input[value='not_ok']")).to_be_checked()
    section.locator("button[data-all-pass-undo]").click()
    expect(section.locator("[data-kind='check'] input[value='ok']:checked")).to_have_count(0)
    expect(exception.locator("input[value='not_ok']")).to_be_checked()
    all_pass.click()
    expect(section.locator("[data-kind='check'] input[value='ok']:checked")).to_have_count(total_checks - 1)
    expect(jump.locator("[data-section-count='damper_actuator']")).to_contain_text(re.compile(r"\d+/\d+"))

    _answer_the_rest(page)
    expect(progress).to_have_attribute("data-complete", "true")
    expect(progress).to_contain_text("All")

    # The outbox bar never covers the last field nor "Finish and sign".
    _not_covered(page, "form[data-checklist] button[type=submit]")
    _not_covered(page, "#signature-name")
    page.screenshot(path=screenshots / "technician-phone-form-360.png", full_page=True)
    page.set_viewport_size(DESKTOP)
    page.screenshot(path=screenshots / "technician-phone-form-1280.png", full_page=True)
    page.set_viewport_size(PHONE)

    # US units from the profile: the form, its last values and hints read in US units.
    page.goto(f"{live_server.url}/profile/")
    page.locator("input[name='unit_system'][value='us']").check()
    page.get_by_role("button", name="Save units").click()
    page.goto(url)
    wait_app(page)
    expect(dp_block.locator("[data-last]")).to_have_text(re.compile(rf"last: 0\.73 in\. w\.c\. on {on}"))
    expect(page.locator("[data-item='controls_check.supply_air'] [data-last]")).to_have_text(f"last: 58.1 °F on {on}")
    # What was typed in SI before the switch comes back in US units (14 °C is 57.2 °F), never as 14 °F.
    expect(page.locator("[data-item='controls_check.supply_air'] input[data-number]")).to_have_value("57.2")
    # The supply air off its set point by 2.5 K reads in °F difference.
    page.locator("[data-item='controls_check.supply_air'] input[data-number]").fill("61.7")
    text = _visible_text(page)
    assert not SI_TEXT.search(text), SI_TEXT.search(text)
    assert not DEBUG_TEXT.search(text), DEBUG_TEXT.search(text)

    draw_signature(page)
    page.get_by_role("button", name="Finish and sign").click()
    problems = page.locator("[data-finish-problems] [data-finish-anyway]")
    if problems.count():
        problems.click()
    expect(page.locator("[data-server-result], [data-rendered=server]").first).to_be_visible(timeout=20000)
    text = _visible_text(page)
    assert not SI_TEXT.search(text), SI_TEXT.search(text)
    assert not DEBUG_TEXT.search(text), DEBUG_TEXT.search(text)
    page.screenshot(path=screenshots / "technician-phone-form-us-result-360.png", full_page=True)
    # The signed record, once the server has it, reads in US units too.
    page.reload()
    wait_app(page)
    expect(page.locator("main")).to_contain_text("Signed")
    text = _visible_text(page)
    assert not SI_TEXT.search(text), SI_TEXT.search(text)
    assert not DEBUG_TEXT.search(text), DEBUG_TEXT.search(text)
    page.screenshot(path=screenshots / "technician-phone-form-us-record-360.png", full_page=True)

    # The unit's page (its parts and their specs) reads in US units as well.
    page.goto(f"{live_server.url}/u/{world.unit_a.label_code}/")
    text = _visible_text(page)
    assert not SI_TEXT.search(text), SI_TEXT.search(text)
    assert not DEBUG_TEXT.search(text), DEBUG_TEXT.search(text)

    # "Done today": the visit signed a moment ago, at its time on the site's clock.
    page.goto(f"{live_server.url}/today/")
    done = page.locator(f"[data-done-today] [data-done='{world.work_a.public_id}']")
    expect(done).to_contain_text("AHU-01")
    expect(done).to_contain_text("Quarterly service")
    expect(done).to_contain_text(re.compile(r"signed \d\d:\d\d site time"))
    page.screenshot(path=screenshots / "technician-done-today-360.png", full_page=True)

    # The calculator: every result in US units (values a technician would read in the field, in US units).
    typed = {"t_outdoor_c": "41", "t_return_c": "72", "t_mixed_c": "59", "co2_outdoor_ppm": "420"}
    typed |= {"co2_return_ppm": "800", "co2_supply_or_mixed_ppm": "650", "dp_pa": "0.75", "airflow_m3s": "1200"}
    typed |= {"design_airflow_m3s": "1695", "clean_dp_pa": "0.36", "final_dp_pa": "1.20", "t_in_c": "41"}
    typed |= {"t_out_c": "72"}
    page.goto(f"{live_server.url}/calc/")
    wait_app(page)
    for form in page.locator("form[data-calc]").all():
        for field in form.locator("input[data-number]").all():
            field.fill(typed[field.get_attribute("name")])
        form.get_by_role("button", name="Calculate").click()
        expect(form.locator("[data-calc-result] table")).to_be_visible()
    text = _visible_text(page)
    assert "1.20 in. w.c." in text or "1.2 in. w.c." in text
    assert not SI_TEXT.search(text), SI_TEXT.search(text)
    assert not DEBUG_TEXT.search(text), DEBUG_TEXT.search(text)
    page.screenshot(path=screenshots / "technician-calculator-us-360.png", full_page=True)
    # A clean pressure drop above the final one is refused in the person's units too, never "final 299 Pa".
    filters = page.locator("form[data-calc='filter-loading']")
    filters.locator("input[name='clean_dp_pa']").fill("1.50")
    filters.get_by_role("button", name="Calculate").click()
    expect(filters.locator("[data-calc-result]")).to_contain_text("in. w.c.")
    text = filters.inner_text()
    assert not SI_TEXT.search(text), SI_TEXT.search(text)
    assert not DEBUG_TEXT.search(text), DEBUG_TEXT.search(text)
