"""Time bases, point roles and array helpers for judging trend logs.

Everything works on 2-D float arrays shaped (units, samples) so one call can
judge thousands of units that share a time base; a 1-D series is one unit.
A missing sample is NaN and stays "unknown": it never counts as a fault nor
as a healthy sample.

Its public names are shared by the rules' engine (``engine``) and the freeze events (``freeze``); the package
answers with ``ROLES``, ``Resampled`` and ``resample``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta, tzinfo
from functools import cached_property
from typing import Any

import numpy as np

from engineering import validate as v
from engineering.errors import EngineeringInputError

# role: (label, low, high, SI unit). Fractions are 0–1, never percent.
ROLES: dict[str, tuple[str, float, float, str]] = {
    "sat": ("supply air temperature", *v.AIR_TEMPERATURE_C, "°C"),
    "mat": ("mixed air temperature", *v.AIR_TEMPERATURE_C, "°C"),
    "rat": ("return air temperature", *v.AIR_TEMPERATURE_C, "°C"),
    "oat": ("outdoor air temperature", *v.AIR_TEMPERATURE_C, "°C"),
    "sat_setpoint": ("supply air temperature set point", *v.AIR_TEMPERATURE_C, "°C"),
    "duct_static": ("duct static pressure", -2500.0, 5000.0, "Pa"),
    "duct_static_setpoint": ("duct static pressure set point", 0.0, 5000.0, "Pa"),
    "supply_fan_speed": ("supply fan speed command", 0.0, 1.0, ""),
    "supply_fan_status": ("supply fan status", 0.0, 1.0, ""),
    "heating_valve": ("heating valve command", 0.0, 1.0, ""),
    "cooling_valve": ("cooling valve command", 0.0, 1.0, ""),
    "oa_damper": ("outdoor air damper command", 0.0, 1.0, ""),
    "oa_damper_min": ("minimum outdoor air damper position", 0.0, 1.0, ""),
    "min_oa_fraction": ("minimum outdoor air fraction", 0.0, 1.0, ""),
    "cooling_coil_entering": ("cooling coil entering air temperature", *v.AIR_TEMPERATURE_C, "°C"),
    "cooling_coil_leaving": ("cooling coil leaving air temperature", *v.AIR_TEMPERATURE_C, "°C"),
    "heating_coil_entering": ("heating coil entering air temperature", *v.AIR_TEMPERATURE_C, "°C"),
    "heating_coil_leaving": ("heating coil leaving air temperature", *v.AIR_TEMPERATURE_C, "°C"),
    "supply_airflow": ("supply airflow", 0.0, 500.0, "m³/s"),
}

# Measured values are averaged before the rules compare them (the guideline's
# "AVG" subscripts); commands are read as sent.
AVERAGED_ROLES = frozenset(
    {
        "sat",
        "mat",
        "rat",
        "oat",
        "duct_static",
        "supply_fan_speed",
        "cooling_coil_entering",
        "cooling_coil_leaving",
        "heating_coil_entering",
        "heating_coil_leaving",
        "supply_airflow",
    }
)

_NAIVE_EPOCH = datetime(1970, 1, 1)
# A step may wander by this share and still count as regular (BAS loggers jitter by seconds).
_STEP_JITTER = 0.01


@dataclass(frozen=True)
class TimeBase:
    """Sample times as epoch seconds, with what is needed to give them back."""

    seconds: np.ndarray
    step_s: float
    kind: str  # "datetime" or "number"
    tz: tzinfo | None

    @cached_property
    def stamps(self) -> list[datetime | float]:
        """Every sample time, then the end of the last sample, in the caller's form."""
        return [self.at(x) for x in (*self.seconds.tolist(), float(self.seconds[-1]) + self.step_s)]

    def after(self, index: int, seconds: float) -> datetime | float:
        """The time ``seconds`` after sample ``index``, in the caller's form."""
        stamp = self.stamps[index]
        if self.kind == "number":
            return float(stamp) + seconds  # type: ignore[arg-type]
        if self._fixed_offset:
            return stamp + timedelta(seconds=seconds)  # type: ignore[operator]
        return self.at(float(self.seconds[index]) + seconds)

    @cached_property
    def _fixed_offset(self) -> bool:
        """No zone, or a fixed offset (UTC): adding a timedelta is exact; a zone with DST is not."""
        return self.tz is None or self.tz.utcoffset(None) is not None

    def at(self, seconds: float) -> datetime | float:
        """The time ``seconds`` in the caller's own form (datetime with its zone, or a number)."""
        if self.kind == "number":
            return float(seconds)
        if self.tz is None:
            return _NAIVE_EPOCH + timedelta(seconds=float(seconds))
        return datetime.fromtimestamp(float(seconds), tz=self.tz)


