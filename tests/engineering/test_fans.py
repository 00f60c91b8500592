"""Fan laws and fan power."""

import pytest

from engineering import (
    EngineeringInputError,
    expected_flow_at_speed,
    fan_air_power_w,
    fan_electric_power_w,
    fan_law_scale,
    fan_shaft_power_w,
)


def test_fan_laws_at_half_speed():
    # Fan laws (AMCA 201; ASHRAE Handbook—HVAC Systems and Equipment, Fans;
    # from memory): Q ∝ N, p ∝ N², P ∝ N³.
    p = fan_law_scale(flow_m3s=4.0, pressure_pa=800.0, power_w=5000.0, speed_from=50.0, speed_to=25.0)
    assert (p.flow_m3s, p.pressure_pa, p.power_w) == pytest.approx((2.0, 200.0, 625.0))


def test_fan_laws_with_density():
    p = fan_law_scale(
        flow_m3s=4.0,
        pressure_pa=800.0,
        power_w=5000.0,
        speed_from=1450,
        speed_to=1450,
        density_from=1.2,
        density_to=1.0,
    )
    assert (p.flow_m3s, p.pressure_pa, p.power_w) == pytest.approx((4.0, 800 / 1.2, 5000 / 1.2))


def test_power_chain():
    # P_air = Q·p; P_shaft = P_air/η_fan; P_el = P_shaft/(η_motor η_drive).
    assert fan_air_power_w(flow_m3s=2.0, pressure_pa=500.0) == pytest.approx(1000.0)
    assert fan_shaft_power_w(flow_m3s=2.0, pressure_pa=500.0, fan_efficiency=0.65) == pytest.approx(1000 / 0.65)
    assert fan_electric_power_w(
        flow_m3s=2.0, pressure_pa=500.0, fan_efficiency=0.65, motor_efficiency=0.9, drive_efficiency=0.95
    ) == pytest.approx(1000 / (0.65 * 0.9 * 0.95))


def test_expected_flow_at_speed():
    assert expected_flow_at_speed(design_flow_m3s=3.0, design_speed=50.0, measured_speed=40.0) == pytest.approx(2.4)


@pytest.mark.parametrize("eta", [0.0, 1.2, -0.5, float("nan")])
def test_impossible_efficiency_is_refused(eta):
    with pytest.raises(EngineeringInputError) as exc:
        fan_shaft_power_w(flow_m3s=2.0, pressure_pa=500.0, fan_efficiency=eta)
    assert exc.value.field == "fan_efficiency"


def test_zero_design_speed_is_refused():
    with pytest.raises(EngineeringInputError, match="design_speed=0"):
        expected_flow_at_speed(design_flow_m3s=3.0, design_speed=0.0, measured_speed=40.0)
