"""Season starts and degree-days from outdoor temperatures.

Used to schedule freeze-protection and cooling checks a lead time before a
season starts. Works in either hemisphere: a season start is found as the
first crossing of the threshold *after a day on the other side of it*,
searching forward from a start date, never by calendar month.
"""

from __future__ import annotations

import calendar
from collections.abc import Iterable, Sequence
from datetime import date, timedelta

from engineering import validate as v
from engineering.controls import Check, Verdict
from engineering.errors import EngineeringInputError

__all__ = [
    "DEFAULT_COOLING_THRESHOLD_C",
    "DEFAULT_FREEZE_THRESHOLD_C",
    "HDD_BASE_65F_C",
    "cooling_degree_days",
    "cooling_season_start",
    "daily_minimums_from_normals",
    "daily_values_from_normals",
    "freeze_risk",
    "freeze_season_start",
    "freeze_trip_setting_check",
    "heating_degree_days",
    "heating_degree_days_65f",
]

# Preheat/freeze-protection checks are usually wanted before outdoor minima
# reach about 5 °C (common practice; configurable per site).
DEFAULT_FREEZE_THRESHOLD_C = 5.0
# No published source: a judgement for "the first warm day", configurable.
DEFAULT_COOLING_THRESHOLD_C = 24.0
HDD_BASE_65F_C = (65.0 - 32.0) * 5.0 / 9.0  # 18.33 °C, the US degree-day base
_OUTDOOR = (-90.0, 60.0)


def _mid_month(year: int, month: int) -> date:
    days = calendar.monthrange(year, month)[1]
    return date(year, month, 1) + timedelta(days=(days - 1) / 2)


def daily_values_from_normals(*, monthly_c: Sequence[float], start: date, days: int) -> list[tuple[date, float]]:
    """Daily values from 12 monthly normals (January first), linearly
    interpolated between mid-month dates and wrapping across the new year.
    Mid-month linear interpolation of monthly normals is common practice
    (it does not preserve the monthly mean exactly)."""
    return _from_normals(monthly_c, start, days, "monthly_c")


def _from_normals(monthly_c: Sequence[float], start: date, days: int, field: str) -> list[tuple[date, float]]:
    if len(monthly_c) != 12:
        raise EngineeringInputError(
            field=field,
            value=len(monthly_c),
            allowed="12 monthly values, January first",
            message=f"monthly normals must be 12 values, January first; got {len(monthly_c)}",
        )
    vals = [
        v.in_range(f"{field}[{i}]", t, *_OUTDOOR, unit="°C", label="monthly normal") for i, t in enumerate(monthly_c)
    ]
    if not isinstance(start, date):
        raise EngineeringInputError(
            field="start", value=start, allowed="a date", message=f"start={start!r} is not a date"
        )
    n = int(v.in_range("days", days, 0, 3660, unit="days", label="number of days"))
    out: list[tuple[date, float]] = []
    for k in range(n):
        d = start + timedelta(days=k)
        mid = _mid_month(d.year, d.month)
        if d >= mid:
            y1, m1 = (d.year + 1, 1) if d.month == 12 else (d.year, d.month + 1)
            a_date, a_val, b_date, b_val = mid, vals[d.month - 1], _mid_month(y1, m1), vals[m1 - 1]
        else:
            y0, m0 = (d.year - 1, 12) if d.month == 1 else (d.year, d.month - 1)
            a_date, a_val, b_date, b_val = _mid_month(y0, m0), vals[m0 - 1], mid, vals[d.month - 1]
        f = (d - a_date).days / (b_date - a_date).days
        out.append((d, a_val + f * (b_val - a_val)))
    return out


def daily_minimums_from_normals(*, monthly_min_c: Sequence[float], start: date, days: int) -> list[tuple[date, float]]:
    """Daily minimum temperatures from 12 monthly mean-minimum normals;
    see ``daily_values_from_normals`` (mid-month linear interpolation,
    common practice)."""
    return _from_normals(monthly_min_c, start, days, "monthly_min_c")


