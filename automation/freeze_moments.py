"""What a unit did when its air was coldest in a freeze event, read from its trends (no writes).

A freeze event (``engineering.faults.freeze``) says the air stayed below a stage's temperature for its time; the
person who reads it needs to know what the unit was doing then: whether the supply fan kept running, where the
outdoor-air damper was, and what the heating or preheat valve was commanded to. ``freeze_moment`` reads those
points at the moment the air was lowest and says which of them are not mapped to a trend point at all, so the
words (``automation.freeze_words.freeze_parts``) can say plainly what the trends cannot tell.

The moment is kept on the fault's window as JSON (``lowest_at``, ``air`` and ``unit``); every value is SI (a
command or a position as a fraction 0–1, a status 1 or 0) with the name of the point it was read from, the name
the point map and the trend files use.
"""

from __future__ import annotations

import datetime as dt

import numpy as np

from engineering.faults import FreezeEvent

from .feeds import RUN_HOLD_MAX_S
from .series import Samples, UnitTrends

# Brick class of a valve command and of a frost thermostat (``automation.vocabulary.POINT_CLASSES``).
VALVE_COMMAND = "Valve_Position_Command"
FROST_STAT = "Freeze_Status"


def _lowest_at(samples: Samples | None, event: FreezeEvent) -> float | None:
    """Epoch seconds of the first sample at the event's lowest temperature inside its window."""
    if samples is None or samples.seconds.size == 0:
        return None
    start, end = _seconds(event.start), _seconds(event.end)
    inside = (samples.seconds >= start) & (samples.seconds < end) & np.isfinite(samples.values)
    if not inside.any():
        return None
    secs, values = samples.seconds[inside], samples.values[inside]
    return float(secs[int(np.argmin(values))])


def _seconds(t) -> float:
    return t.timestamp() if isinstance(t, dt.datetime) else float(t)


def _value(trends: UnitTrends, point, at_s: float, hold_s: float) -> float | None:
    s = trends.point_samples(point)
    if s is None:
        return None
    v = float(s.at(np.array([at_s]), max_hold_s=hold_s)[0])
    return round(v, 4) if np.isfinite(v) else None


def _read(trends: UnitTrends, point, at_s: float, hold_s: float) -> dict:
    """One point's value at the moment: {"point": its name, "value": SI or None (no sample near it)}."""
    return {"point": point.name, "value": _value(trends, point, at_s, hold_s)}


def freeze_moment(trends: UnitTrends, event: FreezeEvent, *, air: str) -> dict:
    """The moment the ``air`` role (``sat`` or ``preheat_leaving``) was lowest in ``event`` and what the unit did
    then: ``{"air", "lowest_at" (ISO, UTC), "unit": {"fan_status", "fan_speed", "oa_damper", "frost_stat"
    (each a point's read, or None when no point of that role is mapped), "heating" (a read per heating or
    preheat valve command, with its part and ``before``: its value when the air first fell below the stage's
    temperature, so the words can tell a valve turned up from one left where it was), "heating_unmapped" (the
    heating and preheat parts no command is mapped for)}}``. Without ``lowest_at`` when no sample of the air lies in
    the window. A point's last sample holds its value as long as the run-hour feed holds a fan's
    (``feeds.RUN_HOLD_MAX_S``): a status or a command logged on change of value may stay quiet for hours."""
    out: dict = {"air": air}
    at_s = _lowest_at(trends.of(air), event)
    if at_s is None:
        return out
    out["lowest_at"] = dt.datetime.fromtimestamp(at_s, tz=dt.UTC).isoformat()
    hold = RUN_HOLD_MAX_S
    roles = trends.roles

    def role(name: str) -> dict | None:
        point = roles.get(name)
        return _read(trends, point, at_s, hold) if point is not None else None

    heating, mapped_parts = [], set()
    for p in sorted(trends.points, key=lambda p: p.name):
        c = p.component
        if p.brick_class == VALVE_COMMAND and c is not None and (c.specs or {}).get("duty") in ("heating", "preheat"):
            before = _value(trends, p, _seconds(event.start), hold)
            heating.append({"part": c.name, **_read(trends, p, at_s, hold), "before": before})
            mapped_parts.add(c.pk)
    unmapped = [c.name for c in _heating_parts(trends) if c.pk not in mapped_parts]
    frost = next((p for p in sorted(trends.points, key=lambda p: p.name) if p.brick_class == FROST_STAT), None)
    out["unit"] = {
        "fan_status": role("supply_fan_status"),
        "fan_speed": role("supply_fan_speed"),
        "oa_damper": role("oa_damper"),
        "heating": heating,
        "heating_unmapped": unmapped,
        "frost_stat": _read(trends, frost, at_s, hold) if frost is not None else None,
    }
    return out


def _heating_parts(trends: UnitTrends) -> list:
    """The unit's heating and preheat coils and electric preheaters in service, in the unit's order."""
    parts = trends.ahu.components.filter(kind__in=("coil", "electric_preheater"), retired_on__isnull=True).order_by(
        "position", "pk"
    )
    return [
        c
        for c in parts
        if c.kind == "electric_preheater" or str((c.specs or {}).get("duty", "")) in ("heating", "preheat")
    ]
