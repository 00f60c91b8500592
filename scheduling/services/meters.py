"""Run-hour meter readings: one at a time, or a building-automation CSV all or nothing."""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
import zoneinfo
from typing import Any

from django.core.exceptions import ValidationError
from django.db import connections, transaction
from django.utils import timezone
from django.utils.dateparse import parse_datetime

from accounts.inputs import EARLIEST_DATE, in_zone, local_text, reading_time_problem, shown, text_problem
from accounts.models import Organisation, User
from engineering.formatting import count_text
from inventory.models import AHU, Component

from ..models import MeterReading

CSV_COLUMNS = ("unit_label", "taken_at", "hours")
CSV_OPTIONAL = ("component_label", "is_reset")
# A meter cannot gain more run-hours than hours of clock time passed between two
# readings. The reading's time is the moment the form was finished or the row
# was logged, not the instant the counter was read, and many counters show whole
# hours; so a gain of up to 2 % more than the elapsed time, and never less than
# 1 h, is let through (common practice).
GAIN_TOLERANCE_FRACTION = 0.02
GAIN_TOLERANCE_H = 1.0
# Clocks of phones and building-automation exports drift a little: a reading up
# to 10 minutes ahead of the server's clock is accepted (common practice).
FUTURE_TOLERANCE = dt.timedelta(minutes=10)
# The most run-hours a meter may show: 1,000,000 h is 114 years of running day and night, past any
# counter's life (common practice: hour meters show at most six or seven digits).
METER_HOURS_MAX = 1_000_000
# A label code's column holds at most this many characters (AHU.label_code, Component.label_code).
LABEL_MAX = 12


# A meter's readings around a time: the one at or before it and the one after it (``meter_neighbours``).
Neighbours = tuple[MeterReading | None, MeterReading | None]


def meter_neighbours(*, ahu: AHU, component: Component | None, taken_at: dt.datetime) -> Neighbours:
    """The same meter's reading at or before ``taken_at`` (latest first) and the one after it (earliest first),
    in one query of two indexed ``LIMIT 1`` halves. Written as SQL: every synced form asks it, and building it
    with the ORM cost more than running it. Read under the unit's lock, the pair can be handed to
    ``meter_reading_record`` (``neighbours``) so the reading is not looked up twice."""
    table = MeterReading._meta.db_table
    cols = ", ".join(str(f.column) for f in MeterReading._meta.concrete_fields)
    same = "ahu_id = %s AND " + ("component_id IS NULL" if component is None else "component_id = %s")
    key = [ahu.pk] if component is None else [ahu.pk, component.pk]
    # Table and column names come from the model, values are parameters.
    sql = (
        f"SELECT * FROM (SELECT {cols} FROM {table} WHERE {same} AND taken_at <= %s "  # noqa: S608
        "ORDER BY taken_at DESC, id DESC LIMIT 1) AS before_ "
        f"UNION ALL SELECT * FROM (SELECT {cols} FROM {table} WHERE {same} AND taken_at > %s "
        "ORDER BY taken_at ASC, id ASC LIMIT 1) AS after_"
    )
    at = connections[MeterReading.objects.db].ops.adapt_datetimefield_value(taken_at)  # as the ORM stores it
    prev = nxt = None
    for row in MeterReading.objects.raw(sql, [*key, at, *key, at]):
        if row.taken_at <= taken_at:
            prev = row
        else:
            nxt = row
    return prev, nxt


def hours_text(h: float) -> str:
    """Whole hours unless a tenth matters, never grouped ("12075 h", as the form's field reads it back:
    ``engineering.formatting.format_number``)."""
    return f"{h:.0f} h" if abs(h - round(h)) < 0.05 else f"{h:.1f} h"


def _local_text(*, ahu: AHU, at: dt.datetime) -> str:
    return local_text(at, zoneinfo.ZoneInfo(ahu.building.site.time_zone or "UTC"))


def max_gain_h(*, elapsed: dt.timedelta) -> float:
    """The most run-hours a meter may gain in ``elapsed`` clock time: elapsed + max(2 %, 1 h)."""
    hours = max(elapsed.total_seconds(), 0.0) / 3600.0
    return hours + max(hours * GAIN_TOLERANCE_FRACTION, GAIN_TOLERANCE_H)


