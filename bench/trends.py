"""Building-automation trends for the benchmark: 20 points on each unit and one day of 15-minute samples.

``points_build`` maps 20 points to every unit of an organisation (bulk rows, as the generator writes the
registry), by the unit's kind (``generate.UNIT_KINDS``): a mixing unit, a unit with a heat-recovery wheel and a
full-outdoor-air unit each trend the points such a unit has. ``day_values`` draws one site-local day of
samples for every point with numpy from a seed: a heating day (December-like outdoor air around 2 °C), the fan
running 06:00–20:00 site time, the outdoor-air damper at the unit's design minimum, the mixed air at that
fraction of outdoor air, the heating valve bringing the supply air to its set point. A few units carry a fault
(a stuck-open outdoor-air damper, a loaded filter), so judging also writes faults and proposes work.

``trend_ingest`` (the scenario, in ``bench.scenarios``) stores the day through
``automation.trends.trend_samples_store`` site by site and judges it with ``automation.judging.trends_judge``.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

SAMPLES_A_DAY = 96  # 15-minute samples
POINTS_A_UNIT = 20
STEP_S = 900
STUCK_DAMPER_SHARE = 0.01  # units whose outdoor-air damper is stuck open (FC6 finds it)
LOADED_FILTER_SHARE = 0.02  # units whose first filter bank is at its change value

# name: (Brick class, the part's name (generate.PARTS) or None, signal). Part names are the generator's.
_COMMON = [
    ("SAT", "Supply_Air_Temperature_Sensor", "Supply-air temperature sensor", "sat"),
    ("MAT", "Mixed_Air_Temperature_Sensor", None, "mat"),
    ("RAT", "Return_Air_Temperature_Sensor", None, "rat"),
    ("OAT", "Outside_Air_Temperature_Sensor", None, "oat"),
    ("SAT-SP", "Supply_Air_Temperature_Setpoint", None, "sat_sp"),
    ("DSP", "Supply_Air_Static_Pressure_Sensor", None, "dsp"),
    ("DSP-SP", "Supply_Air_Static_Pressure_Setpoint", None, "dsp_sp"),
    ("SF-STS", "Fan_Status", "Supply fan", "fan_status"),
    ("SF-SPD", "Fan_Speed_Command", "Supply fan", "fan_speed"),
    ("SF-FLOW", "Supply_Air_Flow_Sensor", "Supply fan", "airflow"),
    ("OAD", "Damper_Position_Command", "Outdoor-air damper", "oa_damper"),
    ("OAD-FB", "Damper_Position_Sensor", "Outdoor-air damper", "oa_damper_fb"),
    ("HCV", "Valve_Position_Command", "Heating coil", "heating_valve"),
    ("CCV", "Valve_Position_Command", "Cooling coil", "cooling_valve"),
]
POINT_MAPS: dict[int, list[tuple[str, str, str | None, str]]] = {
    # mixing unit with a return fan
    0: [
        *_COMMON,
        ("OA-FLOW", "Outside_Air_Flow_Sensor", "Outdoor-air damper", "oa_flow"),
        ("PF-DP", "Filter_Differential_Pressure_Sensor", "Pre-filters", "pre_dp"),
        ("FF-DP", "Filter_Differential_Pressure_Sensor", "Final filters", "final_dp"),
        ("CO2", "CO2_Level_Sensor", "Return-air CO2 sensor", "co2"),
        ("RF-STS", "Fan_Status", "Return fan", "fan_status"),
        ("RF-SPD", "Fan_Speed_Command", "Return fan", "second_fan_speed"),
    ],
    # heat-recovery wheel, glycol preheat, exhaust fan
    1: [
        *_COMMON,
        ("PHV", "Valve_Position_Command", "Glycol preheat coil", "preheat_valve"),
        ("PH-T", "Preheat_Supply_Air_Temperature_Sensor", "Frost thermostat", "preheat_t"),
        ("PF-DP", "Filter_Differential_Pressure_Sensor", "Pre-filters", "pre_dp"),
        ("FF-DP", "Filter_Differential_Pressure_Sensor", "Final filters", "final_dp"),
        ("EF-STS", "Fan_Status", "Exhaust fan", "fan_status"),
        ("EF-SPD", "Fan_Speed_Command", "Exhaust fan", "second_fan_speed"),
    ],
    # full outdoor air, electric preheater
    2: [
        *_COMMON,
        ("OA-FLOW", "Outside_Air_Flow_Sensor", "Outdoor-air damper", "oa_flow"),
        ("PH-T", "Preheat_Supply_Air_Temperature_Sensor", "Electric preheater", "preheat_t"),
        ("FRZ", "Freeze_Status", "Electric preheater", "zero"),
        ("FILT-DP", "Filter_Differential_Pressure_Sensor", "Filters", "pre_dp"),
        ("CO2", "CO2_Level_Sensor", None, "co2"),
        ("ZN-CO2", "CO2_Level_Sensor", None, "co2"),
    ],
}
_UNITS = {
    "Supply_Air_Temperature_Sensor": "DEG_C",
    "Mixed_Air_Temperature_Sensor": "DEG_C",
    "Return_Air_Temperature_Sensor": "DEG_C",
    "Outside_Air_Temperature_Sensor": "DEG_C",
    "Supply_Air_Temperature_Setpoint": "DEG_C",
    "Preheat_Supply_Air_Temperature_Sensor": "DEG_C",
    "Supply_Air_Static_Pressure_Sensor": "PA",
    "Supply_Air_Static_Pressure_Setpoint": "PA",
    "Filter_Differential_Pressure_Sensor": "PA",
    "Fan_Status": "UNITLESS",
    "Freeze_Status": "UNITLESS",
    "Fan_Speed_Command": "PERCENT",
    "Damper_Position_Command": "PERCENT",
    "Damper_Position_Sensor": "PERCENT",
    "Valve_Position_Command": "PERCENT",
    "Supply_Air_Flow_Sensor": "M3-PER-SEC",
    "Outside_Air_Flow_Sensor": "M3-PER-SEC",
    "CO2_Level_Sensor": "PPM",
}
assert all(len(m) == POINTS_A_UNIT for m in POINT_MAPS.values())


@dataclass
class TrendUnits:
    """The units of the scenario, in one order, and their points' ids and signals (one list per unit)."""

    ahu_ids: list[int]
    site_of: dict[int, int]  # unit id: site id
    point_ids: list[list[int]]
    signals: list[list[str]]
    min_oa: np.ndarray  # design minimum outdoor-air fraction of each unit
    airflow: np.ndarray  # design supply airflow, m³/s
    static_sp: np.ndarray  # duct static pressure set point, Pa
    filters: list[list[tuple[float, float]]]  # (clean, final) Pa of the first and second filter bank

    @property
    def values(self) -> int:
        return len(self.ahu_ids) * POINTS_A_UNIT * SAMPLES_A_DAY