def to_seconds(name: str, times: object) -> tuple[np.ndarray, str, tzinfo | None]:
    """Epoch seconds of ``times`` (datetimes, all aware or all naive; or numbers)."""
    if isinstance(times, np.ndarray) and np.issubdtype(times.dtype, np.datetime64):
        secs = times.astype("datetime64[us]").astype(np.int64) / 1e6
        return secs.astype(np.float64), "datetime", None
    if isinstance(times, np.ndarray) and times.ndim == 1 and times.size and times.dtype.kind in "iuf":
        secs = times.astype(np.float64)
        if np.isfinite(secs).all():
            return secs, "number", None  # as the loop below gives them; a bad time is named by that loop
    if isinstance(times, (str, bytes)) or not isinstance(times, (Sequence, np.ndarray)):
        raise EngineeringInputError(
            field=name, value=times, allowed="a sequence of times", message=f"{name} must be a sequence of times"
        )
    items = list(times)
    if not items:
        raise EngineeringInputError(
            field=name, value=0, allowed="at least one time", message=f"{name} is empty: no times given"
        )
    if isinstance(items[0], datetime):
        tz = items[0].tzinfo
        out = np.empty(len(items), dtype=np.float64)
        for i, t in enumerate(items):
            if not isinstance(t, datetime) or (t.tzinfo is None) != (tz is None):
                raise EngineeringInputError(
                    field=f"{name}[{i}]",
                    value=t,
                    allowed="datetimes that are all aware or all naive",
                    message=f"{name}[{i}]={t!r} mixes with {items[0]!r}: give all times with a zone or all without",
                )
            out[i] = t.timestamp() if tz is not None else (t - _NAIVE_EPOCH).total_seconds()
        return out, "datetime", tz
    if all(type(t) is float or type(t) is int for t in items):  # plain numbers (a grid's times): checked at once
        out = np.array(items, dtype=np.float64)
        if np.isfinite(out).all():
            return out, "number", None
    out = np.empty(len(items), dtype=np.float64)
    for i, t in enumerate(items):
        out[i] = v.finite(f"{name}[{i}]", t, "time", "s")
    return out, "number", None


def _increasing(name: str, secs: np.ndarray, steps: np.ndarray | None = None) -> None:
    """Refuse times that do not strictly increase; ``steps``: ``np.diff(secs)`` when the caller has it."""
    bad = np.nonzero((np.diff(secs) if steps is None else steps) <= 0)[0]
    if bad.size:
        i = int(bad[0]) + 1
        raise EngineeringInputError(
            field=f"{name}[{i}]",
            value=float(secs[i]),
            allowed="times that strictly increase",
            message=f"{name}[{i}] is not later than {name}[{i - 1}]: times must strictly increase, without repeats",
        )


def regular_base(name: str, times: object) -> TimeBase:
    """A regular time base (equal steps within 1 %), refusing irregular times.

    Irregular or change-of-value logs go through ``resample`` first, which
    states how it fills the grid.
    """
    secs, kind, tz = to_seconds(name, times)
    if secs.size < 2:
        raise EngineeringInputError(
            field=name,
            value=int(secs.size),
            allowed="at least 2 times",
            message=f"{name} needs at least 2 times to have a step; got {secs.size}",
            low=2,
        )
    _increasing(name, secs)
    steps = np.diff(secs)
    step = float(np.median(steps))
    worst = float(np.max(np.abs(steps - step)))
    if worst > _STEP_JITTER * step:
        i = int(np.argmax(np.abs(steps - step))) + 1
        raise EngineeringInputError(
            field=name,
            value=float(steps[i - 1]),
            allowed=f"a regular step (here {v.fmt(step)} s)",
            message=(
                f"{name} is irregular: the step before {name}[{i}] is {v.fmt(float(steps[i - 1]))} s, "
                f"not {v.fmt(step)} s; resample the series onto a regular grid first"
            ),
            unit="s",
        )
    return TimeBase(seconds=secs, step_s=step, kind=kind, tz=tz)


