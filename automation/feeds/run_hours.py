"""Run-hours from the supply fan's trend: when the fan ran, the hours of a site-local day added to its run-hour meter
(``run_hours_feed``).
"""

from __future__ import annotations

import contextlib
import datetime as dt
from dataclasses import dataclass

import numpy as np
from django.core.exceptions import ValidationError
from django.db import transaction

from engineering.faults import G36_DEFAULTS
from inventory.models import Component
from scheduling.models import MeterReading

from ..series import Samples, UnitTrends, samples_for

# A sample's value is held at most this long when integrating run-time (common practice: a BAS logs at 1 to
# 15 minutes or on change of value; six hours without a record is a gap in the log, not proof of running).
RUN_HOLD_MAX_S = 6 * 3600.0


@dataclass(frozen=True)
class RunHours:
    fan: Component
    hours_run: float
    reading: MeterReading | None
    note: str = ""


def fan_running(trends: UnitTrends, at: np.ndarray) -> np.ndarray | None:
    """Whether the supply fan ran at each of ``at`` (epoch seconds); None when no fan point has samples."""
    status, speed = trends.of("supply_fan_status"), trends.of("supply_fan_speed")
    with np.errstate(invalid="ignore"):
        if status is not None and status.seconds.size:
            return status.at(at, max_hold_s=RUN_HOLD_MAX_S) > 0.5
        if speed is not None and speed.seconds.size:
            return speed.at(at, max_hold_s=RUN_HOLD_MAX_S) > G36_DEFAULTS.command_tolerance
    return None


def running_seconds(samples: Samples, *, since: float, until: float, on) -> float:
    """Seconds in [since, until) during which ``on(value)`` held, each sample held until the next one (at most
    ``RUN_HOLD_MAX_S``); the value at ``since`` is the last sample before it."""
    s, v = samples.seconds, samples.values
    if s.size == 0:
        return 0.0
    first = max(int(np.searchsorted(s, since, side="right")) - 1, 0)
    s, v = s[first:], v[first:]
    nxt = np.append(s[1:], until)
    begin = np.maximum(s, since)
    finish = np.minimum(np.minimum(nxt, s + RUN_HOLD_MAX_S), until)
    with np.errstate(invalid="ignore"):
        mask = on(v) & (finish > begin)
    return float(np.sum((finish - begin)[mask]))


def fan_of(trends: UnitTrends):
    """(supply fan point, its samples, the test of "running") from the status point, else the speed command."""
    for role, on in (
        ("supply_fan_status", lambda v: v > 0.5),
        ("supply_fan_speed", lambda v: v > G36_DEFAULTS.command_tolerance),
    ):
        point = trends.roles.get(role)
        samples = trends.of(role)
        if point is not None and point.component is not None and samples is not None and samples.seconds.size:
            return point, samples, on
    return None, None, None


FanMeter = tuple[MeterReading | None, MeterReading | None]


def fan_meters(*, fans: list[Component], end: dt.datetime) -> dict[int, FanMeter]:
    """{fan id: (its trend reading taken at ``end`` or None, its latest reading at or before ``end`` or None)} of
    each fan's own run-hour meter: what ``run_hours_feed`` reads of it, for many fans in two queries."""
    from django.db.models import OuterRef, Subquery

    own = MeterReading.objects.filter(ahu_id=OuterRef("ahu_id"), component_id=OuterRef("pk"))
    rows = list(
        Component.objects.filter(pk__in=[f.pk for f in fans])
        .annotate(
            done_id=Subquery(
                own.filter(taken_at=end, source=MeterReading.Source.BAS_TREND)
                .order_by(*MeterReading._meta.ordering)
                .values("pk")[:1]
            ),
            prev_id=Subquery(own.filter(taken_at__lte=end).order_by("-taken_at", "-id").values("pk")[:1]),
        )
        .values_list("pk", "done_id", "prev_id")
    )
    wanted = {i for _, *ids in rows for i in ids if i is not None}
    readings = MeterReading.objects.in_bulk(list(wanted)) if wanted else {}
    return {pk: (readings.get(done_id), readings.get(prev_id)) for pk, done_id, prev_id in rows}


