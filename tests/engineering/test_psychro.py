"""Moist-air properties against CoolProp and published values."""

import math

import pytest
from CoolProp.HumidAirProp import HAPropsSI
from hypothesis import given, settings
from hypothesis import strategies as st

from engineering import EngineeringInputError, air_state, pressure_from_altitude

# Tolerances measured over 3000 random states (−40…60 °C, 2–100 % RH,
# 60–108 kPa): psychrolib is the ASHRAE ideal-gas formulation, CoolProp's
# HAPropsSI the real-gas Hyland–Wexler/Herrmann formulation. Worst cases seen:
# W 0.72 %, h 0.73 of (1 kJ/kg + 0.5 %), dew point 0.025 K, specific volume
# 0.14 %, wet bulb 0.03 K — except within ±1 °C of a 0 °C wet bulb, where
# psychrolib switches to ice and CoolProp does not, up to 0.72 K.
W_REL = 0.01
H_ABS_J, H_REL = 1000.0, 0.005
DEW_POINT_K = 0.05
WET_BULB_K = 0.05
WET_BULB_NEAR_ICE_K = 1.0
VOLUME_REL = 0.002

temps = st.floats(min_value=-40.0, max_value=60.0)
rhs = st.floats(min_value=2.0, max_value=100.0)
pressures = st.floats(min_value=60_000.0, max_value=108_000.0)


def coolprop(prop: str, t_c: float, p: float, rh_pct: float) -> float:
    return HAPropsSI(prop, "T", t_c + 273.15, "P", p, "R", rh_pct / 100.0)


@settings(max_examples=80, deadline=None)
@given(t=temps, rh=rhs, p=pressures)
def test_state_from_rh_agrees_with_coolprop(t, rh, p):
    """A state from dry bulb and RH matches CoolProp within the stated tolerances."""
    s = air_state(dry_bulb_c=t, rh_pct=rh, pressure_pa=p)
    w = coolprop("W", t, p, rh)
    h = coolprop("H", t, p, rh)
    assert s.humidity_ratio == pytest.approx(w, rel=W_REL)
    assert abs(s.enthalpy_j_per_kg - h) <= H_ABS_J + H_REL * abs(h)
    assert s.dew_point_c == pytest.approx(coolprop("Tdp", t, p, rh) - 273.15, abs=DEW_POINT_K)
    assert s.specific_volume_m3_per_kg == pytest.approx(coolprop("V", t, p, rh), rel=VOLUME_REL)
    twb = coolprop("Twb", t, p, rh) - 273.15
    near_ice = min(abs(twb), abs(s.wet_bulb_c)) < 1.0
    assert s.wet_bulb_c == pytest.approx(twb, abs=WET_BULB_NEAR_ICE_K if near_ice else WET_BULB_K)


@settings(max_examples=60, deadline=None)
@given(t=temps, rh=st.floats(min_value=5.0, max_value=100.0), p=pressures)
def test_wet_bulb_and_dew_point_inputs_round_trip(t, rh, p):
    """Giving the wet bulb or the dew point of a state returns the same state."""
    s = air_state(dry_bulb_c=t, rh_pct=rh, pressure_pa=p)
    by_wb = air_state(dry_bulb_c=t, wet_bulb_c=s.wet_bulb_c, pressure_pa=p)
    by_dp = air_state(dry_bulb_c=t, dew_point_c=s.dew_point_c, pressure_pa=p)
    assert by_wb.humidity_ratio == pytest.approx(s.humidity_ratio, rel=1e-3, abs=1e-6)
    assert by_dp.humidity_ratio == pytest.approx(s.humidity_ratio, rel=1e-3, abs=1e-6)
    assert by_dp.rh_pct == pytest.approx(rh, abs=0.1)