def check_values(role: str, values: np.ndarray) -> None:
    """Refuse infinities and values outside the role's plausible band; NaN is a gap."""
    label, low, high, unit = ROLES[role]
    if np.isinf(values).any():
        i = int(np.argmax(np.isinf(values).ravel()))
        raise EngineeringInputError(
            field=role,
            value=float(values.ravel()[i]),
            allowed="finite numbers (a gap is NaN or None)",
            message=f"{label} {role} holds an infinite value at sample {i}; a gap is NaN or None",
            unit=unit,
        )
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return
    lo, hi = float(finite.min()), float(finite.max())
    if lo < low or hi > high:
        bad = lo if lo < low else hi
        hint = " (fractions are 0–1, not percent)" if unit == "" and bad > 1.0 else ""
        allowed = v.describe_range(low, high, unit)
        quantity = v.quantity_of(unit)
        parts = (
            [f"{label} ", {"value": bad, "quantity": quantity}, " is outside ", *v.range_parts(low, high, quantity)]
            if quantity
            else []
        )
        raise EngineeringInputError(
            field=role,
            value=bad,
            allowed=allowed,
            message=f"{label} {role}={v.fmt(bad)} is outside {allowed}{hint}",
            low=low,
            high=high,
            unit=unit,
            parts=parts,
        )


def as_unit_array(role: str, value: object, n: int) -> np.ndarray:
    """``value`` (a number, a series of n, or units × n) as a float array (units, n)."""
    if role not in ROLES:
        raise EngineeringInputError(
            field="points",
            value=role,
            allowed="one of " + ", ".join(ROLES),
            message=f"points has an unknown role {role!r}; known roles: {', '.join(ROLES)}",
        )
    if value is None or (isinstance(value, (int, float)) and not isinstance(value, bool)):
        arr = np.full((1, n), np.nan if value is None else float(value))
    else:
        try:
            arr = np.array(value, dtype=np.float64)  # None → NaN
        except (TypeError, ValueError):
            raise EngineeringInputError(
                field=role,
                value=type(value).__name__,
                allowed="numbers (a gap is NaN or None)",
                message=f"{role} holds something that is not a number",
            ) from None
        if arr.ndim == 1:
            arr = arr[np.newaxis, :]
        if arr.ndim != 2 or arr.shape[1] != n:
            raise EngineeringInputError(
                field=role,
                value=list(arr.shape),
                allowed=f"one value, {n} values, or units × {n} values",
                message=f"{role} has shape {tuple(arr.shape)}; the times give {n} samples",
            )
    check_values(role, arr)
    return arr


def trailing_mean(x: np.ndarray, k: int) -> np.ndarray:
    """Mean of the last k samples along the time axis; NaN unless all k are present."""
    if k <= 1:
        return x
    finite = np.isfinite(x)
    zero = np.zeros((*x.shape[:-1], 1))
    total = np.concatenate([zero, np.cumsum(np.where(finite, x, 0.0), axis=-1)], axis=-1)
    count = np.concatenate([zero, np.cumsum(finite, axis=-1)], axis=-1)
    out = np.full(x.shape, np.nan)
    if x.shape[-1] >= k:
        s = total[..., k:] - total[..., :-k]
        c = count[..., k:] - count[..., :-k]
        with np.errstate(invalid="ignore"):
            out[..., k - 1 :] = np.where(c == k, s / k, np.nan)
    return out


def trailing_count(mask: np.ndarray, k: int) -> np.ndarray:
    """How many of the last k samples (this one included) are True."""
    c = np.concatenate([np.zeros((mask.shape[0], 1), dtype=np.int64), np.cumsum(mask, axis=1)], axis=1)
    lo = np.maximum(np.arange(mask.shape[1]) + 1 - k, 0)
    sums: np.ndarray = c[:, 1:] - c[:, lo]
    return sums


def runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Runs of True along each row: (unit, first index, index after the last)."""
    u, n = mask.shape
    padded = np.zeros((u, n + 2), dtype=np.int8)
    padded[:, 1:-1] = mask
    d = np.diff(padded, axis=1)
    unit, first = np.nonzero(d == 1)
    _, after = np.nonzero(d == -1)
    return unit, first, after


def samples_for(seconds: float, step_s: float) -> int:
    """Whole samples needed to cover ``seconds`` at ``step_s`` (at least one)."""
    return max(1, math.ceil(seconds / step_s - 1e-9))


@dataclass(frozen=True)
class Resampled:
    times: list[datetime | float]
    points: dict[str, np.ndarray | float]
    step_s: float


def resample(
    *,
    series: Mapping[str, tuple[Sequence[Any], Sequence[Any]] | float],
    step_s: float,
    start: datetime | float | None = None,
    end: datetime | float | None = None,
    max_hold_s: float | None = None,
) -> Resampled:
    """Put point series logged at their own times onto one regular grid.

    Each grid time takes the last sample at or before it (zero-order hold, the
    way a building automation system's change-of-value log reads), as long as
    that sample is no older than ``max_hold_s``; older means a gap (NaN). By
    default a point may be held for 1.5 × the longer of the step and its own
    median logging interval. A number in ``series`` is a constant (e.g. a
    fixed minimum damper position). The grid starts at ``start`` (default: the
    earliest sample) and runs while it is not after ``end`` (default: the
    latest sample).
    """
    step = v.in_range("step_s", step_s, 1.0, 86_400.0, unit="s", label="resampling step")
    hold = None if max_hold_s is None else v.in_range("max_hold_s", max_hold_s, 0.0, 30 * 86_400.0, unit="s")
    logged: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    own_steps: dict[str, np.ndarray] = {}
    constants: dict[str, float] = {}
    kind, tz = "number", None
    for role, item in series.items():
        if role not in ROLES:
            as_unit_array(role, 0.0, 1)  # raises the unknown-role refusal
        if isinstance(item, (int, float)) and not isinstance(item, bool):
            check_values(role, np.array([float(item)]))
            constants[role] = float(item)
            continue
        if not isinstance(item, tuple) or len(item) != 2:
            raise EngineeringInputError(
                field=role,
                value=type(item).__name__,
                allowed="(times, values) or a constant number",
                message=f"{role} must be a (times, values) pair or a constant number",
            )
        secs, kind, tz = to_seconds(f"{role}.times", item[0])
        vals = as_unit_array(role, item[1], secs.size)[0]
        steps = np.diff(secs)
        _increasing(f"{role}.times", secs, steps)
        logged[role] = (secs, vals)
        own_steps[role] = steps
    if not logged:
        raise EngineeringInputError(
            field="series",
            value=0,
            allowed="at least one logged point",
            message="series has no logged point to resample",
        )
    first = min(s[0] for s, _ in logged.values()) if start is None else to_seconds("start", [start])[0][0]
    last = max(s[-1] for s, _ in logged.values()) if end is None else to_seconds("end", [end])[0][0]
    if last < first:
        raise EngineeringInputError(
            field="end", value=end, allowed="not before start", message="end is before start: no grid to fill"
        )
    grid = first + step * np.arange(math.floor((last - first) / step + 1e-9) + 1)
    points: dict[str, np.ndarray | float] = dict(constants)
    for role, (secs, vals) in logged.items():
        own = _median_step(own_steps[role]) if secs.size > 1 else step
        limit = hold if hold is not None else 1.5 * max(step, own)
        idx = np.searchsorted(secs, grid, side="right") - 1
        ok = idx >= 0
        safe = np.where(ok, idx, 0)
        ok &= (grid - secs[safe]) <= limit
        points[role] = np.where(ok, vals[safe], np.nan)
    base = TimeBase(seconds=grid, step_s=step, kind=kind, tz=tz)
    # Number times are the grid's own floats (what ``TimeBase.at`` gives each one).
    times = grid.tolist() if kind == "number" else [base.at(s) for s in grid]
    return Resampled(times=times, points=points, step_s=step)


def _median_step(steps: np.ndarray) -> float:
    """The median of a log's steps; a regular log's one step without sorting (the same value)."""
    if steps.size and bool((steps == steps[0]).all()):
        return float(steps[0])
    return float(np.median(steps))
