"""The run-hours and day a filter reaches its final pressure drop, from its readings."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta

from engineering import validate as v
from engineering.errors import EngineeringInputError, InsufficientDataError
from engineering.trends import as_datetime, robust_rate, run_hours_per_day

from .loading import AIRFLOW_RATIO, DEFAULT_EXPONENT, corrected_pressure_drop, exponent_input, pressure_drop_input

__all__ = ["FilterForecast", "FilterPoint", "filter_forecast"]


@dataclass(frozen=True)
class FilterPoint:
    run_hours: float
    dp_pa: float
    airflow_m3s: float
    when: date | datetime


@dataclass(frozen=True)
class FilterForecast:
    run_hours_at_final: float
    date_at_final: date | datetime | None  # None when no run-hour rate is known
    run_hours_low: float  # earliest plausible (steepest slope of the interval)
    run_hours_high: float | None  # latest plausible; None if the slope may be ~0
    date_low: date | datetime | None
    date_high: date | datetime | None
    rate_pa_per_hour: float
    rate_low_pa_per_hour: float
    rate_high_pa_per_hour: float
    hours_per_day: float | None
    points_used: int
    method: str
    # True when the fitted line is at or above the final pressure drop at the
    # last reading's run-hours: the filter is due now, and every date is the
    # last reading's (a forecast is never dated before the reading it is made from).
    at_final_now: bool = False


def filter_forecast(
    *,
    points: Sequence[FilterPoint],
    design_airflow_m3s: float,
    final_dp_pa: float,
    hours_per_day: float | None = None,
    exponent: float = DEFAULT_EXPONENT,
    confidence: float = 0.9,
    min_rise_pa: float = 2.0,
) -> FilterForecast:
    """Run-hours and date at which the filter reaches its final pressure drop.

    Each reading is corrected to design airflow (``corrected_pressure_drop``),
    then a Theil–Sen line Δp(run-hours) is fitted (scipy.stats.theilslopes,
    Sen's ``confidence`` interval for the band) and extrapolated to
    final_dp_pa. Readings whose airflow is too far from design are skipped.
    Run-hours become a date with ``hours_per_day`` or, if not given, the
    Theil–Sen run-hour rate of the readings themselves.

    Refuses (InsufficientDataError) with fewer than 3 usable readings, fewer
    than 2 distinct run-hour values, or a flat or falling trend (slope ≤ 0,
    or a fitted rise over the readings below min_rise_pa = 2 Pa, about a
    gauge's resolution: common practice). Pass only readings since the last
    filter change.

    No date is earlier than the last reading's: a projection that lands
    before it (the line already at or over the final value) is given the
    last reading's date, with ``at_final_now`` set when the central line is.
    When the last reading itself (corrected) is at or over the final value,
    ``at_final_now`` is set and every date is the last reading's, even if
    the fitted line is still below the final value or no run-hour rate is known.
    """
    final = pressure_drop_input("final_dp_pa", final_dp_pa, "final filter pressure drop")
    n = exponent_input(exponent)
    min_rise = v.non_negative("min_rise_pa", min_rise_pa, unit="Pa")
    hpd = (
        None
        if hours_per_day is None
        else v.in_range("hours_per_day", hours_per_day, 0.0, 24.0, unit="h", label="run-hours per day", low_open=True)
    )
    usable: list[tuple[float, float, date | datetime]] = []
    for i, p in enumerate(points):
        if not isinstance(p, FilterPoint):
            raise EngineeringInputError(
                field=f"points[{i}]",
                value=p,
                allowed="a FilterPoint",
                message=f"points[{i}]={p!r} is not a FilterPoint",
            )
        h = v.non_negative(f"points[{i}].run_hours", p.run_hours, unit="h", label="run-hours")
        try:
            dp = corrected_pressure_drop(
                dp_pa=p.dp_pa, airflow_m3s=p.airflow_m3s, design_airflow_m3s=design_airflow_m3s, exponent=n
            )
        except EngineeringInputError as exc:
            if exc.field != "airflow_m3s":
                raise
            continue
        usable.append((h, dp, p.when))
    if len(usable) < 3:
        raise InsufficientDataError(
            field="points",
            value=len(usable),
            allowed="at least 3 usable readings",
            message=(
                f"a filter forecast needs at least 3 usable readings (airflow within "
                f"{AIRFLOW_RATIO[0]:g}–{AIRFLOW_RATIO[1]:g} × design); got {len(usable)}"
            ),
            low=3,
        )
    hours = [u[0] for u in usable]
    if len(set(hours)) < 2:
        raise InsufficientDataError(
            field="points",
            value=hours[0],
            allowed="readings at 2 or more run-hour values",
            message="all readings are at the same run-hours: no trend can be drawn",
        )
    rate = robust_rate(points=[(h, dp) for h, dp, _ in usable], confidence=confidence)
    rise = rate.slope * (max(hours) - min(hours))
    if rate.slope <= 0 or rise < min_rise:
        raise InsufficientDataError(
            field="points",
            value=rate.slope,
            allowed="a rising pressure drop",
            message=(
                f"the pressure drop is not rising (trend {rate.slope:.3g} Pa per run-hour, "
                f"{rise:.1f} Pa over the readings; at least {min_rise:g} Pa needed): "
                "no forecast can be made"
            ),
            low=min_rise,
            unit="Pa",
        )
    at_final = rate.x_at(final)
    early = rate.x_at(final, "high")
    late = rate.x_at(final, "low") if rate.low > 0 else None

    last_h, last_dp, last_when = max(usable, key=lambda u: u[0])
    # The last reading itself at or over the final value: due now, whatever the
    # fitted line says (a line below it would otherwise give a date months away).
    over_now = round(last_dp, 9) >= final
    if over_now:
        at_final = min(at_final, last_h)
        early = min(early, last_h)
        late = last_h if late is None else min(late, last_h)
    if hpd is None:
        try:
            per_day = run_hours_per_day(readings=[(w, h) for h, _, w in usable])
            hpd = per_day.slope if per_day.slope > 0 else None
        except InsufficientDataError:
            hpd = None

    latest = max(as_datetime(w) for _, _, w in usable)

    def to_date(h: float | None) -> date | datetime | None:
        if h is None:
            return None
        if h <= last_h:  # due now: the last reading's date, with or without a run-hour rate
            dt = latest
            return dt if isinstance(last_when, datetime) else (dt + timedelta(hours=12)).date()
        if hpd is None:
            return None
        # Never before the reading the forecast comes from (nor any reading given).
        try:
            dt = max(as_datetime(last_when) + timedelta(days=max(h - last_h, 0.0) / hpd), latest)
            if isinstance(last_when, datetime):
                return dt
            return (dt + timedelta(hours=12)).date()  # nearest whole day
        except OverflowError:  # past year 9999: no date to give, as with no run-hour rate
            return None

    return FilterForecast(
        run_hours_at_final=at_final,
        date_at_final=to_date(at_final),
        run_hours_low=early,
        run_hours_high=late,
        date_low=to_date(early),
        date_high=to_date(late),
        rate_pa_per_hour=rate.slope,
        rate_low_pa_per_hour=rate.low,
        rate_high_pa_per_hour=rate.high,
        hours_per_day=hpd,
        points_used=len(usable),
        at_final_now=over_now or at_final <= last_h,
        method=(
            f"Theil–Sen line of pressure drop corrected to design airflow (n = {n:g}) "
            f"against run-hours, {confidence * 100:.0f} % interval"
        ),
    )
