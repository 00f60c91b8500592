"""Air-filter pressure drop: correction to design airflow, loading, forecast
of the day the final pressure drop is reached, and the energy cost of a
loaded filter.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta
from typing import Any

import numpy as np
import numpy.typing as npt

from engineering import _validate as v
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError, InsufficientDataError
from engineering.trends import _as_datetime, robust_rate, run_hours_per_day

__all__ = [
    "AFTER_CHANGE_HIGH_FAIL",
    "AFTER_CHANGE_TOLERANCE",
    "BYPASS_FAIL_FRACTION",
    "BYPASS_WATCH_FRACTION",
    "DEFAULT_EXPONENT",
    "EconomicChangePoint",
    "FilterAfterChange",
    "FilterEnergy",
    "FilterForecast",
    "FilterLoading",
    "FilterPoint",
    "corrected_pressure_drop",
    "economic_change_point",
    "filter_after_change",
    "filter_extra_energy",
    "filter_forecast",
    "filter_loading",
    "loading_percent",
]

# Pressure drop across a filter grows as Q^n with n between 1 (viscous flow
# through the media, Darcy's law) and 2 (turbulent losses in frame and
# pleats). 1.5 is a common-practice middle; use a maker's curve fit when
# known.
DEFAULT_EXPONENT = 1.5
# Correcting from far off design amplifies any error in n, so readings taken
# below half or above 1.5 × design airflow are refused (common practice).
AIRFLOW_RATIO = (0.5, 1.5)
FILTER_DP_PA = (0.0, 2_500.0)
# A bank in service never reads much below its rated clean pressure drop at
# design airflow: air that does not pass through media (a missing or torn
# filter, a frame that lets air round it) lowers it. Below half the clean
# value fails as missing, torn or bypassed media; from half to 80 % is
# watched (common practice; maker's clean values carry roughly ±10–15 %).
BYPASS_FAIL_FRACTION = 0.5
BYPASS_WATCH_FRACTION = 0.8
# Straight after a change the bank should read its rated clean pressure drop:
# more than 20 % above or below it (at design airflow) is watched (common
# practice: a different class or size fitted, a gauge line off, or media
# not seated); below half of it fails as for a bank in service, and above
# 1.5 × it fails (the band the filter replacement checklist has always used).
AFTER_CHANGE_TOLERANCE = 0.2
AFTER_CHANGE_HIGH_FAIL = 1.5


def _exponent(value: object) -> float:
    return v.in_range("exponent", value, 1.0, 2.0, label="pressure-drop exponent")


def _dp(name: str, value: object, label: str = "filter pressure drop") -> float:
    return v.in_range(name, value, *FILTER_DP_PA, unit="Pa", label=label)


def _ratio(airflow_m3s: float, design_airflow_m3s: float, name: str = "airflow_m3s") -> float:
    lo, hi = AIRFLOW_RATIO
    q = v.in_range(name, airflow_m3s, 0.0, 100.0, unit="m³/s", label="airflow", low_open=True)
    qd = v.in_range(
        "design_airflow_m3s", design_airflow_m3s, 0.0, 100.0, unit="m³/s", label="design airflow", low_open=True
    )
    r = q / qd
    if not lo <= r <= hi:
        raise EngineeringInputError(
            field=name,
            value=q,
            allowed=f"{lo:g}–{hi:g} × design airflow ({lo * qd:.3g}–{hi * qd:.3g} m³/s)",
            message=(
                f"airflow {name}={v.fmt(q)} is outside {lo * qd:.3g}–{hi * qd:.3g} m³/s "
                f"({lo:g}–{hi:g} × design {v.fmt(qd)} m³/s): too far from design to correct "
                "the pressure drop reliably"
            ),
            low=lo * qd,
            high=hi * qd,
            unit="m³/s",
            parts=[
                "airflow ",
                {"value": q, "quantity": "airflow"},
                " is outside ",
                {"low": lo * qd, "high": hi * qd, "quantity": "airflow"},
                f" ({lo:g}–{hi:g} × design ",
                {"value": qd, "quantity": "airflow"},
                "): too far from design to correct the pressure drop reliably",
            ],
        )
    return r


def corrected_pressure_drop(
    *,
    dp_pa: float,
    airflow_m3s: float,
    design_airflow_m3s: float,
    exponent: float = DEFAULT_EXPONENT,
) -> float:
    """Pressure drop corrected to design airflow, Pa.

    Δp_design = Δp × (Q_design / Q)^n, n = 1.5 by default (between Darcy
    flow, n = 1, and the square law, n = 2; common practice). Readings taken
    outside 0.5–1.5 × design airflow are refused.
    """
    dp = _dp("dp_pa", dp_pa)
    n = _exponent(exponent)
    r = _ratio(airflow_m3s, design_airflow_m3s)
    return float(dp * r ** (-n))


def corrected_pressure_drops(
    *,
    dp_pa: npt.ArrayLike,
    airflow_m3s: npt.ArrayLike,
    design_airflow_m3s: float,
    exponent: float = DEFAULT_EXPONENT,
) -> npt.NDArray[np.float64]:
    """``corrected_pressure_drop`` of many readings at once (a trend's samples): NaN for each reading it would
    refuse (not a finite number, a pressure drop outside its range, an airflow not above 0 or outside 0.5–1.5 ×
    design). A design airflow or an exponent it would refuse is refused here, as for every reading."""
    n = _exponent(exponent)
    qd = v.in_range(
        "design_airflow_m3s", design_airflow_m3s, 0.0, 100.0, unit="m³/s", label="design airflow", low_open=True
    )
    dp = np.asarray(dp_pa, dtype=np.float64)
    q = np.asarray(airflow_m3s, dtype=np.float64)
    lo, hi = AIRFLOW_RATIO
    with np.errstate(all="ignore"):
        r = q / qd
        ok = (
            np.isfinite(dp)
            & np.isfinite(q)
            & (dp >= FILTER_DP_PA[0])
            & (dp <= FILTER_DP_PA[1])
            & (q > 0.0)
            & (q <= 100.0)
            & (r >= lo)
            & (r <= hi)
        )
    # Python's power, value by value, as the one-reading function computes it (numpy's may differ in the last bit).
    corrected = np.full(dp.shape, np.nan)
    corrected[ok] = [float(d * x ** (-n)) for d, x in zip(dp[ok].tolist(), r[ok].tolist(), strict=True)]
    return corrected


@dataclass(frozen=True)
class FilterLoading:
    corrected_dp_pa: float
    fraction_of_span: float  # 0 = clean, 1 = final pressure drop
    verdict: Verdict
    reason: str
    # Corrected pressure drop as a share of the rated clean value (1.0 = clean).
    fraction_of_clean: float = 1.0
    # True when the reading is so far below clean that air is likely passing round or through the media.
    media_bypass_suspected: bool = False
    # The reason as plain text and SI quantities (see EngineeringInputError.parts), for readers in other units.
    parts: tuple[Any, ...] = ()


def filter_loading(
    *,
    dp_pa: float,
    airflow_m3s: float,
    design_airflow_m3s: float,
    clean_dp_pa: float,
    final_dp_pa: float,
    exponent: float = DEFAULT_EXPONENT,
    watch_fraction: float = 0.75,
    fail_fraction: float = 0.95,
) -> FilterLoading:
    """How far a filter has loaded between its clean and final pressure drop.

    fraction = (Δp_corrected − Δp_clean) / (Δp_final − Δp_clean). WATCH at
    ≥ 0.75 and FAIL at ≥ 0.95 of that span by default (common practice: plan
    the change at three quarters, change before the final value).

    A corrected pressure drop below ``BYPASS_FAIL_FRACTION`` (50 %) of the
    clean value FAILS as missing, torn or bypassed media, and one below
    ``BYPASS_WATCH_FRACTION`` (80 %) is WATCHED (common practice): a bank
    cannot read much less than clean unless air goes round the media.
    """
    corrected = corrected_pressure_drop(
        dp_pa=dp_pa,
        airflow_m3s=airflow_m3s,
        design_airflow_m3s=design_airflow_m3s,
        exponent=exponent,
    )
    clean = _dp("clean_dp_pa", clean_dp_pa, "clean filter pressure drop")
    final = _dp("final_dp_pa", final_dp_pa, "final filter pressure drop")
    if final <= clean:
        raise EngineeringInputError(
            field="final_dp_pa",
            value=final,
            allowed=f"above clean_dp_pa={v.fmt(clean)} Pa",
            message=(
                f"final filter pressure drop final_dp_pa={v.fmt(final)} is outside above clean_dp_pa={v.fmt(clean)} Pa"
            ),
            low=clean,
            unit="Pa",
        )
    wf = v.in_range("watch_fraction", watch_fraction, 0.0, 1.0)
    ff = v.in_range("fail_fraction", fail_fraction, wf, 1.5)
    frac = (corrected - clean) / (final - clean)
    f = round(frac, 9)
    of_clean = corrected / clean if clean > 0 else 1.0
    low = _below_clean(of_clean=of_clean, corrected=corrected, clean=clean)
    if low is not None:
        verdict, reason, parts = low
        return FilterLoading(
            corrected_dp_pa=corrected,
            fraction_of_span=frac,
            verdict=verdict,
            reason=reason,
            fraction_of_clean=of_clean,
            media_bypass_suspected=True,
            parts=parts,
        )
    verdict = Verdict.FAIL if f >= ff else Verdict.WATCH if f >= wf else Verdict.OK
    reason = (
        f"filter {corrected:.0f} Pa at design airflow, {loading_percent(frac):.0f} % of the way from clean "
        f"{clean:.0f} Pa to final {final:.0f} Pa (watch from {wf * 100:.0f} %, fail from "
        f"{ff * 100:.0f} %)"
    )
    parts = (
        "filter ",
        _pa(corrected),
        f" at design airflow, {loading_percent(frac):.0f} % of the way from clean ",
        _pa(clean),
        " to final ",
        _pa(final),
        f" (watch from {wf * 100:.0f} %, fail from {ff * 100:.0f} %)",
    )
    return FilterLoading(
        corrected_dp_pa=corrected,
        fraction_of_span=frac,
        verdict=verdict,
        reason=reason,
        fraction_of_clean=of_clean,
        parts=parts,
    )


def loading_percent(fraction_of_span: float) -> float:
    """The loading as kept and shown everywhere: percent of the clean-to-final span to one decimal. Texts say it
    whole from this same figure (``f"{loading_percent(f):.0f} %"``), so a reason and a table never differ by one."""
    return round(fraction_of_span * 100, 1)


def _pa(value: float) -> dict[str, Any]:
    """A pressure as a reason part (SI), shown in the reader's unit."""
    return {"value": value, "quantity": "pressure"}


def _below_clean(*, of_clean: float, corrected: float, clean: float) -> tuple[Verdict, str, tuple[Any, ...]] | None:
    """FAIL below half the clean pressure drop, WATCH below 80 % of it, else None (verdict, reason, its parts)."""
    r = round(of_clean, 9)
    if r >= BYPASS_WATCH_FRACTION:
        return None
    verdict = Verdict.FAIL if r < BYPASS_FAIL_FRACTION else Verdict.WATCH
    word = "missing, torn or bypassed media" if verdict is Verdict.FAIL else "possibly torn or bypassed media"
    reason = (
        f"filter {corrected:.0f} Pa at design airflow is {of_clean * 100:.0f} % of its clean pressure drop "
        f"{clean:.0f} Pa: {word} (fail below {BYPASS_FAIL_FRACTION * 100:.0f} %, watch below "
        f"{BYPASS_WATCH_FRACTION * 100:.0f} % of clean)"
    )
    parts = (
        "filter ",
        _pa(corrected),
        f" at design airflow is {of_clean * 100:.0f} % of its clean pressure drop ",
        _pa(clean),
        f": {word} (fail below {BYPASS_FAIL_FRACTION * 100:.0f} %, watch below "
        f"{BYPASS_WATCH_FRACTION * 100:.0f} % of clean)",
    )
    return verdict, reason, parts


@dataclass(frozen=True)
class FilterAfterChange:
    corrected_dp_pa: float
    fraction_of_clean: float  # corrected / rated clean (1.0 = as rated)
    verdict: Verdict
    reason: str
    media_bypass_suspected: bool


def filter_after_change(
    *,
    dp_pa: float,
    airflow_m3s: float,
    design_airflow_m3s: float,
    clean_dp_pa: float,
    exponent: float = DEFAULT_EXPONENT,
    tolerance: float = AFTER_CHANGE_TOLERANCE,
) -> FilterAfterChange:
    """Pressure drop read just after a filter change, against the rated clean value.

    Corrected to design airflow (``corrected_pressure_drop``). OK within
    ±``tolerance`` (20 %) of the clean value; FAIL below
    ``BYPASS_FAIL_FRACTION`` (50 %) of it as missing, torn or bypassed media
    and above ``AFTER_CHANGE_HIGH_FAIL`` (1.5 ×); WATCH in between, saying
    whether it reads high (other class or size, gauge) or low (media not
    seated) (common practice).
    """
    corrected = corrected_pressure_drop(
        dp_pa=dp_pa, airflow_m3s=airflow_m3s, design_airflow_m3s=design_airflow_m3s, exponent=exponent
    )
    clean = v.in_range(
        "clean_dp_pa", clean_dp_pa, *FILTER_DP_PA, unit="Pa", label="clean filter pressure drop", low_open=True
    )
    tol = v.in_range("tolerance", tolerance, 0.0, 1.0)
    of_clean = corrected / clean
    r = round(of_clean, 9)
    head = f"new filter {corrected:.0f} Pa at design airflow, {of_clean * 100:.0f} % of its rated clean {clean:.0f} Pa"
    band = (
        f"(ok within ±{tol * 100:.0f} %, fail below {BYPASS_FAIL_FRACTION * 100:.0f} % or above "
        f"{AFTER_CHANGE_HIGH_FAIL * 100:.0f} %)"
    )
    high = "higher than a new filter should read: check the class and size fitted and the gauge lines"
    if r < BYPASS_FAIL_FRACTION:
        verdict, what = Verdict.FAIL, "missing, torn or bypassed media"
    elif r < 1.0 - tol:
        verdict, what = Verdict.WATCH, "lower than a new filter should read: check the media is seated and sealed"
    elif r > AFTER_CHANGE_HIGH_FAIL:
        verdict, what = Verdict.FAIL, high
    elif r > 1.0 + tol:
        verdict, what = Verdict.WATCH, high
    else:
        verdict, what = Verdict.OK, "as rated"
    return FilterAfterChange(
        corrected_dp_pa=corrected,
        fraction_of_clean=of_clean,
        verdict=verdict,
        reason=f"{head}: {what} {band}",
        media_bypass_suspected=r < BYPASS_FAIL_FRACTION,
    )


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
    final = _dp("final_dp_pa", final_dp_pa, "final filter pressure drop")
    n = _exponent(exponent)
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

    latest = max(_as_datetime(w) for _, _, w in usable)

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
            dt = max(_as_datetime(last_when) + timedelta(days=max(h - last_h, 0.0) / hpd), latest)
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


@dataclass(frozen=True)
class FilterEnergy:
    mean_extra_dp_pa: float
    extra_energy_wh: float
    extra_cost: float | None


def filter_extra_energy(
    *,
    airflow_m3s: float,
    clean_dp_pa: float,
    final_dp_pa: float,
    run_hours: float,
    fan_system_efficiency: float,
    price_per_kwh: float | None = None,
) -> FilterEnergy:
    """Extra fan energy over one filter life caused by its pressure rise.

    E = Q · Δp_mean,extra · t / η with Δp rising linearly from clean to final,
    so Δp_mean,extra = (Δp_final − Δp_clean)/2. Fan electric power = QΔp/η
    (ASHRAE Handbook—HVAC Systems and Equipment, Fans chapter); the
    linear-rise average is the approach of Eurovent 4/21's filter energy
    rating (from memory). η is fan × motor × drive efficiency.
    """
    q = v.in_range("airflow_m3s", airflow_m3s, 0.0, 100.0, unit="m³/s", label="airflow")
    clean = _dp("clean_dp_pa", clean_dp_pa, "clean filter pressure drop")
    final = v.in_range(
        "final_dp_pa", final_dp_pa, clean, FILTER_DP_PA[1], unit="Pa", label="final filter pressure drop"
    )
    t = v.non_negative("run_hours", run_hours, unit="h", label="run-hours")
    eta = v.efficiency("fan_system_efficiency", fan_system_efficiency, "fan system efficiency")
    extra = (final - clean) / 2.0
    wh = q * extra * t / eta
    cost = None
    if price_per_kwh is not None:
        cost = wh / 1000.0 * v.non_negative("price_per_kwh", price_per_kwh, label="energy price")
    return FilterEnergy(mean_extra_dp_pa=extra, extra_energy_wh=wh, extra_cost=cost)


@dataclass(frozen=True)
class EconomicChangePoint:
    run_hours: float  # since the last change
    extra_cost_at_point: float
    limited_by_final_dp: bool
    reason: str


def economic_change_point(
    *,
    rate_pa_per_hour: float,
    airflow_m3s: float,
    fan_system_efficiency: float,
    price_per_kwh: float,
    filter_set_cost: float,
    clean_dp_pa: float | None = None,
    final_dp_pa: float | None = None,
) -> EconomicChangePoint:
    """Run-hours since the last change at which the cumulative extra energy
    cost equals the cost of a new set of filters (material plus labour).

    With Δp rising linearly at rate r, the extra cost after t hours is
    C(t) = price · Q r t² / (2 η · 1000), so C(t*) = K gives
    t* = √(2 η K · 1000 / (price · Q · r)). For a linear rise this is also
    the interval minimising total cost per run-hour (elementary calculus;
    common practice in filter life-cycle costing). If clean and final Δp are
    given and the final Δp is reached first, the final Δp governs.
    """
    r = v.positive("rate_pa_per_hour", rate_pa_per_hour, unit="Pa/h", label="pressure-drop rate")
    q = v.positive("airflow_m3s", airflow_m3s, unit="m³/s", label="airflow")
    eta = v.efficiency("fan_system_efficiency", fan_system_efficiency, "fan system efficiency")
    price = v.positive("price_per_kwh", price_per_kwh, label="energy price")
    k = v.positive("filter_set_cost", filter_set_cost, label="filter set cost")
    t = math.sqrt(2.0 * eta * k * 1000.0 / (price * q * r))
    limited = False
    reason = f"extra fan energy costs as much as a new set ({k:g}) after {t:,.0f} run-hours"
    if (clean_dp_pa is None) != (final_dp_pa is None):
        raise EngineeringInputError(
            field="final_dp_pa",
            value=final_dp_pa,
            allowed="both clean_dp_pa and final_dp_pa, or neither",
            message="give both clean_dp_pa and final_dp_pa, or neither",
        )
    if clean_dp_pa is not None and final_dp_pa is not None:
        clean = _dp("clean_dp_pa", clean_dp_pa, "clean filter pressure drop")
        final = v.in_range(
            "final_dp_pa",
            final_dp_pa,
            clean,
            FILTER_DP_PA[1],
            unit="Pa",
            label="final filter pressure drop",
            low_open=True,
        )
        t_final = (final - clean) / r
        if t_final < t:
            t, limited = t_final, True
            reason = (
                f"final pressure drop {final:.0f} Pa is reached after {t:,.0f} run-hours, "
                "before the energy cost would pay for a new set"
            )
    cost = price * q * r * t * t / (2.0 * eta * 1000.0)
    return EconomicChangePoint(run_hours=t, extra_cost_at_point=cost, limited_by_final_dp=limited, reason=reason)
