"""Verdicts and reasons of the reading checks (limits are common practice)."""

import pytest

from engineering import (
    EngineeringInputError,
    Verdict,
    band_check,
    damper_position_check,
    sensor_drift_check,
    static_pressure_check,
    supply_temperature_check,
    worst,
)


def test_supply_temperature_reason_reads_plainly():
    c = supply_temperature_check(measured_c=15.2, setpoint_c=17.0)
    assert c.verdict is Verdict.WATCH
    assert c.reason == "supply air 15.2 °C, 1.8 K below set point 17.0 °C (watch above 1.0 K, fail above 2.0 K)"


@pytest.mark.parametrize(
    ("measured", "verdict"),
    [(17.9, Verdict.OK), (18.0, Verdict.OK), (18.1, Verdict.WATCH), (19.0, Verdict.WATCH), (19.1, Verdict.FAIL)],
)
def test_supply_temperature_limits_are_inclusive(measured, verdict):
    assert supply_temperature_check(measured_c=measured, setpoint_c=17.0).verdict is verdict


def test_static_pressure_percent_of_set_point():
    assert static_pressure_check(measured_pa=270, setpoint_pa=250).verdict is Verdict.OK  # 8 %
    assert static_pressure_check(measured_pa=220, setpoint_pa=250).verdict is Verdict.WATCH  # 12 %
    assert static_pressure_check(measured_pa=190, setpoint_pa=250).verdict is Verdict.FAIL  # 24 %
    with pytest.raises(EngineeringInputError, match="setpoint_pa=0"):
        static_pressure_check(measured_pa=190, setpoint_pa=0)


def test_damper_position_in_points_of_stroke():
    c = damper_position_check(commanded_pct=50, measured_pct=38)
    assert c.verdict is Verdict.FAIL and "12.0 points more closed" in c.reason
    assert damper_position_check(commanded_pct=100, measured_pct=96).verdict is Verdict.OK
    with pytest.raises(EngineeringInputError, match="measured_pct=110 is outside 0–100 %"):
        damper_position_check(commanded_pct=50, measured_pct=110)


def test_co2_sensor_drift_against_typical_specification():
    # ±(50 ppm + 3 % of reading): a typical NDIR CO2 sensor specification (common practice).
    def check(sensor):
        return sensor_drift_check(
            sensor_value=sensor, reference_value=1000, tolerance_abs=50, tolerance_pct_of_reading=3, unit="ppm"
        )

    assert check(1050).verdict is Verdict.OK  # 50 of 80 ppm allowed
    assert check(1070).verdict is Verdict.WATCH  # beyond 0.8 × 80 ppm
    c = check(1100)
    assert c.verdict is Verdict.FAIL and c.limits["allowed_error"] == pytest.approx(80)
    assert "±80 ppm" in c.reason


def test_band_check_with_open_ends():
    assert band_check(value=5, ok_low=1, ok_high=4, watch_high=6).verdict is Verdict.WATCH
    assert band_check(value=7, ok_low=1, ok_high=4, watch_high=6).verdict is Verdict.FAIL
    assert band_check(value=0.5, ok_low=1, ok_high=4, watch_high=6).verdict is Verdict.FAIL
    assert band_check(value=1e6, ok_low=1, ok_high=None).verdict is Verdict.OK


def test_band_limits_out_of_order_are_refused():
    with pytest.raises(EngineeringInputError, match="not in order"):
        band_check(value=5, ok_low=4, ok_high=1)


def test_fail_limit_below_watch_limit_is_refused():
    with pytest.raises(EngineeringInputError) as exc:
        supply_temperature_check(measured_c=15, setpoint_c=17, watch_k=2, fail_k=1)
    assert exc.value.field == "fail_k"


def test_verdicts_compare_as_strings_and_worst_picks_the_most_severe():
    assert Verdict.WATCH == "watch"
    assert worst(Verdict.OK, Verdict.FAIL, Verdict.WATCH) is Verdict.FAIL
    assert worst() is Verdict.OK