def _series(name: str, values: Iterable[tuple[date, float]]) -> list[tuple[date, float]]:
    out = []
    for i, item in enumerate(values):
        try:
            d, t = item
        except (TypeError, ValueError):
            raise EngineeringInputError(
                field=name,
                value=item,
                allowed="(date, °C) pairs",
                message=f"{name}[{i}]={item!r} is not a (date, temperature) pair",
            ) from None
        out.append((d, v.in_range(f"{name}[{i}]", t, *_OUTDOOR, unit="°C", label="outdoor temperature")))
    out.sort(key=lambda p: p[0])
    return out


def _first_crossing(
    series: Iterable[tuple[date, float]], threshold: float, search_from: date | None, *, downward: bool
) -> date | None:
    seen_other_side = False
    for d, t in series:
        if search_from is not None and d < search_from:
            continue
        inside = t <= threshold if downward else t >= threshold
        if not inside:
            seen_other_side = True
        elif seen_other_side:
            return d
    return None


def freeze_season_start(
    *,
    daily_minimums: Iterable[tuple[date, float]],
    threshold_c: float = DEFAULT_FREEZE_THRESHOLD_C,
    search_from: date | None = None,
) -> date | None:
    """First day, on or after ``search_from``, whose minimum is ≤ threshold_c
    following at least one day above it (so a series that starts inside a
    cold season finds the *next* season, not the current one). None if the
    series never crosses. Threshold 5 °C by default (common practice)."""
    th = v.in_range("threshold_c", threshold_c, -40.0, 20.0, unit="°C", label="freeze threshold")
    return _first_crossing(_series("daily_minimums", daily_minimums), th, search_from, downward=True)


def cooling_season_start(
    *,
    daily_maximums: Iterable[tuple[date, float]],
    threshold_c: float = DEFAULT_COOLING_THRESHOLD_C,
    search_from: date | None = None,
) -> date | None:
    """First day, on or after ``search_from``, whose maximum is ≥ threshold_c
    following at least one day below it. Threshold 24 °C by default (a
    judgement, no published source; set per site)."""
    th = v.in_range("threshold_c", threshold_c, 0.0, 45.0, unit="°C", label="cooling threshold")
    return _first_crossing(_series("daily_maximums", daily_maximums), th, search_from, downward=False)


def _means(daily_mean_c: Iterable[float] | None, daily_min_max_c: Iterable[tuple[float, float]] | None) -> list[float]:
    if (daily_mean_c is None) == (daily_min_max_c is None):
        raise EngineeringInputError(
            field="daily_mean_c",
            value=None,
            allowed="exactly one of daily_mean_c, daily_min_max_c",
            message="give exactly one of daily_mean_c, daily_min_max_c",
        )
    if daily_mean_c is not None:
        return [
            v.in_range(f"daily_mean_c[{i}]", t, *_OUTDOOR, unit="°C", label="daily mean")
            for i, t in enumerate(daily_mean_c)
        ]
    out = []
    for i, (lo, hi) in enumerate(daily_min_max_c or ()):
        lo = v.in_range(f"daily_min_max_c[{i}].min", lo, *_OUTDOOR, unit="°C", label="daily minimum")
        hi = v.in_range(
            f"daily_min_max_c[{i}].max", hi, lo, _OUTDOOR[1], unit="°C", label="daily maximum (not below the minimum)"
        )
        out.append((lo + hi) / 2.0)
    return out


def heating_degree_days(
    *,
    daily_mean_c: Iterable[float] | None = None,
    daily_min_max_c: Iterable[tuple[float, float]] | None = None,
    base_c: float = 18.0,
) -> float:
    """Heating degree-days, K·day: Σ max(0, base − t_mean), t_mean = daily mean
    or (t_min + t_max)/2 (the daily-mean method; ASHRAE Handbook—Fundamentals
    ch.14 describes degree-days on this basis, from memory). Base 18 °C is the
    usual SI base (common practice); HDD_BASE_65F_C gives the US 65 °F base."""
    base = v.in_range("base_c", base_c, -10.0, 30.0, unit="°C", label="degree-day base")
    return sum(max(0.0, base - t) for t in _means(daily_mean_c, daily_min_max_c))


def heating_degree_days_65f(
    *,
    daily_mean_c: Iterable[float] | None = None,
    daily_min_max_c: Iterable[tuple[float, float]] | None = None,
) -> float:
    """Heating degree-days in °F·day on the 65 °F base, from °C inputs
    (K·day × 9/5)."""
    return (
        heating_degree_days(daily_mean_c=daily_mean_c, daily_min_max_c=daily_min_max_c, base_c=HDD_BASE_65F_C)
        * 9.0
        / 5.0
    )


