"""Robust straight-line rates (Theil–Sen) for run-hours and pressure drops.

Theil–Sen takes the median of all pairwise slopes (Theil 1950; Sen 1968,
J. Am. Stat. Assoc. 63:1379), so one mistyped meter reading does not bend the
projection the way it would bend a least-squares line. Implemented with
``scipy.stats.theilslopes``, whose interval is Sen's confidence interval for
the slope.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime

import numpy as np
from scipy import stats

from engineering import validate as v
from engineering.errors import InsufficientDataError

# scipy's Theil–Sen itself, without its array-API wrapper (axis, NaN policy, broadcasting): the points here are
# one finite 1-D series, checked before the fit, and the wrapper cost several times the fit for a handful of points
# (the nightly forecast fits every trended filter bank). Falls back to the public function should scipy stop
# exposing it.
_theilslopes = getattr(stats.theilslopes, "__wrapped__", stats.theilslopes)

__all__ = ["Rate", "days_since", "robust_rate", "run_hours_per_day"]


@dataclass(frozen=True)
class Rate:
    slope: float
    intercept: float  # y at x = 0: median of y − slope·x
    low: float  # lower bound of the slope's confidence interval
    high: float  # upper bound
    n: int
    intercept_low: float  # median of y − low·x, the line drawn with the low slope
    intercept_high: float  # median of y − high·x

    def x_at(self, y: float, slope: str = "central") -> float:
        """x where the fitted line (``slope`` "central", "low" or "high") reaches y."""
        s, b = {
            "central": (self.slope, self.intercept),
            "low": (self.low, self.intercept_low),
            "high": (self.high, self.intercept_high),
        }[slope]
        return (y - b) / s


def robust_rate(*, points: Sequence[tuple[float, float]], confidence: float = 0.95) -> Rate:
    """Theil–Sen slope of y against x with a ``confidence`` interval.

    Median of pairwise slopes (Theil 1950; Sen 1968) via
    scipy.stats.theilslopes; the intercept is the median of y − slope·x
    (scipy's "joint" method), which one wild reading cannot shift the way
    it shifts the separate medians of x and y. Refuses fewer than 2 points
    or all x equal.
    """
    conf = v.in_range("confidence", confidence, 0.0, 1.0, low_open=True, high_open=True)
    try:
        pts = [(float(x), float(y)) for x, y in points]
    except (TypeError, ValueError):
        raise InsufficientDataError(
            field="points",
            value=points,
            allowed="a sequence of (x, y) number pairs",
            message="points must be a sequence of (x, y) number pairs",
        ) from None
    for i, (x, y) in enumerate(pts):
        v.finite(f"points[{i}].x", x)
        v.finite(f"points[{i}].y", y)
    if len(pts) < 2:
        raise InsufficientDataError(
            field="points",
            value=len(pts),
            allowed="at least 2 points",
            message=f"a rate needs at least 2 points; got {len(pts)}",
            low=2,
        )
    xs = [p[0] for p in pts]
    ys = [p[1] for p in pts]
    if max(xs) == min(xs):
        raise InsufficientDataError(
            field="points",
            value=xs[0],
            allowed="at least two different x values",
            message=f"all {len(pts)} points have the same x={v.fmt(xs[0])}: no rate can be drawn",
        )
    res = _theilslopes(np.asarray(ys, dtype=np.float64), np.asarray(xs, dtype=np.float64), conf, "joint")

    def intercept(s: float) -> float:
        return float(_median(sorted(y - s * x for x, y in pts)))

    return Rate(
        slope=float(res.slope),
        intercept=float(res.intercept),
        low=float(res.low_slope),
        high=float(res.high_slope),
        n=len(pts),
        intercept_low=intercept(float(res.low_slope)),
        intercept_high=intercept(float(res.high_slope)),
    )


def _median(sorted_values: list[float]) -> float:
    n = len(sorted_values)
    mid = n // 2
    return sorted_values[mid] if n % 2 else (sorted_values[mid - 1] + sorted_values[mid]) / 2


def days_since(when: date | datetime, origin: date | datetime) -> float:
    """Days from origin to when, fractional for datetimes; mixing a date with
    a datetime treats the date as its midnight."""
    return (as_datetime(when) - as_datetime(origin)).total_seconds() / 86_400.0


def as_datetime(d: date | datetime) -> datetime:
    if isinstance(d, datetime):
        return d.replace(tzinfo=None) if d.tzinfo is None else d
    return datetime(d.year, d.month, d.day)


def run_hours_per_day(*, readings: Sequence[tuple[date | datetime, float]]) -> Rate:
    """Run-hour meter rate in hours per day (Theil–Sen on (days, hours)).

    Aware and naive datetimes must not be mixed. A meter reset shows as a
    drop; pass only readings since the last reset.
    """
    if len(readings) < 2:
        raise InsufficientDataError(
            field="readings",
            value=len(readings),
            allowed="at least 2 readings",
            message=f"a run-hour rate needs at least 2 readings; got {len(readings)}",
            low=2,
        )
    origin = min((r[0] for r in readings), key=as_datetime)
    return robust_rate(points=[(days_since(when, origin), h) for when, h in readings])
