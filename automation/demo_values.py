"""The demo trends' numbers: the scenario (seeded faults, days stored and judged) and each unit's invented,
physically sensible values of a day, deterministic by names.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import zoneinfo

import numpy as np

from engineering.freeze import daily_values_from_normals
from inventory.models import AHU

from .models import Point

STEP_S = 900
YEAR_DAYS = 365
HEALTHY_DAYS = 21
JUDGE_DAYS = 14
FAN_HEAT_K = 0.8  # temperature rise across a supply fan, invented but typical
PREHEAT_C = 8.0  # a preheater holds the air after it at or above this while the fan runs (invented)
RETURN_C = 22.0
# (site code, building code, unit tag): the seeded fault.
FILTER, STUCK_DAMPER, LEAKING_VALVE, FREEZE_NIGHT = "filter", "stuck_damper", "leaking_valve", "freeze_night"
SEEDED = {
    ("gullwharf", "wharf-house", "AHU-01"): FILTER,
    ("gullwharf", "ropewalk", "AHU-01"): STUCK_DAMPER,
    ("gullwharf", "wharf-house", "AHU-02"): LEAKING_VALVE,
    ("tanners-yard", "lofts", "AHU-C1"): FREEZE_NIGHT,
}
ALL_DAY_UNITS = {("tanners-yard", "lofts", "AHU-C1")}  # runs at reduced speed outside the building's hours
STUCK_DAYS = 20  # the damper stuck this many days before today
LEAK_K = 4.0  # air cooled across the leaking coil, K
FILTER_CROSSES_DAYS_AGO = 6  # the loaded filter reaches 95 % of its span this many days before today


def _seed(*parts: object) -> int:
    return int.from_bytes(hashlib.sha256(":".join(map(str, parts)).encode()).digest()[:8], "big")


def unit_key(ahu: AHU) -> tuple[str, str, str]:
    return (ahu.building.site.code, ahu.building.code, ahu.tag)


def _day_times(tz: zoneinfo.ZoneInfo, day: dt.date) -> tuple[np.ndarray, np.ndarray]:
    """Epoch seconds of the local day's 15-minute samples and their local hours."""
    start = dt.datetime.combine(day, dt.time(), tzinfo=tz).astimezone(dt.UTC)
    end = dt.datetime.combine(day + dt.timedelta(days=1), dt.time(), tzinfo=tz).astimezone(dt.UTC)
    secs = np.arange(start.timestamp(), end.timestamp(), STEP_S)
    noon = dt.datetime.combine(day, dt.time(12), tzinfo=tz)
    offset = noon.utcoffset().total_seconds()
    hours = ((secs + offset) % 86_400) / 3600.0
    return secs, hours


def outdoor_days(site, days: list[dt.date]) -> dict[dt.date, tuple[float, float]]:
    lows = dict(daily_values_from_normals(monthly_c=site.normals_min_c, start=days[0], days=len(days)))
    highs = dict(daily_values_from_normals(monthly_c=site.normals_max_c, start=days[0], days=len(days)))
    out = {}
    for d in days:
        shift = np.random.default_rng(_seed("oat", site.code, d.isoformat())).uniform(-3.0, 3.0)
        out[d] = (lows[d] + shift, highs[d] + shift)
    return out


def freeze_night(site, today: dt.date) -> dt.date:
    """The seeded freezing night: the latest day at least three days back whose normal minimum is below 0 °C."""
    days = [today - dt.timedelta(days=k) for k in range(YEAR_DAYS, 2, -1)]
    lows = dict(daily_values_from_normals(monthly_c=site.normals_min_c, start=days[0], days=len(days)))
    cold = [d for d in days if lows[d] < 0.0]
    return cold[-1] if cold else days[-1]


def _filter_loading(changes: list[dt.datetime], t: np.ndarray, *, loaded: bool, today_s: float) -> np.ndarray:
    """Fraction of the clean-to-final span at each time: 0 at a change, rising with the days since it."""
    out = np.empty(t.shape)
    starts = [c.timestamp() for c in changes]
    rate_healthy = 0.55 / (120 * 86_400.0)  # a bank loads to about 55 % of its span over four months
    for i, ts in enumerate(t):
        prev = [s for s in starts if s <= ts]
        since = ts - (prev[-1] if prev else ts - 60 * 86_400.0)
        out[i] = min(since * rate_healthy, 0.75)
    if loaded:
        life_start = max([s for s in starts if s <= today_s] or [today_s - 90 * 86_400.0])
        cross = today_s - FILTER_CROSSES_DAYS_AGO * 86_400.0
        life_start = min(life_start, cross - 14 * 86_400.0)
        now = t >= life_start
        out[now] = 0.95 * (t[now] - life_start) / (cross - life_start)
    return out