def cooling_degree_days(
    *,
    daily_mean_c: Iterable[float] | None = None,
    daily_min_max_c: Iterable[tuple[float, float]] | None = None,
    base_c: float = 18.0,
) -> float:
    """Cooling degree-days, K·day: Σ max(0, t_mean − base) (same method as
    ``heating_degree_days``)."""
    base = v.in_range("base_c", base_c, -10.0, 30.0, unit="°C", label="degree-day base")
    return sum(max(0.0, t - base) for t in _means(daily_mean_c, daily_min_max_c))


def freeze_risk(
    *,
    minimum_c: float,
    threshold_c: float = DEFAULT_FREEZE_THRESHOLD_C,
    margin_k: float = 3.0,
) -> Check:
    """Freeze risk of a forecast or observed minimum outdoor temperature:
    FAIL at or below threshold_c, WATCH within margin_k above it, else OK
    (common practice; thresholds configurable)."""
    t = v.in_range("minimum_c", minimum_c, *_OUTDOOR, unit="°C", label="minimum outdoor temperature")
    th = v.in_range("threshold_c", threshold_c, -40.0, 20.0, unit="°C", label="freeze threshold")
    m = v.non_negative("margin_k", margin_k, unit="K")
    if t <= th:
        verdict, words = Verdict.FAIL, f"at or below the freeze threshold {th:.1f} °C"
    elif t <= th + m:
        verdict, words = Verdict.WATCH, f"within {m:.1f} K of the freeze threshold {th:.1f} °C"
    else:
        verdict, words = Verdict.OK, f"more than {m:.1f} K above the freeze threshold {th:.1f} °C"
    return Check(
        verdict=verdict,
        value=t,
        limits={"threshold_c": th, "margin_k": m},
        reason=f"minimum outdoor {t:.1f} °C, {words}",
    )


def freeze_trip_setting_check(*, trip_c: float, ok_low: float, ok_high: float, fail_below: float) -> Check:
    """A freeze-protection (low-limit) thermostat's trip setting against its recommended band.

    The two sides are not alike. A trip set too low leaves the coil unprotected: below ``fail_below`` FAIL,
    between it and ``ok_low`` WATCH (too little margin). A trip set too high still protects the coil; it only
    trips on cool mornings and stops the unit when it need not (nuisance trips): above ``ok_high`` WATCH, never
    FAIL. A trip that does not happen when tested is the trip test's failure, not this setting's. The band is
    the caller's (a typical setting is about 2–5 °C, 35.6–41 °F: common practice, from memory).
    ``limits["above_band_k"]`` is how far above ``ok_high`` the setting is (0 when not above).
    """
    t = v.finite("trip_c", trip_c)
    lo, hi, floor = v.finite("ok_low", ok_low), v.finite("ok_high", ok_high), v.finite("fail_below", fail_below)
    if not floor <= lo <= hi:
        raise EngineeringInputError(
            field="ok_low",
            value=(floor, lo, hi),
            allowed="fail_below ≤ ok_low ≤ ok_high",
            message=f"limits fail_below={floor:g}, ok_low={lo:g}, ok_high={hi:g} are not in order",
        )
    x = round(t, 9)
    if x < floor:
        verdict, words = Verdict.FAIL, f"below {floor:.1f} °C: the coil can freeze before it trips"
    elif x < lo:
        verdict, words = Verdict.WATCH, f"below the recommended {lo:.1f}–{hi:.1f} °C: too little margin"
    elif x <= hi:
        verdict, words = Verdict.OK, f"within the recommended {lo:.1f}–{hi:.1f} °C"
    else:
        verdict = Verdict.WATCH
        words = f"above the recommended {lo:.1f}–{hi:.1f} °C: set higher than needed, nuisance trips likely"
    return Check(
        verdict=verdict,
        value=t,
        limits={"ok_low": lo, "ok_high": hi, "fail_below": floor, "above_band_k": max(0.0, t - hi)},
        reason=f"freeze-protection trip at {t:.1f} °C, {words}",
    )
