"""CSV import and export: all rows or none, every problem reported, and a lossless round trip."""

import csv
import io

import pytest
from django.core.management import CommandError, call_command

from accounts.models import Role
from inventory import csv_io
from inventory.models import AHU, Component, Site
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

SITES_HEADER = "code,name,latitude,longitude,time_zone,normals_min_c\n"


def _import(kind, text, org, **kw):
    return csv_io.registry_import(kind=kind, source=io.StringIO(text), organisation=org, **kw)


def _export(kind, sites):
    out = io.StringIO()
    csv_io.registry_export(kind=kind, sites=sites, out=out)
    return out.getvalue()


@pytest.mark.django_db
def test_bad_site_rows_import_nothing_and_each_problem_is_reported():
    """Three bad rows among good ones: nothing is saved and each error has line, column, value and reason."""
    org = OrganisationFactory()
    text = SITES_HEADER + (
        "north,North Yard,53.1,9.9,Europe/Berlin,\n"  # line 2: fine
        "south,South Yard,95,9.9,Europe/Berlin,\n"  # line 3: latitude out of range
        "east,East Yard,53.1,east,Europe/Berlin,\n"  # line 4: not a number
        "west,West Yard,53.1,9.9,Mars/Olympus,1;2;3\n"  # line 5: two problems
    )
    with pytest.raises(csv_io.ImportFailed) as exc:
        _import("sites", text, org)
    found = {(e.line, e.column): e for e in exc.value.errors}
    assert set(found) == {(3, "latitude"), (4, "longitude"), (5, "normals_min_c")} | ({(5, "time_zone")} & set(found))
    assert found[(3, "latitude")].value == "95"
    assert "90" in found[(3, "latitude")].reason
    assert found[(4, "longitude")].value == "east"
    assert "not a number" in found[(4, "longitude")].reason
    assert "12 monthly values" in found[(5, "normals_min_c")].reason
    assert Site.objects.count() == 0
    assert str(exc.value) == f"{len(exc.value.errors)} problems found; nothing was imported"


@pytest.mark.django_db
def test_bad_component_rows_name_the_spec_column():
    """Spec problems point at the spec.<field> column with the cell's value; no component is saved."""
    ahu = make_full_unit()
    org = ahu.building.site.organisation
    key = f"{ahu.building.site.code},{ahu.building.code},{ahu.tag}"
    before = Component.objects.count()
    text = (
        "site_code,building_code,ahu_tag,name,kind,parent,spec.role,spec.actuator,spec.stroke_time_s,spec.has_trap\n"
        f"{key},New damper,damper,,outdoor,manual,60,\n"  # line 2: fine
        f"{key},Bad damper,damper,,sideways,manual,9000,\n"  # line 3: bad role and stroke time
        f"{key},Pan,drain_pan,Nowhere,,,,true\n"  # line 4: unknown parent
        f"{key},Pan 2,drain_pan,,,,,maybe\n"  # line 5: not a bool
        f"{key},Odd,toaster,,,,,\n"  # line 6: unknown kind
        f"{ahu.building.site.code},{ahu.building.code},AHU-NOPE,X,damper,,outdoor,manual,60,\n"  # line 7
    )
    with pytest.raises(csv_io.ImportFailed) as exc:
        _import("components", text, org)
    found = {(e.line, e.column): e for e in exc.value.errors}
    assert found[(3, "spec.role")].value == "sideways"
    assert "one of outdoor, return, exhaust, mixing" in found[(3, "spec.role")].reason
    assert found[(3, "spec.stroke_time_s")].value == "9000"
    assert "1 to 600 s" in found[(3, "spec.stroke_time_s")].reason
    assert found[(4, "parent")].value == "Nowhere"
    assert found[(5, "spec.has_trap")].value == "maybe"
    assert "true or false" in found[(5, "spec.has_trap")].reason
    assert found[(6, "kind")].value == "toaster"
    assert found[(7, "ahu_tag")].value == "AHU-NOPE"
    assert 2 not in {e.line for e in exc.value.errors}
    assert Component.objects.count() == before


@pytest.mark.django_db
def test_unknown_column_is_refused_before_any_row():
    """A misspelt column is refused, naming it, rather than silently ignored."""
    with pytest.raises(csv_io.ImportFailed) as exc:
        _import("sites", "code,name,latitud,longitude\nx,X,1,2\n", OrganisationFactory())
    assert [(e.line, e.column) for e in exc.value.errors] == [(1, "latitud")]


@pytest.mark.django_db
def test_dry_run_checks_but_saves_nothing():
    """A dry run reports what would be imported and leaves the database unchanged."""
    org = OrganisationFactory()
    result = _import("sites", SITES_HEADER + "north,North Yard,53.1,9.9,Europe/Berlin,\n", org, dry_run=True)
    assert (result.created, result.dry_run) == (1, True)
    assert Site.objects.count() == 0


