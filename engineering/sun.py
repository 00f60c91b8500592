"""Sunset at a place on a day: when the evening's cold begins, for "check freeze protection before tonight".

The sunrise equation with the equation of time (the common approximation, e.g. NOAA's solar calculator
notes): the sun's declination from the day of the year, the hour angle at which its centre is 0.833° below
the horizon (refraction and the sun's radius), solar noon from the longitude and the equation of time.
Good to a few minutes away from the poles, which is all a work order's due time needs. Pure: no Django.
"""

from __future__ import annotations

import datetime as dt
import math

SUNSET_ALTITUDE_DEG = -0.833  # centre of the sun below the horizon at sunset (refraction + radius)


def _equation_of_time_min(day_of_year: int) -> float:
    """Minutes the sundial runs ahead of the mean clock (approximation in common use, within about a minute)."""
    b = math.radians(360.0 / 365.0 * (day_of_year - 81))
    return 9.87 * math.sin(2 * b) - 7.53 * math.cos(b) - 1.5 * math.sin(b)


def _declination_deg(day_of_year: int) -> float:
    return -23.44 * math.cos(math.radians(360.0 / 365.0 * (day_of_year + 10)))


def sunset_utc(*, latitude: float, longitude: float, day: dt.date) -> dt.datetime | None:
    """Sunset (UTC) at ``latitude``/``longitude`` (degrees, east positive) on ``day``; None when the sun
    does not set or does not rise that day (polar day or night)."""
    n = day.timetuple().tm_yday
    phi = math.radians(latitude)
    delta = math.radians(_declination_deg(n))
    cos_h = (math.sin(math.radians(SUNSET_ALTITUDE_DEG)) - math.sin(phi) * math.sin(delta)) / (
        math.cos(phi) * math.cos(delta) or 1e-12
    )
    if not -1.0 <= cos_h <= 1.0:
        return None
    hour_angle_deg = math.degrees(math.acos(cos_h))
    noon_min = 720.0 - 4.0 * longitude - _equation_of_time_min(n)
    minutes = noon_min + 4.0 * hour_angle_deg
    return dt.datetime(day.year, day.month, day.day, tzinfo=dt.UTC) + dt.timedelta(minutes=minutes)
