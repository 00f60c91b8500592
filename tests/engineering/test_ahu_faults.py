"""AHU fault rules (ASHRAE Guideline 36 FC#1–FC#15) on hand-built trends.

Each rule is tried on both sides of its threshold, in a state where it
applies and in one where it does not; delays just shorter and just longer
than the guideline's. Thresholds are the defaults of
``engineering.faults.thresholds``: the guideline values are from memory
(ASHRAE Guideline 36-2018, 5.16.14) and each is named beside its check with
the public cross-check, open-fdd (github.com/bbartling/open-fdd).
"""

from dataclasses import replace
from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from engineering import EngineeringInputError
from engineering.faults import (
    G36_DEFAULTS,
    OperatingState,
    evaluate_ahu,
    evaluate_ahu_logs,
    evaluate_ahus,
    operating_states,
    resample,
)

T0 = datetime(2026, 1, 5, 6, 0, tzinfo=UTC)  # a fixed Monday morning, never today
N = 120  # two hours of 1-minute samples
FAULT = slice(30, 100)  # 70 minutes, after the 15-minute suppression at the start of the data

# One-sample averaging isolates a rule's threshold from the 5-minute moving average.
SHARP = replace(G36_DEFAULTS, average_window_s=60.0)

# εSAT, εRAT, ΔTSF = 2 °F; εMAT = 5 °F; εOAT = 5 °F — from memory (G36-2018 5.16.14), cross-checked with open-fdd
# SUPPLY/RETURN_DEGF_ERR_THRES = 2.0, DELTA_T_SUPPLY_FAN = 2.0, MIX/OUTDOOR_DEGF_ERR_THRES = 5.0.
E_SAT = E_RAT = DT_FAN = 2 * 5 / 9  # 1.11 K
E_MAT = E_OAT = 5 * 5 / 9  # 2.78 K

COMMANDS = {
    1: {"heating_valve": 0.5, "cooling_valve": 0.0, "oa_damper": 0.2},
    2: {"heating_valve": 0.0, "cooling_valve": 0.0, "oa_damper": 0.6},
    3: {"heating_valve": 0.0, "cooling_valve": 0.5, "oa_damper": 1.0},
    4: {"heating_valve": 0.0, "cooling_valve": 0.5, "oa_damper": 0.2},
    5: {"heating_valve": 0.5, "cooling_valve": 0.5, "oa_damper": 0.2},
}
# Healthy temperatures per state (°C): outdoor, return, mixed (20 % outdoor air unless at 100 %), supply, set point.
AIR = {
    1: {"oat": -5.0, "rat": 21.0, "mat": 15.8, "sat": 20.0, "sat_setpoint": 20.0},
    2: {"oat": 12.0, "rat": 22.0, "mat": 14.0, "sat": 15.1, "sat_setpoint": 15.0},
    3: {"oat": 18.0, "rat": 24.0, "mat": 18.0, "sat": 13.0, "sat_setpoint": 13.0},
    4: {"oat": 32.0, "rat": 24.0, "mat": 25.6, "sat": 13.0, "sat_setpoint": 13.0},
    5: {"oat": 10.0, "rat": 22.0, "mat": 19.6, "sat": 15.0, "sat_setpoint": 15.0},
}


def times(n=N, step_min=1):
    return [T0 + timedelta(minutes=step_min * i) for i in range(n)]


def unit(state, n=N, **changes):
    """A healthy unit held in one operating state; keyword arguments replace whole series or (slice, value)."""
    air = AIR[state]
    pts = {
        **{k: np.full(n, c) for k, c in COMMANDS[state].items()},
        "oa_damper_min": 0.2,
        "supply_fan_speed": np.full(n, 0.7),
        "duct_static": np.full(n, 250.0),
        "duct_static_setpoint": 250.0,
        "min_oa_fraction": 0.2,
        **{k: np.full(n, c) for k, c in air.items()},
        "cooling_coil_entering": np.full(n, air["mat"]),
        "cooling_coil_leaving": np.full(n, air["mat"] if state in (1, 2) else air["sat"]),
        "heating_coil_entering": np.full(n, air["mat"]),
        "heating_coil_leaving": np.full(n, air["sat"] if state == 1 else air["mat"]),
    }
    for role, value in changes.items():
        if isinstance(value, tuple):
            where, v = value
            pts[role] = np.array(pts[role], dtype=float) if np.ndim(pts[role]) else np.full(n, float(pts[role]))
            pts[role][where] = v
        else:
            pts[role] = value
    return pts


