"""A run-hour value against the meter's last reading, in words: what the rule checked of a value it accepts, or the
watch of a value below the last reading (the phone says the same beside the field, meter.js ``meterWords``; the
record page and the PDFs say it beside the stored reading)."""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

from accounts.inputs import local_text
from inventory.models import AHU

from ..models import MeterReading
from .meters import hours_text, max_gain_h


def meter_plausible_words(
    *, hours: float | None, last_hours: float | None, last_at: dt.datetime | None, at: dt.datetime, zone: Any
) -> str:
    """What the meter rule checked of a run-hour value it accepts, in words: "plausible: 615 h since the last
    reading of 12000 h on 2 Dec 2026 09:15 CET" ("" when nothing was checked: no last reading, no number, a value
    below the last one or more than the clock allows, or a last reading later than ``at``). ``at`` is the form's
    finish time; ``zone`` the site's. The phone's twin is meter.js ``meterPlausibleText`` (held to this by
    tests/inspections/test_meter_words.py)."""
    if last_hours is None or last_at is None or hours is None or not math.isfinite(hours) or hours < last_hours:
        return ""
    elapsed = at - last_at
    if elapsed < dt.timedelta(0) or hours > last_hours + max_gain_h(elapsed=elapsed) + 1e-9:
        return ""
    return (
        f"plausible: {hours_text(hours - last_hours)} since the last reading of {hours_text(last_hours)} "
        f"on {local_text(last_at, zone)}"
    )


def meter_below_words(
    *, hours: float | None, last_hours: float | None, last_at: dt.datetime | None, at: dt.datetime, zone: Any
) -> str:
    """A run-hour value below the meter's last reading at or before ``at``, in words: "below the last reading of
    12000 h on 2 Dec 2026 09:15 CET — meter replaced or misread?" ("" for any other value). The server keeps such a
    form and flags it (``meter_reading_refused``); the phone's twin is meter.js ``meterBelowText``."""
    if last_hours is None or last_at is None or hours is None or not math.isfinite(hours) or hours >= last_hours:
        return ""
    if at < last_at:
        return ""
    return (
        f"below the last reading of {hours_text(last_hours)} on {local_text(last_at, zone)} "
        "— meter replaced or misread?"
    )


def meter_words(
    *, hours: float | None, last_hours: float | None, last_at: dt.datetime | None, at: dt.datetime, zone: Any
) -> tuple[str, str]:
    """A run-hour value against the meter's last reading as pages say it beside the value: (verdict code, words).
    ("watch", ``meter_below_words``) below the last reading, ("", ``meter_plausible_words``) otherwise ("" when
    nothing was checked). The phone's twin is meter.js ``meterWords`` (tests/inspections/test_meter_words.py)."""
    below = meter_below_words(hours=hours, last_hours=last_hours, last_at=last_at, at=at, zone=zone)
    if below:
        return "watch", below
    return "", meter_plausible_words(hours=hours, last_hours=last_hours, last_at=last_at, at=at, zone=zone)


def meter_reading_words(
    *, ahu: AHU, hours: float | None, finished_at: dt.datetime | None, zone: Any
) -> tuple[str, str]:
    """``meter_words`` for a visit's run-hour value, judged against the unit's meter reading before the form's
    finish time (not the clock now: a later reading does not change what the visit found). The visit's own
    reading is stored at the finish time, so only a reading strictly before it counts."""
    if hours is None or finished_at is None:
        return "", ""
    last = (
        MeterReading.objects.filter(ahu=ahu, component=None, taken_at__lt=finished_at)
        .order_by("-taken_at", "-id")
        .only("hours", "taken_at")
        .first()
    )
    if last is None:
        return "", ""
    return meter_words(hours=hours, last_hours=last.hours, last_at=last.taken_at, at=finished_at, zone=zone)
