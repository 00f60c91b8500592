"""Trends feeding the schedule: run-hours from the supply fan, filter loading from the bank's pressure sensor.

Run-hours
    The supply fan runs while its status point reads on (> 0.5), else while its speed command is above
    ``engineering.faults`` command tolerance (1 %). Each sample stands for the time until the next one, at
    most ``RUN_HOLD_MAX_S``; a longer silence is a logging gap and counts as not running, so the meter never
    gains hours the trend cannot show. The hours run over a site-local day are added to the fan's run-hour
    meter at the day's end through ``scheduling.services.meter_reading_record`` (source "Building-automation
    trend"), the same meter service the checklist, the CSV import and the API use, so the engine's run-hour
    rules project from them. A day already read is not read again (idempotent).

Filter loading
    Each filter bank with a ``Filter_Differential_Pressure_Sensor`` point: every sample taken while the fan
    ran, corrected to the bank's design airflow by ``engineering.filters.corrected_pressure_drop``
    (Δp_design = Δp × (Q_design/Q)^n, n = 1.5 as for the technicians' readings; the fan laws' square law,
    n = 2, is the turbulent limit of the same relation). The airflow at each sample is the supply airflow
    point when mapped, else the first fan law from the speed command (Q = Q_design × N/N_design, a command of
    100 % taken as the fan's design speed), else the unit's design airflow. The day's median is judged by
    ``engineering.filters.filter_loading`` with the bank's clean and final values, the same judgement a
    technician's reading gets; at its fail fraction (95 % of the clean-to-final span) the scheduling
    condition ``filter_loaded`` proposes the filter change through
    ``scheduling.services.corrective_work_order_propose`` — the path a technician's loaded-filter finding
    takes — without waiting for a visit — and the bank's one open finding (source building-automation trends, rule
    FILTER, ``fault_findings.filter_finding_keep``) holds that change, so the findings pages list it; the finding
    closes when the change is completed, or when a later trend day judges the bank below its change point. The
    days join the bank's shared filter series
    (``inspections.selectors.filter_series``, through ``FILTER_POINT_SOURCES``) labelled as trend days, so the
    charts, the unit history, the phone and the forecast read them beside the technicians' readings; with three
    or more points since the filters now fitted, ``engineering.filters.filter_forecast`` dates the change.
"""

from __future__ import annotations

import contextlib
import dataclasses
import datetime as dt
from dataclasses import dataclass

import numpy as np
from django.core.exceptions import ValidationError
from django.db import connection, transaction

from engineering import filters
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError
from engineering.faults import G36_DEFAULTS
from inventory.models import Component
from scheduling.models import MeterReading

from .fault_findings import filter_finding_clear, filter_finding_keep
from .fault_models import FilterDay
from .series import Samples, UnitTrends, samples_for

# A sample's value is held at most this long when integrating run-time (common practice: a BAS logs at 1 to
# 15 minutes or on change of value; six hours without a record is a gap in the log, not proof of running).
RUN_HOLD_MAX_S = 6 * 3600.0
# A day's filter value needs at least this many samples taken with the fan running (an hour of 15-minute
# samples; common practice).
FILTER_MIN_SAMPLES = 4
FILTER_CONDITION = "filter_loaded"
FILTER_SENSOR = "Filter_Differential_Pressure_Sensor"


@dataclass(frozen=True)
class RunHours:
    fan: Component
    hours_run: float
    reading: MeterReading | None
    note: str = ""


def fan_running(trends: UnitTrends, at: np.ndarray) -> np.ndarray | None:
    """Whether the supply fan ran at each of ``at`` (epoch seconds); None when no fan point has samples."""
    status, speed = trends.of("supply_fan_status"), trends.of("supply_fan_speed")
    with np.errstate(invalid="ignore"):
        if status is not None and status.seconds.size:
            return status.at(at, max_hold_s=RUN_HOLD_MAX_S) > 0.5
        if speed is not None and speed.seconds.size:
            return speed.at(at, max_hold_s=RUN_HOLD_MAX_S) > G36_DEFAULTS.command_tolerance
    return None


