"""Sunset (engineering.sun) against almanac times, to within the approximation's few minutes.

Reference times are from memory of the usual almanac tables (timeanddate.com / US Naval Observatory style),
rounded to the minute; the check allows 6 minutes either way.
"""

import datetime as dt
import zoneinfo

import pytest

from engineering.sun import sunset_utc


@pytest.mark.parametrize(
    "where,lat,lon,day,zone,expected",
    [
        ("Amsterdam, winter solstice", 52.37, 4.90, dt.date(2025, 12, 21), "Europe/Amsterdam", dt.time(16, 29)),
        ("Amsterdam, early March", 52.37, 4.90, dt.date(2025, 3, 5), "Europe/Amsterdam", dt.time(18, 24)),
        ("New York, summer solstice", 40.71, -74.01, dt.date(2025, 6, 21), "America/New_York", dt.time(20, 31)),
        ("Sydney, winter solstice", -33.87, 151.21, dt.date(2025, 6, 21), "Australia/Sydney", dt.time(16, 54)),
    ],
)
def test_sunset_matches_the_almanac(where, lat, lon, day, zone, expected):
    local = sunset_utc(latitude=lat, longitude=lon, day=day).astimezone(zoneinfo.ZoneInfo(zone))
    minutes = local.hour * 60 + local.minute - (expected.hour * 60 + expected.minute)
    assert local.date() == day and abs(minutes) <= 6, f"{where}: {local:%H:%M}, almanac {expected:%H:%M}"


def test_no_sunset_in_polar_night_or_day():
    assert sunset_utc(latitude=78.2, longitude=15.6, day=dt.date(2025, 12, 21)) is None  # Longyearbyen, polar night
    assert sunset_utc(latitude=78.2, longitude=15.6, day=dt.date(2025, 6, 21)) is None  # midnight sun