def _kind_of(parts: set[str]) -> int:
    if "Heat-recovery wheel" in parts:
        return 1
    return 2 if "Electric preheater" in parts else 0


def points_build(*, ahu_ids: list[int]) -> TrendUnits:
    """20 points on each unit of ``ahu_ids`` (bulk rows); returns their ids and what each one trends."""
    from automation.models import Point
    from inventory.models import AHU, Component

    parts: dict[int, dict[str, object]] = {}
    for comp in Component.objects.filter(ahu_id__in=ahu_ids, parent__isnull=True).order_by("position"):
        parts.setdefault(comp.ahu_id, {})[comp.name] = comp
    units = {a.pk: a for a in AHU.objects.filter(pk__in=ahu_ids).select_related("building")}
    rows, signals, filters = [], [], []
    for ahu_id in ahu_ids:
        ahu, mine = units[ahu_id], parts.get(ahu_id, {})
        point_map = POINT_MAPS[_kind_of(set(mine))]
        for name, brick_class, part, _signal in point_map:
            rows.append(
                Point(
                    ahu=ahu,
                    component=mine[part] if part else None,
                    name=f"{ahu.building.code}-{ahu.tag}.{name}",
                    brick_class=brick_class,
                    unit=_UNITS[brick_class],
                )
            )
        signals.append([s for *_rest, s in point_map])
        banks = [c.specs for c in mine.values() if c.kind == "filter_bank"]
        banks = (banks + banks)[:2]
        filters.append([(float(b["clean_dp_pa"]), float(b["final_dp_pa"])) for b in banks])
    rows = Point.objects.bulk_create(rows, batch_size=2000)
    ids = [p.pk for p in rows]
    return TrendUnits(
        ahu_ids=list(ahu_ids),
        site_of={a.pk: a.building.site_id for a in units.values()},
        point_ids=[ids[i * POINTS_A_UNIT : (i + 1) * POINTS_A_UNIT] for i in range(len(ahu_ids))],
        signals=signals,
        min_oa=np.array([float(units[a].design_min_oa_fraction) for a in ahu_ids]),
        airflow=np.array([float(units[a].design_supply_airflow_m3s) for a in ahu_ids]),
        static_sp=np.array([float(units[a].duct_static_setpoint_pa) for a in ahu_ids]),
        filters=filters,
    )