def test_saturation_at_20c_matches_ashrae_table():
    # ASHRAE Handbook—Fundamentals 2017 ch.1 Table 3: p_ws(20 °C) = 2.3392 kPa (from memory).
    s = air_state(dry_bulb_c=20.0, rh_pct=100.0)
    p_w = s.humidity_ratio * s.pressure_pa / (0.621945 + s.humidity_ratio)
    assert p_w == pytest.approx(2339.2, rel=1e-3)
    assert s.wet_bulb_c == pytest.approx(20.0, abs=1e-6)
    assert s.dew_point_c == pytest.approx(20.0, abs=1e-6)


def test_enthalpy_follows_ashrae_eq_32():
    # ASHRAE Handbook—Fundamentals 2017 ch.1 eq. 32: h = 1.006 t + W (2501 + 1.86 t) kJ/kg.
    s = air_state(dry_bulb_c=25.0, rh_pct=50.0)
    w = s.humidity_ratio
    assert s.enthalpy_j_per_kg == pytest.approx((1.006 * 25 + w * (2501 + 1.86 * 25)) * 1000, rel=1e-9)


@pytest.mark.parametrize(
    ("altitude_m", "kpa"),
    [
        # ASHRAE Handbook—Fundamentals 2017 ch.1 Table 1, standard atmosphere (from memory).
        (0, 101.325),
        (500, 95.461),
        (1000, 89.875),
        (2000, 79.495),
    ],
)
def test_pressure_from_altitude_matches_standard_atmosphere(altitude_m, kpa):
    assert pressure_from_altitude(altitude_m=altitude_m) / 1000 == pytest.approx(kpa, abs=0.01)


def test_relative_humidity_above_100_is_refused_with_field_value_and_range():
    with pytest.raises(EngineeringInputError) as exc:
        air_state(dry_bulb_c=20.0, rh_pct=120.0)
    assert str(exc.value) == "relative humidity rh_pct=120 is outside 0–100 %"
    assert (exc.value.field, exc.value.value, exc.value.allowed) == ("rh_pct", 120.0, "0–100 %")
    assert isinstance(exc.value, ValueError)


@pytest.mark.parametrize(
    ("kwargs", "field", "words"),
    [
        ({"dry_bulb_c": 95.0, "rh_pct": 50.0}, "dry_bulb_c", "−60–80 °C"),
        ({"dry_bulb_c": -61.0, "rh_pct": 50.0}, "dry_bulb_c", "−60–80 °C"),
        ({"dry_bulb_c": 20.0, "rh_pct": 50.0, "pressure_pa": 101.325}, "pressure_pa", "50000–110000 Pa"),
        ({"dry_bulb_c": 20.0, "rh_pct": -1.0}, "rh_pct", "0–100 %"),
        ({"dry_bulb_c": 20.0, "rh_pct": 0.0}, "rh_pct", "above 0"),
        ({"dry_bulb_c": 20.0, "wet_bulb_c": 21.0}, "wet_bulb_c", "20 °C"),
        ({"dry_bulb_c": 20.0, "wet_bulb_c": 2.0}, "wet_bulb_c", "drier than dry air"),
        ({"dry_bulb_c": 20.0, "dew_point_c": 25.0}, "dew_point_c", "20 °C"),
        ({"dry_bulb_c": 20.0}, "rh_pct", "exactly one"),
        ({"dry_bulb_c": 20.0, "rh_pct": 50.0, "dew_point_c": 5.0}, "rh_pct", "exactly one"),
    ],
)
def test_implausible_inputs_are_refused(kwargs, field, words):
    with pytest.raises(EngineeringInputError) as exc:
        air_state(**kwargs)
    assert exc.value.field == field
    assert words.replace("−", "-") in str(exc.value).replace("−", "-")


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf, "20", None])
def test_non_finite_or_non_numeric_dry_bulb_is_refused(bad):
    with pytest.raises(EngineeringInputError) as exc:
        air_state(dry_bulb_c=bad, rh_pct=50.0)
    assert exc.value.field == "dry_bulb_c"


def test_altitude_outside_band_is_refused():
    with pytest.raises(EngineeringInputError, match="altitude_m=9000"):
        pressure_from_altitude(altitude_m=9000)
