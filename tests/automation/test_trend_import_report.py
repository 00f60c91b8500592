"""The trend import's report, all or nothing like the registry import's: a bad header does not stop the other
checks (every problem of the file listed at once, each with its line, column or point, value and what is
allowed); a time given twice is said as the file wrote it, in the site's zone; a file that is no text at all
gets one clear sentence, over the API and on the point map page alike. Nothing is stored from a refused file."""

import datetime as dt

import pytest
import time_machine
from django.core.files.uploadedfile import SimpleUploadedFile
from django.test import Client
from django.urls import reverse

from automation.models import TrendDay
from automation.trends import trend_import
from inventory.csv_io import ImportFailed

NOW = dt.datetime(2026, 2, 1, 12, 0, tzinfo=dt.UTC)
PNG = b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x00\x01"
WORKBOOK = b"PK\x03\x04\x14\x00\x06\x00\x08\x00\x00\x00!\x00" + bytes(200)


def _refused(plant, text: str, layout: str, now: dt.datetime = NOW) -> list:
    with pytest.raises(ImportFailed) as caught:
        trend_import(site=plant.site, text=text, layout=layout, now=now)
    assert not TrendDay.objects.exists()
    return caught.value.errors


def test_a_bad_point_column_does_not_stop_the_rows_being_checked(plant):
    """An unknown point in a wide header is named, and so are the rows' own problems below it: a time that is no
    time and a value out of range in a column the header did name."""
    text = "timestamp,AHU1.SAT,AHU1.NOPE\n2026-01-05 08:00,16.8,1\n05/01/2026 08:15,17.1,1\n2026-01-05 08:30,95,1\n"
    problems = {(e.line, e.column): e for e in _refused(plant, text, "wide")}
    assert set(problems) == {(1, "AHU1.NOPE"), (3, "timestamp"), (4, "AHU1.SAT")}
    assert problems[(1, "AHU1.NOPE")].value == "AHU1.NOPE"
    assert "allowed: a point name of the site's point map" in problems[(1, "AHU1.NOPE")].reason
    assert "allowed: a date-time like 2025-03-01 08:00" in problems[(3, "timestamp")].reason
    assert problems[(4, "AHU1.SAT")].value == "95"
    assert "allowed: a number from -40 to 90 °C" in problems[(4, "AHU1.SAT")].reason


def test_a_long_file_with_a_misspelt_header_still_has_its_rows_checked(plant):
    """``time,point,value`` is not the long header: named with what is allowed, and the rows are still read in the
    long layout's order, so a bad value and an unknown point are named too."""
    text = "time,point,value\n2026-01-05 08:00,AHU1.SAT,warm\n2026-01-05 08:00,AHU1.NONE,1\n"
    errors = _refused(plant, text, "long")
    assert [(e.line, e.column) for e in errors] == [(1, ""), (2, "value"), (3, "point")]
    assert errors[0].value == "time,point,value"
    assert "allowed: timestamp,point,value" in errors[0].reason
    assert "allowed: a number from -40 to 90 °C" in errors[1].reason


def test_a_wide_file_sent_as_long_is_told_to_choose_the_wide_layout(plant):
    """A header naming points in its columns, sent as the long layout: the header's problem says to choose the
    wide layout; a row that agrees with that header is not refused cell by cell, but its bad time is named."""
    text = "timestamp,AHU1.SAT,AHU1.RAT\n2026-01-05 08:00,16.8,21.0\n2026-13-05 08:15,17.0,21.1\n"
    errors = _refused(plant, text, "long")
    assert [(e.line, e.column) for e in errors] == [(1, ""), (3, "timestamp")]
    assert "its columns name points (AHU1.SAT, AHU1.RAT)" in errors[0].reason
    assert "choose the wide layout for this file" in errors[0].reason


def test_a_long_file_sent_as_wide_is_named_and_its_times_still_checked(plant):
    text = "timestamp,point,value\n2026-01-05 08:00,AHU1.SAT,16.8\n2026-01-05 25:00,AHU1.SAT,17\n"
    errors = _refused(plant, text, "wide")
    assert [(e.line, e.column) for e in errors] == [(1, ""), (3, "timestamp")]
    assert "is the long layout's header" in errors[0].reason
    assert "or the long layout chosen for this file" in errors[0].reason


def test_a_header_without_rows_is_named_with_the_headers_own_problem(plant):
    errors = _refused(plant, "timestamp,AHU1.NOPE\n", "wide")
    assert [(e.line, e.column) for e in errors] == [(1, "AHU1.NOPE"), (2, "")]
    assert "no rows of values; allowed: one or more rows below it" in errors[1].reason


def test_a_control_character_is_named_once_and_the_other_rows_still_checked(plant):
    """NUL in a cell is named as such (not again as a bad number); the next row's bad time is named as well."""
    text = "timestamp,AHU1.SAT\n2026-01-05 08:00,16\x008\n2026-02-30 08:15,17\n"
    errors = _refused(plant, text, "wide")
    assert [(e.line, e.column) for e in errors] == [(2, "AHU1.SAT"), (3, "timestamp")]
    assert "contains NUL" in errors[0].reason and errors[0].value == "16\\x008"


def test_a_time_given_twice_is_said_as_the_file_wrote_it_in_the_sites_zone(plant):
    """Amsterdam is UTC+1 in January: the message says 08:00 as written, with the zone, never 07:00 UTC."""
    text = "timestamp,AHU1.SAT\n2026-01-05 08:00,16.8\n2026-01-05 08:00,17.2\n"
    (error,) = _refused(plant, text, "wide")
    assert (error.line, error.column, error.value) == (3, "AHU1.SAT", "17.2")
    assert error.reason == (
        "a second value for AHU1.SAT at 2026-01-05 08:00, Europe/Amsterdam time (the first is on line 2); "
        "allowed: one value a time"
    )
    assert "07:00" not in error.reason and "+00:00" not in error.reason


