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

One module per feed: ``run_hours`` (the fan's run-hour meter), ``filter_loading`` (the banks' loading, their
findings and the change proposed).
"""

from __future__ import annotations

from .filter_loading import (
    FILTER_CONDITION,
    FILTER_DAY_FIELDS,
    FILTER_MIN_SAMPLES,
    FILTER_SENSOR,
    FilterResult,
    filter_days_forecast,
    filter_feed,
)
from .run_hours import (
    RUN_HOLD_MAX_S,
    FanMeter,
    RunHours,
    fan_meters,
    fan_of,
    fan_running,
    run_hours_feed,
    running_seconds,
)

__all__ = [
    "FILTER_CONDITION",
    "FILTER_DAY_FIELDS",
    "FILTER_MIN_SAMPLES",
    "FILTER_SENSOR",
    "RUN_HOLD_MAX_S",
    "FanMeter",
    "FilterResult",
    "RunHours",
    "fan_meters",
    "fan_of",
    "fan_running",
    "filter_days_forecast",
    "filter_feed",
    "run_hours_feed",
    "running_seconds",
]
