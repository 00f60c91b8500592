"""Coil heat flows against the trade's textbook forms and fluid data."""

import pytest
from CoolProp.CoolProp import HAPropsSI, PropsSI
from hypothesis import given, settings
from hypothesis import strategies as st

from engineering import (
    FLUIDS,
    EngineeringInputError,
    Verdict,
    air_state,
    coil_balance,
    fluid_properties,
    latent_heat_w,
    sensible_heat_w,
    total_heat_w,
    water_side_heat_w,
)
from engineering.airside import dry_air_density_kg_m3
from engineering.units import ureg

Q = ureg.Quantity


@settings(max_examples=60, deadline=None)
@given(
    cfm=st.floats(min_value=100.0, max_value=50_000.0),
    dt_f=st.floats(min_value=-40.0, max_value=40.0).filter(lambda x: abs(x) > 0.5),
)
def test_sensible_heat_matches_1_08_cfm_delta_f_rule(cfm, dt_f):
    """q = 1.08 × cfm × ΔT°F Btu/h for standard air (0.075 lb/ft³ × 60 min/h ×
    0.24 Btu/lb·°F; common practice, the US textbook form) agrees with the SI
    result for dry air entering at 20 °C, 101.325 kPa (ASHRAE standard air,
    1.204 kg/m³) within 0.5 %."""
    airflow = Q(cfm, "cfm").to("m**3/s").magnitude
    dt_k = Q(dt_f, "delta_degF").to("kelvin").magnitude
    si_w = sensible_heat_w(airflow_m3s=airflow, t_in_c=20.0, t_out_c=20.0 + dt_k)
    textbook_w = Q(1.08 * cfm * dt_f, "Btu_it/hour").to("watt").magnitude
    assert si_w == pytest.approx(textbook_w, rel=0.005)


def test_sensible_heat_matches_ashrae_si_factor():
    # ASHRAE Handbook—Fundamentals 2017 ch.18 eq. 9: q_s = 1.23 Q Δt, W with Q in
    # L/s, for standard air at about 0.0075 kg/kg (from memory). The factor
    # rounds density and c_p (≈ 1.2 × 1.02), so agreement within 2 % is all
    # that can be asked of it.
    q = sensible_heat_w(airflow_m3s=1.0, t_in_c=20.0, t_out_c=30.0, humidity_ratio=0.0075)
    assert q == pytest.approx(1.23 * 1000 * 10, rel=0.02)


def test_airflow_measured_after_the_coil_takes_the_leaving_air_density():
    """A preheat coil, −10 → 20 °C, 1.0 m³/s measured at the supply fan after the coil, 101 325 Pa.

    Hand-worked: ρ = p/(R_da·T), R_da = 287.042 J/kg·K (ASHRAE Fundamentals 2017 ch.1):
    ρ(20 °C) = 101325/(287.042 × 293.15) = 1.2042 kg/m³, ρ(−10 °C) = 101325/(287.042 × 263.15) = 1.3414
    (CoolProp HAPropsSI('Vda', T, P, W=0) gives 0.8301 and 0.7449 m³/kg,
    within 0.05 % of the inverses: it counts air as a real gas).
    q = 1.0 × 1.2042 × 1006 × 30 = 36 342 W at the leaving state; at the entering state it would be
    1.3414 × 1006 × 30 = 40 484 W, 11.4 % too high.
    """
    assert dry_air_density_kg_m3(t_c=20.0) == pytest.approx(1.2042, abs=1e-4)
    assert dry_air_density_kg_m3(t_c=-10.0) == pytest.approx(1.3414, abs=1e-4)
    # CoolProp's real-gas air (compressibility included) is within 0.05 % of the ideal-gas value.
    assert 1 / dry_air_density_kg_m3(t_c=20.0) == pytest.approx(
        HAPropsSI("Vda", "T", 293.15, "P", 101325, "W", 0), rel=5e-4
    )
    leaving = sensible_heat_w(airflow_m3s=1.0, t_in_c=-10.0, t_out_c=20.0, airflow_at="leaving")
    entering = sensible_heat_w(airflow_m3s=1.0, t_in_c=-10.0, t_out_c=20.0)
    assert leaving == pytest.approx(36_342, rel=1e-3)
    assert entering == pytest.approx(40_484, rel=1e-3)
    # Cooling coil 24 → 12 °C: taken at the entering state the air side would be 4.0 % low (285.15/297.15).
    cool_in = sensible_heat_w(airflow_m3s=1.0, t_in_c=24.0, t_out_c=12.0)
    cool_out = sensible_heat_w(airflow_m3s=1.0, t_in_c=24.0, t_out_c=12.0, airflow_at="leaving")
    assert cool_out / cool_in == pytest.approx(297.15 / 285.15, rel=1e-6)
    with pytest.raises(EngineeringInputError, match="airflow_at='outlet'"):
        sensible_heat_w(airflow_m3s=1.0, t_in_c=0.0, t_out_c=10.0, airflow_at="outlet")


