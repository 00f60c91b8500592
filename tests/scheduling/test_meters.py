"""Run-hour meter readings."""

import datetime as dt

import pytest
from django.core.exceptions import ValidationError
from django.core.management import CommandError, call_command

from scheduling.models import MeterReading
from scheduling.services import meter_reading_record
from tests.factories.inventory import AHUFactory

pytestmark = pytest.mark.django_db
T0 = dt.datetime(2025, 1, 10, 8, tzinfo=dt.UTC)


def test_meter_reading_below_the_last_one_is_refused():
    """A meter reading below the last one is refused, naming the value and the previous reading."""
    ahu = AHUFactory()
    meter_reading_record(ahu=ahu, hours=5200, taken_at=T0, source="manual")
    with pytest.raises(ValidationError) as exc:
        meter_reading_record(ahu=ahu, hours=5100, taken_at=T0 + dt.timedelta(days=3), source="manual")
    message = exc.value.message_dict["hours"][0]
    assert "Run hours 5100 h is below the previous reading of 5200 h" in message
    assert "meter replacement" in message and "is_reset" not in message and "hours=" not in message
    assert MeterReading.objects.count() == 1


def test_meter_reset_is_accepted_when_marked():
    """A replaced meter starting again from zero is accepted when marked as a reset."""
    ahu = AHUFactory()
    meter_reading_record(ahu=ahu, hours=5200, taken_at=T0, source="manual")
    meter_reading_record(ahu=ahu, hours=3, taken_at=T0 + dt.timedelta(days=3), source="manual", is_reset=True)
    meter_reading_record(ahu=ahu, hours=40, taken_at=T0 + dt.timedelta(days=5), source="manual")
    assert MeterReading.objects.count() == 3


def test_bas_csv_import_is_all_or_nothing(tmp_path):
    """A building-automation CSV with one bad row imports nothing and names the row."""
    ahu = AHUFactory()
    org = ahu.building.site.organisation
    good = (
        f"unit_label,taken_at,hours\n{ahu.label_code},2025-01-10 08:00,1000\n{ahu.label_code},2025-01-20 08:00,1200\n"
    )
    bad = good + f"{ahu.label_code},2025-01-30 08:00,900\n"
    path = tmp_path / "bad.csv"
    path.write_text(bad)
    with pytest.raises(CommandError, match="row 4: hours: Run hours 900 h is below"):
        call_command("import_meter_readings", str(path), organisation=org.slug)
    assert MeterReading.objects.count() == 0
    path.write_text(good)
    call_command("import_meter_readings", str(path), organisation=org.slug)
    reading = MeterReading.objects.order_by("taken_at").first()
    # Read in the site's time zone (Europe/Amsterdam, UTC+1 in January).
    assert reading.taken_at == dt.datetime(2025, 1, 10, 7, tzinfo=dt.UTC) and reading.source == "bas_csv"
