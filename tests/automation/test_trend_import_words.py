"""Trend CSV import as a reader meets it: two units of one tag at one site told apart by their label codes, the
point class in plain words with its article, plausible ranges per point class in the file's units, plurals,
and the rows of the hour a clock change repeats counted in the result."""

import datetime as dt

import pytest

from automation.brick import site_brick_turtle
from automation.models import Point, TrendDay
from automation.trends import point_headers, trend_import
from automation.vocabulary import point_class_phrase
from inventory.csv_io import ImportFailed
from tests.factories.accounts import make_person
from tests.factories.inventory import BuildingFactory, make_full_unit

NOW = dt.datetime(2026, 2, 1, 12, 0, tzinfo=dt.UTC)
UTC = dt.UTC


@pytest.fixture
def twins(plant):
    """The plant's site with two more buildings, each with an AHU-02 that has a point named AHU-02.OAT."""
    north = make_full_unit(building=BuildingFactory(site=plant.site, code="north", name="North wing"), tag="AHU-02")
    south = make_full_unit(building=BuildingFactory(site=plant.site, code="south", name="South wing"), tag="AHU-02")
    points = [
        Point.objects.create(ahu=ahu, name="AHU-02.OAT", brick_class="Outside_Air_Temperature_Sensor", unit="DEG_C")
        for ahu in (north, south)
    ]
    return north, south, points


def test_two_units_of_one_tag_are_told_apart_by_label_code(plant, twins):
    """The error lists two different choices, each a header the import takes; the bare tag is not offered."""
    north, south, _points = twins
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text="timestamp,AHU-02.OAT\n2026-01-05 08:00,3\n", layout="wide", now=NOW)
    reason = caught.value.errors[0].reason
    assert f"{north.label_code}/AHU-02.OAT (AHU-02 in North wing)" in reason
    assert f"{south.label_code}/AHU-02.OAT (AHU-02 in South wing)" in reason
    assert "AHU-02/AHU-02.OAT" not in reason  # a tag two units share tells nothing
    with pytest.raises(ImportFailed):
        trend_import(site=plant.site, text="timestamp,AHU-02/AHU-02.OAT\n2026-01-05 08:00,3\n", layout="wide", now=NOW)
    text = f"timestamp,{north.label_code}/AHU-02.OAT,{south.label_code}/AHU-02.OAT\n2026-01-05 08:00,3,4\n"
    trend_import(site=plant.site, text=text, layout="wide", now=NOW)
    stored = {b.point.ahu_id: b.samples()[0][1] for b in TrendDay.objects.select_related("point")}
    assert stored == {north.pk: 3.0, south.pk: 4.0}
    long = f"timestamp,point,value\n2026-01-05 09:00,{south.label_code}/AHU-02.OAT,5\n"
    assert trend_import(site=plant.site, text=long, layout="long", now=NOW).values == 1


def test_the_headers_of_a_site_qualify_only_shared_names(plant, twins):
    north, south, (north_oat, south_oat) = twins
    headers = point_headers(Point.objects.filter(ahu__building__site=plant.site).select_related("ahu"))
    assert headers[north_oat.pk] == f"{north.label_code}/AHU-02.OAT"
    assert headers[south_oat.pk] == f"{south.label_code}/AHU-02.OAT"
    assert headers[plant.points["AHU1.SAT"].pk] == "AHU1.SAT"
    turtle = site_brick_turtle(site=plant.site)
    assert f'"{north.label_code}/AHU-02.OAT"' in turtle and '"AHU1.SAT"' in turtle


def test_out_of_range_names_the_point_class_in_plain_words_with_its_article():
    assert point_class_phrase("Outside_Air_Temperature_Sensor") == "an outdoor air temperature sensor"
    assert point_class_phrase("Supply_Air_Temperature_Sensor") == "a supply air temperature sensor"
    assert point_class_phrase("CO2_Level_Sensor") == "a CO₂ sensor"


def test_outdoor_air_has_a_physical_range_shown_in_the_files_units(plant):
    """61 °C outdoors is refused (−60 to +60 °C); a file in US units sees the range in °F, then °C (141 °F is
    60.6 °C); the importer's own unit system does not change how a file stated as SI reads; 59 °C is taken."""
    text = "timestamp,AHU1.OAT\n2026-01-05 08:00,61\n"
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text=text, layout="wide", now=NOW)
    assert caught.value.errors[0].reason == (
        "is out of range for an outdoor air temperature sensor; allowed: a number from -60 to 60 °C"
    )
    us = make_person(organisation=plant.org_a, role="supervisor", username="us-super")
    us.unit_system = "us"
    us.save(update_fields=["unit_system"])
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text=text, layout="wide", units="si", now=NOW, by=us)
    assert caught.value.errors[0].reason.endswith("allowed: a number from -60 to 60 °C")
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text=text.replace(",61", ",141"), layout="wide", units="us", now=NOW, by=us)
    assert caught.value.errors[0].reason.endswith("allowed: a number from -76 to 140 °F (-60 to 60 °C)")
    assert trend_import(site=plant.site, text=text.replace(",61", ",59"), layout="wide", now=NOW).values == 1


def test_the_result_counts_in_correct_plurals(plant):
    one = trend_import(site=plant.site, text="timestamp,AHU1.SAT\n2026-01-05 08:00,15\n", layout="wide", now=NOW)
    assert one.words() == "Imported 1 value of 1 point from 1 row."
    text = "timestamp,AHU1.SAT\n2026-01-05 08:00,15\n2026-01-05 08:15,15\n2026-01-05 08:30,16\n"
    assert trend_import(site=plant.site, text=text, layout="wide", now=NOW).words() == (
        "Imported 3 values of 1 point from 3 rows."
    )


def test_rows_of_the_repeated_hour_are_counted_and_their_placing_told(plant):
    """25 Oct 2026, Amsterdam: 02:00–02:59 happens twice. A log through it has eight rows in that hour: the first
    four read before the change (CEST), the repeats after it (CET); the result says so. Times with an offset
    and times outside the hour are not counted."""
    times = ["01:45", "02:00", "02:15", "02:30", "02:45", "02:00", "02:15", "02:30", "02:45", "03:00"]
    rows = "".join(f"2026-10-25 {t},{i}\n" for i, t in enumerate(times))
    rows += "2026-10-25T02:40:00+01:00,20\n"
    result = trend_import(
        site=plant.site, text="timestamp,AHU1.SAT\n" + rows, layout="wide", now=dt.datetime(2026, 11, 1, tzinfo=UTC)
    )
    assert (result.repeated_earlier, result.repeated_later) == (4, 4)
    assert result.words() == (
        "Imported 11 values of 1 point from 11 rows. 8 rows fell in the hour repeated when the clocks went back: "
        "4 read as the first pass of that hour (before the change), 4 as the second pass (after it), in the "
        "order of the file."
    )
    plain = trend_import(
        site=plant.site,
        text="timestamp,AHU1.SAT\n2026-01-05 08:00,15\n",
        layout="wide",
        now=dt.datetime(2026, 11, 1, tzinfo=UTC),
    )
    assert (plain.repeated_earlier, plain.repeated_later) == (0, 0) and "clocks" not in plain.words()
