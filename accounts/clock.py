"""How a moment reads for a person: a place's clock with the zone named, "2 Dec 2026 09:15 CET".

The one time format of the pages, the PDFs, the messages and the phone. It lives in the lowest app so the
input policy's messages (``accounts.inputs``) use it too; ``inventory.display`` puts a site's clock on it.
The phone's twin, ``timeText`` in ``frontend/static/frontend/js/units.js``, formats with the table of
``zone_clock``, read from the same tz database, so both name the same abbreviation at the same instant
(``tests/accounts/test_clock.py`` runs both).
"""

from __future__ import annotations

import datetime as dt
import functools
import zoneinfo
from typing import Any

# English month abbreviations as the pages write them ("2 Dec 2026"); the phone's list is the same.
MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
# The phone gets the zone's offsets from this year on: no reading or visit is dated earlier
# (accounts.inputs.EARLIEST_DATE).
CLOCK_FROM_YEAR = 2000
# ... and up to this many years after the moment the page is made (a page is used for days, not years).
CLOCK_YEARS_AHEAD = 2


def time_zone(zone: zoneinfo.ZoneInfo | str | None) -> zoneinfo.ZoneInfo:
    """A zone from its name ("UTC" for none) or as given."""
    return zone if isinstance(zone, zoneinfo.ZoneInfo) else zoneinfo.ZoneInfo(zone or "UTC")


def zone_abbreviation(local: dt.datetime) -> str:
    """The abbreviation the tz database gives an aware moment, "CET", "CEST", "-03".

    Read from the zone itself, so the repeated hour when clocks go back names its side (CEST, then CET)."""
    return local.tzname() or local.strftime("%z")


def local_time_text(when: dt.datetime, *, zone: zoneinfo.ZoneInfo | str | None) -> str:
    """``when`` on the clock of ``zone`` with the zone's abbreviation, "2 Dec 2026 06:30 CET".

    At the ends of the calendar (year 1, 9999), where the zone's clock cannot go, the moment as it was given."""
    try:
        local = when.astimezone(time_zone(zone))
    except (OverflowError, ValueError):
        return when.isoformat(timespec="minutes")
    return f"{local_date_of(local)} {local:%H:%M} {zone_abbreviation(local)}"


def local_date_text(when: dt.datetime, *, zone: zoneinfo.ZoneInfo | str | None) -> str:
    """The day of ``when`` on the clock of ``zone``, "2 Dec 2026"."""
    try:
        return local_date_of(when.astimezone(time_zone(zone)))
    except (OverflowError, ValueError):
        return when.date().isoformat()


def day_text(day: dt.date, *, today: dt.date) -> str:
    """A day in a sentence: "1 Dec" in the current year, "1 Dec 2036" in any other (so a plan years ahead
    never reads as this year's). Used by the board and its messages."""
    if day.year == today.year:
        return f"{day.day} {MONTHS[day.month - 1]}"
    return local_date_of(day)


# The hours a moment is said as "on the night of 3–4 Dec" rather than on one day: from this evening hour to this
# morning hour (common practice in speech: a freeze at 04:15 belongs to the night that began the evening before).
NIGHT_FROM_HOUR, NIGHT_UNTIL_HOUR = 18, 6


def night_span_text(first: dt.date) -> str:
    """The night that begins on the evening of ``first``, "3–4 Dec 2026", "31 Jan – 1 Feb 2026",
    "31 Dec 2026 – 1 Jan 2027"."""
    second = first + dt.timedelta(days=1)
    if first.year != second.year:
        return f"{local_date_of(first)} – {local_date_of(second)}"
    if first.month != second.month:
        return f"{first.day} {MONTHS[first.month - 1]} – {local_date_of(second)}"
    return f"{first.day}–{local_date_of(second)}"


def moment_words(when: dt.datetime, *, zone: zoneinfo.ZoneInfo | str | None) -> str:
    """A moment in a sentence on the clock of ``zone``, with the night it belongs to: "04:15 CET on the night of
    3–4 Dec 2026" between ``NIGHT_FROM_HOUR`` and ``NIGHT_UNTIL_HOUR``, "14:20 CET on 3 Dec 2026" by day."""
    try:
        local = when.astimezone(time_zone(zone))
    except (OverflowError, ValueError):
        return when.isoformat(timespec="minutes")
    clock = f"{local:%H:%M} {zone_abbreviation(local)}"
    if local.hour >= NIGHT_FROM_HOUR:
        return f"{clock} on the night of {night_span_text(local.date())}"
    if local.hour < NIGHT_UNTIL_HOUR:
        return f"{clock} on the night of {night_span_text(local.date() - dt.timedelta(days=1))}"
    return f"{clock} on {local_date_of(local)}"


def local_date_of(local: dt.datetime | dt.date) -> str:
    return f"{local.day} {MONTHS[local.month - 1]} {local.year:04d}"


def zone_clock(zone: str | None, *, around: dt.datetime) -> dict[str, Any]:
    """What the phone needs to write a moment as ``local_time_text`` does, offline and in any device zone.

    ``{"zone": "Europe/Berlin", "spans": [[start_ms, offset_s, "CET"], ...]}``: from each start (milliseconds
    since 1970, UTC) the zone's offset from UTC and its abbreviation hold until the next start; from 2000 to two
    years after ``around``. The phone does not rely on its own copy of the tz database, which may be older.
    """
    name = zone or "UTC"
    return {"zone": name, "spans": [list(s) for s in _spans(name, around.year + CLOCK_YEARS_AHEAD)]}


@functools.lru_cache(maxsize=64)
def _spans(zone: str, until_year: int) -> tuple[tuple[int, int, str], ...]:
    tz = time_zone(zone)

    def state(at: dt.datetime) -> tuple[int, str]:
        local = at.astimezone(tz)
        offset = local.utcoffset()
        return int(offset.total_seconds()) if offset is not None else 0, zone_abbreviation(local)

    start = dt.datetime(CLOCK_FROM_YEAR, 1, 1, tzinfo=dt.UTC)
    end = dt.datetime(until_year + 1, 1, 1, tzinfo=dt.UTC)
    spans = [(_ms(start), *state(start))]
    # A zone changes its clock at most a few times a year, never twice within a day: a daily look finds each
    # change, and halving the day finds its second.
    step = dt.timedelta(days=1)
    before, at = start, start + step
    while at < end:
        now = state(at)
        if now != spans[-1][1:]:
            lo, hi = before, at
            while hi - lo > dt.timedelta(seconds=1):
                mid = lo + (hi - lo) / 2
                lo, hi = (lo, mid) if state(mid) == now else (mid, hi)
            spans.append((_ms(hi), *now))
        before, at = at, at + step
    return tuple(spans)


def cache_clear() -> None:
    """Forget a zone's daylight-saving spans kept in this process (``config.caches.clear_module_caches``)."""
    _spans.cache_clear()


def _ms(at: dt.datetime) -> int:
    return int(at.timestamp()) * 1000
