"""Management commands: outdoor-temperature and meter-reading imports, and the report they give."""

import datetime as dt
from io import StringIO

import pytest
from django.core.management import CommandError, call_command

from scheduling.models import MeterReading, OutdoorTemperature
from tests.factories.inventory import AHUFactory, SiteFactory

pytestmark = pytest.mark.django_db


def run(name, *args, **options) -> str:
    out = StringIO()
    call_command(name, *args, stdout=out, **options)
    return out.getvalue()


def test_outdoor_temperature_import_reports_days_per_site(tmp_path):
    """A daily CSV for two sites is stored as CSV days and the command prints the days per site."""
    north = SiteFactory(code="north")
    south = SiteFactory(code="south", organisation=north.organisation)
    path = tmp_path / "temps.csv"
    path.write_text(
        "site_code,date,min_c,max_c,mean_c\n"
        "north,2025-10-01,3.5,12.0,7.5\nnorth,2025-10-02,-1.0,6.0,\nsouth,2025-10-01,8.0,15.0,11.0\n",
        encoding="utf-8",
    )
    out = run("import_outdoor_temperatures", str(path), organisation=north.organisation.slug)
    assert out.splitlines() == ["north: 2 days", "south: 1 day"]
    row = OutdoorTemperature.objects.get(site=north, date=dt.date(2025, 10, 2))
    assert (row.min_c, row.max_c, row.mean_c, row.source) == (-1.0, 6.0, None, "csv")
    assert OutdoorTemperature.objects.filter(site=south).count() == 1


def test_outdoor_temperature_import_refuses_the_whole_file_naming_each_bad_row(tmp_path):
    """A file with a bad row or a site of another organisation stores nothing and says which row and why."""
    site = SiteFactory(code="north")
    other = SiteFactory(code="elsewhere")
    path = tmp_path / "temps.csv"
    path.write_text("site_code,date,min_c,max_c\nnorth,2025-10-01,3.5,12.0\nnorth,2025-10-02,9.0,4.0\n")
    with pytest.raises(CommandError, match=r"nothing imported:\nrow 3: min_c=9.0 is above max_c=4.0"):
        call_command("import_outdoor_temperatures", str(path), organisation=site.organisation.slug)
    path.write_text(f"site_code,date,min_c,max_c\nnorth,2025-10-01,3.5,12.0\n{other.code},2025-10-01,1,2\n")
    with pytest.raises(CommandError, match="site_code 'elsewhere' is not a site of"):
        call_command("import_outdoor_temperatures", str(path), organisation=site.organisation.slug)
    path.write_text("where,when,temp\nnorth,2025-10-01,3\n")
    with pytest.raises(CommandError, match="columns must be site_code,date,min_c,max_c"):
        call_command("import_outdoor_temperatures", str(path), organisation=site.organisation.slug)
    assert not OutdoorTemperature.objects.exists()


def test_import_commands_refuse_an_unknown_organisation_and_an_unreadable_file(tmp_path):
    """A wrong organisation slug or a missing file is a clear command error, not a traceback."""
    site = SiteFactory()
    for name in ("import_outdoor_temperatures", "import_meter_readings"):
        with pytest.raises(CommandError, match="--organisation='nobody' is not an organisation slug"):
            call_command(name, str(tmp_path / "x.csv"), organisation="nobody")
        with pytest.raises(CommandError, match=r"cannot read .*missing\.csv"):
            call_command(name, str(tmp_path / "missing.csv"), organisation=site.organisation.slug)


def test_meter_import_reports_every_bad_row_and_stores_nothing(tmp_path):
    """The meter-reading import lists every bad row — unknown unit, bad time, wrong component, a reading
    going backwards — and stores none of the file."""
    ahu = AHUFactory()
    stranger = AHUFactory()  # another organisation's unit
    org = ahu.building.site.organisation
    path = tmp_path / "meters.csv"
    path.write_text(
        "unit_label,taken_at,hours,component_label\n"
        f"{ahu.label_code},2025-01-10 08:00,1000,\n"
        f"{stranger.label_code},2025-01-10 08:00,500,\n"
        f"{ahu.label_code},yesterday,1100,\n"
        f"{ahu.label_code},2025-01-12 08:00,1100,NOPE-1\n"
        f"{ahu.label_code},2025-01-20 08:00,900,\n"
    )
    with pytest.raises(CommandError) as exc:
        call_command("import_meter_readings", str(path), organisation=org.slug)
    lines = str(exc.value).splitlines()
    assert lines[0] == "nothing imported:"
    assert [line.split(":")[0] for line in lines[1:]] == ["row 3", "row 4", "row 5", "row 6"]
    assert f"unit_label={stranger.label_code!r} is not a unit of" in lines[1]
    assert "taken_at='yesterday' is not a date-time" in lines[2]
    assert "component_label='NOPE-1' is not a component of" in lines[3]
    assert "Run hours 900 h is below the previous reading of 1000 h" in lines[4]
    assert not MeterReading.objects.exists()


def test_meter_import_names_missing_columns(tmp_path):
    """A CSV without the required columns is refused with the columns it lacks and what is expected."""
    ahu = AHUFactory()
    path = tmp_path / "meters.csv"
    path.write_text(f"unit,hours\n{ahu.label_code},10\n")
    with pytest.raises(CommandError, match=r"missing 2 columns \(unit_label, taken_at\); expected"):
        call_command("import_meter_readings", str(path), organisation=ahu.building.site.organisation.slug)
    out = StringIO()
    path.write_text(f"unit_label,taken_at,hours\n{ahu.label_code},2025-01-10 08:00,10\n")
    call_command("import_meter_readings", str(path), organisation=ahu.building.site.organisation.slug, stdout=out)
    assert out.getvalue() == "imported 1 reading\n"
