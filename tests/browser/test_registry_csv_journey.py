"""The supervisor imports a registry CSV from the pages in Chromium, on a 360 px phone and a 1280 px desktop.

A file with bad rows is checked: nothing is imported and every problem is listed with its row, column, value
and what is allowed. The corrected file is checked, confirmed and imported; the page says what was created
and updated. A workbook saved as .csv is refused at the file field. Nothing runs off the side at 360 px.
Screenshots of the journey's end go to test-output/screenshots/.
"""

import re

import pytest
from playwright.sync_api import expect

from inventory.models import Site
from tests.browser.conftest import DESKTOP, PHONE

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

HEADER = "code,name,address,latitude,longitude,time_zone,preheat_threshold_c"
BAD = (
    f"{HEADER}\n"
    "quay-north,Quay North,1 Quay Road,53.6,12.7,Europe/Berlin,5\n"
    "quay-south,Quay South,2 Quay Road,95,12.7,Europe/Berlin,5\n"
    "quay-east,,3 Quay Road,53.6,12.7,Europe/Berlin,5\n"
    "quay-west,Quay West,4 Quay Road,53.6,abc,Europe/Berlin,5\n"
)
GOOD = (
    f"{HEADER}\n"
    "quay-north,Quay North,1 Quay Road,53.6,12.7,Europe/Berlin,5\n"
    "quay-south,Quay South,2 Quay Road,53.5,12.7,Europe/Berlin,4\n"
    "quay-east,Quay East,3 Quay Road,53.6,12.8,Europe/Berlin,5\n"
)


def _file(name: str, text: str | bytes) -> dict:
    data = text.encode() if isinstance(text, str) else text
    return {"name": name, "mimeType": "text/csv", "buffer": data}


def _no_sideways_scroll(page, width: int) -> None:
    assert page.evaluate("document.scrollingElement.scrollWidth") <= width


@pytest.mark.parametrize(("size", "name"), [(PHONE, "360"), (DESKTOP, "1280")])
def test_the_supervisor_imports_a_csv_with_bad_rows_then_a_good_one(
    page, live_server, world, sign_in, screenshots, size, name
):
    page.set_viewport_size(size)
    sign_in(page, world.supervisor)
    page.goto(f"{live_server.url}/registry/")
    page.get_by_role("link", name="CSV import and export, label sheets").click()
    expect(page.get_by_role("heading", name="Registry files and labels")).to_be_visible()
    sites_before = Site.objects.count()

    # A workbook renamed to .csv: refused at the file field, in plain words.
    page.get_by_label("What the file holds").select_option("sites")
    page.get_by_label("CSV file").set_input_files(_file("sites.csv", b"PK\x03\x04 not text"))
    page.get_by_role("button", name="Check the file").click()
    expect(page.locator("#csv-file-error")).to_contain_text("is a spreadsheet workbook or another binary file")
    expect(page.get_by_label("CSV file")).to_have_attribute("aria-invalid", "true")

    # Bad rows: nothing imported, every problem listed with its row, column, value and what is allowed.
    page.get_by_label("CSV file").set_input_files(_file("new-sites.csv", BAD))
    page.get_by_role("button", name="Check the file").click()
    refused = page.locator(".csv-refused")
    expect(refused).to_contain_text("Nothing was imported: 3 problems in new-sites.csv")
    rows = refused.locator("tbody tr")
    expect(rows).to_have_count(3)
    expect(rows.nth(0)).to_contain_text("Row 3")
    expect(rows.nth(0)).to_contain_text("latitude")
    expect(rows.nth(0)).to_contain_text("95")
    expect(rows.nth(1)).to_contain_text("Row 4")
    expect(rows.nth(1)).to_contain_text("name")
    expect(rows.nth(1)).to_contain_text("required")
    expect(rows.nth(2)).to_contain_text("Row 5")
    expect(rows.nth(2)).to_contain_text("abc")
    expect(rows.nth(2)).to_contain_text("is not a number")
    expect(page.get_by_role("button", name=re.compile("^Import"))).to_have_count(0)
    assert Site.objects.count() == sites_before
    _no_sideways_scroll(page, size["width"])
    refused.screenshot(path=screenshots / f"registry-csv-refused-{name}.png")

    # The corrected file: checked (nothing stored yet), then imported on confirmation.
    page.get_by_label("CSV file").set_input_files(_file("new-sites.csv", GOOD))
    page.get_by_role("button", name="Check the file").click()
    expect(page.locator(".csv-checked")).to_contain_text("3 new and 0 to update")
    assert Site.objects.count() == sites_before
    page.get_by_role("button", name="Import 3 rows").click()
    done = page.locator(".csv-done")
    expect(done).to_contain_text("Imported new-sites.csv: 3 new, 0 updated")
    expect(done).to_contain_text("Row 3: quay-south — created")
    expect(page.locator(".messages")).to_contain_text("Imported new-sites.csv")
    assert set(Site.objects.filter(code__startswith="quay-").values_list("name", flat=True)) == {
        "Quay North",
        "Quay South",
        "Quay East",
    }
    _no_sideways_scroll(page, size["width"])
    page.screenshot(path=screenshots / f"registry-csv-imported-{name}.png", full_page=True)