def test_a_time_written_with_an_offset_is_said_also_in_the_sites_clock(plant):
    text = "timestamp,point,value\n2026-01-05 08:00,AHU1.OAT,-3\n2026-01-05T07:00:00+00:00,AHU1.OAT,-4\n"
    (error,) = _refused(plant, text, "long")
    assert "at 2026-01-05T07:00:00+00:00, 2026-01-05 08:00 Europe/Amsterdam time (the first is on line 2)" in (
        error.reason
    )


def test_a_time_given_twice_in_the_repeated_hour_says_which_pass(plant):
    """25 Oct 2026, Amsterdam's clocks go back at 03:00: 02:00 written twice in a row is the first pass both times
    (a second pass follows another time), so the two values collide there, and the message says so."""
    text = "timestamp,point,value\n2026-10-25 02:00,AHU1.SAT,10\n2026-10-25 02:00,AHU1.SAT,11\n"
    (error,) = _refused(plant, text, "long", now=dt.datetime(2026, 11, 1, tzinfo=dt.UTC))
    assert (
        "at 2026-10-25 02:00, Europe/Amsterdam time, the first pass of the hour the clocks went back (the first is"
        in error.reason
    )


def test_text_full_of_nul_bytes_is_one_clear_problem(plant):
    """A file that decoded as text yet is binary data gets one sentence, not a problem for every cell."""
    errors = _refused(plant, "timestamp,AHU1.SAT\n" + "\x00\x01" * 300, "wide")
    assert len(errors) == 1 and errors[0].line == 1
    assert errors[0].reason == (
        "the file holds binary data (NUL bytes), not CSV text; allowed: a CSV file saved as UTF-8 text "
        "(in a spreadsheet: Save as, CSV UTF-8)"
    )


@pytest.mark.parametrize(
    ("data", "line", "words"),
    [
        (PNG, 1, "the file is a PNG image, not CSV text; allowed: a CSV file saved as UTF-8 text"),
        (WORKBOOK, 1, "the file is a spreadsheet workbook (.xlsx, .ods) or another zip archive, not CSV text"),
        ("timestamp,AHU1.SAT\n".encode("utf-16"), 1, "the file is UTF-16 text"),
        (b"\x00" * 64, 1, "the file holds binary data (NUL bytes), not CSV text"),
        ("timestamp,AHU1.SAT\n2026-01-05 08:00,16.8\n2026-01-05 08:15,17 °C\n".encode("latin-1"), 3,
         "the file is not UTF-8 text: byte 0xb0 on line 3"),
    ],
    ids=["png", "workbook", "utf-16", "nul-bytes", "latin-1"],
)  # fmt: skip
def test_the_api_refuses_a_file_that_is_no_text_saying_what_it_is(plant, data, line, words):
    client = Client()
    client.force_login(plant.people.supervisor)
    with time_machine.travel(NOW, tick=False):
        res = client.post(
            f"/api/automation/sites/{plant.site.pk}/trends/",
            {"layout": "wide", "units": "si", "file": SimpleUploadedFile("t.csv", data, content_type="text/csv")},
        )
    assert res.status_code == 400
    (error,) = res.json()["errors"]
    assert error["line"] == line and words in error["reason"]
    assert not TrendDay.objects.exists()


def test_the_api_lists_a_bad_header_and_the_bad_rows_together(plant):
    client = Client()
    client.force_login(plant.people.supervisor)
    text = b"timestamp,AHU1.SAT,AHU1.NOPE\n2026-01-05 08:00,hot,1\n"
    with time_machine.travel(NOW, tick=False):
        res = client.post(
            f"/api/automation/sites/{plant.site.pk}/trends/",
            {"layout": "wide", "units": "si", "file": SimpleUploadedFile("t.csv", text, content_type="text/csv")},
        )
    assert res.status_code == 400
    assert [(e["line"], e["column"], e["value"]) for e in res.json()["errors"]] == [
        (1, "AHU1.NOPE", "AHU1.NOPE"),
        (2, "AHU1.SAT", "hot"),
    ]


def _page_post(plant, data: bytes, layout: str = "wide"):
    client = Client()
    client.force_login(plant.people.supervisor)
    with time_machine.travel(NOW, tick=False):
        return client.post(
            reverse("frontend:site_points", kwargs={"pk": plant.site.pk}),
            {"layout": layout, "units": "si", "file": SimpleUploadedFile("t.csv", data, content_type="text/csv")},
        )


def test_the_point_map_page_says_what_a_binary_file_is(plant):
    page = _page_post(plant, PNG)
    html = page.content.decode()
    assert page.status_code == 400
    assert "the file is a PNG image, not CSV text; allowed: a CSV file saved as UTF-8 text" in html
    assert html.count("data-row-error") == 1 and "not UTF-8" not in html
    assert not TrendDay.objects.exists()


def test_the_point_map_page_lists_the_header_and_row_problems_at_once(plant):
    page = _page_post(plant, b"timestamp,AHU1.SAT\n2026-01-05 08:00,16.8\n2026-01-05 25:00,17.2\n", "long")
    html = page.content.decode()
    assert page.status_code == 400
    assert html.count("data-row-error") == 2  # the header, and the second row's time
    assert "is not the long layout&#x27;s header; allowed: timestamp,point,value" in html
    assert "choose the wide layout for this file" in html
