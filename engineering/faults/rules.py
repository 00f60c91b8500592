"""The AHU fault conditions FC#1–FC#15 as a table.

ASHRAE Guideline 36-2018, 5.16.14 (section number, formulas and the states
each applies in are from memory). Each formula was cross-checked against
open-fdd (github.com/bbartling/open-fdd, open_fdd/air_handling_unit/faults/
fault_condition_*.py) and, for FC#2, #3, #5–#13, the JSON rules of
github.com/gtfierro/metadata-cost-estimation (rules/5.16.14.8-vav-ahu-fault.json);
differences are noted at the rule.

Symbols: measured values are moving averages (``AVERAGED_ROLES``); ε… are
sensor error allowances and ΔT… temperature differences of
``FaultThresholds``.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from engineering.faults.states import OperatingState as OS
from engineering.faults.thresholds import FaultThresholds

# The citation readers see; the section number, like the formulas, is from memory (see the module's note).
SECTION = "ASHRAE Guideline 36-2018, section 5.16.14"
ALL_RUNNING = (OS.HEATING, OS.FREE_COOLING, OS.MECHANICAL_AND_ECONOMIZER, OS.MECHANICAL_MINIMUM_OA, OS.OTHER)

Points = Mapping[str, np.ndarray]
Condition = Callable[[Points, FaultThresholds], np.ndarray]


@dataclass(frozen=True)
class FaultRule:
    code: str
    title: str
    formula: str
    states: tuple[int, ...]
    needs: tuple[str, ...]
    condition: Condition | None  # None: computed by the engine (FC4 counts state changes)
    note: str = ""


def oa_fraction(p: Points) -> np.ndarray:
    """Outdoor-air fraction from temperatures, %OA = (MAT − RAT) / (OAT − RAT)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        fraction: np.ndarray = (p["mat"] - p["rat"]) / (p["oat"] - p["rat"])
    return fraction


def _root(a: float, b: float) -> float:
    return float(np.hypot(a, b))


def _fc1(p: Points, t: FaultThresholds) -> np.ndarray:
    return (p["duct_static"] < p["duct_static_setpoint"] - t.eps_duct_static_pa) & (
        p["supply_fan_speed"] >= t.full_command - t.eps_fan_speed
    )


def _fc2(p: Points, t: FaultThresholds) -> np.ndarray:
    return p["mat"] + t.eps_mat_k < np.minimum(p["rat"] - t.eps_rat_k, p["oat"] - t.eps_oat_k)


def _fc3(p: Points, t: FaultThresholds) -> np.ndarray:
    return p["mat"] - t.eps_mat_k > np.maximum(p["rat"] + t.eps_rat_k, p["oat"] + t.eps_oat_k)


def _fc5(p: Points, t: FaultThresholds) -> np.ndarray:
    return p["sat"] + t.eps_sat_k <= p["mat"] - t.eps_mat_k + t.dt_supply_fan_k


def _fc6(p: Points, t: FaultThresholds) -> np.ndarray:
    far: np.ndarray = np.abs(p["rat"] - p["oat"]) >= t.dt_min_k
    off_minimum: np.ndarray = np.abs(oa_fraction(p) - p["min_oa_fraction"]) > t.eps_oa_fraction
    both: np.ndarray = far & off_minimum
    return both


def _fc7(p: Points, t: FaultThresholds) -> np.ndarray:
    return (p["sat"] < p["sat_setpoint"] - t.eps_sat_k) & (p["heating_valve"] >= t.full_command)


def _fc8(p: Points, t: FaultThresholds) -> np.ndarray:
    return np.abs(p["sat"] - t.dt_supply_fan_k - p["mat"]) > _root(t.eps_sat_k, t.eps_mat_k)


def _fc9(p: Points, t: FaultThresholds) -> np.ndarray:
    return p["oat"] - t.eps_oat_k > p["sat_setpoint"] - t.dt_supply_fan_k + t.eps_sat_k


def _fc10(p: Points, t: FaultThresholds) -> np.ndarray:
    apart: np.ndarray = np.abs(p["mat"] - p["oat"]) > _root(t.eps_mat_k, t.eps_oat_k)
    return apart


def _fc11(p: Points, t: FaultThresholds) -> np.ndarray:
    return p["oat"] + t.eps_oat_k < p["sat_setpoint"] - t.dt_supply_fan_k - t.eps_sat_k


def _fc12(p: Points, t: FaultThresholds) -> np.ndarray:
    return p["sat"] - t.eps_sat_k - t.dt_supply_fan_k >= p["mat"] + t.eps_mat_k


def _fc13(p: Points, t: FaultThresholds) -> np.ndarray:
    return (p["sat"] > p["sat_setpoint"] + t.eps_sat_k) & (p["cooling_valve"] >= t.full_command)


def _fc14(p: Points, t: FaultThresholds) -> np.ndarray:
    drop = p["cooling_coil_entering"] - p["cooling_coil_leaving"]
    return drop >= t.coil_change_k


def _fc15(p: Points, t: FaultThresholds) -> np.ndarray:
    rise = p["heating_coil_leaving"] - p["heating_coil_entering"]
    return rise >= t.coil_change_k