def meter_reading_check(
    *,
    ahu: AHU,
    hours: float,
    taken_at: dt.datetime,
    component: Component | None = None,
    is_reset: bool = False,
    now: dt.datetime | None = None,
    label: str = "Run hours",
    if_replaced: str = "record this reading as a meter replacement",
    neighbours: Neighbours | None = None,
) -> None:
    """Refuse a run-hour reading no working meter could show; raises ValidationError on ``hours``/``taken_at``.

    Refused: a time later than now (beyond 10 minutes of clock drift); a value
    below the reading before it (error code ``meter_backwards``); a gain since
    the reading before it larger than the clock time between them plus 2 %
    (at least 1 h) (code ``meter_too_fast``); and the same two checks against
    the next later reading. A reading marked as a meter replacement starts a
    new meter, so it is not compared with the readings before it. ``label``
    names the value as the person saw it; ``if_replaced`` says what to do
    when the meter was in fact replaced. ``neighbours``: the meter's readings
    around ``taken_at`` as already read (``meter_neighbours``); read here otherwise.
    """
    now = now or timezone.now()
    if taken_at > now + FUTURE_TOLERANCE:
        raise ValidationError(
            {
                "taken_at": [
                    ValidationError(
                        f"Reading time {_local_text(ahu=ahu, at=taken_at)} is later than now "
                        f"({_local_text(ahu=ahu, at=now)}, site time); a reading cannot come from the future "
                        "— check the date and the device's clock",
                        code="meter_future",
                    )
                ]
            }
        )
    what = label if component is None else f"{label} of {component.name}"
    if neighbours is None:
        neighbours = meter_neighbours(ahu=ahu, component=component, taken_at=taken_at)
    prev, nxt = neighbours
    if not is_reset:
        if prev is not None and hours < prev.hours:
            raise ValidationError(
                {
                    "hours": [
                        ValidationError(
                            f"{what} {hours_text(hours)} is below the previous reading of "
                            f"{hours_text(prev.hours)} taken {_local_text(ahu=ahu, at=prev.taken_at)}; a meter does "
                            f"not run backwards — if the meter was replaced, {if_replaced}",
                            code="meter_backwards",
                        )
                    ]
                }
            )
        if prev is not None:
            elapsed = taken_at - prev.taken_at
            most = prev.hours + max_gain_h(elapsed=elapsed)
            if hours > most + 1e-9:
                raise ValidationError(
                    {
                        "hours": [
                            ValidationError(
                                f"{what} {hours_text(hours)} is more than the meter can have run: the previous "
                                f"reading was {hours_text(prev.hours)} on {_local_text(ahu=ahu, at=prev.taken_at)}, "
                                f"{hours_text(elapsed.total_seconds() / 3600)} of clock time earlier, so at most "
                                f"{hours_text(most)} is possible (the time passed plus 2 %, at least 1 h). Check the "
                                f"number; if the meter was replaced, {if_replaced}",
                                code="meter_too_fast",
                            )
                        ]
                    }
                )
    if nxt is not None and not nxt.is_reset:
        if not is_reset and hours > nxt.hours:
            raise ValidationError(
                {
                    "hours": [
                        ValidationError(
                            f"{what} {hours_text(hours)} is above the later reading of {hours_text(nxt.hours)} "
                            f"taken {_local_text(ahu=ahu, at=nxt.taken_at)}",
                            code="meter_backwards",
                        )
                    ]
                }
            )
        elapsed = nxt.taken_at - taken_at
        least = nxt.hours - max_gain_h(elapsed=elapsed)
        if hours < least - 1e-9:
            raise ValidationError(
                {
                    "hours": [
                        ValidationError(
                            f"{what} {hours_text(hours)} is too low for the later reading of "
                            f"{hours_text(nxt.hours)} on {_local_text(ahu=ahu, at=nxt.taken_at)}, "
                            f"{hours_text(elapsed.total_seconds() / 3600)} of clock time later: at least "
                            f"{hours_text(least)} is possible here (the time passed plus 2 %, at least 1 h)",
                            code="meter_too_fast",
                        )
                    ]
                }
            )


