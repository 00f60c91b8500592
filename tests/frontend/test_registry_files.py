"""The registry's files from the staff pages: CSV import with a check first, CSV export, label sheets, QR images.

Journeys through the Django test client from the page scenario (tests/frontend/scenario.py): the supervisor
checks a file with bad rows (every problem listed with its row, column, value and what is allowed; nothing
stored), then a good file, confirms it and reads what was created and updated; bad files are refused at the
file field; the export is defused for spreadsheets; a unit's QR image comes as SVG and PNG.
"""

from __future__ import annotations

import re

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.urls import reverse

from accounts.models import AuditEvent
from inventory.models import AHU, Building, Site

pytestmark = pytest.mark.django_db

FILES = reverse("frontend:registry_files")
CONFIRM = reverse("frontend:registry_import_confirm")

SITES_HEADER = "code,name,address,latitude,longitude,time_zone,preheat_threshold_c"
BAD_SITES = (
    f"{SITES_HEADER}\n"
    "quay-north,Quay North,1 Quay Road,53.6,12.7,Europe/Berlin,5\n"
    "quay-south,Quay South,2 Quay Road,95,12.7,Europe/Berlin,5\n"  # latitude past the pole
    "quay-east,,3 Quay Road,53.6,12.7,Europe/Berlin,5\n"  # no name
    "quay-west,Quay West,4 Quay Road,53.6,abc,Europe/Berlin,5\n"  # a word for a number
    "quay-end,Quay End,5 Quay Road,53.6,12.7,Mars/Olympus,5\n"  # a time zone that does not exist
)
GOOD_SITES = (
    f"{SITES_HEADER}\n"
    "quay-north,Quay North,1 Quay Road,53.6,12.7,Europe/Berlin,5\n"
    "quay-south,Quay South,2 Quay Road,53.5,12.7,Europe/Berlin,4\n"
)


def upload(text: str | bytes, name: str = "sites.csv") -> SimpleUploadedFile:
    data = text.encode("utf-8") if isinstance(text, str) else text
    return SimpleUploadedFile(name, data, content_type="text/csv")


def check(client, text, *, kind="sites", name="sites.csv"):
    return client.post(FILES, {"kind": kind, "file": upload(text, name)})


def registry_rows() -> tuple:
    return (Site.objects.count(), Building.objects.count(), AHU.objects.count(), list(Site.objects.values()))


def test_a_file_with_bad_rows_imports_nothing_and_lists_every_problem(scenario, login):
    client = login(scenario.supervisor)
    before = registry_rows()
    res = check(client, BAD_SITES)
    assert res.status_code == 400
    page = res.content.decode()
    assert "Nothing was imported" in page
    # Every problem: its row, its column, the value and what is allowed.
    table = page[page.index("csv-errors") :]
    rows = re.findall(r"<tr><th scope=\"row\">Row (\d+)</th><td data-label=\"Column\">([^<]*)</td>", table)
    assert ("3", "latitude") in rows
    assert {("4", "name"), ("5", "longitude"), ("6", "time_zone")} <= set(rows)
    assert len(rows) == 4
    assert "abc" in table and "Mars/Olympus" in table and "is not a number" in table
    assert registry_rows() == before
    # No confirm step is offered for a refused file.
    assert "registry_csv_checked" not in client.session and "Import 2 rows" not in page


def test_a_good_file_is_checked_then_imported_when_confirmed(scenario, login):
    client = login(scenario.supervisor)
    Site.objects.filter(pk=scenario.site_a.pk).update(code="quay-north")  # the file renames this one
    before = Site.objects.count()
    res = check(client, GOOD_SITES)
    assert res.status_code == 200
    page = res.content.decode()
    assert "ready to import" in page and "1 new and 1 to update" in page
    assert Site.objects.count() == before  # the check stored nothing
    token = client.session["registry_csv_checked"]["token"]
    res = client.post(CONFIRM, {"token": token})
    assert res.status_code == 200
    page = res.content.decode()
    assert "Imported sites.csv: 1 new, 1 updated" in page
    assert "Row 2: quay-north — updated" in page and "Row 3: quay-south — created" in page
    assert Site.objects.count() == before + 1
    assert Site.objects.get(code="quay-north").name == "Quay North"
    event = AuditEvent.objects.get(action="registry_import")
    assert event.actor == scenario.supervisor and event.changes["created"] == 1
    # The same confirmation again imports nothing (the check is closed).
    res = client.post(CONFIRM, {"token": token}, follow=True)
    assert "Nothing was imported" in res.content.decode()
    assert AuditEvent.objects.filter(action="registry_import").count() == 1


