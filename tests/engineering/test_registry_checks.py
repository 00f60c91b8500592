"""The registry's plausibility rules (engineering.registry_checks): a filter size as W×H×D in mm, a filter bank's
airflow against its unit's (about 50–110 %, common practice), a fan motor against the fan's air power Q·p (ASHRAE
Handbook—HVAC Systems and Equipment, "Fans" chapter; the overall efficiency 0.4–0.8 from memory)."""

import pytest

from engineering.errors import EngineeringInputError
from engineering.registry_checks import (
    FilterSize,
    filter_airflow_warning,
    filter_size_parse,
    motor_power_below_air_power,
    motor_power_warning,
    spec_warnings,
)


@pytest.mark.parametrize(
    ("text", "size"),
    [
        ("592x592x292", FilterSize(592, 592, 292)),
        ("592×592×292", FilterSize(592, 592, 292)),
        (" 287 X 592 x 48 mm", FilterSize(287, 592, 48)),  # a half-width panel filter, 48 mm deep
        ("3000x3000x1000", FilterSize(3000, 3000, 1000)),
    ],
)
def test_a_filter_size_is_read_as_whole_mm_whatever_the_times_sign(text, size):
    assert filter_size_parse(text) == size
    assert size.text() == f"{size.width_mm}x{size.height_mm}x{size.depth_mm}"


@pytest.mark.parametrize(
    ("text", "reason"),
    [
        ("abc", "is not three whole numbers"),
        ("-3", "is not three whole numbers"),
        ("150", "is not three whole numbers"),
        ("<b>x</b>", "is not three whole numbers"),
        ("592.5x592x292", "is not three whole numbers"),
        ("592x592", "is not three whole numbers"),
        ("99x592x292", "width of 99 mm, outside 100–3000 mm"),
        ("592x3001x292", "height of 3001 mm, outside 100–3000 mm"),
        ("592x592x9", "depth of 9 mm, outside 10–1000 mm"),
    ],
)
def test_a_size_that_is_not_w_h_d_in_a_plausible_range_is_refused(text, reason):
    with pytest.raises(ValueError, match=reason):
        filter_size_parse(text)


def test_a_filter_bank_carrying_50_to_110_percent_of_its_units_air_is_quiet():
    assert filter_airflow_warning(bank_airflow_m3s=3.25, unit_airflow_m3s=6.5, system="si") is None
    assert filter_airflow_warning(bank_airflow_m3s=7.15, unit_airflow_m3s=6.5, system="si") is None
    low = filter_airflow_warning(bank_airflow_m3s=0.15, unit_airflow_m3s=6.5, system="si")
    assert low is not None and low.field == "design_airflow_m3s"
    assert "150 L/s is 2% of the unit's design supply airflow of 6500 L/s" in low.message
    high = filter_airflow_warning(bank_airflow_m3s=7.2, unit_airflow_m3s=6.5, system="us")
    assert high is not None and "cfm" in high.message


def test_a_motor_is_judged_against_air_power_over_overall_efficiency():
    """6.5 m³/s × 900 Pa = 5.85 kW of air power; at 0.4–0.8 overall, 7.3–14.6 kW; 0.8× to 4× that is usual."""
    assert motor_power_warning(motor_power_w=11_000, flow_m3s=6.5, pressure_pa=900, system="si") is None
    assert motor_power_warning(motor_power_w=58_000, flow_m3s=6.5, pressure_pa=900, system="si") is None
    big = motor_power_warning(motor_power_w=150_000, flow_m3s=6.5, pressure_pa=900, system="si")
    assert big is not None and big.field == "motor_power_w"
    assert "5.9 kW of air power" in big.message and "7.3 kW–14.6 kW" in big.message
    assert motor_power_below_air_power(motor_power_w=5_850, flow_m3s=6.5, pressure_pa=900) is None
    refused = motor_power_below_air_power(motor_power_w=3_000, flow_m3s=6.5, pressure_pa=900)
    assert refused is not None and "below the fan's air power of 5.85 kW" in refused


def test_spec_warnings_read_only_the_values_present():
    assert spec_warnings(kind="fan", specs={"motor_power_w": 150_000}, unit_airflow_m3s=6.5, system="si") == []
    assert (
        spec_warnings(kind="filter_bank", specs={"design_airflow_m3s": 0.15}, unit_airflow_m3s=None, system="si") == []
    )
    found = spec_warnings(kind="filter_bank", specs={"design_airflow_m3s": 0.15}, unit_airflow_m3s=6.5, system="si")
    assert [w.field for w in found] == ["design_airflow_m3s"]


def test_a_non_finite_airflow_is_refused_not_judged():
    with pytest.raises(EngineeringInputError):
        filter_airflow_warning(bank_airflow_m3s=float("nan"), unit_airflow_m3s=6.5, system="si")
