"""Building a unit's automation trends for tests: points on a full unit, and days of 15-minute samples."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable

from automation.models import Point, TrendDay
from automation.services import point_create

STEP = dt.timedelta(minutes=15)

# name: (Brick class, component name or None)
POINTS = {
    "SAT": ("Supply_Air_Temperature_Sensor", None),
    "MAT": ("Mixed_Air_Temperature_Sensor", None),
    "RAT": ("Return_Air_Temperature_Sensor", None),
    "OAT": ("Outside_Air_Temperature_Sensor", None),
    "SAT-SP": ("Supply_Air_Temperature_Setpoint", None),
    "SF-STS": ("Fan_Status", "Supply fan"),
    "SF-SPD": ("Fan_Speed_Command", "Supply fan"),
    "OAD": ("Damper_Position_Command", "Outdoor-air damper"),
    "HCV": ("Valve_Position_Command", "Heating coil"),
    "CCV": ("Valve_Position_Command", "Cooling coil"),
    "FILT-DP": ("Filter_Differential_Pressure_Sensor", "Final filters"),
    "CO2": ("CO2_Level_Sensor", "Return CO2 sensor"),
}


def map_points(ahu, names=None) -> dict[str, Point]:
    """The unit's points named ``names`` (all of ``POINTS`` by default), as a BAS might name them."""
    out = {}
    for name in names or POINTS:
        brick_class, part = POINTS[name]
        component = ahu.components.get(name=part) if part else None
        out[name] = point_create(ahu=ahu, name=f"{ahu.tag}.{name}", brick_class=brick_class, component=component)
    return out


def put(point: Point, samples: list[tuple[dt.datetime, float]]) -> None:
    """Store samples into the point's UTC day buckets (merged with what is there)."""
    by_day: dict[dt.date, dict[int, float]] = {}
    for when, value in samples:
        when = when.astimezone(dt.UTC)
        midnight = dt.datetime.combine(when.date(), dt.time(), tzinfo=dt.UTC)
        by_day.setdefault(when.date(), {})[int((when - midnight).total_seconds())] = value
    for day, values in by_day.items():
        row, _ = TrendDay.objects.get_or_create(point=point, day=day)
        midnight = dt.datetime.combine(day, dt.time(), tzinfo=dt.UTC)
        have = {int((w - midnight).total_seconds()): v for w, v in row.samples()}
        row.set_samples({**have, **values})
        row.save()


def day_of(start: dt.datetime, value: Callable[[dt.datetime], float | None], *, hours: float = 24) -> list:
    """15-minute samples from ``start`` for ``hours``; ``value(time)`` None leaves a sample out."""
    out = []
    t = start
    end = start + dt.timedelta(hours=hours)
    while t < end:
        v = value(t)
        if v is not None:
            out.append((t, float(v)))
        t += STEP
    return out


def put_day(points: dict[str, Point], start: dt.datetime, values: dict[str, float | Callable]) -> None:
    """One day of samples from ``start`` for each named point: a constant, or a function of the time."""
    for name, v in values.items():
        put(points[name], day_of(start, v if callable(v) else (lambda _t, v=v: v)))
