"""A unit's trends as the fault engine and the feeds read them: point roles, samples over a window.

``POINT_ROLES`` is the one table from a point's Brick class (and, for a part's point, the part's job) to the
role ``engineering.faults`` judges it in, with the scale to its SI fraction: a Brick ``Fan_Speed_Command`` of
the unit's supply fan is ``supply_fan_speed``; a ``Damper_Position_Command`` of its outdoor-air damper is
``oa_damper``. Percent points become fractions 0–1 here, and nowhere else.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np

from inventory.models import AHU, Component

from .models import Point, TrendDay
from .vocabulary import PointUnit


@dataclass(frozen=True)
class RoleRule:
    brick_class: str
    role: str
    # For a part's point: (spec, values) the part must have, e.g. ("role", ("supply",)) for the supply fan.
    part: tuple[str, tuple[str, ...]] | None = None


# First match wins per role (a heating coil's valve before a preheat coil's).
POINT_ROLES: tuple[RoleRule, ...] = (
    RoleRule("Supply_Air_Temperature_Sensor", "sat"),
    RoleRule("Mixed_Air_Temperature_Sensor", "mat"),
    RoleRule("Return_Air_Temperature_Sensor", "rat"),
    RoleRule("Outside_Air_Temperature_Sensor", "oat"),
    RoleRule("Supply_Air_Temperature_Setpoint", "sat_setpoint"),
    RoleRule("Supply_Air_Static_Pressure_Sensor", "duct_static"),
    RoleRule("Supply_Air_Static_Pressure_Setpoint", "duct_static_setpoint"),
    RoleRule("Supply_Air_Flow_Sensor", "supply_airflow"),
    RoleRule("Fan_Speed_Command", "supply_fan_speed", ("role", ("supply",))),
    RoleRule("Fan_Status", "supply_fan_status", ("role", ("supply",))),
    RoleRule("Damper_Position_Command", "oa_damper", ("role", ("outdoor",))),
    RoleRule("Valve_Position_Command", "heating_valve", ("duty", ("heating",))),
    RoleRule("Valve_Position_Command", "heating_valve", ("duty", ("preheat",))),
    RoleRule("Valve_Position_Command", "cooling_valve", ("duty", ("cooling",))),
    # Not a fault-rule role: the air after the preheater, judged for freeze events beside the supply air.
    RoleRule("Preheat_Supply_Air_Temperature_Sensor", "preheat_leaving"),
)
# Roles the fault rules do not take, read by the feeds and freeze events only.
EXTRA_ROLES = frozenset({"preheat_leaving"})
SCALE = {PointUnit.PERCENT: 0.01}


def role_of(point: Point, component: Component | None = None) -> str | None:
    """The role a point is judged in, or None when no rule takes it (a CO₂ sensor, a return fan's speed)."""
    component = component if component is not None else point.component
    for rule in POINT_ROLES:
        if rule.brick_class != point.brick_class:
            continue
        if rule.part is not None:
            spec, values = rule.part
            if component is None or str((component.specs or {}).get(spec, "")) not in values:
                continue
        return rule.role
    return None


def unit_roles(points: Iterable[Point]) -> dict[str, Point]:
    """{role: point} of one unit's points; the first point by the table's order (then by name) takes a role."""
    named = [(p, role_of(p)) for p in sorted(points, key=lambda p: p.name)]  # each point's role found once
    out: dict[str, Point] = {}
    for rule in POINT_ROLES:
        if rule.role in out:
            continue
        for p, role in named:
            if p.brick_class == rule.brick_class and role == rule.role:
                out[rule.role] = p
                break
    return out


def site_day_window(*, ahu: AHU, day: dt.date) -> tuple[dt.datetime, dt.datetime]:
    """The site-local day ``day`` as [start, end) in aware UTC datetimes (23 or 25 hours on a clock change)."""
    tz = zoneinfo.ZoneInfo(ahu.building.site.time_zone or "UTC")
    start = dt.datetime.combine(day, dt.time(), tzinfo=tz).astimezone(dt.UTC)
    end = dt.datetime.combine(day + dt.timedelta(days=1), dt.time(), tzinfo=tz).astimezone(dt.UTC)
    return start, end


@dataclass
class Samples:
    """One point's samples: epoch seconds and SI values (fractions for percent points), in time order."""

    seconds: np.ndarray
    values: np.ndarray

    def at(self, seconds: np.ndarray, *, max_hold_s: float) -> np.ndarray:
        """The value held at each of ``seconds`` (the last sample at or before it, no older than ``max_hold_s``),
        NaN where none."""
        if self.seconds.size == 0:
            return np.full(seconds.shape, np.nan)
        i = np.searchsorted(self.seconds, seconds, side="right") - 1
        ok = i >= 0
        idx = np.where(ok, i, 0)
        held = np.where(ok, self.values[idx], np.nan)
        age = seconds - self.seconds[idx]
        return np.where(ok & (age <= max_hold_s), held, np.nan)


@dataclass
class UnitTrends:
    ahu: AHU
    start: dt.datetime
    end: dt.datetime
    roles: dict[str, Point]
    samples: dict[int, Samples] = field(default_factory=dict)  # point id: samples
    points: list[Point] = field(default_factory=list)  # every mapped point of the unit, with its component
    read_from: dt.datetime | None = None  # the samples hold every sample from this time on (the day's lead)

    def of(self, role: str) -> Samples | None:
        point = self.roles.get(role)
        return self.samples.get(point.pk) if point is not None else None

    def point_samples(self, point: Point) -> Samples | None:
        return self.samples.get(point.pk)


def samples_for(*, points: list[Point], since: dt.datetime, until: dt.datetime) -> dict[int, Samples]:
    """Samples of ``points`` with since ≤ time < until, read from their day buckets in one query."""
    out: dict[int, list[tuple[np.ndarray, np.ndarray]]] = {p.pk: [] for p in points}
    scale = {p.pk: SCALE.get(p.unit, 1.0) for p in points}
    lo, hi = since.timestamp(), until.timestamp()
    rows = (
        TrendDay.objects.filter(point__in=points, day__gte=since.date(), day__lte=until.date())
        .order_by("point_id", "day")
        .values_list("point_id", "day", "seconds", "values")
    )
    bases: dict[dt.date, float] = {}
    for point_id, day, secs, vals in rows:
        base = bases.get(day)
        if base is None:
            base = bases[day] = dt.datetime.combine(day, dt.time(), tzinfo=dt.UTC).timestamp()
        s = np.frombuffer(secs, dtype=np.uint32) + base  # float64: the buffers are read, not copied
        v = np.frombuffer(vals, dtype=np.float64) * scale[point_id]  # a new array (the buffer is read-only)
        if s.size and (s[0] < lo or s[-1] >= hi):  # a bucket reaching out of the window (in time order)
            keep = (s >= lo) & (s < hi)
            s, v = s[keep], v[keep]
        out[point_id].append((s, v))
    result = {}
    for pk, parts in out.items():
        if len(parts) == 1:
            s, v = parts[0]
        elif parts:
            s = np.concatenate([a for a, _ in parts])
            v = np.concatenate([b for _, b in parts])
        else:
            s, v = np.empty(0), np.empty(0)
        result[pk] = Samples(seconds=s, values=v)
    return result


def unit_trends(
    *,
    ahu: AHU,
    start: dt.datetime,
    end: dt.datetime,
    lead: dt.timedelta,
    points=None,
    samples: dict[int, Samples] | None = None,
) -> UnitTrends:
    """The unit's mapped points and their samples from ``start - lead`` to ``end``; ``samples`` when they were
    read already over that window (``samples_for`` of a whole site's points at once)."""
    points = list(points if points is not None else Point.objects.filter(ahu=ahu).select_related("component"))
    if samples is None:
        samples = samples_for(points=points, since=start - lead, until=end)
    else:
        samples = {p.pk: samples.get(p.pk) or Samples(seconds=np.empty(0), values=np.empty(0)) for p in points}
    return UnitTrends(
        ahu=ahu,
        start=start,
        end=end,
        roles=unit_roles(points),
        samples=samples,
        points=points,
        read_from=start - lead,
    )