def running_seconds(samples: Samples, *, since: float, until: float, on) -> float:
    """Seconds in [since, until) during which ``on(value)`` held, each sample held until the next one (at most
    ``RUN_HOLD_MAX_S``); the value at ``since`` is the last sample before it."""
    s, v = samples.seconds, samples.values
    if s.size == 0:
        return 0.0
    first = max(int(np.searchsorted(s, since, side="right")) - 1, 0)
    s, v = s[first:], v[first:]
    nxt = np.append(s[1:], until)
    begin = np.maximum(s, since)
    finish = np.minimum(np.minimum(nxt, s + RUN_HOLD_MAX_S), until)
    with np.errstate(invalid="ignore"):
        mask = on(v) & (finish > begin)
    return float(np.sum((finish - begin)[mask]))


def fan_of(trends: UnitTrends):
    """(supply fan point, its samples, the test of "running") from the status point, else the speed command."""
    for role, on in (
        ("supply_fan_status", lambda v: v > 0.5),
        ("supply_fan_speed", lambda v: v > G36_DEFAULTS.command_tolerance),
    ):
        point = trends.roles.get(role)
        samples = trends.of(role)
        if point is not None and point.component is not None and samples is not None and samples.seconds.size:
            return point, samples, on
    return None, None, None


FanMeter = tuple[MeterReading | None, MeterReading | None]


def fan_meters(*, fans: list[Component], end: dt.datetime) -> dict[int, FanMeter]:
    """{fan id: (its trend reading taken at ``end`` or None, its latest reading at or before ``end`` or None)} of
    each fan's own run-hour meter: what ``run_hours_feed`` reads of it, for many fans in two queries."""
    from django.db.models import OuterRef, Subquery

    own = MeterReading.objects.filter(ahu_id=OuterRef("ahu_id"), component_id=OuterRef("pk"))
    rows = list(
        Component.objects.filter(pk__in=[f.pk for f in fans])
        .annotate(
            done_id=Subquery(
                own.filter(taken_at=end, source=MeterReading.Source.BAS_TREND)
                .order_by(*MeterReading._meta.ordering)
                .values("pk")[:1]
            ),
            prev_id=Subquery(own.filter(taken_at__lte=end).order_by("-taken_at", "-id").values("pk")[:1]),
        )
        .values_list("pk", "done_id", "prev_id")
    )
    wanted = {i for _, *ids in rows for i in ids if i is not None}
    readings = MeterReading.objects.in_bulk(list(wanted)) if wanted else {}
    return {pk: (readings.get(done_id), readings.get(prev_id)) for pk, done_id, prev_id in rows}


def _fan_samples(trends: UnitTrends, point, samples: Samples, since: dt.datetime, end: dt.datetime) -> Samples:
    """The fan's samples from the last one that can still hold at ``since``: those already read with the day when
    they reach back to one at or before ``since`` (or to ``RUN_HOLD_MAX_S`` before it), else read again."""
    read_from = trends.read_from
    reaches = read_from is not None and (
        read_from <= since - dt.timedelta(seconds=RUN_HOLD_MAX_S)
        or (read_from <= since and bool((samples.seconds <= since.timestamp()).any()))
    )
    if reaches:
        return samples
    return samples_for(points=[point], since=since - dt.timedelta(seconds=RUN_HOLD_MAX_S), until=end)[point.pk]


