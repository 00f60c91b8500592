"""The supervisor changes maintenance rules in Chromium, on a 360 px phone and a 1280 px desktop.

On the organisation's rules an interval of "abc" and then 0 is refused at its field naming the value and what is
allowed, with nothing saved; with a reason the filter check goes to every 2 months and the library default and its
source stay beside it. On one unit the filter check gets its own 2-week interval. Screenshots of each end go to
test-output/screenshots/.
"""

import pytest
from playwright.sync_api import expect

from scheduling.models import TaskDefinition, UnitTaskSetting
from tests.browser.conftest import DESKTOP, PHONE

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def _no_sideways_scroll(page, width: int) -> None:
    assert page.evaluate("document.scrollingElement.scrollWidth") <= width


@pytest.mark.parametrize(("size", "name"), [(PHONE, "360"), (DESKTOP, "1280")])
def test_the_supervisor_changes_an_interval_for_the_organisation_and_for_one_unit(
    page, live_server, world, sign_in, screenshots, size, name
):
    page.set_viewport_size(size)
    sign_in(page, world.supervisor)
    page.goto(f"{live_server.url}/registry/")
    page.get_by_role("link", name="Maintenance rules").first.click()
    card = page.locator("#rule-filter_check")
    expect(card).to_contain_text("Library default")
    expect(card).to_contain_text("checked monthly")

    for typed, words in (("abc", "Interval: 'abc' is not a whole number"), ("0", "Interval: 0 is out of range")):
        card.get_by_label("Interval", exact=True).fill(typed)
        card.get_by_label("Reason for the change").fill("Clean office air")
        card.get_by_role("button", name="Save").click()
        card = page.locator("#rule-filter_check")
        expect(card.locator("#filter_check-interval_value-error")).to_contain_text(words)
        expect(card.get_by_label("Interval", exact=True)).to_have_value(typed)
    assert not TaskDefinition.objects.filter(organisation=world.org, code="filter_check").exists()
    _no_sideways_scroll(page, size["width"])
    card.screenshot(path=screenshots / f"rules-refused-{name}.png")

    card.get_by_label("Interval", exact=True).fill("2")
    card.get_by_label("Reason for the change").fill("Clean office air")
    card.get_by_role("button", name="Save").click()
    expect(page.locator(".messages")).to_contain_text("Every 2 months")
    card = page.locator("#rule-filter_check")
    expect(card).to_contain_text("changed by your organisation")
    expect(card).to_contain_text("Every 1 month")  # the library default, still beside it
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=screenshots / f"rules-organisation-{name}.png", full_page=True)

    page.goto(f"{live_server.url}/registry/unit/{world.unit_a.pk}/rules/")
    card = page.locator("#rule-filter_check")
    card.get_by_label("Interval", exact=True).fill("2")
    card.get_by_label("Interval unit").select_option("weeks")
    card.get_by_label("Reason for the change").fill("Next to a building yard")
    card.get_by_role("button", name="Save").click()
    expect(page.locator(".messages")).to_contain_text("on AHU-01: Every 2 weeks")
    expect(page.locator("#rule-filter_check")).to_contain_text("this unit's own value")
    assert UnitTaskSetting.objects.get(ahu=world.unit_a, task_code="filter_check").interval_unit == "weeks"
    _no_sideways_scroll(page, size["width"])
    page.locator("#rule-filter_check").screenshot(path=screenshots / f"rules-unit-{name}.png")
