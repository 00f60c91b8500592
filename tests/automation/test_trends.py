"""Trend CSV import: both layouts, the site's zone, every problem at once, day buckets and retention."""

import datetime as dt

import pytest
import time_machine
from django.test import override_settings

from automation.models import Point, TrendDay, TrendImportJob
from automation.trends import trend_import, trend_import_job_create, trend_purge, trend_samples
from inventory.csv_io import ImportFailed
from tests.factories.inventory import BuildingFactory, make_full_unit

NOW = dt.datetime(2026, 2, 1, 12, 0, tzinfo=dt.UTC)
UTC = dt.UTC

WIDE = (
    "timestamp,AHU1.SAT,AHU1.FILT-DP,AHU1.SF-STS\r\n"
    "2026-01-05 08:00,16.8,142,on\r\n"
    "2026-01-05 08:15,17.1,,1\r\n"  # an empty cell is no sample
    "2026-01-05 08:30,17.0,143.5,off\r\n"
)


def _values(point, since, until):
    return [(when, value) for when, value in trend_samples(point=point, since=since, until=until)]


def test_wide_layout_reads_times_in_the_sites_zone(plant):
    """A wide file's times without a zone are Amsterdam's (UTC+1 in January); gaps stay gaps."""
    result = trend_import(site=plant.site, text=WIDE, layout="wide", now=NOW)
    assert (result.rows, result.values, result.points) == (3, 8, 3)
    sat = plant.points["AHU1.SAT"]
    assert _values(sat, NOW - dt.timedelta(days=60), NOW) == [
        (dt.datetime(2026, 1, 5, 7, 0, tzinfo=UTC), 16.8),
        (dt.datetime(2026, 1, 5, 7, 15, tzinfo=UTC), 17.1),
        (dt.datetime(2026, 1, 5, 7, 30, tzinfo=UTC), 17.0),
    ]
    assert [v for _w, v in _values(plant.points["AHU1.FILT-DP"], NOW - dt.timedelta(days=60), NOW)] == [142, 143.5]
    assert [v for _w, v in _values(plant.points["AHU1.SF-STS"], NOW - dt.timedelta(days=60), NOW)] == [1, 1, 0]
    sat.refresh_from_db()
    assert (sat.last_value, sat.last_value_at, sat.stale) == (17.0, dt.datetime(2026, 1, 5, 7, 30, tzinfo=UTC), False)


def test_long_layout_with_offsets_and_any_interval(plant):
    """A long file: one row per time, point and value; a time with an offset keeps it; irregular interval."""
    text = (
        "timestamp,point,value\n"
        "2026-01-05T08:00:00+01:00,AHU1.OAT,-3.5\n"
        "2026-01-05T08:07:00+01:00,AHU1.OAT,-3.4\n"
        "2026-01-05 09:00,AHU1.OAT,-3.0\n"
        "2026-01-05 09:00,AHU1.OAD-CMD,20\n"
    )
    result = trend_import(site=plant.site, text=text, layout="long", now=NOW)
    assert (result.rows, result.values, result.points) == (4, 4, 2)
    oat = _values(plant.points["AHU1.OAT"], NOW - dt.timedelta(days=60), NOW)
    assert [w.astimezone(UTC).strftime("%H:%M") for w, _v in oat] == ["07:00", "07:07", "08:00"]


def test_a_site_in_another_zone(plant):
    """The same wall-clock time at a New York site is five hours later in UTC (EST, UTC−5, in January)."""
    text = "timestamp,point,value\n2026-01-05 08:00,AHU1.SAT,15\n"
    trend_import(site=plant.foreign_site, text=text, layout="long", now=NOW)
    sat = plant.foreign_points["AHU1.SAT"]
    assert _values(sat, NOW - dt.timedelta(days=60), NOW) == [(dt.datetime(2026, 1, 5, 13, 0, tzinfo=UTC), 15.0)]


def test_the_hour_the_clocks_go_back(plant):
    """On 25 Oct 2026 Amsterdam's clocks go from 03:00 CEST back to 02:00 CET: a 15-minute log repeats 02:00–02:45;
    the second pass is the later hour, so eight samples land on eight different instants."""
    times = ["02:00", "02:15", "02:30", "02:45"] * 2
    text = "timestamp,AHU1.SAT\n" + "".join(f"2026-10-25 {t},{i}\n" for i, t in enumerate(times))
    result = trend_import(site=plant.site, text=text, layout="wide", now=dt.datetime(2026, 11, 1, tzinfo=UTC))
    assert result.values == 8
    stored = _values(
        plant.points["AHU1.SAT"], dt.datetime(2026, 10, 24, tzinfo=UTC), dt.datetime(2026, 10, 26, tzinfo=UTC)
    )
    assert [w.strftime("%H:%M") for w, _v in stored] == [
        "00:00",
        "00:15",
        "00:30",
        "00:45",
        "01:00",
        "01:15",
        "01:30",
        "01:45",
    ]