def judge(state, code, thresholds=G36_DEFAULTS, n=N, step_min=1, **changes):
    return evaluate_ahu(times=times(n, step_min), points=unit(state, n, **changes), thresholds=thresholds).results[code]


def found(state, code, **changes):
    return judge(state, code, **changes).present


# --- operating states -------------------------------------------------------------------------------


@pytest.mark.parametrize("state", [1, 2, 3, 4, 5])
def test_operating_state_follows_valves_and_damper(state):
    """Heating at minimum OA is OS#1, both valves shut with the damper above minimum OS#2, cooling at
    100 % OA OS#3, cooling at minimum OA OS#4, anything else OS#5 (G36-2018 5.16.14, from memory;
    open-fdd fault_condition_four.py splits the modes the same way)."""
    c = COMMANDS[state]
    s = operating_states(
        heating_valve=np.array([c["heating_valve"]]),
        cooling_valve=np.array([c["cooling_valve"]]),
        oa_damper=np.array([c["oa_damper"]]),
        oa_damper_min=np.array([0.2]),
        fan_running=np.array([True]),
    )
    assert s[0] == state


def test_stopped_fan_or_missing_command_is_not_judged():
    s = operating_states(
        heating_valve=np.array([0.5, np.nan]),
        cooling_valve=np.array([0.0, 0.0]),
        oa_damper=np.array([0.2, 0.2]),
        oa_damper_min=np.array([0.2, 0.2]),
        fan_running=np.array([False, True]),
    )
    assert list(s) == [OperatingState.NOT_JUDGED, OperatingState.NOT_JUDGED]


def test_a_stopped_fan_finds_nothing():
    r = judge(1, "FC5", supply_fan_speed=np.zeros(N), sat=(FAULT, 5.0))
    assert not r.present and r.share is None


# --- each rule on both sides of its threshold --------------------------------------------------------


def test_fc1_duct_static_low_at_full_fan_speed():
    # εDSP 0.1 in. w.c. = 24.9 Pa; fan "full" at 99 % − εVFDSPD 5 % = 94 % (from memory; open-fdd
    # DUCT_STATIC_INCHES_ERR_THRES = 0.1, VFD_SPEED_PERCENT_MAX = 0.99, VFD_SPEED_PERCENT_ERR_THRES = 0.05).
    low, fast = 250.0 - 24.91, 0.95
    assert found(4, "FC1", duct_static=(FAULT, low - 1.0), supply_fan_speed=(FAULT, fast))
    assert not found(4, "FC1", duct_static=(FAULT, low + 1.0), supply_fan_speed=(FAULT, fast))
    assert not found(4, "FC1", duct_static=(FAULT, low - 1.0), supply_fan_speed=(FAULT, 0.93))
    assert found(5, "FC1", duct_static=(FAULT, low - 1.0), supply_fan_speed=(FAULT, fast))  # every state


def test_fc2_mixed_air_colder_than_both_streams():
    # OS#1: min(RAT − εRAT, OAT − εOAT) = min(19.9, −7.78); fault when MAT + εMAT is below it: MAT < −10.56 °C.
    limit = -5.0 - E_OAT - E_MAT
    assert found(1, "FC2", mat=(FAULT, limit - 0.3))
    assert not found(1, "FC2", mat=(FAULT, limit + 0.3))


