"""Synthetic building-automation trends for the invented demo, with four seeded faults.

Every value is invented (deterministic: numpy's generator seeded by site, unit and day names, never row ids) but
physically sensible, and goes through the real paths: points are mapped by ``automation.services.point_create``,
samples stored by ``automation.trends.trend_samples_store``, and the days judged by
``automation.judging.trends_judge``, so run-hours, filter days, faults, their corrective work and freeze readiness
come from the same code as a real site's.

The units (15-minute samples, the site's zone):

- outdoor air from the site's climate normals (``engineering.freeze.daily_values_from_normals``): a daily swing
  between the day's minimum near 05:00 and its maximum near 15:00, each day shifted by up to ±3 K;
- the supply fan runs on weekdays 06:00–19:00 (a corridor unit that runs at reduced speed outside the
  building's hours runs all day); off, its status, speed, damper and valves are 0;
- a simple economiser controller in Guideline 36's operating states: heating with the outdoor-air damper at
  its minimum; free cooling, the damper modulating so the mixed air plus fan heat meets the set point; cooling
  with 100 % outdoor air; cooling at minimum outdoor air when the outdoor air is warmer than the return air.
  Mixed air is return air plus the outdoor-air fraction of the difference; the supply air holds its set point
  (plus 0.8 K fan heat where nothing acts on it);
- each filter bank's pressure drop rises with the days since its last change recorded in the demo history
  (``inspections.selectors.filter_series``) and falls at each change; the measured value is at the fan's speed
  (the filter law, Δp ∝ Q^1.5).

Seeded faults (``SEEDED``): a final filter bank that crosses its change limit between visits; an outdoor-air
damper stuck fully open (the command moves, the mixed air says the outdoor-air fraction does not); a leaking
cooling valve (air cooled across the closed coil in free cooling: Guideline 36's FC#14 needs the coil's
entering and leaving air temperatures, which no mapped point carries, so the guideline's FC#8 — supply and
mixed air apart in free cooling — is the rule that finds it here); and a night with the supply air near
freezing (the electric preheater tripped), which keeps the unit "not ready" for freeze protection until a
freeze-protection test passes after it. Every other unit's data must trip no rule.

Stored: a year for the units with seeded faults, ``HEALTHY_DAYS`` for the others; judged: the last
``JUDGE_DAYS`` days for every trended unit, and the freezing night's day when it lies before them.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import zoneinfo
from dataclasses import dataclass

import numpy as np

from engineering.freeze import daily_values_from_normals
from inventory.models import AHU, Component

from .models import BacnetObjectType, Point, TrendDay
from .services import point_create

STEP_S = 900
YEAR_DAYS = 365
HEALTHY_DAYS = 21
JUDGE_DAYS = 14
FAN_HEAT_K = 0.8  # temperature rise across a supply fan, invented but typical
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


@dataclass
class DemoTrends:
    units: int = 0
    points_created: int = 0
    values: int = 0
    days_judged: int = 0
    faults_opened: int = 0


def _seed(*parts: object) -> int:
    return int.from_bytes(hashlib.sha256(":".join(map(str, parts)).encode()).digest()[:8], "big")


def _key(ahu: AHU) -> tuple[str, str, str]:
    return (ahu.building.site.code, ahu.building.code, ahu.tag)


# ---------------------------------------------------------------------------
# Points
# ---------------------------------------------------------------------------


def _first(components: list[Component], kind: str, **specs: str) -> Component | None:
    for c in components:
        if c.kind == kind and all(str((c.specs or {}).get(k, "")) == v for k, v in specs.items()):
            return c
    return None


DEMO_DEVICE_BASE = 20_000


def _object_type(brick_class: str) -> str:
    """The BACnet object a demo point reads: a status a binary input, a command an analog output, a set point an
    analog value, a sensor an analog input (common practice for controllers' object lists)."""
    if brick_class.endswith("_Status"):
        return BacnetObjectType.BINARY_INPUT
    if brick_class.endswith("_Command"):
        return BacnetObjectType.ANALOG_OUTPUT
    if brick_class.endswith("_Setpoint"):
        return BacnetObjectType.ANALOG_VALUE
    return BacnetObjectType.ANALOG_INPUT


def _points(ahu: AHU) -> tuple[dict[str, Point], int]:
    """The unit's demo points by job (created once through the point service)."""
    parts = list(ahu.components.filter(retired_on__isnull=True).order_by("position", "pk"))
    sensors = [c for c in parts if c.kind == "sensor"]
    oat_sensor = next((c for c in sensors if "outdoor" in c.name.lower()), None)
    sat_sensor = next((c for c in sensors if c.name.lower().startswith("supply-air temp")), None)
    fan = _first(parts, "fan", role="supply")
    damper = _first(parts, "damper", role="outdoor")
    heating = _first(parts, "coil", duty="heating")
    cooling = _first(parts, "coil", duty="cooling")
    want: list[tuple[str, str, Component | None]] = [
        ("oat", "Outside_Air_Temperature_Sensor", oat_sensor),
        ("sat", "Supply_Air_Temperature_Sensor", sat_sensor),
        ("sat_sp", "Supply_Air_Temperature_Setpoint", None),
    ]
    if not ahu.full_outdoor_air:
        want += [("rat", "Return_Air_Temperature_Sensor", None), ("mat", "Mixed_Air_Temperature_Sensor", None)]
    if fan is not None:
        want += [("fan_status", "Fan_Status", fan), ("fan_speed", "Fan_Speed_Command", fan)]
    if damper is not None:
        want.append(("oa_damper", "Damper_Position_Command", damper))
    if heating is not None:
        want.append(("heating_valve", "Valve_Position_Command", heating))
    if cooling is not None:
        want.append(("cooling_valve", "Valve_Position_Command", cooling))
    for bank in parts:
        if bank.kind == "filter_bank":
            want.append((f"filter:{bank.pk}", "Filter_Differential_Pressure_Sensor", bank))
    names = {
        "oat": "OAT",
        "sat": "SAT",
        "sat_sp": "SAT-SP",
        "rat": "RAT",
        "mat": "MAT",
        "fan_status": "SF-STS",
        "fan_speed": "SF-SPD",
        "oa_damper": "OAD-CMD",
        "heating_valve": "HC-VLV",
        "cooling_valve": "CC-VLV",
    }
    existing = {p.name: p for p in Point.objects.filter(ahu=ahu).select_related("component")}
    out, created = {}, 0
    for number, (job, brick_class, component) in enumerate(want, start=1):
        suffix = f"FLT-DP.{component.position}" if job.startswith("filter:") else names[job]
        name = f"{ahu.tag}.{suffix}"
        point = existing.get(name)
        if point is None:
            # Invented addresses: one controller per unit (device DEMO_DEVICE_BASE + the unit's key), its objects
            # numbered in the order above; sensors are inputs, commands outputs, the set point a value.
            point = point_create(
                ahu=ahu,
                name=name,
                brick_class=brick_class,
                unit="",
                component=component,
                bacnet_device_instance=DEMO_DEVICE_BASE + ahu.pk,
                bacnet_object_type=_object_type(brick_class),
                bacnet_object_instance=number,
            )
            created += 1
        out[job] = point
    return out, created


# ---------------------------------------------------------------------------
# Values
# ---------------------------------------------------------------------------


def _day_times(tz: zoneinfo.ZoneInfo, day: dt.date) -> tuple[np.ndarray, np.ndarray]:
    """Epoch seconds of the local day's 15-minute samples and their local hours."""
    start = dt.datetime.combine(day, dt.time(), tzinfo=tz).astimezone(dt.UTC)
    end = dt.datetime.combine(day + dt.timedelta(days=1), dt.time(), tzinfo=tz).astimezone(dt.UTC)
    secs = np.arange(start.timestamp(), end.timestamp(), STEP_S)
    noon = dt.datetime.combine(day, dt.time(12), tzinfo=tz)
    offset = noon.utcoffset().total_seconds()
    hours = ((secs + offset) % 86_400) / 3600.0
    return secs, hours


def _outdoor(site, days: list[dt.date]) -> dict[dt.date, tuple[float, float]]:
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


def _unit_values(
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
    all_day = _key(ahu) in ALL_DAY_UNITS
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


# ---------------------------------------------------------------------------
# Loading
# ---------------------------------------------------------------------------


def _stored_through(points: dict[str, Point], first_utc: dt.date, last_utc: dt.date) -> bool:
    """Whether every point already holds a bucket for each UTC day of the range (a rerun stores nothing)."""
    expected = len(points) * ((last_utc - first_utc).days + 1)
    got = TrendDay.objects.filter(point__in=list(points.values()), day__gte=first_utc, day__lte=last_utc).count()
    return got >= expected


def demo_trends_load(*, organisation, today: dt.date) -> DemoTrends:
    """Map the demo units' points, store their synthetic trends and judge the needed days; idempotent."""
    from django.db import transaction

    from .judging import trends_judge
    from .trends import trend_samples_store

    summary = DemoTrends()
    units = (
        AHU.objects.filter(building__site__organisation=organisation, status=AHU.Status.IN_SERVICE)
        .select_related("building__site")
        .order_by("building__site__code", "building__code", "tag")
    )
    ranges: dict[int, tuple[object, set[tuple[dt.date, dt.date]]]] = {}
    for ahu in units:
        site = ahu.building.site
        fault = SEEDED.get(_key(ahu))
        span = YEAR_DAYS if fault else HEALTHY_DAYS
        days = [today - dt.timedelta(days=k) for k in range(span, 0, -1)]
        with transaction.atomic():
            points, created = _points(ahu)
        summary.units += 1
        summary.points_created += created
        tz = zoneinfo.ZoneInfo(site.time_zone or "UTC")
        first_utc = dt.datetime.combine(days[0], dt.time(), tzinfo=tz).astimezone(dt.UTC).date()
        last_utc = dt.datetime.combine(days[-1], dt.time(23, 45), tzinfo=tz).astimezone(dt.UTC).date()
        if not _stored_through(points, first_utc, last_utc):
            samples = _unit_values(
                ahu=ahu, points=points, days=days, outdoor=_outdoor(site, days), today=today, fault=fault
            )
            with transaction.atomic():
                summary.values += trend_samples_store(samples).values
        start, end = today - dt.timedelta(days=JUDGE_DAYS), today - dt.timedelta(days=1)
        wanted = ranges.setdefault(site.pk, (site, set()))[1]
        wanted.add((start, end))
        if fault == FREEZE_NIGHT and (night := freeze_night(site, today)) < start:
            wanted.add((night, night))
    for site, wanted in ranges.values():
        for start, end in sorted(wanted):  # in time order: run-hour readings follow each other
            result = trends_judge(site=site, start=start, end=end)
            summary.days_judged += len(result.days)
            summary.faults_opened += len(result.opened)
    return summary
