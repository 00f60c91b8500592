"""The supervisor follows a stuck damper from the Faults page to its evidence and its proposed work, in Chromium
on a 360 px phone and a 1280 px desktop; a wrong trend file shows each refused cell and stores nothing.

The data is made through the services (a CSV trend import and the night's judging, as in
tests/frontend/test_automation_pages.py); the clock starts at a fixed moment (time_machine, tick=True so the live
server and the browser talk in real time). Nothing runs off the side at 360 px. Screenshots go to
test-output/screenshots/.
"""

import pytest
from playwright.sync_api import expect

from accounts.models import Role
from automation.models import TrendDay
from tests.browser.conftest import DESKTOP, PHONE
from tests.factories.accounts import make_person
from tests.frontend.scenario import PASSWORD
from tests.frontend.test_automation_pages import AFTER, stuck_damper_world

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

BAD = "timestamp,AHU-07.MAT,AHU-07.OAT\n2026-01-13 08:00,abc,1\n2026-01-13 08:15,5,9999\n"


def _no_sideways_scroll(page, width: int) -> None:
    assert page.evaluate("document.scrollingElement.scrollWidth") <= width


@pytest.fixture
def faults_world(transactional_db, time_machine):
    org, site, ahu, _points, fault = stuck_damper_world()
    boss = make_person(organisation=org, role=Role.SUPERVISOR, username="fault-boss")
    boss.set_password(PASSWORD)
    boss.save()
    time_machine.move_to(AFTER, tick=True)
    return {"site": site, "ahu": ahu, "fault": fault, "boss": boss}


@pytest.mark.parametrize(("size", "name"), [(PHONE, "360"), (DESKTOP, "1280")])
def test_the_supervisor_follows_a_stuck_damper_to_its_evidence_and_work(
    page, live_server, faults_world, sign_in, screenshots, size, name
):
    fault = faults_world["fault"]
    page.set_viewport_size(size)
    sign_in(page, faults_world["boss"])
    page.goto(f"{live_server.url}/faults/")
    expect(page.get_by_role("heading", name="Faults found in the trends")).to_be_visible()
    row = page.locator(f'tr[data-fault="{fault.pk}"]')
    expect(row).to_contain_text(fault.title)
    expect(row).to_contain_text("Guideline 36")
    expect(row.locator("[data-work-state]")).to_contain_text("awaiting approval")
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=str(screenshots / f"faults-list-{name}.png"), full_page=True)

    row.locator(f'[data-evidence="{fault.pk}"]').click()
    expect(page.locator(f'[data-fault-detail="{fault.pk}"]')).to_be_visible()
    chart = page.locator('[data-chart="temperatures"] > svg')  # the plot (the key's samples are small SVGs too)
    expect(chart).to_be_visible()
    expect(page.locator(f'[data-chart="temperatures"] rect[data-band="{fault.title}"]').first).to_be_attached()
    box = chart.bounding_box()
    assert box is not None and box["width"] <= size["width"]
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=str(screenshots / f"fault-evidence-{name}.png"), full_page=True)

    work = fault.corrective_work_order
    page.locator(f'[data-fault-detail="{fault.pk}"] [data-work="{work.public_id}"]').click()
    expect(page.get_by_role("heading", name="Proposed corrective work")).to_be_visible()
    expect(page.get_by_text(work.title).first).to_be_visible()


@pytest.mark.parametrize(("size", "name"), [(PHONE, "360"), (DESKTOP, "1280")])
def test_a_wrong_trend_file_shows_its_refused_cells(page, live_server, faults_world, sign_in, screenshots, size, name):
    site = faults_world["site"]
    page.set_viewport_size(size)
    sign_in(page, faults_world["boss"])
    page.goto(f"{live_server.url}/registry/site/{site.pk}/points/")
    before = TrendDay.objects.count()
    page.get_by_label("Trend file (.csv)").set_input_files(
        {"name": "trend.csv", "mimeType": "text/csv", "buffer": BAD.encode()}
    )
    page.get_by_role("button", name="Import").click()
    errors = page.locator("[data-trend-errors]")
    expect(errors).to_contain_text("Nothing was imported")
    expect(errors).to_contain_text("abc")
    expect(errors).to_contain_text("9999")
    assert TrendDay.objects.count() == before
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=str(screenshots / f"trend-upload-errors-{name}.png"), full_page=True)