def test_fc3_mixed_air_warmer_than_both_streams():
    # OS#4: max(RAT + εRAT, OAT + εOAT) = max(25.1, 34.8); fault when MAT − εMAT is above it: MAT > 37.56 °C.
    limit = 32.0 + E_OAT + E_MAT
    assert found(4, "FC3", mat=(FAULT, limit + 0.3))
    assert not found(4, "FC3", mat=(FAULT, limit - 0.3))


def _hunting(period_min, n=180):
    flip = (np.arange(n) // period_min) % 2 == 1
    return {
        "heating_valve": np.where(flip, 0.0, 0.5),
        "oa_damper": np.where(flip, 0.6, 0.2),
    }


def test_fc4_more_than_seven_state_changes_an_hour():
    # ΔOSmax = 7 changes in the moving hour (from memory; open-fdd DELTA_OS_MAX = 7).
    assert judge(1, "FC4", n=180, **_hunting(6)).present  # 10 changes an hour
    assert not judge(1, "FC4", n=180, **_hunting(10)).present  # 6 changes an hour


def test_fc4_is_not_judged_on_quarter_hour_data():
    r = judge(1, "FC4", n=96, step_min=15)
    assert not r.judged and "state changes" in r.reason


def test_fc5_supply_not_warmer_than_mixed_in_heating():
    # SAT + εSAT ≤ MAT − εMAT + ΔTSF with MAT 15.8 °C: SAT ≤ 13.03 °C.
    limit = 15.8 - E_MAT + DT_FAN - E_SAT
    assert found(1, "FC5", sat=(FAULT, limit - 0.3))
    assert not found(1, "FC5", sat=(FAULT, limit + 0.3))
    assert not found(4, "FC5", sat=(FAULT, limit - 0.3), mat=15.8)  # OS#4: not a heating rule


def _mat_for(fraction, oat, rat):
    return rat + fraction * (oat - rat)


def test_fc6_outdoor_air_fraction_away_from_minimum():
    # |%OA − %OAmin| > εF = 0.30 (from memory; open-fdd AIRFLOW_ERR_THRES = 0.3), judged only when
    # |RAT − OAT| ≥ ΔTmin = 10 °F = 5.56 K (from memory; open-fdd OAT_RAT_DELTA_MIN = 10).
    assert found(1, "FC6", mat=(FAULT, _mat_for(0.55, -5.0, 21.0)))  # 0.35 above the 0.2 minimum
    assert not found(1, "FC6", mat=(FAULT, _mat_for(0.45, -5.0, 21.0)))  # 0.25 above
    assert found(4, "FC6", mat=(FAULT, _mat_for(0.55, 32.0, 24.0)))
    # OAT only 4 K from RAT: the fraction means nothing, so no fault even at 100 % outdoor air.
    assert not found(4, "FC6", oat=28.0, mat=(FAULT, 28.0))
    assert not found(2, "FC6", mat=(FAULT, _mat_for(0.9, 12.0, 22.0)))  # OS#2: the damper modulates on purpose


def test_fc6_consequences_excess_and_shortfall():
    r = judge(1, "FC6", mat=(FAULT, _mat_for(0.55, -5.0, 21.0)), supply_airflow=5.0)
    c = r.consequence
    assert c.kind == "energy"
    assert c.values["excess_outdoor_airflow_m3s"] == pytest.approx(0.35 * 5.0, rel=1e-6)
    # Heating 1.75 m³/s from −5 to 21 °C: ≈ 1.75 × 1.32 kg/m³ × 1006 J/kg·K × 26 K ≈ 60 kW (dry-air density at
    # −5 °C and 101.325 kPa; ASHRAE Handbook—Fundamentals 2017 ch. 1 via engineering.airside).
    assert c.values["heat_rate_w"] == pytest.approx(60_400, rel=0.03)
    assert c.values["energy_j"] == pytest.approx(c.values["heat_rate_w"] * r.fault_s)
    short = judge(1, "FC6", min_oa_fraction=0.6, supply_airflow=5.0).consequence  # 0.2 against 0.6
    assert short.kind == "ventilation"
    assert short.values["outdoor_airflow_shortfall_m3s"] == pytest.approx(0.4 * 5.0, rel=1e-6)


def test_fc7_supply_too_cold_with_heating_full_open():
    # SAT < SATSP − εSAT with the heating valve ≥ 99 % (from memory; gtfierro/metadata-cost-estimation FC#7
    # uses 0.99).
    limit = 20.0 - E_SAT
    assert found(1, "FC7", sat=(FAULT, limit - 0.3), heating_valve=(FAULT, 1.0))
    assert not found(1, "FC7", sat=(FAULT, limit + 0.3), heating_valve=(FAULT, 1.0))
    assert not found(1, "FC7", sat=(FAULT, limit - 0.3), heating_valve=(FAULT, 0.98))


def test_fc8_supply_and_mixed_differ_in_free_cooling():
    # |SAT − ΔTSF − MAT| > √(εSAT² + εMAT²) = 2.99 K with MAT 14 °C.
    band = float(np.hypot(E_SAT, E_MAT))
    assert found(2, "FC8", sat=(FAULT, 14.0 + DT_FAN + band + 0.3))
    assert not found(2, "FC8", sat=(FAULT, 14.0 + DT_FAN + band - 0.3))
    assert found(2, "FC8", sat=(FAULT, 14.0 + DT_FAN - band - 0.3))
    assert not found(4, "FC8", sat=(FAULT, 14.0 + DT_FAN + band + 0.3))  # OS#4: the coil cools on purpose


def test_fc9_outdoor_too_warm_for_free_cooling():
    # OAT − εOAT > SATSP − ΔTSF + εSAT with SATSP 15 °C: OAT > 17.78 °C.
    limit = 15.0 - DT_FAN + E_SAT + E_OAT
    assert found(2, "FC9", oat=(FAULT, limit + 0.3))
    assert not found(2, "FC9", oat=(FAULT, limit - 0.3))


def test_fc10_mixed_differs_from_outdoor_at_full_outdoor_air():
    # |MAT − OAT| > √(εMAT² + εOAT²) = 3.93 K.
    band = float(np.hypot(E_MAT, E_OAT))
    assert found(3, "FC10", mat=(FAULT, 18.0 + band + 0.3))
    assert not found(3, "FC10", mat=(FAULT, 18.0 + band - 0.3))
    assert not found(1, "FC10", mat=(FAULT, -5.0 + band + 0.3))  # OS#1: minimum outdoor air, MAT ≠ OAT


def test_fc11_outdoor_too_cold_for_mechanical_cooling():
    # OAT + εOAT < SATSP − ΔTSF − εSAT with SATSP 13 °C: OAT < 8.0 °C.
    limit = 13.0 - DT_FAN - E_SAT - E_OAT
    assert found(3, "FC11", oat=(FAULT, limit - 0.3), mat=(FAULT, limit - 0.3))
    assert not found(3, "FC11", oat=(FAULT, limit + 0.3), mat=(FAULT, limit + 0.3))


def test_fc12_supply_warmer_than_mixed_in_mechanical_cooling():
    # SAT − εSAT − ΔTSF ≥ MAT + εMAT: SAT ≥ MAT + 5.0 K.
    limit = 25.6 + E_MAT + E_SAT + DT_FAN
    assert found(4, "FC12", sat=(FAULT, limit + 0.3))
    assert not found(4, "FC12", sat=(FAULT, limit - 0.3))
    assert not found(1, "FC12", sat=(FAULT, 15.8 + 5.3))  # OS#1: heating warms the supply on purpose


def test_fc13_supply_too_warm_with_cooling_full_open():
    # SAT > SATSP + εSAT with the cooling valve ≥ 99 % (from memory; gtfierro FC#13 cooling command ≥ 0.99).
    limit = 13.0 + E_SAT
    assert found(4, "FC13", sat=(FAULT, limit + 0.3), cooling_valve=(FAULT, 1.0))
    assert not found(4, "FC13", sat=(FAULT, limit - 0.3), cooling_valve=(FAULT, 1.0))
    assert not found(4, "FC13", sat=(FAULT, limit + 0.3), cooling_valve=(FAULT, 0.98))
    assert found(3, "FC13", sat=(FAULT, limit + 0.3), cooling_valve=(FAULT, 1.0))


def test_fc14_air_cooled_across_a_closed_cooling_coil():
    # CCET − CCLT ≥ √(εCCET² + εCCLT²) + ΔTSF = 2.68 K (open-fdd fault_condition_fourteen.py; coil sensor
    # errors 2 °F from memory).
    limit = float(np.hypot(E_SAT, E_SAT)) + DT_FAN
    assert found(2, "FC14", cooling_coil_leaving=(FAULT, 14.0 - limit - 0.3))
    assert not found(2, "FC14", cooling_coil_leaving=(FAULT, 14.0 - limit + 0.3))
    assert not found(4, "FC14", cooling_coil_leaving=(FAULT, 14.0 - limit - 0.3))  # OS#4: the valve is open
    r = judge(2, "FC14", cooling_coil_leaving=(FAULT, 10.0), supply_airflow=4.0)
    assert r.consequence.kind == "energy" and r.consequence.values["heat_rate_w"] < 0


def test_fc15_air_heated_across_a_closed_heating_coil():
    limit = float(np.hypot(E_SAT, E_SAT)) + DT_FAN
    assert found(4, "FC15", heating_coil_leaving=(FAULT, 25.6 + limit + 0.3))
    assert not found(4, "FC15", heating_coil_leaving=(FAULT, 25.6 + limit - 0.3))
    assert not found(1, "FC15", heating_coil_leaving=(FAULT, 25.6 + limit + 0.3))  # OS#1: heating on purpose


def test_a_healthy_unit_in_each_state_finds_nothing():
    for state in (1, 2, 3, 4, 5):
        result = evaluate_ahu(times=times(), points=unit(state))
        assert result.present() == [], state


# --- delays, suppression, averaging, gaps -----------------------------------------------------------


@pytest.mark.parametrize(("minutes", "fault"), [(29, False), (30, True), (31, True)])
def test_alarm_delay_thirty_minutes(minutes, fault):
    # AlarmDelay 30 min (from memory, G36-2018 5.16.14; open-fdd counts 5 samples instead).
    r = judge(1, "FC5", thresholds=SHARP, sat=(slice(40, 40 + minutes), 5.0))
    assert r.present is fault
    if fault:
        (w,) = r.windows
        assert w.start == T0 + timedelta(minutes=40)
        assert w.alarm_at == T0 + timedelta(minutes=70)
        assert w.end == T0 + timedelta(minutes=40 + minutes)


@pytest.mark.parametrize(("minutes", "fault"), [(44, False), (45, True)])
def test_rules_rest_for_fifteen_minutes_after_a_state_change(minutes, fault):
    # ModeDelay 15 min (from memory): after the switch from OS#4 to OS#1 at minute 30 the rule waits 15 min, so a
    # condition that starts with the switch needs 15 + 30 min to become a fault.
    n = 30 + minutes + 5
    state4 = {k: (slice(0, 30), v) for k, v in COMMANDS[4].items()}
    r = judge(1, "FC5", thresholds=SHARP, n=n, sat=(slice(30, 30 + minutes), 5.0), **state4)
    assert r.present is fault


def test_a_gap_is_not_a_fault_and_breaks_the_run():
    sat = np.full(N, 20.0)
    sat[30:70] = 5.0
    sat[50] = np.nan  # one lost sample splits 40 minutes into 20 + 19
    r = judge(1, "FC5", thresholds=SHARP, sat=sat)
    assert not r.present
    nothing = judge(1, "FC5", sat=np.full(N, np.nan))
    assert nothing.judged and not nothing.present and nothing.share is None


def test_moving_average_smooths_a_flickering_sensor():
    # Five-minute moving average (from memory; open-fdd rolling_window="5min"): a supply reading that flicks
    # to 12.5 °C every other minute averages above the FC#5 limit of 13.03 °C.
    sat = np.where(np.arange(N) % 2 == 0, 12.5, 14.5)
    assert not judge(1, "FC5", sat=sat).present
    assert judge(1, "FC5", thresholds=SHARP, sat=np.where(np.arange(N) % 2 == 0, 12.5, 12.9)).present


def test_share_of_applicable_time():
    # 15 suppressed minutes, then 100 applicable minutes of which the last 60 are in fault.
    r = judge(1, "FC5", thresholds=SHARP, n=115, sat=(slice(55, 115), 5.0))
    assert r.applicable_s == 100 * 60
    assert r.fault_s == 60 * 60
    assert r.share == pytest.approx(0.6)


def test_quarter_hour_data_alarms_after_two_samples():
    r = judge(1, "FC5", n=12, step_min=15, sat=(slice(4, 6), 5.0))
    assert r.present and r.windows[0].duration_s == 1800
    assert not judge(1, "FC5", n=12, step_min=15, sat=(slice(4, 5), 5.0)).present


# --- many units at once ------------------------------------------------------------------------------


def test_many_units_in_one_pass_match_one_at_a_time():
    a, b = unit(1), unit(1, sat=(FAULT, 5.0))
    stacked = {role: np.vstack([np.broadcast_to(a[role], N), np.broadcast_to(b[role], N)]) for role in a}
    both = evaluate_ahus(times=times(), points=stacked)
    assert [r.code for r in both[0].present()] == []
    assert [r.code for r in both[1].present()] == [r.code for r in evaluate_ahu(times=times(), points=b).present()]
    assert "FC5" in [r.code for r in both[1].present()]


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.floats(min_value=-20, max_value=40), min_size=N, max_size=N),
    st.floats(min_value=0.0, max_value=5.0),
)
def test_windows_and_shares_stay_consistent(sat, extra_k):
    """Whatever the supply temperature does, windows last at least the alarm delay, lie in the data and in
    order, the share is within 0–1, and a wider sensor allowance never finds more fault time."""
    pts = unit(1, sat=np.array(sat))
    base = evaluate_ahu(times=times(), points=pts).results
    wider = evaluate_ahu(
        times=times(), points=pts, thresholds=replace(G36_DEFAULTS, eps_sat_k=G36_DEFAULTS.eps_sat_k + extra_k)
    ).results
    for r in base.values():
        if not r.judged:
            continue
        assert r.share is None or 0.0 <= r.share <= 1.0
        ends = [T0] + [w.end for w in r.windows]
        for w, previous_end in zip(r.windows, ends, strict=False):
            assert w.duration_s >= G36_DEFAULTS.alarm_delay_s
            assert previous_end <= w.start < w.end <= T0 + timedelta(minutes=N)
    for code in ("FC5", "FC7"):
        assert wider[code].fault_s <= base[code].fault_s


