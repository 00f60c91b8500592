"""A unit's (or component's) latest run-hour reading."""

from __future__ import annotations

import datetime as dt


def latest_meter_reading(*, ahu, component=None, as_of: dt.datetime | None = None):
    """The unit's (or component's) latest run-hour reading at or before ``as_of`` (default: any), or None.

    The reading ``services.meter_reading_check`` compares a new reading with when it is the newest.
    """
    from ..models import MeterReading

    rows = MeterReading.objects.filter(ahu=ahu, component=component)
    if as_of is not None:
        rows = rows.filter(taken_at__lte=as_of)
    return rows.order_by("-taken_at", "-id").first()