RULES: tuple[FaultRule, ...] = (
    FaultRule(
        "FC1",
        "Duct static pressure too low with the supply fan at full speed",
        "DSP < DSPSP − εDSP and fan speed ≥ 99 % − εVFDSPD",
        ALL_RUNNING,
        ("duct_static", "duct_static_setpoint", "supply_fan_speed"),
        _fc1,
    ),
    FaultRule(
        "FC2",
        "Mixed air temperature too low; it should lie between return and outdoor air",
        "MAT + εMAT < min(RAT − εRAT, OAT − εOAT)",
        ALL_RUNNING,
        ("mat", "rat", "oat"),
        _fc2,
        note="The JSON rules of gtfierro/metadata-cost-estimation state FC#2 with max() and the MAT allowance "
        "subtracted; open-fdd and this table use min() for FC#2 and max() for FC#3.",
    ),
    FaultRule(
        "FC3",
        "Mixed air temperature too high; it should lie between return and outdoor air",
        "MAT − εMAT > max(RAT + εRAT, OAT + εOAT)",
        ALL_RUNNING,
        ("mat", "rat", "oat"),
        _fc3,
    ),
    FaultRule(
        "FC4",
        "Too many changes of operating state (control hunting)",
        "state changes in the last 60 min > ΔOSmax",
        ALL_RUNNING,
        ("heating_valve", "cooling_valve", "oa_damper", "oa_damper_min"),
        None,
    ),
    FaultRule(
        "FC5",
        "Supply air temperature too low in heating; it should be above mixed air",
        "SAT + εSAT ≤ MAT − εMAT + ΔTSF",
        (OS.HEATING,),
        ("sat", "mat"),
        _fc5,
    ),
    FaultRule(
        "FC6",
        "Outdoor air fraction differs from the minimum in heating or mechanical cooling at minimum outdoor air",
        "|RAT − OAT| ≥ ΔTmin and |%OA − %OAmin| > εF, %OA = (MAT − RAT)/(OAT − RAT)",
        (OS.HEATING, OS.MECHANICAL_MINIMUM_OA),
        ("mat", "rat", "oat", "min_oa_fraction"),
        _fc6,
        note="The guideline derives %OAmin from the minimum outdoor airflow set point over the supply airflow; "
        "here it is an input (min_oa_fraction) so a unit without an airflow station can be judged.",
    ),
    FaultRule(
        "FC7",
        "Supply air temperature too low with the heating valve full open",
        "SAT < SATSP − εSAT and heating valve ≥ 99 %",
        (OS.HEATING,),
        ("sat", "sat_setpoint", "heating_valve"),
        _fc7,
    ),
    FaultRule(
        "FC8",
        "Supply and mixed air temperatures differ in free cooling (they should differ by the fan heat only)",
        "|SAT − ΔTSF − MAT| > √(εSAT² + εMAT²)",
        (OS.FREE_COOLING,),
        ("sat", "mat"),
        _fc8,
    ),
    FaultRule(
        "FC9",
        "Outdoor air too warm for free cooling without mechanical cooling",
        "OAT − εOAT > SATSP − ΔTSF + εSAT",
        (OS.FREE_COOLING,),
        ("oat", "sat_setpoint"),
        _fc9,
    ),
    FaultRule(
        "FC10",
        "Outdoor and mixed air temperatures differ at 100 % outdoor air",
        "|MAT − OAT| > √(εMAT² + εOAT²)",
        (OS.MECHANICAL_AND_ECONOMIZER,),
        ("mat", "oat"),
        _fc10,
    ),
    FaultRule(
        "FC11",
        "Outdoor air too cold for mechanical cooling at 100 % outdoor air",
        "OAT + εOAT < SATSP − ΔTSF − εSAT",
        (OS.MECHANICAL_AND_ECONOMIZER,),
        ("oat", "sat_setpoint"),
        _fc11,
    ),
    FaultRule(
        "FC12",
        "Supply air temperature too high in mechanical cooling; it should be below mixed air",
        "SAT − εSAT − ΔTSF ≥ MAT + εMAT",
        (OS.MECHANICAL_AND_ECONOMIZER, OS.MECHANICAL_MINIMUM_OA),
        ("sat", "mat"),
        _fc12,
        note="States as open-fdd (fault_condition_twelve.py: OS#3 and OS#4); from memory the guideline may also "
        "list OS#2, where FC#8 already covers a supply warmer than mixed air plus fan heat.",
    ),
    FaultRule(
        "FC13",
        "Supply air temperature too high with the cooling valve full open",
        "SAT > SATSP + εSAT and cooling valve ≥ 99 %",
        (OS.MECHANICAL_AND_ECONOMIZER, OS.MECHANICAL_MINIMUM_OA),
        ("sat", "sat_setpoint", "cooling_valve"),
        _fc13,
        note="open-fdd (fault_condition_thirteen.py) leaves out the valve condition; the guideline's "
        "'in full cooling' and gtfierro's FC#13 (cooling command ≥ 0.99) keep it.",
    ),
    FaultRule(
        "FC14",
        "Air cooled across a cooling coil whose valve is closed (leaking valve)",
        "CCET − CCLT ≥ √(εCCET² + εCCLT²) + ΔTSF",
        (OS.HEATING, OS.FREE_COOLING),
        ("cooling_coil_entering", "cooling_coil_leaving"),
        _fc14,
        note="Formula and states as open-fdd fault_condition_fourteen.py (OS#1, OS#2).",
    ),
    FaultRule(
        "FC15",
        "Air heated across a heating coil whose valve is closed (leaking valve)",
        "HCLT − HCET ≥ √(εHCET² + εHCLT²) + ΔTSF",
        (OS.FREE_COOLING, OS.MECHANICAL_AND_ECONOMIZER, OS.MECHANICAL_MINIMUM_OA),
        ("heating_coil_entering", "heating_coil_leaving"),
        _fc15,
        note="Formula and states as open-fdd fault_condition_fifteen.py (OS#2, OS#3, OS#4).",
    ),
)

RULES_BY_CODE = {r.code: r for r in RULES}