# --- resampling and refusals -------------------------------------------------------------------------


def test_resample_holds_change_of_value_logs_and_marks_stale_points():
    cov = ([T0, T0 + timedelta(minutes=7), T0 + timedelta(minutes=9)], [20.0, 18.0, 19.0])
    sparse = ([T0, T0 + timedelta(minutes=10)], [5.0, 6.0])
    r = resample(series={"sat": cov, "oat": sparse, "oa_damper_min": 0.2}, step_s=60, max_hold_s=180)
    assert r.times[0] == T0 and r.times[-1] == T0 + timedelta(minutes=10)
    nan = np.nan
    assert np.allclose(r.points["sat"], [20, 20, 20, 20, nan, nan, nan, 18, 18, 19, 19], equal_nan=True)
    assert np.allclose(r.points["oat"], [5, 5, 5, 5, nan, nan, nan, nan, nan, nan, 6], equal_nan=True)
    assert r.points["oa_damper_min"] == 0.2
    # By default a point is held for 1.5 × its own median logging interval (here 4.5 min → 6.75 min).
    held = resample(series={"sat": cov}, step_s=60).points["sat"]
    assert np.allclose(held, [20, 20, 20, 20, 20, 20, 20, 18, 18, 19])


def test_irregular_times_are_refused_with_a_pointer_to_resample():
    t = times()
    t[10] = t[10] + timedelta(seconds=30)
    with pytest.raises(EngineeringInputError, match=r"irregular.*resample"):
        evaluate_ahu(times=t, points=unit(1))


