"""Filter loading from a bank's pressure-sensor trend: the day's corrected median judged like a technician's reading,
its forecast, its finding and the change proposed (``filter_feed``).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from dataclasses import dataclass

import numpy as np
from django.db import connection

from engineering import filters
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError
from inspections.evaluation.filter_checks import forecast_agreeing, forecast_said
from inventory.models import Component

from ..fault_findings import filter_finding_clear, filter_finding_keep
from ..fault_models import FilterDay
from ..series import UnitTrends
from .run_hours import RUN_HOLD_MAX_S, fan_running

# A day's filter value needs at least this many samples taken with the fan running (an hour of 15-minute
# samples; common practice).
FILTER_MIN_SAMPLES = 4
FILTER_CONDITION = "filter_loaded"
FILTER_SENSOR = "Filter_Differential_Pressure_Sensor"


@dataclass(frozen=True)
class FilterResult:
    bank: Component
    day: FilterDay | None
    note: str = ""
    proposed: object = None  # the corrective work order, when the day's value called for a change
    judged: object = None  # the day's filter-loading judgement (engineering.filters), when the bank has its specs


def _airflow(trends: UnitTrends, at: np.ndarray) -> tuple[np.ndarray, str]:
    """Supply airflow at each of ``at``, m³/s, and how it was found."""
    hold = RUN_HOLD_MAX_S
    flow = trends.of("supply_airflow")
    if flow is not None and flow.seconds.size:
        return flow.at(at, max_hold_s=hold), "measured (supply airflow point)"
    speed = trends.of("supply_fan_speed")
    point = trends.roles.get("supply_fan_speed")
    fan = point.component if point is not None else None
    design_q = (fan.specs or {}).get("design_flow_m3s") if fan is not None else None
    if speed is not None and speed.seconds.size and design_q:
        return speed.at(at, max_hold_s=hold) * float(design_q), (
            "from the supply fan's speed command by the first fan law (100 % = design speed)"
        )
    return np.full(at.shape, float(trends.ahu.design_supply_airflow_m3s)), "design airflow assumed (not measured)"


def filter_feed(
    *,
    trends: UnitTrends,
    day: dt.date,
    meter_hours: float | None,
    open_findings: dict | None = None,
    forecast_later: list | None = None,
    by=None,
) -> list[FilterResult]:
    """Each trended filter bank's day: stored (``FilterDay``, replaced on a re-run; the unit's banks in one
    statement), judged, and when it calls for a change, the change proposed through the scheduling condition
    ``filter_loaded``. ``open_findings``: the banks' open trend findings (``fault_findings.open_filter_findings``),
    read before the day's writes. ``forecast_later``: a list to put the stored days that call for no change on,
    for the caller to add their forecast words to many units' days at once (``filter_days_forecast``); without
    it, every day gets them here."""
    from inspections.selectors import filter_design_airflow_m3s

    out = []
    points = [p for p in trends.points if p.brick_class == FILTER_SENSOR and p.component is not None]
    for point in points:
        bank = point.component
        samples = trends.point_samples(point)
        if samples is None:
            continue
        lo, hi = trends.start.timestamp(), trends.end.timestamp()
        keep = (samples.seconds >= lo) & (samples.seconds < hi) & np.isfinite(samples.values)
        at, dp = samples.seconds[keep], samples.values[keep]
        running = fan_running(trends, at)
        if running is not None:
            at, dp = at[running], dp[running]
        q, how = _airflow(trends, at)
        design_q = filter_design_airflow_m3s(component=bank, ahu=trends.ahu)
        try:
            # A sample too far from design airflow (or out of range) to correct is left out, as a reading is.
            each = filters.corrected_pressure_drops(dp_pa=dp, airflow_m3s=q, design_airflow_m3s=design_q)
            corrected = each[np.isfinite(each)]
        except EngineeringInputError:
            corrected = np.empty(0)
        if len(corrected) < FILTER_MIN_SAMPLES:
            FilterDay.objects.filter(component=bank, day=day).delete()
            out.append(
                FilterResult(
                    bank=bank,
                    day=None,
                    note=f"{len(corrected)} usable samples with the fan running; at least {FILTER_MIN_SAMPLES}",
                )
            )
            continue
        out.append(
            _filter_day_judged(
                bank=bank,
                day=day,
                corrected=float(np.median(corrected)),
                samples=len(corrected),
                design_q=design_q,
                how=how,
                meter_hours=meter_hours,
            )
        )
    stored = [r for r in out if r.day is not None]
    if not stored:
        return out
    FilterDay.objects.bulk_create(
        [r.day for r in stored],
        update_conflicts=True,
        unique_fields=["component", "day"],
        update_fields=FILTER_DAY_FIELDS,
    )
    wanting = {r.bank.pk for r in stored if _wants_change(r.judged)}
    now = [r for r in stored if forecast_later is None or r.bank.pk in wanting]
    if forecast_later is not None:
        forecast_later += [(r.bank, r.day) for r in stored if r.bank.pk not in wanting]
    if now:
        # The proposed change names the forecast: those banks' words at once, from one read of the shared series.
        filter_days_forecast(days=[(r.bank, r.day) for r in now], day=day)
    for i, r in enumerate(out):
        judged = r.judged
        if r.day is not None and _wants_change(judged):
            proposed = _propose_change(bank=r.bank, row=r.day, judged=judged, trends=trends, by=by)
            # The bank's one open finding, holding the change just proposed (the findings pages list it).
            filter_finding_keep(
                bank=r.bank,
                row=r.day,
                judged=judged,
                start=trends.start,
                end=trends.end,
                work_order=proposed,
                by=by,
            )
            out[i] = dataclasses.replace(r, proposed=proposed)
        elif r.day is not None and judged is not None and judged.verdict != Verdict.FAIL:
            filter_finding_clear(bank=r.bank, row=r.day, end=trends.end, open_findings=open_findings, by=by)
    return out


def _wants_change(judged) -> bool:
    return judged is not None and judged.verdict == Verdict.FAIL and not judged.media_bypass_suspected


def filter_days_forecast(*, days: list[tuple[Component, FilterDay]], day: dt.date) -> None:
    """Each stored bank's day (``(bank, row)``, one site's, of ``day``) gets its change forecast in words after its
    judgement, from one read of the banks' shared filter series, the day's rows included; written in one
    statement."""
    if not days:
        return
    forecasts = _forecasts_for(banks=[bank for bank, _ in days], day=day)
    changed = []
    for bank, row in days:
        fc = forecasts.get(bank.pk)
        if fc is None or not forecast_said(_fraction_of_span(bank, row)):
            continue  # no forecast, or a day a technician's reading would say none beside (not judged, below clean)
        # Worded as a technician's reading is, beside the row's own verdict: never "ok" and "change now".
        over_final = row.loading_pct is not None and row.corrected_dp_pa >= bank.specs["final_dp_pa"]
        said = forecast_agreeing(fc, verdict=row.verdict, over_final=over_final)
        row.reason = f"{row.reason}; {said.words}"
        row.verdict = said.verdict
        changed.append(row)
    if changed:
        _reasons_write(changed)


def _fraction_of_span(bank: Component, row: FilterDay) -> float | None:
    """The day's place in its bank's clean-to-final span (0 clean, 1 final), None when it was not judged."""
    specs = bank.specs or {}
    if row.loading_pct is None or specs.get("clean_dp_pa") is None or specs.get("final_dp_pa") is None:
        return None
    span = float(specs["final_dp_pa"]) - float(specs["clean_dp_pa"])
    return (row.corrected_dp_pa - float(specs["clean_dp_pa"])) / span if span > 0 else None


def _reasons_write(rows: list[FilterDay]) -> None:
    """The rows' reasons and verdicts in one statement (``bulk_update``'s CASE costs more to build than the rows
    do)."""
    table = connection.ops.quote_name(FilterDay._meta.db_table)
    ids, reasons, verdicts = [r.pk for r in rows], [r.reason for r in rows], [r.verdict for r in rows]
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute(
                f"UPDATE {table} AS f SET reason = v.reason, verdict = v.verdict "  # noqa: S608 (the model's table)
                "FROM unnest(%s::bigint[], %s::text[], %s::text[]) AS v(id, reason, verdict) WHERE f.id = v.id",
                [ids, reasons, verdicts],
            )
        else:
            cursor.executemany(
                f"UPDATE {table} SET reason = %s, verdict = %s WHERE id = %s",  # noqa: S608 (the model's table)
                list(zip(reasons, verdicts, ids, strict=True)),
            )


FILTER_DAY_FIELDS = [
    "corrected_dp_pa",
    "design_airflow_m3s",
    "airflow_source",
    "samples",
    "run_hours",
    "loading_pct",
    "verdict",
    "reason",
]


def _filter_day_judged(
    *, bank, day, corrected: float, samples: int, design_q: float, how: str, meter_hours
) -> FilterResult:
    """The bank's day judged, as a row to store (stored, worded with its forecast and a change proposed in
    ``filter_feed``)."""
    specs = bank.specs or {}
    verdict, reason, loading_pct = "", "", None
    judged = None
    if "clean_dp_pa" in specs and "final_dp_pa" in specs:
        try:
            judged = filters.filter_loading(
                dp_pa=corrected,
                airflow_m3s=design_q,
                design_airflow_m3s=design_q,
                clean_dp_pa=specs["clean_dp_pa"],
                final_dp_pa=specs["final_dp_pa"],
            )
        except EngineeringInputError as exc:
            reason = f"cannot judge the filter loading: {exc}"
    else:
        reason = "cannot judge the filter loading: the filter bank has no clean or final pressure drop in the registry"
    if judged is not None:
        verdict, loading_pct = judged.verdict.value, filters.loading_percent(judged.fraction_of_span)
        reason = f"{bank.name}: {judged.reason} (trend median of {samples} samples with the fan running)"
    row = FilterDay(
        component=bank,
        day=day,
        corrected_dp_pa=corrected,
        design_airflow_m3s=design_q,
        airflow_source=how[:120],
        samples=samples,
        run_hours=meter_hours,
        loading_pct=loading_pct,
        verdict=verdict,
        reason=reason,
    )
    return FilterResult(bank=bank, day=row, judged=judged)


def _forecasts_for(*, banks: list[Component], day: dt.date) -> dict[int, filters.FilterForecast]:
    """{bank id: the change forecast from the filters fitted now} (none without one): the shared filter series
    (``inspections.selectors.filter_series_for``: the technicians' readings and these trend days, up to the end of
    ``day``, on one meter by ``FilterLife.forecast_points``), as the charts, the unit history and the phone
    forecast it; every bank in one read."""
    from inspections.selectors import filter_series_for

    from ..series import site_day_window

    wanted = [b for b in banks if (b.specs or {}).get("final_dp_pa") is not None]
    if not wanted:
        return {}
    _, end = site_day_window(ahu=wanted[0].ahu, day=day)
    all_series = filter_series_for(components=wanted, before=end + dt.timedelta(microseconds=1))
    out: dict[int, filters.FilterForecast] = {}
    for bank in wanted:
        series = all_series.get(bank.pk)
        if series is None:
            continue
        try:
            out[bank.pk] = filters.filter_forecast(
                points=series.current.forecast_points(),
                design_airflow_m3s=series.design_airflow_m3s,
                final_dp_pa=bank.specs["final_dp_pa"],
            )
        except EngineeringInputError:
            continue
    return out


def _propose_change(*, bank: Component, row: FilterDay, judged, trends: UnitTrends, by):
    from inspections.services.findings import CONDITION_TITLES, PRIORITY
    from scheduling.services import corrective_work_order_propose

    severity = "high" if judged.fraction_of_span >= 1.0 else "medium"  # as severity_of does for a reading
    return corrective_work_order_propose(
        ahu=trends.ahu,
        title=f"{CONDITION_TITLES[FILTER_CONDITION]} — {bank.name}",
        reason=f"{row.reason} — found in the building-automation trend on {row.day.isoformat()}",
        condition_code=FILTER_CONDITION,
        priority=PRIORITY[severity],
        component=bank,
        source_ref=f"trend:filter:{bank.pk}:{row.day.isoformat()}",
        by=by,
        observed_on=row.day,
    )