def day_values(units: TrendUnits, *, seed: int = 1) -> dict[str, np.ndarray]:
    """One site-local day of every signal for every unit: {signal: array (units × 96)} in SI (percent as %)."""
    rng = np.random.default_rng(seed)
    n = len(units.ahu_ids)
    hour = np.arange(SAMPLES_A_DAY) / 4.0
    noise = lambda scale: rng.normal(0.0, scale, (n, SAMPLES_A_DAY))  # noqa: E731
    start = rng.uniform(5.5, 6.5, (n, 1))
    running = (hour >= start) & (hour < start + 14)
    f = units.min_oa[:, None]
    oat = 2.0 + rng.uniform(-2, 2, (n, 1)) + 3.0 * np.sin(2 * np.pi * (hour - 9) / 24) + noise(0.2)
    rat = np.where(running, 21.5, 19.5) + noise(0.15)
    stuck = rng.random(n) < STUCK_DAMPER_SHARE
    f_air = np.where(stuck[:, None], 0.97, f)
    mat = np.where(running, f_air * oat + (1 - f_air) * rat, rat - 0.5) + noise(0.15)
    sat_sp = np.full((n, SAMPLES_A_DAY), 20.0)
    sat = np.where(running, sat_sp + noise(0.25), 17.0 + noise(0.2))
    speed = np.where(running, rng.uniform(60, 80, (n, 1)) + noise(0.5), 0.0)
    airflow = speed / 100 * units.airflow[:, None]
    oa_damper = np.where(running, f * 100, 0.0)
    out = {
        "sat": sat,
        "mat": mat,
        "rat": rat,
        "oat": oat,
        "sat_sp": sat_sp,
        "dsp": np.where(running, units.static_sp[:, None] + noise(4.0), noise(1.0)),
        "dsp_sp": np.repeat(units.static_sp[:, None], SAMPLES_A_DAY, axis=1),
        "fan_status": running.astype(float),
        "fan_speed": speed,
        "second_fan_speed": speed * 0.9,
        "airflow": airflow,
        "oa_flow": airflow * f,
        "oa_damper": oa_damper,
        "oa_damper_fb": np.clip(oa_damper + noise(0.5), 0, 100),
        "heating_valve": np.where(running, 100 * np.clip((sat_sp - mat) / 25.0, 0.05, 1.0), 0.0),
        "cooling_valve": np.zeros((n, SAMPLES_A_DAY)),
        "preheat_valve": np.where(running, 100 * np.clip((6.0 - oat) / 20.0, 0.0, 1.0), 0.0),
        "preheat_t": np.where(running, np.maximum(oat, 6.5), 10.0) + noise(0.2),
        "co2": 420 + np.where(running, 350 + noise(30.0), 50 + noise(5.0)),
        "zero": np.zeros((n, SAMPLES_A_DAY)),
    }
    for key, bank in (("pre_dp", 0), ("final_dp", 1)):
        clean = np.array([fs[bank][0] for fs in units.filters])[:, None]
        final = np.array([fs[bank][1] for fs in units.filters])[:, None]
        loading = rng.uniform(0.1, 0.7, (n, 1))
        if bank == 0:
            loading = np.where(rng.random((n, 1)) < LOADED_FILTER_SHARE, 0.98, loading)
        at_design = clean + loading * (final - clean)
        out[key] = np.where(running, at_design * (speed / 100) ** 1.5, 0.0) + noise(1.0)
    return out


def site_samples(units: TrendUnits, values: dict[str, np.ndarray], *, rows: list[int], start: float) -> dict:
    """``{point id: {aware UTC time: value}}`` of the units at ``rows`` (indexes), the day from ``start``."""
    times = [dt.datetime.fromtimestamp(start + k * STEP_S, tz=dt.UTC) for k in range(SAMPLES_A_DAY)]
    out = {}
    for i in rows:
        for point_id, signal in zip(units.point_ids[i], units.signals[i], strict=True):
            out[point_id] = dict(zip(times, values[signal][i].tolist(), strict=True))
    return out