def meter_reading_record(
    *,
    ahu: AHU,
    hours: float | str,
    taken_at: dt.datetime,
    source: str = MeterReading.Source.MANUAL,
    component: Component | None = None,
    is_reset: bool = False,
    by: User | None = None,
    in_caller_transaction: bool = False,
    unit_locked: bool = False,
    neighbours: Neighbours | None = None,
) -> MeterReading:
    """Store one run-hour reading.

    Refused as ``meter_reading_check`` says: a time in the future, a value
    below the reading before it or above the next one, or a gain larger than
    the clock time between readings (plus 2 %, at least 1 h), unless the
    reading is marked as a meter replacement or reset.

    ``in_caller_transaction``: no savepoint of its own; the caller's open transaction holds the lock and the
    write. Safe because every refusal is raised before anything is written. ``unit_locked`` (with it): the caller
    has locked the unit's row in that transaction already (one lock for many readings); it is not locked again.
    ``neighbours`` (with ``unit_locked``): the meter's readings around ``taken_at`` (``meter_neighbours``) as the
    caller read them under that lock, with no reading of the meter written since; they are not read again.
    """
    kwargs: dict[str, Any] = {
        "ahu": ahu,
        "hours": hours,
        "taken_at": taken_at,
        "source": source,
        "component": component,
        "is_reset": is_reset,
        "by": by,
    }
    if neighbours is not None and not unit_locked:
        raise RuntimeError("meter_reading_record(neighbours=) needs unit_locked=True: read under the caller's lock")
    if in_caller_transaction:
        if not transaction.get_connection().in_atomic_block:
            raise RuntimeError("meter_reading_record(in_caller_transaction=True) needs the caller's transaction")
        return _meter_reading_record(**kwargs, lock=not unit_locked, neighbours=neighbours)
    if unit_locked:
        raise RuntimeError("meter_reading_record(unit_locked=True) needs in_caller_transaction=True")
    with transaction.atomic():
        return _meter_reading_record(**kwargs)


def _meter_reading_record(
    *,
    ahu: AHU,
    hours: float | str,
    taken_at: dt.datetime,
    source: str,
    component: Component | None,
    is_reset: bool,
    by: User | None,
    lock: bool = True,
    neighbours: Neighbours | None = None,
) -> MeterReading:
    try:
        hours = float(hours)
    except (TypeError, ValueError):
        raise ValidationError({"hours": [f"hours={hours!r} is not a number of run-hours"]})
    if not math.isfinite(hours) or not 0 <= hours <= METER_HOURS_MAX:
        raise ValidationError(
            {"hours": [f"Run hours {shown(hours)} is out of range; allowed: a number from 0 to {METER_HOURS_MAX} h"]}
        )
    if timezone.is_naive(taken_at):
        raise ValidationError({"taken_at": [f"taken_at={taken_at.isoformat()} needs a time zone offset"]})
    if taken_at.date() < EARLIEST_DATE + dt.timedelta(days=1):
        problem = reading_time_problem(
            taken_at, label="Reading time", now=timezone.now(), tz=ahu.building.site.time_zone
        )
        if problem:
            raise ValidationError({"taken_at": [problem]})
    if source not in MeterReading.Source.values:
        raise ValidationError({"source": [f"source={source!r} is not one of {', '.join(MeterReading.Source.values)}"]})
    if component is not None:
        if component.ahu_id != ahu.pk:
            raise ValidationError({"component": [f"component {component.label_code} is not part of unit {ahu.tag}"]})
        if component.kind != "fan":
            raise ValidationError(
                {"component": [f"component kind={component.kind!r}: run-hour meters belong to a fan or the unit"]}
            )
    # Lock the unit row so two readings for the same meter cannot both pass the check (unless the caller holds the
    # lock already). The row alone: the unit's default ordering (by site name) would join, and so lock, its
    # building and site rows too, for the rest of the caller's transaction, and compile two joins for each reading.
    if lock:
        list(AHU.objects.select_for_update().filter(pk=ahu.pk).order_by().values_list("pk"))
    meter_reading_check(
        ahu=ahu, hours=hours, taken_at=taken_at, component=component, is_reset=is_reset, neighbours=neighbours
    )
    reading = MeterReading(
        ahu=ahu,
        component=component,
        hours=hours,
        taken_at=taken_at,
        source=source,
        is_reset=is_reset,
        recorded_by=by if getattr(by, "is_authenticated", False) else None,
    )
    reading.save()
    # No answer version moves: no polled answer reads meter readings (today and the board show work orders, their
    # tasks, the registry and the technicians). Run-hour tasks project from readings only when work orders are
    # generated, and generation moves the organisation's version (scheduling.engine).
    return reading