@pytest.mark.django_db
def test_round_trip_preserves_the_registry():
    """Export three files, delete everything, import them into a fresh organisation: the export is identical."""
    ahu = make_full_unit()
    ahu.components.filter(kind="drain_pan").update(parent=ahu.components.get(name="Cooling coil"))
    site = ahu.building.site
    site.client = OrganisationFactory(slug="owner-x", kind="owner")
    site.save()
    sites = Site.objects.filter(pk=site.pk)
    files = {kind: _export(kind, sites) for kind in csv_io.KINDS}
    assert files["components"].count("\n") == 13
    AHU.objects.all().delete()
    Site.objects.all().delete()
    target = OrganisationFactory()
    for kind in csv_io.KINDS:
        result = _import(kind, files[kind], target)
        assert result.created >= 1
    again = {kind: _export(kind, Site.objects.filter(organisation=target)) for kind in csv_io.KINDS}
    assert again == files
    # and importing the same files again only updates
    assert _import("components", files["components"], target).created == 0


@pytest.mark.django_db
def test_sample_files_import_in_order():
    """The documented sample files import cleanly, sites then units then components."""
    from django.conf import settings

    org = OrganisationFactory(slug="saltmarrow")
    OrganisationFactory(slug="ostry-lane", kind="owner")
    for kind in csv_io.KINDS:
        path = settings.BASE_DIR / "fixtures" / f"sample_{kind}.csv"
        _import(kind, csv_io.decode_upload(path.read_bytes()).read(), org)
    assert Site.objects.count() == 3
    assert AHU.objects.count() == 4
    assert Component.objects.filter(kind="drain_pan", parent__kind="coil").exists()