def run_hours_feed(
    *, trends: UnitTrends, by=None, meter: FanMeter | None = None, unit_locked: bool = False, careful: bool = True
) -> RunHours | None:
    """Add the hours the supply fan ran over ``trends``' day to its run-hour meter (once per day).

    Returns None when the unit has no fan status or speed trend that day. The first day a fan's meter is fed
    it starts at 0 h at the day's start; afterwards each day's reading is the latest reading of that meter
    plus the hours run since it (at most 31 days back). A reading the meter service refuses (an earlier day
    read after a later one) is not stored and named in ``note``. ``meter``: the fan's readings as ``fan_meters``
    read them for the whole site; ``unit_locked``: the caller's transaction holds the unit's row locked;
    ``careful`` False: a meter's first day without a savepoint of its own, its refused second reading raised (the
    caller runs again carefully).
    """
    from scheduling.services import meter_reading_record

    point, samples, on = fan_of(trends)
    if point is None or samples is None:
        return None
    fan = point.component
    start, end = trends.start, trends.end
    ahu = trends.ahu
    if not ((samples.seconds >= start.timestamp()) & (samples.seconds < end.timestamp())).any():
        return None  # no sample that day: nothing is known of it
    if meter is None or fan.ahu_id != ahu.pk:
        readings = MeterReading.objects.filter(ahu=ahu, component=fan)
        done = readings.filter(taken_at=end, source=MeterReading.Source.BAS_TREND).first()
        prev = None if done is not None else readings.filter(taken_at__lte=end).order_by("-taken_at", "-id").first()
    else:
        done, prev = meter
    if done is not None:
        return RunHours(fan=fan, hours_run=0.0, reading=done, note="already read")
    since = start if prev is None else max(prev.taken_at, end - dt.timedelta(days=31))
    # From the last sample that can still hold at ``since`` (a change-of-value log may be hours old at midnight).
    samples = _fan_samples(trends, point, samples, since, end)
    seconds = running_seconds(samples, since=since.timestamp(), until=end.timestamp(), on=on)
    hours = seconds / 3600.0
    base = 0.0 if prev is None else prev.hours
    record = {
        "ahu": ahu,
        "source": MeterReading.Source.BAS_TREND,
        "component": fan,
        "by": by,
        "in_caller_transaction": True,
        "unit_locked": unit_locked,
    }
    first_kept = False
    try:
        # Two readings (a meter's first day) share a savepoint, so a refused second takes the first back; one
        # reading needs none, as the meter service refuses before it writes. Not ``careful``: no savepoint, and a
        # refused second reading is raised for the caller, whose careful pass takes both back.
        with transaction.atomic() if prev is None and careful else contextlib.nullcontext():
            if prev is None:
                meter_reading_record(hours=0.0, taken_at=start, **record)
                first_kept = not careful
            reading = meter_reading_record(hours=round(base + hours, 3), taken_at=end, **record)
    except ValidationError as exc:
        if first_kept:
            raise
        return RunHours(fan=fan, hours_run=hours, reading=None, note=" ".join(exc.messages))
    return RunHours(fan=fan, hours_run=hours, reading=reading)


# ---------------------------------------------------------------------------
# Filter loading
# ---------------------------------------------------------------------------


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
    words = _forecast_words_for(banks=[bank for bank, _ in days], day=day)
    changed = []
    for bank, row in days:
        if words.get(bank.pk):
            row.reason = f"{row.reason}; {words[bank.pk]}"
            changed.append(row)
    if changed:
        _reasons_write(changed)


def _reasons_write(rows: list[FilterDay]) -> None:
    """The rows' reasons in one statement (``bulk_update``'s CASE costs more to build than the rows do)."""
    table = connection.ops.quote_name(FilterDay._meta.db_table)
    ids, reasons = [r.pk for r in rows], [r.reason for r in rows]
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute(
                f"UPDATE {table} AS f SET reason = v.reason "  # noqa: S608 (the model's table)
                "FROM unnest(%s::bigint[], %s::text[]) AS v(id, reason) WHERE f.id = v.id",
                [ids, reasons],
            )
        else:
            cursor.executemany(
                f"UPDATE {table} SET reason = %s WHERE id = %s",  # noqa: S608 (the model's table)
                list(zip(reasons, ids, strict=True)),
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


def _forecast_words_for(*, banks: list[Component], day: dt.date) -> dict[int, str]:
    """{bank id: the change date from the filters fitted now, in words} (none without a forecast): the shared
    filter series (``inspections.selectors.filter_series_for``: the technicians' readings and these trend days, up
    to the end of ``day``), as the charts, the unit history and the phone forecast it; every bank in one read."""
    from inspections.selectors import filter_series_for

    from .series import site_day_window

    wanted = [b for b in banks if (b.specs or {}).get("final_dp_pa") is not None]
    if not wanted:
        return {}
    _, end = site_day_window(ahu=wanted[0].ahu, day=day)
    all_series = filter_series_for(components=wanted, before=end + dt.timedelta(microseconds=1))
    out: dict[int, str] = {}
    for bank in wanted:
        series = all_series.get(bank.pk)
        if series is None:
            continue
        try:
            fc = filters.filter_forecast(
                points=series.current.forecast_points(),
                design_airflow_m3s=series.design_airflow_m3s,
                final_dp_pa=bank.specs["final_dp_pa"],
            )
        except EngineeringInputError:
            continue
        if fc.at_final_now:
            out[bank.pk] = "at its final pressure drop by the trend: change now"
        elif fc.date_at_final:
            out[bank.pk] = f"change forecast {fc.date_at_final.isoformat()}"
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