@pytest.mark.parametrize(
    ("role", "value", "words"),
    [
        ("oa_damper", np.full(N, 55.0), "not percent"),
        ("sat", np.full(N, np.inf), "infinite"),
        ("mat", np.full(N, 150.0), "outside -60–80 °C"),
        ("sat", np.full(N - 1, 20.0), "the times give 120 samples"),
        ("supply_air_temp", np.full(N, 20.0), "unknown role"),
    ],
)
def test_impossible_inputs_are_refused(role, value, words):
    with pytest.raises(EngineeringInputError, match=words) as err:
        evaluate_ahu(times=times(), points=unit(1, **{role: value}))
    assert err.value.field in (role, "points")


def test_impossible_thresholds_and_times_are_refused():
    with pytest.raises(EngineeringInputError, match="eps_mat_k"):
        replace(G36_DEFAULTS, eps_mat_k=-1.0)
    with pytest.raises(EngineeringInputError, match="strictly increase"):
        evaluate_ahu(times=times()[::-1], points=unit(1))
    with pytest.raises(EngineeringInputError, match=r"with a zone"):
        evaluate_ahu(times=[T0, datetime(2026, 1, 5, 6, 1)], points={"sat": [20.0, 20.0]})


# --- what the inputs allow ---------------------------------------------------------------------------