# ---------------------------------------------------------------------------
# The scenario: ingest one day through the real writer, judge it, against a plain bulk write of the same rows.
# ---------------------------------------------------------------------------
INGEST_OVER_BASELINE = 3.0  # target: ingest ≤ 3× the baseline's plain write of the same rows
JUDGE_OVER_INGEST = 2.0  # target: judging the day ≤ 2× the ingest time
BASELINE_TABLE = "bench_trend_baseline"


def _site_rows(units: TrendUnits) -> dict[int, list[int]]:
    rows: dict[int, list[int]] = {}
    for i, ahu_id in enumerate(units.ahu_ids):
        rows.setdefault(units.site_of[ahu_id], []).append(i)
    return rows


def _day_starts(site_ids, day: dt.date) -> dict[int, float]:
    """Each site's local midnight of ``day``, epoch seconds."""
    import zoneinfo

    from inventory.models import Site

    out = {}
    for site in Site.objects.filter(pk__in=site_ids):
        tz = zoneinfo.ZoneInfo(site.time_zone or "UTC")
        out[site.pk] = dt.datetime.combine(day, dt.time(), tzinfo=tz).timestamp()
    return out


def _ingest(units: TrendUnits, values: dict, by_site: dict[int, list[int]], starts: dict[int, float]) -> int:
    """Every site's day through ``trend_samples_store``, one transaction a site (as an import or a poll)."""
    from django.db import transaction

    from automation.trends import trend_samples_store

    stored = 0
    for site_id, rows in by_site.items():
        with transaction.atomic():
            stored += trend_samples_store(site_samples(units, values, rows=rows, start=starts[site_id])).values
    return stored


def _baseline_table() -> None:
    from django.db import connection

    kind = "timestamptz" if connection.vendor == "postgresql" else "text"
    with connection.cursor() as cursor:
        cursor.execute(f"DROP TABLE IF EXISTS {BASELINE_TABLE}")
        cursor.execute(
            f"CREATE TABLE {BASELINE_TABLE} (ts {kind} NOT NULL, point_id integer NOT NULL, value double precision)"
        )


_COPY_ROW = np.dtype(
    [("n", ">i2"), ("l1", ">i4"), ("ts", ">i8"), ("l2", ">i4"), ("pid", ">i4"), ("l3", ">i4"), ("v", ">f8")]
)
_PG_EPOCH = dt.datetime(2000, 1, 1, tzinfo=dt.UTC).timestamp()


def _copy_payload(units: TrendUnits, values: dict, rows: list[int], start: float) -> bytes:
    """The site's rows in PostgreSQL's binary COPY format (built with numpy)."""
    import struct

    pids = np.array([p for i in rows for p in units.point_ids[i]], dtype=np.int64)
    vals = np.stack([values[s][i] for i in rows for s in units.signals[i]])
    ts = ((start + np.arange(SAMPLES_A_DAY) * STEP_S - _PG_EPOCH) * 1_000_000).astype(np.int64)
    out = np.empty(vals.shape, dtype=_COPY_ROW)
    out["n"], out["l1"], out["l2"], out["l3"] = 3, 8, 4, 8
    out["ts"], out["pid"], out["v"] = ts[None, :], pids[:, None], vals
    return b"PGCOPY\n\xff\r\n\x00" + struct.pack(">ii", 0, 0) + out.tobytes() + struct.pack(">h", -1)


def _baseline(units: TrendUnits, values: dict, by_site: dict[int, list[int]], starts: dict[int, float]) -> None:
    """The same rows into a plain table: PostgreSQL ``COPY … FORMAT binary``; on SQLite ``executemany`` INSERT."""
    from django.db import connection, transaction

    with connection.cursor() as cursor:
        cursor.execute(f"DELETE FROM {BASELINE_TABLE}")
    for site_id, rows in by_site.items():
        start = starts[site_id]
        with transaction.atomic(), connection.cursor() as cursor:
            if connection.vendor == "postgresql":
                with cursor.copy(f"COPY {BASELINE_TABLE} (ts, point_id, value) FROM STDIN WITH (FORMAT binary)") as cp:
                    cp.write(_copy_payload(units, values, rows, start))
                continue
            times = [dt.datetime.fromtimestamp(start + k * STEP_S, tz=dt.UTC).isoformat() for k in range(SAMPLES_A_DAY)]
            cursor.executemany(
                f"INSERT INTO {BASELINE_TABLE} (ts, point_id, value) VALUES (%s, %s, %s)",
                [
                    (t, pid, v)
                    for i in rows
                    for pid, s in zip(units.point_ids[i], units.signals[i], strict=True)
                    for t, v in zip(times, values[s][i].tolist(), strict=True)
                ],
            )