def test_confirming_a_file_the_registry_no_longer_fits_imports_nothing(scenario, login):
    """Between check and confirm a colleague renamed the unit: every row is checked again; all or none."""
    client = login(scenario.supervisor)
    unit = scenario.unit_a
    parts = (
        "site_code,building_code,ahu_tag,name,kind,spec.free_area_m2,spec.mesh_mm\n"
        f"{scenario.site_a.code},{unit.building.code},AHU-01,Second intake screen,intake_screen,1.1,12\n"
    )
    assert check(client, parts, kind="components", name="parts.csv").status_code == 200
    token = client.session["registry_csv_checked"]["token"]
    AHU.objects.filter(pk=unit.pk).update(tag="AHU-01A")
    count = unit.components.count()
    res = client.post(CONFIRM, {"token": token})
    assert res.status_code == 400
    page = res.content.decode()
    assert "Nothing was imported" in page and "The registry changed since the file was checked" in page
    assert "Unit tag: no unit" in page and "units there: AHU-01A" in page and "import the units first" in page
    assert unit.components.count() == count


@pytest.mark.parametrize(
    ("text", "name", "kind", "words"),
    [
        (b"%PDF-1.7 binary", "registry.pdf", "sites", "'registry.pdf' is not a CSV file"),
        (b"", "sites.csv", "sites", "'sites.csv' is empty"),
        (b"PK\x03\x04 workbook", "sites.csv", "sites", "spreadsheet workbook"),
        ("code,name\nq,Caf\xe9\n".encode("latin-1"), "sites.csv", "sites", "not UTF-8"),
        ("name,place\nQuay,North\n", "sites.csv", "sites", "missing column: code; unknown column: 'place'"),
        (f"{SITES_HEADER}\n", "sites.csv", "sites", "has the column names but no rows"),
        (GOOD_SITES, "sites.csv", "ahus", "the columns are those of a file of sites"),
        (GOOD_SITES, "sites.csv", "buildings", "What the file holds: 'buildings' is not offered"),
    ],
)
def test_a_file_that_is_not_a_csv_of_the_kind_is_refused_at_the_file_field(scenario, login, text, name, kind, words):
    client = login(scenario.supervisor)
    before = registry_rows()
    res = check(client, text, kind=kind, name=name)
    assert res.status_code == 400
    page = res.content.decode()
    field = "csv-kind-error" if kind == "buildings" else "csv-file-error"
    error = re.search(rf'id="{field}" role="alert">([^<]*)<', page)
    assert error and words in error.group(1).replace("&#x27;", "'"), page[page.find("errorlist") - 200 :][:800]
    assert registry_rows() == before


def test_no_file_and_an_oversized_file_are_refused_at_the_file_field(scenario, login, settings):
    from frontend.views import registry_files

    client = login(scenario.supervisor)
    res = client.post(FILES, {"kind": "sites"})
    assert res.status_code == 400 and "Choose a CSV file to check." in res.content.decode()
    big = SITES_HEADER + "\n" + "x" * (registry_files.MAX_BYTES + 1)
    res = check(client, big)
    assert res.status_code == 400
    assert "at most 2.0 MB is accepted here" in res.content.decode()


def test_the_registry_csv_downloads_defused_for_a_spreadsheet(scenario, login):
    Site.objects.filter(pk=scenario.site_a.pk).update(address='=HYPERLINK("http://x.invalid")')
    client = login(scenario.supervisor)
    page = client.get(FILES).content.decode()
    assert reverse("frontend:registry_export", kwargs={"kind": "sites"}) in page
    res = client.get(reverse("frontend:registry_export", kwargs={"kind": "sites"}))
    assert res.status_code == 200 and res["Content-Type"].startswith("text/csv")
    assert 'filename="plenum-sites.csv"' in res["Content-Disposition"]
    text = res.content.decode("utf-8-sig")
    assert text.splitlines()[0].startswith("code,name,address")
    assert "'=HYPERLINK" in text  # marked as text, never a formula
    assert scenario.site_b.code in text
    one = client.get(reverse("frontend:registry_export", kwargs={"kind": "ahus"}), {"site": scenario.site_b.code})
    assert "AHU-07" in one.content.decode() and "AHU-01" not in one.content.decode()
    assert (
        client.get(reverse("frontend:registry_export", kwargs={"kind": "ahus"}), {"site": "nowhere"}).status_code == 404
    )
    assert client.get("/registry/files/export/people.csv").status_code == 404


@pytest.mark.parametrize("who", ["technician", "manager_a"])
def test_people_who_do_not_manage_the_registry_get_no_files(scenario, login, who):
    client = login(getattr(scenario, who))
    assert client.get(FILES).status_code == 403
    assert client.get(reverse("frontend:registry_export", kwargs={"kind": "sites"})).status_code == 403
    assert check(client, GOOD_SITES).status_code == 403
    assert client.get(
        reverse("frontend:registry_unit_qr", kwargs={"pk": scenario.unit_a.pk, "fmt": "png"})
    ).status_code in (403, 404)
    assert not Site.objects.filter(code="quay-north").exists()