def test_sensible_and_latent_add_up_to_total_on_a_cooling_coil():
    """On a dehumidifying coil both parts are negative and sum exactly to ṁΔh."""
    s_in = air_state(dry_bulb_c=26.0, rh_pct=55.0)
    s_out = air_state(dry_bulb_c=12.0, rh_pct=95.0)
    heat = total_heat_w(airflow_m3s=3.0, state_in=s_in, state_out=s_out)
    assert heat.sensible_w < 0 and heat.latent_w < 0
    assert heat.sensible_w + heat.latent_w == pytest.approx(heat.total_w, rel=1e-12)
    s = sensible_heat_w(airflow_m3s=3.0, t_in_c=26.0, t_out_c=12.0, humidity_ratio=s_in.humidity_ratio)
    lat = latent_heat_w(
        airflow_m3s=3.0,
        humidity_ratio_in=s_in.humidity_ratio,
        humidity_ratio_out=s_out.humidity_ratio,
        t_in_c=26.0,
        t_out_c=12.0,
    )
    assert s == pytest.approx(heat.sensible_w, rel=1e-9)
    assert lat == pytest.approx(heat.latent_w, rel=1e-6)


def test_total_heat_matches_ashrae_si_factor():
    # ASHRAE Handbook—Fundamentals 2017 ch.18 eq. 11: q_t = 1.20 Q Δh, W with Q in
    # L/s and Δh in kJ/kg (from memory); standard air density 1.2 kg/m³.
    s_in = air_state(dry_bulb_c=24.0, rh_pct=50.0)
    s_out = air_state(dry_bulb_c=13.0, rh_pct=90.0)
    heat = total_heat_w(airflow_m3s=1.0, state_in=s_in, state_out=s_out)
    dh_kj = (s_out.enthalpy_j_per_kg - s_in.enthalpy_j_per_kg) / 1000
    assert heat.total_w == pytest.approx(1.20 * 1000 * dh_kj, rel=0.03)


@settings(max_examples=60, deadline=None)
@given(
    gpm=st.floats(min_value=1.0, max_value=2000.0),
    dt_f=st.floats(min_value=2.0, max_value=30.0),
)
def test_water_side_matches_500_gpm_delta_f_rule(gpm, dt_f):
    """q = 500 × gpm × ΔT°F Btu/h (8.33 lb/gal × 60 min/h × 1 Btu/lb·°F;
    common practice) agrees with the SI result for chilled water (45 °F supply)
    within 1 %."""
    flow = Q(gpm, "gpm").to("m**3/s").magnitude
    t_supply = Q(45.0, "degF").to("degC").magnitude
    t_return = t_supply + Q(dt_f, "delta_degF").to("kelvin").magnitude
    si_w = water_side_heat_w(flow_m3s=flow, t_supply_c=t_supply, t_return_c=t_return)
    textbook_w = Q(500 * gpm * dt_f, "Btu_it/hour").to("watt").magnitude
    assert si_w == pytest.approx(textbook_w, rel=0.01)


def test_water_side_sign_and_litres_per_second():
    """A cooling coil's water warms: positive; a heating coil's cools: negative."""
    cooling = water_side_heat_w(flow_l_s=2.0, t_supply_c=7.0, t_return_c=12.0)
    heating = water_side_heat_w(flow_m3s=0.002, t_supply_c=70.0, t_return_c=50.0)
    assert cooling == pytest.approx(2.0 * 0.9997 * 4.19 * 5 * 1000, rel=0.005)  # ρ, cp: IAPWS-95 near 10 °C
    assert heating < 0


@pytest.mark.parametrize(
    ("fluid", "coolprop_name"),
    [
        ("water", "Water"),
        *[(f"ethylene_glycol_{x}", f"INCOMP::MEG-{x}%") for x in (10, 20, 30, 40, 50, 60)],
        *[(f"propylene_glycol_{x}", f"INCOMP::MPG-{x}%") for x in (10, 20, 30, 40, 50, 60)],
    ],
)
@pytest.mark.parametrize("t_c", [2.5, 17.0, 43.0, 77.0])
def test_fluid_table_interpolation_matches_coolprop(fluid, coolprop_name, t_c):
    """Linear interpolation in the 10 K table is within 0.1 % of the fluid data
    it was tabulated from (IAPWS-95; Melinder 2010 — both via CoolProp)."""
    rho, cp = fluid_properties(fluid=fluid, temperature_c=t_c)
    assert rho == pytest.approx(PropsSI("D", "T", t_c + 273.15, "P", 300e3, coolprop_name), rel=1e-3)
    assert cp == pytest.approx(PropsSI("C", "T", t_c + 273.15, "P", 300e3, coolprop_name), rel=1e-3)