def test_the_repeated_hour_in_a_long_file_sorted_by_point(plant):
    """A long file listing one point's night and then the next point's: each point's second 02:00 is the later
    hour, and the second point's first 02:00 is the earlier one (the repeat is judged per point)."""
    times = ["01:45", "02:00", "02:30", "02:00", "02:30", "03:00"]
    rows = [f"2026-10-25 {t},{name},{i}" for name in ("AHU1.SAT", "AHU1.RAT") for i, t in enumerate(times)]
    trend_import(site=plant.site, text="timestamp,point,value\n" + "\n".join(rows), layout="long",
                 now=dt.datetime(2026, 11, 1, tzinfo=UTC))  # fmt: skip
    for name in ("AHU1.SAT", "AHU1.RAT"):
        stored = _values(
            plant.points[name], dt.datetime(2026, 10, 24, tzinfo=UTC), dt.datetime(2026, 10, 26, tzinfo=UTC)
        )
        assert [w.strftime("%H:%M") for w, _v in stored] == ["23:45", "00:00", "00:30", "01:00", "01:30", "02:00"]


def test_every_bad_row_and_cell_is_listed_and_nothing_is_stored(plant):
    """Unknown point column, a time that is no time, a future time, a text value, an out-of-range value and a
    fan status of 2: each named with line, column, value and what is allowed; no value is stored."""
    text = (
        "timestamp,AHU1.SAT,AHU1.FILT-DP,AHU1.SF-STS\n"
        "2026-01-05 08:00,16.8,142,on\n"
        "05/01/2026 08:15,17.1,143,1\n"
        "2026-03-01 08:30,17.0,143.5,off\n"
        "2026-01-05 08:45,warm,-99999,2\n"
    )
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text=text, layout="wide", now=NOW)
    problems = {(e.line, e.column): e for e in caught.value.errors}
    assert set(problems) == {
        (3, "timestamp"),
        (4, "timestamp"),
        (5, "AHU1.SAT"),
        (5, "AHU1.FILT-DP"),
        (5, "AHU1.SF-STS"),
    }
    assert "allowed: a date-time like 2025-03-01 08:00" in problems[(3, "timestamp")].reason
    assert "later than now" in problems[(4, "timestamp")].reason
    assert problems[(5, "AHU1.SAT")].value == "warm"
    assert "allowed: a number from -40 to 90 °C" in problems[(5, "AHU1.SAT")].reason
    assert "allowed: a number from -50 to 2500 Pa" in problems[(5, "AHU1.FILT-DP")].reason
    assert "allowed: 1 or 0, on or off" in problems[(5, "AHU1.SF-STS")].reason
    assert not TrendDay.objects.exists()


def test_unknown_and_ambiguous_points_are_named(plant):
    """A column that names no point is refused; a name two units share asks for '<label code>/<name>'; where the
    tags differ, '<tag>/<name>' works too."""
    second = make_full_unit(building=BuildingFactory(site=plant.site, code="annex"), tag="AHU-02")
    Point.objects.create(ahu=second, name="AHU1.SAT", brick_class="Supply_Air_Temperature_Sensor", unit="DEG_C")
    text = "timestamp,point,value\n2026-01-05 08:00,AHU1.SAT,15\n2026-01-05 08:00,NOPE,1\n"
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text=text, layout="long", now=NOW)
    reasons = {e.value: e.reason for e in caught.value.errors}
    first, other = plant.ahu.label_code, second.label_code
    assert f"{first}/AHU1.SAT (AHU-01 in Main block)" in reasons["AHU1.SAT"]
    assert f"{other}/AHU1.SAT (AHU-02 in " in reasons["AHU1.SAT"]
    assert "no point of the site" in reasons["NOPE"]
    trend_import(site=plant.site, text="timestamp,AHU-02/AHU1.SAT\n2026-01-05 08:00,15\n", layout="wide", now=NOW)
    assert TrendDay.objects.get().point.ahu == second


def test_a_point_of_another_organisation_is_not_found(plant):
    """A file for one site cannot write to another site's points, even of the same name."""
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text="timestamp,point,value\n2026-01-05 08:00,AHU-01/AHU1.CO2x,400\n",
                     layout="long", now=NOW)  # fmt: skip
    assert caught.value.errors[0].column == "point"
    assert not TrendDay.objects.filter(point__ahu=plant.foreign_ahu).exists()


