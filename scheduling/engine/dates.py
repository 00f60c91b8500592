"""Calendar arithmetic of the due-date engine: months and weeks added, a fixed grid's days in a window, a time's
local date.
"""

from __future__ import annotations

import calendar
import datetime as dt
import zoneinfo

from ..models import TaskDefinition

_MONTHS = TaskDefinition.IntervalUnit.MONTHS
_WEEKS = TaskDefinition.IntervalUnit.WEEKS


def add_months(day: dt.date, months: int) -> dt.date:
    y, m = divmod(day.month - 1 + months, 12)
    year, month = day.year + y, m + 1
    return dt.date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def add_interval(day: dt.date, value: int, unit: str, times: int = 1) -> dt.date:
    if unit == _MONTHS:
        return add_months(day, value * times)
    step = value * (7 if unit == _WEEKS else 1)
    return day + dt.timedelta(days=step * times)


def calendar_occurrences(*, anchor: dt.date, value: int, unit: str, start: dt.date, end: dt.date) -> list[dt.date]:
    """Dates anchor + k·interval (k ≥ 1) falling in [start, end]."""
    if unit == _MONTHS:
        months = (start.year - anchor.year) * 12 + start.month - anchor.month
        k = max(1, months // value - 1)
    else:
        step = value * (7 if unit == _WEEKS else 1)
        k = max(1, (start - anchor).days // step)
    out = []
    while True:
        due = add_interval(anchor, value, unit, k)
        if due > end:
            return out
        if due >= start:
            out.append(due)
        k += 1


def local_date(when: dt.datetime, tz: zoneinfo.ZoneInfo) -> dt.date:
    return when.astimezone(tz).date()