def _stored_values(units: TrendUnits) -> int:
    from django.db.models import Sum

    from automation.models import TrendDay

    ids = [p for ps in units.point_ids for p in ps]
    total = 0
    for k in range(0, len(ids), 5000):
        total += TrendDay.objects.filter(point_id__in=ids[k : k + 5000]).aggregate(n=Sum("count"))["n"] or 0
    return total


def _clear(units: TrendUnits) -> None:
    from automation.models import TrendDay

    ids = [p for ps in units.point_ids for p in ps]
    for k in range(0, len(ids), 5000):
        TrendDay.objects.filter(point_id__in=ids[k : k + 5000]).delete()


def _judge(by_site: dict[int, list[int]], day: dt.date):
    from automation.judging import trends_judge
    from inventory.models import Site

    days = []
    for site in Site.objects.filter(pk__in=by_site).order_by("pk"):
        days += trends_judge(site=site, start=day, end=day).days
    return days


def _judged_check(units: TrendUnits, days: list) -> None:
    from .scenarios import WrongOutcome

    judged = {d.ahu.pk for d in days if d.faults is not None and d.run_hours is not None}
    missing = [a for a in units.ahu_ids if a not in judged]
    if missing:
        first = next((d for d in days if d.ahu.pk == missing[0]), None)
        said = "; ".join(first.notes) if first is not None else "not in the judged days at all"
        raise WrongOutcome(f"trend judging: {len(missing)} of {len(units.ahu_ids)} units not judged; the first: {said}")


def trend_ingest(*, ahu_ids: list[int], day: dt.date, runs: int, seed: int = 1) -> dict:
    """One site-local ``day`` of 15-minute trends of 20 points on each unit, stored through
    ``trend_samples_store`` (one transaction a site) and judged by ``trends_judge``; baseline: a plain write of the
    same rows. Raises ``WrongOutcome`` when the values stored are not every value sent or a unit is not judged."""
    from .scenarios import WrongOutcome, median, timed

    units = points_build(ahu_ids=ahu_ids)
    values = day_values(units, seed=seed)
    by_site = _site_rows(units)
    starts = _day_starts(by_site, day)
    _baseline_table()
    ingests, baselines = [], []
    for run in range(runs):
        if run:
            _clear(units)
        took, stored = timed(lambda: _ingest(units, values, by_site, starts))
        found = _stored_values(units)
        if stored != units.values or found != units.values:
            raise WrongOutcome(
                f"trend ingest: {units.values} values sent ({len(units.ahu_ids)} units × {POINTS_A_UNIT} points × "
                f"{SAMPLES_A_DAY}), the writer said {stored}, the day buckets hold {found}"
            )
        ingests.append(took)
        baselines.append(timed(lambda: _baseline(units, values, by_site, starts))[0])
    judge_s, days = timed(lambda: _judge(by_site, day))
    _judged_check(units, days)
    ingest, base = median(ingests), median(baselines)
    return {
        "units": len(units.ahu_ids),
        "points": len(units.ahu_ids) * POINTS_A_UNIT,
        "values": units.values,
        "sites": len(by_site),
        "day": day.isoformat(),
        "ingest_s": ingest,
        "baseline_s": base,
        "baseline": "COPY (binary)" if _vendor() == "postgresql" else "executemany INSERT",
        "ingest_over_baseline": round(ingest / base, 2) if base else None,
        "values_per_s": round(units.values / ingest) if ingest else None,
        "judge_s": round(judge_s, 3),
        "judge_over_ingest": round(judge_s / ingest, 2) if ingest else None,
        "judged_units": len({d.ahu.pk for d in days}),
        "faults_opened": sum(len(d.opened) for d in days),
        "filter_days": sum(1 for d in days for f in d.filters if f.day is not None),
        "run_hour_readings": sum(1 for d in days if d.run_hours is not None and d.run_hours.reading is not None),
        "targets": {
            f"ingest_over_baseline <= {INGEST_OVER_BASELINE:g}": bool(base and ingest / base <= INGEST_OVER_BASELINE),
            f"judge_over_ingest <= {JUDGE_OVER_INGEST:g}": bool(ingest and judge_s / ingest <= JUDGE_OVER_INGEST),
        },
    }


def _vendor() -> str:
    from django.db import connection

    return connection.vendor