def test_conflicting_duplicates_are_refused_and_reimport_changes_nothing(plant):
    """Two different values for one point and time are refused; importing the same file twice stores it once."""
    text = "timestamp,point,value\n2026-01-05 08:00,AHU1.SAT,15\n2026-01-05 08:00,AHU1.SAT,16\n"
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text=text, layout="long", now=NOW)
    assert "first is on line 2" in caught.value.errors[0].reason
    trend_import(site=plant.site, text=WIDE, layout="wide", now=NOW)
    trend_import(site=plant.site, text=WIDE, layout="wide", now=NOW)
    bucket = TrendDay.objects.get(point=plant.points["AHU1.SAT"])
    assert bucket.count == 3


def test_samples_merge_into_day_buckets_per_utc_day(plant):
    """A day of 15-minute samples is one row per point; a later file for the same day merges into it."""
    rows = [f"2026-01-06 {h:02d}:{m:02d},{h + m / 60:.2f}" for h in range(24) for m in (0, 15, 30, 45)]
    trend_import(site=plant.site, text="timestamp,AHU1.RAT\n" + "\n".join(rows[:50]), layout="wide", now=NOW)
    trend_import(site=plant.site, text="timestamp,AHU1.RAT\n" + "\n".join(rows[50:]), layout="wide", now=NOW)
    buckets = TrendDay.objects.filter(point=plant.points["AHU1.RAT"]).order_by("day")
    # Amsterdam's day 6 January is 5 Jan 23:00 to 6 Jan 23:00 UTC: two UTC days.
    assert [(b.day.isoformat(), b.count) for b in buckets] == [("2026-01-05", 4), ("2026-01-06", 92)]
    assert len(bytes(buckets[1].values)) == 92 * 8


def test_purge_keeps_the_retention_window(plant):
    """Buckets older than PLENUM_TREND_RETENTION_DAYS go; newer ones stay."""
    trend_import(site=plant.site, text=WIDE, layout="wide", now=NOW)
    with override_settings(PLENUM_TREND_RETENTION_DAYS=30):
        assert trend_purge(now=dt.datetime(2026, 2, 4, tzinfo=UTC)) == 0
        assert trend_purge(now=dt.datetime(2026, 2, 5, tzinfo=UTC)) == 3
    assert not TrendDay.objects.exists()


def test_background_job_is_all_or_nothing(plant, django_capture_on_commit_callbacks):
    """A big file runs as a job (eager in tests): a good file is stored; a bad one is refused with every row."""
    with time_machine.travel(NOW, tick=False):
        with django_capture_on_commit_callbacks(execute=True):
            job = trend_import_job_create(site=plant.site, text=WIDE, layout="wide", by=plant.people.supervisor)
        job.refresh_from_db()
        assert (job.status, job.values_stored, job.source) == (TrendImportJob.Status.DONE, 8, "")
        with django_capture_on_commit_callbacks(execute=True):
            bad = trend_import_job_create(
                site=plant.site, text=WIDE.replace("142", "hot").replace("17.0", "x"), layout="wide", by=None
            )
        bad.refresh_from_db()
    assert bad.status == TrendImportJob.Status.REFUSED
    assert [(e["line"], e["column"]) for e in bad.errors] == [(2, "AHU1.FILT-DP"), (4, "AHU1.SAT")]


def test_a_semicolon_export_with_decimal_commas_reads_as_the_comma_file(plant):
    """A European export (``;`` between cells, ``,`` as the decimal mark; common practice of spreadsheet and BAS
    exports where the comma is the decimal mark) stores the same values as the comma file, in either layout."""
    semi = WIDE.replace(",", ";").replace(".", ",")
    # The point names keep their dots: only the values' decimal marks turn to commas.
    semi = semi.replace("AHU1,", "AHU1.")
    result = trend_import(site=plant.site, text=semi, layout="wide", now=NOW)
    assert (result.rows, result.values, result.points) == (3, 8, 3)
    assert [v for _w, v in _values(plant.points["AHU1.FILT-DP"], NOW - dt.timedelta(days=60), NOW)] == [142, 143.5]
    long = "timestamp;point;value\n2026-01-06 08:00;AHU1.OAT;-3,5\n"
    assert trend_import(site=plant.site, text=long, layout="long", now=NOW).values == 1
    assert [v for _w, v in _values(plant.points["AHU1.OAT"], NOW - dt.timedelta(days=60), NOW)] == [-3.5]
