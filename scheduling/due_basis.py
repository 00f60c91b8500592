"""Which run-hour meter a runtime task's due date was projected from, in words for the reader.

The engine dates a runtime task by the fan meter the building-automation trends feed while it is current, else by
the unit's typed meter (``engine.Meters.basis_for``), and names the trend basis in the occurrence key:
``h:<reset>:<target>`` on the typed meter, ``h:<reset>:<target>:fan<id>`` on the trend-fed meter of fan ``<id>``.
``basis_words`` is the one phrase for it — "from the supply fan's run-hours in the building-automation trends (last
reading 2 Dec)" or "from the unit's typed run-hour meter" — and ``due_bases`` says it for many work orders at once.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections import defaultdict

from django.db.models import Max

from accounts.clock import day_text

RUNTIME_KEY = "h:"
TREND_TAG = "fan"


def trend_fan_of(key: str) -> int | None:
    """The fan whose trend-fed meter a runtime occurrence key was projected on (None: the typed meter or not a
    runtime key)."""
    parts = key.split(":")
    if key.startswith(RUNTIME_KEY) and len(parts) > 3 and parts[3].startswith(TREND_TAG):
        tail = parts[3][len(TREND_TAG) :]
        return int(tail) if tail.isdigit() else None
    return None


def basis_words(key: str, *, fan_name: str = "", supply: bool = True, last_day: dt.date | None = None,
                today: dt.date | None = None) -> str:  # fmt: skip
    """The basis of a runtime occurrence's due date in words ("" for a key that is not a run-hour projection):
    the trend-fed fan meter with the day of its last reading on the site's clock, or the unit's typed meter."""
    if not key.startswith(RUNTIME_KEY):
        return ""
    if trend_fan_of(key) is None:
        return "from the unit's typed run-hour meter"
    fan = "the supply fan's" if supply or not fan_name else f"the {fan_name}'s"
    last = f" (last reading {day_text(last_day, today=today or last_day)})" if last_day is not None else ""
    return f"from {fan} run-hours in the building-automation trends{last}"


def _latest_meters(unit_ids: set[int]) -> dict[tuple[int, int | None], tuple[dt.datetime, str]]:
    """{(unit id, part id or None): (its latest reading's time, source)} of the units' run-hour meters."""
    from .models import MeterReading

    latest = {
        (u, c): at
        for u, c, at in MeterReading.objects.filter(ahu_id__in=unit_ids)
        .values("ahu_id", "component_id")
        .annotate(at=Max("taken_at"))
        .values_list("ahu_id", "component_id", "at")
    }
    out: dict[tuple[int, int | None], tuple[dt.datetime, str]] = {}
    for u, c, at, source in (
        MeterReading.objects.filter(ahu_id__in=unit_ids, taken_at__in=set(latest.values()))
        .order_by("id")
        .values_list("ahu_id", "component_id", "taken_at", "source")
    ):
        if latest.get((u, c)) == at:
            out[(u, c)] = (at, source)
    return out


def due_bases(*, work_order_ids: list[int], today: dt.date) -> dict[int, str]:
    """{work order id: the basis of its run-hour tasks' due dates} ("; " between different bases of one visit),
    for the work orders holding a run-hour task; four queries whatever their number.

    A key without the trend tag was projected on the typed basis, which the engine takes as the unit's own meter,
    else its fans' (supply first: ``engine.Meters.meter_for``): when that is a fan meter the trends feed (its
    latest reading from them), the date came from the trends all the same, and is said so."""
    from inventory.models import Component

    from .models import MeterReading, WorkOrderTask

    rows = list(
        WorkOrderTask.objects.filter(work_order_id__in=work_order_ids, occurrence_key__startswith=RUNTIME_KEY)
        .order_by("work_order_id", "id")
        .values_list("work_order_id", "ahu_id", "occurrence_key", "ahu__building__site__time_zone")
    )
    if not rows:
        return {}
    units = {u for _wo, u, _key, _zone in rows}
    meters = _latest_meters(units)
    fans: dict[int, list[tuple[int, str, bool]]] = defaultdict(list)
    for pk, unit, name, specs in (
        Component.objects.filter(ahu_id__in=units, kind="fan")
        .order_by("pk")
        .values_list("pk", "ahu_id", "name", "specs")
    ):
        fans[unit].append((pk, name, (specs or {}).get("role") == "supply"))
    for unit in fans:
        fans[unit].sort(key=lambda f: (not f[2], f[0]))  # supply first, as the engine orders them
    out: dict[int, list[str]] = defaultdict(list)
    for wo, unit, key, zone in rows:
        fan = trend_fan_of(key)
        if fan is None and (unit, None) not in meters:
            fan = next((pk for pk, _n, _s in fans[unit] if (unit, pk) in meters), None)
        reading = meters.get((unit, fan)) if fan is not None else None
        if fan is None or reading is None or reading[1] != MeterReading.Source.BAS_TREND:
            words = basis_words(RUNTIME_KEY)
        else:
            name, supply = next(((n, s) for pk, n, s in fans[unit] if pk == fan), ("", True))
            # A trend reading is taken at the end of the site day it counts (its next midnight): that day is its day.
            local = reading[0].astimezone(zoneinfo.ZoneInfo(zone or "UTC")) - dt.timedelta(microseconds=1)
            words = basis_words(f"{RUNTIME_KEY}0:0:{TREND_TAG}{fan}", fan_name=name, supply=supply,
                                last_day=local.date(), today=today)  # fmt: skip
        if words not in out[wo]:
            out[wo].append(words)
    return {wo: "; ".join(words) for wo, words in out.items()}