def test_a_units_qr_image_downloads_as_svg_and_png_from_its_page(scenario, login):
    client = login(scenario.supervisor)
    unit = scenario.unit_a
    page = client.get(reverse("frontend:registry_unit", kwargs={"pk": unit.pk})).content.decode()
    svg_url = reverse("frontend:registry_unit_qr", kwargs={"pk": unit.pk, "fmt": "svg"})
    png_url = reverse("frontend:registry_unit_qr", kwargs={"pk": unit.pk, "fmt": "png"})
    assert svg_url in page and png_url in page
    svg = client.get(svg_url)
    assert svg["Content-Type"] == "image/svg+xml" and b"<svg" in svg.content
    assert f'filename="plenum-label-{unit.label_code}.svg"' in svg["Content-Disposition"]
    png = client.get(png_url)
    assert png["Content-Type"] == "image/png" and png.content[:8] == b"\x89PNG\r\n\x1a\n"
    assert client.get(f"/registry/unit/{unit.pk}/qr.gif").status_code == 404


def test_label_sheets_are_offered_per_site_and_per_building(scenario, login):
    client = login(scenario.supervisor)
    page = client.get(FILES).content.decode()
    assert "One label for each unit of Harbour House" in page
    assert "One label for each unit of North block (Harbour House)" in page
    assert f'name="site" value="{scenario.site_a.pk}"' in page
    assert f'name="units" value="{scenario.unit_b.pk}"' in page
    res = client.post(
        reverse("frontend:record_request"),
        {"kind": "labels", "units": [scenario.unit_a.pk], "layout": "a4-3x8", "next": FILES},
    )
    assert res.status_code == 302


def test_a_units_row_lists_every_bad_cell_at_once_in_plain_words(scenario, login):
    """A new user's tryout: a bad date hid a fraction of 1.7, heat recovery 'magic' and status 'running'; an
    unknown site code hid the rest of its row. All are listed at once, each naming the field, value and rule."""
    client = login(scenario.supervisor)
    before = registry_rows()
    text = (
        "site_code,building_code,building_name,tag,design_supply_airflow_m3s,design_min_oa_fraction,heat_recovery,"
        "service_start,status\n"
        f"{scenario.site_a.code},north,North block,AHU-30,2.5,1.7,magic,2020-13-01,running\n"
        "nowhere,north,North block,AHU-31,-3,0.5,none,,\n"
    )
    res = check(client, text, kind="ahus", name="units.csv")
    assert res.status_code == 400
    page = res.content.decode()
    table = page[page.index("csv-errors") :]
    rows = set(re.findall(r"<tr><th scope=\"row\">Row (\d+)</th><td data-label=\"Column\">([^<]*)</td>", table))
    assert rows == {
        ("2", "service_start"),
        ("2", "design_min_oa_fraction"),
        ("2", "heat_recovery"),
        ("2", "status"),
        ("3", "site_code"),
        ("3", "design_supply_airflow_m3s"),
    }
    for words in (
        "Service start: &#x27;2020-13-01&#x27; is not a date; allowed: a date as YYYY-MM-DD",
        "Design minimum outdoor-air fraction: 1.7 is out of range; allowed: a number from 0 to 1",
        "Heat recovery: &#x27;magic&#x27; is not one of the choices; allowed: one of none, wheel, plate, run_around",
        "Status: &#x27;running&#x27; is not one of the choices",
        "Site code: no site with code &#x27;nowhere&#x27; in your organisation; your site codes: ",
        "Design supply airflow: -3 m³/s is out of range; allowed: a number from 0.01 to 100 m³/s",
    ):
        assert words in table, words
    assert scenario.org.slug not in table
    assert "Ensure this value" not in table and "is not a valid choice" not in table
    assert registry_rows() == before


def test_the_parts_download_carries_a_retired_day(scenario, login):
    import datetime as dt

    from inventory.services import component_retire

    part = scenario.unit_a.components.get(name="Drain pan")
    component_retire(component=part, on=dt.date(2024, 5, 2))
    client = login(scenario.supervisor)
    text = client.get(reverse("frontend:registry_export", kwargs={"kind": "components"})).content.decode("utf-8-sig")
    header = text.splitlines()[0].split(",")
    line = next(row for row in text.splitlines() if ",Drain pan," in row).split(",")
    assert line[header.index("retired_on")] == "2024-05-02"
    active = next(row for row in text.splitlines() if ",Heating coil," in row).split(",")
    assert active[header.index("retired_on")] == ""