def test_missing_points_leave_their_rules_unjudged_and_say_why():
    pts = {k: v for k, v in unit(1).items() if k not in ("oa_damper", "duct_static")}
    result = evaluate_ahu(times=times(), points=pts)
    assert not result.results["FC1"].judged and "duct_static" in result.results["FC1"].reason
    assert not result.results["FC5"].judged and "operating states unknown" in result.results["FC5"].reason
    assert result.results["FC2"].judged  # FC#1–#3 apply in every state
    assert any("oa_damper" in note for note in result.notes)


def test_a_unit_without_a_heating_coil_reads_its_valve_as_closed():
    pts = {k: v for k, v in unit(4).items() if k != "heating_valve"}
    result = evaluate_ahu(times=times(), points=pts)
    assert set(result.states[20:].tolist()) == {OperatingState.MECHANICAL_MINIMUM_OA}
    assert any("heating_valve" in note for note in result.notes)


def test_fan_status_rules_over_speed_and_numbers_serve_as_times():
    status = np.ones(N)
    status[:60] = 0.0  # stopped for the first hour: nothing judged then
    r = evaluate_ahu(
        times=[60.0 * i for i in range(N)],
        points=unit(1, supply_fan_status=status, sat=(slice(0, 60), 5.0)),
        thresholds=SHARP,
    ).results["FC5"]
    assert not r.present
    assert r.applicable_s == (N - 60 - 15) * 60  # the start of the fan is a state change: 15 min rest


def test_irregular_logs_are_resampled_then_judged():
    """A change-of-value log (rows only when a value changes, seconds of jitter) is held onto a 1-minute grid."""
    pts = unit(1, sat=(slice(40, 90), 5.0))
    stamps = [T0 + timedelta(minutes=i, seconds=3 * (i % 4)) for i in range(N)]
    series = {role: ((stamps, value) if np.ndim(value) else value) for role, value in pts.items()}
    r = evaluate_ahu_logs(series=series, step_s=60).results["FC5"]
    # The 5-minute average of 20 °C falling to 5 °C passes the FC#5 limit of 13.03 °C on the third cold minute.
    assert r.present and r.windows[0].start == T0 + timedelta(minutes=42)
