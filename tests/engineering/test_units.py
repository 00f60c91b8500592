"""Display-unit conversions against published conversion factors."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from engineering import QUANTITIES, EngineeringInputError, from_display, to_display, unit_label


@pytest.mark.parametrize(
    ("quantity", "si_value", "us_value"),
    [
        # NIST SP 811 (2008) Appendix B.8 factors (from memory):
        ("pressure", 249.0889, 1.0),  # inch of water, conventional: 249.0889 Pa
        ("absolute_pressure", 3386.389, 1.0),  # inch of mercury, conventional: 3386.389 Pa
        ("airflow", 0.00047194745, 1.0),  # ft³/min = 4.719474 E-04 m³/s
        ("water_flow", 6.30901964e-05, 1.0),  # US gal/min = 6.309020 E-05 m³/s
        ("heat_rate", 0.29307107, 1.0),  # Btu_IT/h = 2.930711 E-01 W
        ("cooling_capacity", 3516.8528, 1.0),  # ton of refrigeration = 12 000 Btu_IT/h = 3516.853 W
        ("motor_power", 745.69987, 1.0),  # horsepower (550 ft·lbf/s) = 745.6999 W
        ("area", 0.09290304, 1.0),  # ft² = 9.290304 E-02 m² (exact)
        ("length", 0.3048, 1.0),  # ft = 0.3048 m (exact)
        ("velocity", 0.00508, 1.0),  # ft/min = 5.08 E-03 m/s (exact)
        ("enthalpy", 2326.0, 1.0),  # Btu_IT/lb = 2326 J/kg (exact)
        ("humidity_ratio", 1 / 7000, 1.0),  # 7000 grains per pound (exact)
    ],
)
def test_us_conversions_match_published_factors(quantity, si_value, us_value):
    assert to_display(value=si_value, quantity=quantity, system="us") == pytest.approx(us_value, rel=1e-6)
    assert from_display(value=us_value, quantity=quantity, system="us") == pytest.approx(si_value, rel=1e-6)


def test_ton_is_12000_btu_per_hour():
    # Ton of refrigeration = 12 000 Btu/h (ASHRAE Terminology; common practice).
    one_ton_w = from_display(value=1.0, quantity="cooling_capacity", system="us")
    assert to_display(value=one_ton_w, quantity="heat_rate", system="us") == pytest.approx(12_000, rel=1e-6)


@pytest.mark.parametrize(("c", "f"), [(-40.0, -40.0), (0.0, 32.0), (20.0, 68.0), (100.0, 212.0)])
def test_temperatures_convert_with_offset(c, f):
    assert to_display(value=c, quantity="temperature", system="us") == pytest.approx(f)
    assert from_display(value=f, quantity="temperature", system="us") == pytest.approx(c)


def test_temperature_differences_convert_without_offset():
    """A 10 K rise is an 18 °F rise, not 50 °F."""
    assert to_display(value=10.0, quantity="temperature_difference", system="us") == pytest.approx(18.0)
    assert from_display(value=18.0, quantity="temperature_difference", system="us") == pytest.approx(10.0)


def test_si_display_units_suit_a_technician():
    assert to_display(value=2.5, quantity="airflow", system="si") == pytest.approx(2500.0)  # L/s
    assert to_display(value=12_000.0, quantity="heat_rate", system="si") == pytest.approx(12.0)  # kW
    assert to_display(value=0.0075, quantity="humidity_ratio", system="si") == pytest.approx(7.5)  # g/kg
    assert to_display(value=25.0, quantity="rotational_speed", system="si") == pytest.approx(1500.0)  # rpm


@pytest.mark.parametrize(
    ("quantity", "si", "us"),
    [
        ("pressure", "Pa", "in. w.c."),
        ("temperature", "°C", "°F"),
        ("temperature_difference", "K", "Δ°F"),
        ("airflow", "L/s", "cfm"),
        ("water_flow", "L/s", "gpm"),
        ("heat_rate", "kW", "Btu/h"),
        ("cooling_capacity", "kW", "tons"),
        ("co2", "ppm", "ppm"),
    ],
)
def test_unit_labels(quantity, si, us):
    assert unit_label(quantity=quantity, system="si") == si
    assert unit_label(quantity=quantity, system="us") == us


@settings(max_examples=60, deadline=None)
@given(
    quantity=st.sampled_from(sorted(QUANTITIES)),
    system=st.sampled_from(["si", "us"]),
    value=st.floats(min_value=-1e6, max_value=1e6, allow_nan=False),
)
def test_display_round_trip(quantity, system, value):
    shown = to_display(value=value, quantity=quantity, system=system)
    assert from_display(value=shown, quantity=quantity, system=system) == pytest.approx(value, rel=1e-9, abs=1e-9)


def test_unknown_quantity_system_and_nan_are_refused():
    with pytest.raises(EngineeringInputError) as exc:
        to_display(value=1.0, quantity="flux", system="si")
    assert exc.value.field == "quantity" and "pressure" in exc.value.allowed
    with pytest.raises(EngineeringInputError, match="system='imperial'"):
        unit_label(quantity="pressure", system="imperial")
    with pytest.raises(EngineeringInputError, match="not a finite number"):
        from_display(value=float("nan"), quantity="pressure", system="us")