@pytest.mark.django_db
def test_commands(tmp_path, capsys):
    """export_registry writes a file import_registry reads; a bad file fails the command listing the rows."""
    ahu = make_full_unit()
    org = ahu.building.site.organisation
    path = tmp_path / "ahus.csv"
    call_command("export_registry", "--kind", "ahus", str(path))
    call_command("import_registry", "--kind", "ahus", str(path), "--organisation", org.slug, "--dry-run")
    assert "would import 0 new, 1 updated" in capsys.readouterr().out
    rows = list(csv.DictReader(path.open(newline="")))
    rows[0]["design_supply_airflow_m3s"] = "-1"
    with path.open("w", newline="") as out:
        writer = csv.DictWriter(out, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    with pytest.raises(CommandError, match="nothing was imported"):
        call_command("import_registry", "--kind", "ahus", str(path), "--organisation", org.slug)
    assert "design_supply_airflow_m3s" in capsys.readouterr().err


def test_api_import_reports_rows_and_export_is_tenancy_filtered(world, api_client):
    """The API import answers 400 with the row errors; export holds only the organisation's rows
    and is refused to a property manager (it is the contractor's registry, not their records)."""
    api_client.force_authenticate(world.people[Role.SUPERVISOR])
    bad = io.BytesIO((SITES_HEADER + "n,N,91,9,Europe/Berlin,\n").encode())
    bad.name = "sites.csv"
    response = api_client.post("/api/inventory/import/sites/", {"file": bad}, format="multipart")
    assert response.status_code == 400
    assert response.json()["errors"] == [
        {**response.json()["errors"][0], "line": 2, "column": "latitude", "value": "91"}
    ]
    good = io.BytesIO((SITES_HEADER + "n,N,51,9,Europe/Berlin,\n").encode())
    good.name = "sites.csv"
    response = api_client.post("/api/inventory/import/sites/", {"file": good}, format="multipart")
    assert response.status_code == 200
    assert response.json()["created"] == 1
    assert Site.objects.get(code="n").organisation == world.org_a
    exported = api_client.get("/api/inventory/export/ahus/").content.decode()
    assert "AHU-own" in exported and "AHU-other" in exported and "AHU-foreign" not in exported
    # A site code nobody manages is an error naming it, not an empty file that reads as "no units there".
    unknown = api_client.get("/api/inventory/export/ahus/?site=nope")
    assert unknown.status_code == 404 and "site='nope'" in unknown.json()["detail"]
    api_client.force_authenticate(world.people[Role.PROPERTY_MANAGER])
    refused = api_client.get("/api/inventory/export/ahus/")
    assert refused.status_code == 403 and "AHU-own" not in refused.content.decode()
    good.seek(0)
    assert api_client.post("/api/inventory/import/sites/", {"file": good}, format="multipart").status_code == 403
    assert api_client.get("/api/inventory/export/toasters/").status_code == 404


# ---------------------------------------------------------------------------
# A file a spreadsheet opens safely
# ---------------------------------------------------------------------------
@pytest.mark.django_db
@pytest.mark.parametrize(
    "note",
    [
        "=1+2",
        "+1+2",
        "-2+3",
        "@SUM(A1:A2)",
        "|calc",
        "%0A=1",
        '=cmd|" /C calc"!A0',
        "\t=1+2",
        "\r=1+2",
        "'=1+2",  # a person's own apostrophe before a formula character survives the round trip
    ],
)
def test_formula_cells_are_marked_on_export_and_read_back_unchanged(note):
    """A text cell beginning with = + - @ | % (or a tab/CR/apostrophe before one) gets a leading apostrophe,
    which a spreadsheet shows as text instead of running; importing the file gives the text back."""
    ahu = make_full_unit(notes=note, location="Roof")
    exported = _export("ahus", Site.objects.all())
    row = next(csv.DictReader(io.StringIO(exported.removeprefix("\ufeff"), newline="")))
    assert row["notes"].startswith("'")
    assert row["notes"][1:].replace("\\|", "|") == note
    assert row["location"] == "Roof"
    _import("ahus", exported, ahu.building.site.organisation)
    ahu.refresh_from_db()
    assert ahu.notes == note.strip()  # import trims spaces, tabs and line breaks around text, as always


@pytest.mark.django_db
def test_numbers_are_written_as_numbers_even_when_negative():
    """Decision: a number is never a formula, so -5.25 °W or a -3 °C threshold is written bare for a spreadsheet
    to add up; a text cell that is only a number (a tag of "-5") is left bare too, as defusedcsv does."""
    site = SiteFactory(longitude=-5.25, altitude_m=-2.0, preheat_threshold_c=-3.0)
    make_full_unit(building=BuildingFactory(site=site), tag="-5")
    site_row = next(csv.DictReader(io.StringIO(_export("sites", Site.objects.all()).removeprefix("\ufeff"))))
    assert (site_row["longitude"], site_row["altitude_m"], site_row["preheat_threshold_c"]) == ("-5.25", "-2", "-3")
    assert site_row["normals_min_c"].startswith("'-")  # a list of numbers is text: "-2;-1.5;…" gets the mark
    unit_row = next(csv.DictReader(io.StringIO(_export("ahus", Site.objects.all()).removeprefix("\ufeff"))))
    assert unit_row["tag"] == "-5"


@pytest.mark.django_db
def test_export_has_a_byte_order_mark_and_crlf_and_import_takes_either():
    """Export: UTF-8 with BOM and CRLF (accents survive in a spreadsheet). Import: with or without the BOM,
    with CRLF or LF, the same file imports the same."""
    site = SiteFactory(name="Gare du Nord – Bâtiment É", code="gare")
    exported = _export("sites", Site.objects.filter(pk=site.pk))
    assert exported.startswith("\ufeff")
    assert exported.count("\r\n") == 2 and "\n" not in exported.replace("\r\n", "")
    body = exported.removeprefix("\ufeff")
    variants = {
        "bom-crlf": exported.encode(),
        "bom-lf": ("\ufeff" + body.replace("\r\n", "\n")).encode(),
        "crlf": body.encode(),
        "lf": body.replace("\r\n", "\n").encode(),
    }
    for name, data in variants.items():
        org = OrganisationFactory()
        result = csv_io.registry_import(kind="sites", source=csv_io.decode_upload(data), organisation=org)
        assert result.created == 1, name
        assert Site.objects.get(organisation=org).name == "Gare du Nord – Bâtiment É", name


@pytest.mark.django_db
@pytest.mark.parametrize("char,name", [("\x00", "NUL"), ("\x07", "U+0007"), ("\x1b", "U+001B"), ("\x7f", "DEL")])
def test_control_characters_in_a_cell_are_refused(char, name):
    """A NUL or other control character is refused naming line, column and the character; nothing is saved."""
    org = OrganisationFactory()
    text = SITES_HEADER + "north,North Yard,53.1,9.9,Europe/Berlin,\n" + f"south,South{char} Yard,53.1,9.9,UTC,\n"
    with pytest.raises(csv_io.ImportFailed) as exc:
        _import("sites", text, org)
    [error] = exc.value.errors
    assert (error.line, error.column) == (3, "name")
    assert name in error.reason
    assert error.value == f"South\\x{ord(char):02x} Yard"
    assert Site.objects.count() == 0


@pytest.mark.django_db
def test_label_codes_named_twice_in_a_file_are_refused():
    """Two rows claiming one label code: the second is refused, nothing imported (checked in memory, not per query)."""
    site = SiteFactory()
    text = (
        "site_code,building_code,tag,label_code,design_supply_airflow_m3s,design_min_oa_fraction\n"
        f"{site.code},b1,AHU-1,U2345AB,2,0.3\n"
        f"{site.code},b1,AHU-2,U2345AB,2,0.3\n"
    )
    with pytest.raises(csv_io.ImportFailed) as exc:
        _import("ahus", text, site.organisation)
    assert [(e.line, e.column) for e in exc.value.errors] == [(3, "label_code")]
    assert AHU.objects.count() == 0
