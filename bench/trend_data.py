"""Building-automation trends for the benchmark: 20 points on each unit and one day of 15-minute samples.

``points_build`` maps 20 points to every unit of an organisation (bulk rows, as the generator writes the
registry), by the unit's kind (``generate.UNIT_KINDS``): a mixing unit, a unit with a heat-recovery wheel and a
full-outdoor-air unit each trend the points such a unit has. ``day_values`` draws one site-local day of
samples for every point with numpy from a seed: a heating day (December-like outdoor air around 2 °C), the fan
running 06:00–20:00 site time, the outdoor-air damper at the unit's design minimum, the mixed air at that
fraction of outdoor air, the heating valve bringing the supply air to its set point. A few units carry a fault
(a stuck-open outdoor-air damper, a loaded filter), so judging also writes faults and proposes work.
``site_samples`` gives a site's day as the trend writer takes it.
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