def unit_values(
    *,
    ahu: AHU,
    points: dict[str, Point],
    days: list[dt.date],
    outdoor: dict[dt.date, tuple[float, float]],
    today: dt.date,
    fault: str | None,
) -> dict[int, dict[dt.datetime, float]]:
    from inspections.selectors import filter_series

    site = ahu.building.site
    tz = zoneinfo.ZoneInfo(site.time_zone or "UTC")
    sp = float(ahu.supply_air_setpoint_c or 17.0)
    f_min = float(ahu.design_min_oa_fraction)
    full_oa = bool(ahu.full_outdoor_air)
    all_day = unit_key(ahu) in ALL_DAY_UNITS
    today_s = dt.datetime.combine(today, dt.time(), tzinfo=tz).timestamp()
    night = freeze_night(site, today) if fault == FREEZE_NIGHT else None
    secs_all, cols = [], {job: [] for job in points}
    for day in days:
        rng = np.random.default_rng(_seed("bas", site.code, ahu.building.code, ahu.tag, day.isoformat()))
        secs, hours = _day_times(tz, day)
        n = secs.size
        low, high = outdoor[day]
        mid, amp = (low + high) / 2, (high - low) / 2
        oat = mid + amp * np.cos(2 * np.pi * (hours - 15.0) / 24.0) + rng.normal(0, 0.15, n)
        weekday = day.weekday() < 5
        on = np.full(n, True) if all_day else (weekday & (hours >= 6.0) & (hours < 19.0))
        speed = np.where(on, np.where((hours >= 6.0) & (hours < 19.0), 0.88, 0.55) + rng.normal(0, 0.01, n), 0.0)
        if night == day:
            cold = (hours >= 1.0) & (hours < 4.5)
            oat = np.where(cold, np.minimum(oat, -7.0 + rng.normal(0, 0.2, n)), oat)
        rat = RETURN_C + 0.5 * ((hours >= 8) & (hours < 18)) + rng.normal(0, 0.1, n)
        heat = np.zeros(n)
        cool = np.zeros(n)
        damper = np.zeros(n)
        sat = np.full(n, sp)
        if full_oa:
            mat = oat.copy()
            damper[:] = 1.0
            heat = np.clip((sp - FAN_HEAT_K - oat) / 25.0, 0.0, 0.95)
            heat = np.where(heat > 0, np.maximum(heat, 0.03), 0.0)
            need_cool = oat + FAN_HEAT_K > sp + 0.5
            if "cooling_valve" in points:
                cool = np.where(need_cool, np.clip((oat + FAN_HEAT_K - sp) / 12.0, 0.03, 0.9), 0.0)
            idle = (heat == 0) & (cool == 0)
            sat = np.where(idle, oat + FAN_HEAT_K, sp)
        else:
            mat_min = rat + f_min * (oat - rat)
            heating = mat_min + FAN_HEAT_K < sp
            with np.errstate(divide="ignore", invalid="ignore"):
                f_free = (sp - FAN_HEAT_K - rat) / (oat - rat)
            free = ~heating & (oat < sp - FAN_HEAT_K)
            econ = ~heating & ~free & (oat < rat)
            minoa = ~heating & ~free & ~econ
            damper = np.select([heating, free, econ, minoa], [f_min, np.clip(f_free, f_min, 1.0), 1.0, f_min])
            heat = np.where(heating, np.clip((sp - FAN_HEAT_K - mat_min) / 20.0, 0.03, 0.95), 0.0)
            cool = np.where(econ, np.clip((oat + FAN_HEAT_K - sp) / 12.0, 0.03, 0.9), 0.0)
            cool = np.where(minoa, np.clip((mat_min + FAN_HEAT_K - sp) / 12.0, 0.03, 0.9), cool)
            fraction = damper.copy()
            if fault == STUCK_DAMPER and day >= today - dt.timedelta(days=STUCK_DAYS):
                # Stuck fully open: the mixed air is outdoor air whatever the command. Below the free-cooling
                # range the controller holds the damper at its minimum and heats (the valve makes up the
                # colder mixed air); above the return air it cools at "minimum" outdoor air.
                fraction[:] = 1.0
                heating = oat + FAN_HEAT_K < sp
                free = np.zeros(n, dtype=bool)
                econ = ~heating & (oat < rat)
                damper = np.where(econ, 1.0, f_min)
                heat = np.where(heating, np.clip((sp - FAN_HEAT_K - oat) / 25.0, 0.03, 0.95), 0.0)
                cool = np.where(heating, 0.0, np.clip((oat + FAN_HEAT_K - sp) / 12.0, 0.03, 0.9))
            mat = rat + fraction * (oat - rat) + rng.normal(0, 0.1, n)
            sat = np.where(free, mat + FAN_HEAT_K, sp)
            if fault == LEAKING_VALVE:
                sat = np.where(free, sat - LEAK_K, sat)  # chilled water through the closed valve
            if "cooling_valve" not in points:
                cool[:] = 0.0
        sat = sat + rng.normal(0, 0.15, n)
        if night == day:
            tripped = (hours >= 2.0) & (hours < 3.5)
            sat = np.where(tripped, 2.2 + rng.normal(0, 0.2, n), sat)
        # Fan off: dampers and valves shut, the air in the unit at the plant room's temperature.
        off = ~on
        idle_c = np.clip(14.0 + 0.2 * oat, 10.0, 20.0)
        sat = np.where(off, idle_c + rng.normal(0, 0.1, n), sat)
        mat = np.where(off, idle_c + rng.normal(0, 0.1, n), mat)
        for arr in (heat, cool, damper):
            arr[off] = 0.0
        # The preheater brings the air entering it (the mixed air; outdoor air on a full-outdoor-air unit) up to
        # PREHEAT_C; on the freezing night it tripped: the air passes it unheated and the frost thermostat trips.
        entering = np.where(off, idle_c, mat)
        preheat = np.where(on, np.clip((PREHEAT_C - entering) / 20.0, 0.0, 0.95), 0.0)
        preheat = np.where(preheat > 0, np.maximum(preheat, 0.03), 0.0)
        after = np.maximum(entering, np.where(on, PREHEAT_C, entering)) + rng.normal(0, 0.15, n)
        frost = np.zeros(n)
        if night == day:
            after = np.where(tripped & on, entering + 0.3, after)
            frost = np.where(tripped, 1.0, frost)
        values = {
            "oat": oat,
            "sat": sat,
            "sat_sp": np.full(n, sp),
            "rat": rat,
            "mat": mat,
            "fan_status": on.astype(float),
            "fan_speed": speed * 100.0,
            "oa_damper": damper * 100.0,
            "heating_valve": heat * 100.0,
            "cooling_valve": cool * 100.0,
            "preheat_valve": preheat * 100.0,
            "preheat_leaving": after,
            "frost_stat": frost,
        }
        for job in points:
            if not job.startswith("filter:"):
                cols[job].append(np.round(values[job], 2))
        secs_all.append((secs, on, speed, rng))
    times = np.concatenate([s for s, _, _, _ in secs_all])
    running = np.concatenate([o for _, o, _, _ in secs_all])
    speeds = np.concatenate([sp_ for _, _, sp_, _ in secs_all])
    rng = np.random.default_rng(_seed("filter", site.code, ahu.building.code, ahu.tag, today.isoformat()))
    for job, point in points.items():
        if not job.startswith("filter:"):
            continue
        bank = point.component
        specs = bank.specs or {}
        clean, final = float(specs.get("clean_dp_pa", 80)), float(specs.get("final_dp_pa", 250))
        changes = [life.changed_at for life in filter_series(component=bank).lives if life.changed_at is not None]
        loaded = fault == FILTER and specs.get("stage") == "final"
        loading = _filter_loading(changes, times, loaded=loaded, today_s=today_s)
        dp_design = clean + loading * (final - clean)
        dp = np.where(running, dp_design * np.clip(speeds, 0.05, 1.2) ** 1.5, 0.0) + rng.normal(0, 1.0, times.size)
        cols[job] = [np.round(np.maximum(dp, 0.0), 1)]
    out: dict[int, dict[dt.datetime, float]] = {}
    stamps = [dt.datetime.fromtimestamp(float(s), tz=dt.UTC) for s in times]
    for job, point in points.items():
        vals = np.concatenate(cols[job]).tolist()
        out[point.pk] = dict(zip(stamps, vals, strict=True))
    return out