def _parse_time(raw: str, tz: zoneinfo.ZoneInfo) -> dt.datetime | None:
    try:
        value = parse_datetime(raw.strip().replace(" ", "T", 1)) if raw else None
    except ValueError:  # well formed but no such day, e.g. 2025-02-30
        return None
    if value is None:
        return None
    return in_zone(value, tz)  # the one rule: a time without a zone is the site's (the API reads it the same)


@transaction.atomic
def meter_readings_import_csv(*, organisation: Organisation, text: str, by: User | None = None) -> list[MeterReading]:
    """Import ``unit_label,taken_at,hours[,component_label,is_reset]`` rows, all or nothing.

    ``taken_at`` without an offset is read in the unit's site time zone. Every
    row's problem is reported as ``row N: ...``; nothing is stored if any row fails.
    """
    reader = csv.DictReader(io.StringIO(text.lstrip("\ufeff")))
    header = [h.strip() for h in (reader.fieldnames or [])]
    missing = [c for c in CSV_COLUMNS if c not in header]
    if missing:
        raise ValidationError(
            {
                "file": [
                    f"missing {count_text(len(missing), 'column')} ({', '.join(missing)}); "
                    f"expected {', '.join(CSV_COLUMNS)} and optionally {', '.join(CSV_OPTIONAL)}"
                ]
            }
        )
    rows = [{(k or "").strip(): (v or "").strip() for k, v in row.items()} for row in reader]

    def labels(column: str) -> set[str]:
        # Only text a label code can be is looked up (PostgreSQL cannot hold NUL even in a query); any other
        # cell is no unit's label and is named by its row below.
        cells = {(r.get(column) or "").upper() for r in rows} - {""}
        return {c for c in cells if not text_problem(c, label=column, max_length=LABEL_MAX)}

    units = {
        a.label_code: a
        for a in AHU.objects.filter(
            building__site__organisation=organisation, label_code__in=labels("unit_label")
        ).select_related("building__site")
    }
    comps = {
        c.label_code: c
        for c in Component.objects.filter(ahu__in=units.values(), label_code__in=labels("component_label"))
    }
    errors: list[str] = []
    parsed = []
    for n, row in enumerate(rows, start=2):
        ahu = units.get(row["unit_label"].upper())
        if ahu is None:
            errors.append(f"row {n}: unit_label={row['unit_label']!r} is not a unit of {organisation}")
            continue
        comp = None
        if row.get("component_label"):
            comp = comps.get(row["component_label"].upper())
            if comp is None or comp.ahu_id != ahu.pk:
                errors.append(f"row {n}: component_label={row['component_label']!r} is not a component of {ahu.tag}")
                continue
        when = _parse_time(row["taken_at"], zoneinfo.ZoneInfo(ahu.building.site.time_zone))
        if when is None:
            errors.append(f"row {n}: taken_at={row['taken_at']!r} is not a date-time like 2025-03-01 08:00")
            continue
        reset = row.get("is_reset", "").lower() in {"1", "true", "yes", "y"}
        parsed.append((n, ahu, comp, when, row["hours"], reset))
    parsed.sort(key=lambda p: (p[1].pk, p[2].pk if p[2] else 0, p[3]))
    out = []
    for n, ahu, comp, when, hours, reset in parsed:
        try:
            with transaction.atomic():
                out.append(
                    meter_reading_record(
                        ahu=ahu,
                        component=comp,
                        hours=hours,
                        taken_at=when,
                        source=MeterReading.Source.BAS_CSV,
                        is_reset=reset,
                        by=by,
                    )
                )
        except ValidationError as exc:
            for field, msgs in exc.message_dict.items():
                errors.extend(f"row {n}: {field}: {m}" for m in msgs)
    if errors:
        raise ValidationError({"file": errors})
    return out