@pytest.mark.parametrize(("kind", "coolprop"), [("ethylene_glycol", "MEG"), ("propylene_glycol", "MPG")])
@pytest.mark.parametrize(("pct", "t_c"), [(35, 5.0), (35, 60.0), (25, 12.0), (45, -10.0), (55, 40.0), (5, 20.0)])
def test_glycol_at_any_concentration_matches_coolprop_incompressibles(kind, coolprop, pct, t_c):
    """Between the tabulated concentrations the properties are interpolated linearly in concentration:
    within 0.3 % of CoolProp's incompressible MEG/MPG (Melinder 2010) at that very concentration."""
    rho, cp = fluid_properties(fluid=kind, glycol_pct=pct, temperature_c=t_c)
    name = f"INCOMP::{coolprop}-{pct}%"
    assert rho == pytest.approx(PropsSI("D", "T", t_c + 273.15, "P", 300e3, name), rel=3e-3)
    assert cp == pytest.approx(PropsSI("C", "T", t_c + 273.15, "P", 300e3, name), rel=3e-3)


def test_glycol_coil_balance_uses_the_glycols_properties():
    """1.0 L/s of 30 % propylene glycol, 7 → 12 °C: ρ·c_p at 9.5 °C from the table (CoolProp MPG-30 %:
    about 1028.2 kg/m³ × 3828.7 J/kg·K) gives 19.68 kW; taken as water (999.8 × 4195) it would be 20.97 kW,
    6.5 % more."""
    glycol = water_side_heat_w(flow_l_s=1.0, t_supply_c=7.0, t_return_c=12.0, fluid="propylene_glycol", glycol_pct=30)
    rho = PropsSI("D", "T", 282.65, "P", 300e3, "INCOMP::MPG-30%")
    cp = PropsSI("C", "T", 282.65, "P", 300e3, "INCOMP::MPG-30%")
    assert glycol == pytest.approx(0.001 * rho * cp * 5, rel=2e-3)
    water = water_side_heat_w(flow_l_s=1.0, t_supply_c=7.0, t_return_c=12.0)
    assert water / glycol == pytest.approx(1.065, abs=0.002)
    with pytest.raises(EngineeringInputError) as exc:
        water_side_heat_w(flow_l_s=1.0, t_supply_c=7.0, t_return_c=12.0, fluid="propylene_glycol", glycol_pct=75)
    assert exc.value.field == "glycol_pct"
    with pytest.raises(EngineeringInputError) as exc:
        water_side_heat_w(flow_l_s=1.0, t_supply_c=7.0, t_return_c=12.0, fluid="propylene_glycol")
    assert exc.value.field == "glycol_pct"
    with pytest.raises(EngineeringInputError) as exc:
        fluid_properties(fluid="water", temperature_c=10.0, glycol_pct=30)
    assert exc.value.field == "glycol_pct"


def test_glycol_carries_less_heat_than_water_at_the_same_flow():
    water = water_side_heat_w(flow_l_s=1.0, t_supply_c=7.0, t_return_c=12.0)
    for fluid in FLUIDS:
        if fluid != "water":
            assert water_side_heat_w(flow_l_s=1.0, t_supply_c=7.0, t_return_c=12.0, fluid=fluid) < water


def test_glycol_outside_its_table_and_unknown_fluid_are_refused():
    with pytest.raises(EngineeringInputError) as exc:
        water_side_heat_w(flow_l_s=1.0, t_supply_c=-15.0, t_return_c=-10.0, fluid="ethylene_glycol_30")
    assert exc.value.field == "t_supply_c" and "-10–90 °C" in str(exc.value)
    with pytest.raises(EngineeringInputError, match="fluid='brine'"):
        water_side_heat_w(flow_l_s=1.0, t_supply_c=7.0, t_return_c=12.0, fluid="brine")
    with pytest.raises(EngineeringInputError, match="exactly one of flow_m3s, flow_l_s"):
        water_side_heat_w(t_supply_c=7.0, t_return_c=12.0)


@pytest.mark.parametrize(
    ("air_w", "water_w", "verdict"),
    [
        (-52_000.0, 50_000.0, Verdict.OK),  # 3.9 %
        (-57_000.0, 50_000.0, Verdict.WATCH),  # 13 %
        (-70_000.0, 50_000.0, Verdict.FAIL),  # 33 %
    ],
)
def test_coil_balance_grades_the_difference(air_w, water_w, verdict):
    result = coil_balance(air_side_w=air_w, water_side_w=water_w)
    assert result.verdict is verdict
    assert "kW" in result.reason and "%" in result.reason


def test_coil_balance_with_nothing_to_compare_is_refused():
    with pytest.raises(EngineeringInputError, match="below 1 W"):
        coil_balance(air_side_w=0.0, water_side_w=0.0)


def test_negative_airflow_is_refused():
    with pytest.raises(EngineeringInputError) as exc:
        sensible_heat_w(airflow_m3s=-1.0, t_in_c=20.0, t_out_c=30.0)
    assert exc.value.field == "airflow_m3s" and "0–100 m³/s" in str(exc.value)