@pytest.fixture
def freeze_world(faults_world, time_machine):
    """The stuck-damper unit also had a night with the supply air at 0.5 °C (below every freeze stage)."""
    import datetime as dt

    from automation.fault_models import Fault
    from automation.judging import unit_day_judge
    from automation.trends import trend_import
    from tests.frontend.test_automation_pages import FREEZE_DAY, freeze_day_csv

    site, ahu = faults_world["site"], faults_world["ahu"]
    time_machine.move_to(dt.datetime(2026, 1, 21, 1, tzinfo=dt.UTC), tick=False)
    trend_import(site=site, text=freeze_day_csv(ahu.tag, FREEZE_DAY), layout="wide")
    unit_day_judge(ahu=ahu, day=FREEZE_DAY)
    time_machine.move_to(dt.datetime(2026, 1, 22, 11, tzinfo=dt.UTC), tick=True)
    return {**faults_world, "freeze": Fault.objects.get(ahu=ahu, code=Fault.FREEZE)}


def _overlap(a: dict, b: dict) -> bool:
    return (
        a["x"] < b["x"] + b["width"]
        and b["x"] < a["x"] + a["width"]
        and a["y"] < b["y"] + b["height"]
        and b["y"] < a["y"] + a["height"]
    )


@pytest.mark.parametrize(("size", "name"), [(PHONE, "360"), (DESKTOP, "1280")])
def test_the_freeze_evidence_chart_is_readable_on_a_phone_and_its_labels_never_overlap(
    page, live_server, freeze_world, sign_in, screenshots, size, name
):
    """On a 360 px phone the chart takes the card's width and its numbers read at 13 px or more (the old chart's at
    10 px); the key's words (the lines, the shaded window, the three freeze-stage lines) stand above the plot, none
    over another or over the plot (the old "Shaded: …" caption ran over the axis and the stage labels over each
    other); nothing is wider than the screen."""
    fault = freeze_world["freeze"]
    page.set_viewport_size(size)
    sign_in(page, freeze_world["boss"])
    page.goto(f"{live_server.url}/faults/{fault.pk}/")
    figure = page.locator('[data-chart="temperatures"]')
    plot = figure.locator(":scope > svg")
    expect(plot).to_be_visible()
    card = figure.bounding_box()
    box = plot.bounding_box()
    assert card is not None and box is not None
    if size == PHONE:  # the card's width, bar its padding (at a desk the charts stand side by side)
        assert box["width"] >= card["width"] - 40 and box["width"] >= 0.8 * size["width"], (box, card)
    tick = plot.locator("text[data-tick]").first.bounding_box()
    assert tick is not None and tick["height"] >= 14, tick  # a 13 px font or more (the old chart's read 10 px)
    labels = figure.locator(".chart-key li")
    expect(figure.locator("[data-limit-label]")).to_have_count(3)
    boxes = [labels.nth(i).bounding_box() for i in range(labels.count())]
    assert len(boxes) >= 5 + 1 + 3 and all(b is not None for b in boxes)  # five lines, the window, three stages
    for i, a in enumerate(boxes):
        assert a["y"] + a["height"] <= box["y"] + 1, (a, box)  # above the plot
        assert a["x"] + a["width"] <= size["width"], a
        for b in boxes[i + 1 :]:
            assert not _overlap(a, b), (a, b)
    expect(page.locator("[data-fault-reason]")).to_contain_text("stayed below")
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=str(screenshots / f"freeze-evidence-{name}.png"), full_page=True)


def test_at_a_desk_the_trend_charts_use_the_pages_width(page, live_server, freeze_world, sign_in, screenshots):
    """At 1280 px the charts stood at 40rem, half the page's width, the other half empty: they now stand side by side,
    each as wide as its column, together as wide as the page's content; the key's words say plainly which line lies
    on top of which."""
    fault = freeze_world["freeze"]
    page.set_viewport_size(DESKTOP)
    sign_in(page, freeze_world["boss"])
    page.goto(f"{live_server.url}/faults/{fault.pk}/")
    grid = page.locator(".trend-charts").bounding_box()
    heading = page.locator("h1").bounding_box()
    assert grid is not None and heading is not None
    figures = page.locator("figure.chart.trend")
    assert figures.count() >= 2
    boxes = [figures.nth(i).bounding_box() for i in range(figures.count())]
    assert abs(boxes[0]["y"] - boxes[1]["y"]) < 1 and boxes[1]["x"] > boxes[0]["x"] + boxes[0]["width"]  # side by side
    assert boxes[1]["x"] + boxes[1]["width"] >= grid["x"] + grid["width"] - 1  # the row reaches the content's edge
    assert grid["width"] >= 0.8 * DESKTOP["width"]
    plotted = page.locator("figure.chart.trend:has(> svg)")
    assert plotted.count() >= 2
    for i in range(plotted.count()):
        box, plot = plotted.nth(i).bounding_box(), plotted.nth(i).locator(":scope > svg").bounding_box()
        assert plot["width"] >= box["width"] - 40 and plot["width"] >= 0.4 * grid["width"], (plot, box)
    assert "drawn wider" not in page.content()
    _no_sideways_scroll(page, DESKTOP["width"])
    page.screenshot(path=str(screenshots / "trend-charts-desk-1280.png"), full_page=True)