def _fan_samples(trends: UnitTrends, point, samples: Samples, since: dt.datetime, end: dt.datetime) -> Samples:
    """The fan's samples from the last one that can still hold at ``since``: those already read with the day when
    they reach back to one at or before ``since`` (or to ``RUN_HOLD_MAX_S`` before it), else read again."""
    read_from = trends.read_from
    reaches = read_from is not None and (
        read_from <= since - dt.timedelta(seconds=RUN_HOLD_MAX_S)
        or (read_from <= since and bool((samples.seconds <= since.timestamp()).any()))
    )
    if reaches:
        return samples
    return samples_for(points=[point], since=since - dt.timedelta(seconds=RUN_HOLD_MAX_S), until=end)[point.pk]


def run_hours_feed(
    *, trends: UnitTrends, by=None, meter: FanMeter | None = None, unit_locked: bool = False, careful: bool = True
) -> RunHours | None:
    """Add the hours the supply fan ran over ``trends``' day to its run-hour meter (once per day).

    Returns None when the unit has no fan status or speed trend that day. The first day a fan's meter is fed
    it starts at 0 h at the day's start; afterwards each day's reading is the latest reading of that meter
    plus the hours run since it (at most 31 days back). A reading the meter service refuses (an earlier day
    read after a later one) is not stored and named in ``note``. ``meter``: the fan's readings as ``fan_meters``
    read them for the whole site; ``unit_locked``: the caller's transaction holds the unit's row locked;
    ``careful`` False: a meter's first day without a savepoint of its own, its refused second reading raised (the
    caller runs again carefully).
    """
    from scheduling.services import meter_reading_record

    point, samples, on = fan_of(trends)
    if point is None or samples is None:
        return None
    fan = point.component
    start, end = trends.start, trends.end
    ahu = trends.ahu
    if not ((samples.seconds >= start.timestamp()) & (samples.seconds < end.timestamp())).any():
        return None  # no sample that day: nothing is known of it
    if meter is None or fan.ahu_id != ahu.pk:
        readings = MeterReading.objects.filter(ahu=ahu, component=fan)
        done = readings.filter(taken_at=end, source=MeterReading.Source.BAS_TREND).first()
        prev = None if done is not None else readings.filter(taken_at__lte=end).order_by("-taken_at", "-id").first()
    else:
        done, prev = meter
    if done is not None:
        return RunHours(fan=fan, hours_run=0.0, reading=done, note="already read")
    since = start if prev is None else max(prev.taken_at, end - dt.timedelta(days=31))
    # From the last sample that can still hold at ``since`` (a change-of-value log may be hours old at midnight).
    samples = _fan_samples(trends, point, samples, since, end)
    seconds = running_seconds(samples, since=since.timestamp(), until=end.timestamp(), on=on)
    hours = seconds / 3600.0
    base = 0.0 if prev is None else prev.hours
    record = {
        "ahu": ahu,
        "source": MeterReading.Source.BAS_TREND,
        "component": fan,
        "by": by,
        "in_caller_transaction": True,
        "unit_locked": unit_locked,
    }
    first_kept = False
    try:
        # Two readings (a meter's first day) share a savepoint, so a refused second takes the first back; one
        # reading needs none, as the meter service refuses before it writes. Not ``careful``: no savepoint, and a
        # refused second reading is raised for the caller, whose careful pass takes both back.
        with transaction.atomic() if prev is None and careful else contextlib.nullcontext():
            if prev is None:
                meter_reading_record(hours=0.0, taken_at=start, **record)
                first_kept = not careful
            reading = meter_reading_record(hours=round(base + hours, 3), taken_at=end, **record)
    except ValidationError as exc:
        if first_kept:
            raise
        return RunHours(fan=fan, hours_run=hours, reading=None, note=" ".join(exc.messages))
    return RunHours(fan=fan, hours_run=hours, reading=reading)
