"""ASHRAE 62.1 ventilation rate procedure and ASTM D6245 steady-state CO2."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from engineering import (
    SPACE_KINDS,
    EngineeringInputError,
    breathing_zone_outdoor_airflow,
    co2_differential_for_outdoor_air,
    co2_generation_for_activity,
    outdoor_air_intake,
    outdoor_air_per_person_from_co2,
    system_ventilation_efficiency,
    zone_outdoor_airflow,
)


def test_office_breathing_zone_airflow():
    # ASHRAE 62.1-2019 Table 6-1 (from memory): office Rp 2.5 L/s·person,
    # Ra 0.3 L/s·m², 5 people/100 m². 500 m² → 25 people:
    # Vbz = 2.5·25 + 0.3·500 = 212.5 L/s (eq. 6-1).
    assert breathing_zone_outdoor_airflow(space_kind="office", floor_area_m2=500.0) == pytest.approx(0.2125)


def test_classroom_with_given_occupants():
    # ASHRAE 62.1-2019 Table 6-1 (from memory): classroom age 9+ Rp 5, Ra 0.6.
    vbz = breathing_zone_outdoor_airflow(space_kind="classroom_age_9_plus", floor_area_m2=80.0, occupants=30)
    assert vbz == pytest.approx((5.0 * 30 + 0.6 * 80) / 1000)


def test_corridor_needs_area_only_and_occupants_if_asked():
    assert breathing_zone_outdoor_airflow(space_kind="corridor", floor_area_m2=100.0, occupants=0) == pytest.approx(
        0.03
    )
    with pytest.raises(EngineeringInputError, match="occupants is required"):
        breathing_zone_outdoor_airflow(space_kind="corridor", floor_area_m2=100.0)


def test_every_space_kind_names_its_source():
    for kind in SPACE_KINDS.values():
        assert "62.1" in kind.source and kind.ra_l_s_m2 > 0


def test_zone_airflow_divides_by_distribution_effectiveness():
    # ASHRAE 62.1-2019 §6.2.2.2 (from memory): warm air ≥ 8 K above space,
    # ceiling supply and return, Ez = 0.8; Voz = Vbz/Ez (eq. 6-2).
    assert zone_outdoor_airflow(vbz=0.2, ez="ceiling_supply_warm_8k_ceiling_return") == pytest.approx(0.25)
    assert zone_outdoor_airflow(vbz=0.2) == pytest.approx(0.2)
    with pytest.raises(EngineeringInputError, match="ez='sideways'"):
        zone_outdoor_airflow(vbz=0.2, ez="sideways")


def test_unknown_space_kind_lists_the_choices():
    with pytest.raises(EngineeringInputError) as exc:
        breathing_zone_outdoor_airflow(space_kind="spaceship", floor_area_m2=10.0)
    assert "office" in exc.value.allowed


def test_astm_d6245_about_700_ppm_for_7_5_l_s_per_person():
    # ASTM D6245 (from memory): N = 0.0052 L/s per adult at office activity;
    # 7.5 L/s (15 cfm) per person gives a steady-state difference of about 700 ppm.
    assert co2_differential_for_outdoor_air(outdoor_air_per_person_m3s=0.0075) == pytest.approx(700, rel=0.02)
    vo = outdoor_air_per_person_from_co2(co2_indoor_ppm=1120.0, co2_outdoor_ppm=420.0)
    assert vo * 1000 == pytest.approx(7.43, abs=0.01)


@settings(max_examples=60, deadline=None)
@given(
    dc=st.floats(min_value=50.0, max_value=3000.0),
    met=st.floats(min_value=0.8, max_value=4.0),
)
def test_co2_method_and_its_inverse_round_trip(dc, met):
    n = co2_generation_for_activity(met=met)
    vo = outdoor_air_per_person_from_co2(
        co2_indoor_ppm=420.0 + dc, co2_outdoor_ppm=420.0, co2_generation_l_s_per_person=n
    )
    assert co2_differential_for_outdoor_air(
        outdoor_air_per_person_m3s=vo, co2_generation_l_s_per_person=n
    ) == pytest.approx(dc, rel=1e-9)


def test_indoor_not_above_outdoor_is_refused():
    with pytest.raises(EngineeringInputError, match="must be above outdoor 420 ppm"):
        outdoor_air_per_person_from_co2(co2_indoor_ppm=400.0, co2_outdoor_ppm=420.0)
    with pytest.raises(EngineeringInputError, match="co2_indoor_ppm=60000 is outside 0–50000 ppm"):
        outdoor_air_per_person_from_co2(co2_indoor_ppm=60000.0, co2_outdoor_ppm=420.0)


def test_system_ventilation_efficiency_by_the_simplified_procedure():
    # Ev = 0.88·D + 0.22 for D < 0.60, 0.75 from D = 0.60 (ASHRAE 62.1-2016 6.2.5.3.1 /
    # 62.1-2019 6.2.4.3.1, from memory).
    assert system_ventilation_efficiency(occupant_diversity=0.5) == pytest.approx(0.66)
    assert system_ventilation_efficiency(occupant_diversity=0.59) == pytest.approx(0.7392)
    assert system_ventilation_efficiency(occupant_diversity=0.6) == pytest.approx(0.75)
    assert system_ventilation_efficiency(occupant_diversity=1.0) == pytest.approx(0.75)
    with pytest.raises(EngineeringInputError) as exc:
        system_ventilation_efficiency(occupant_diversity=1.2)
    assert exc.value.field == "occupant_diversity"


def test_outdoor_air_intake_worked_example():
    """Office 1200 m², 60 people (ASHRAE 62.1-2019 Table 6-1 office: Rp 2.5 L/s·person, Ra 0.3 L/s·m²,
    from memory), worked by hand:
    Vbz = 2.5 × 60 + 0.3 × 1200 = 150 + 360 = 510 L/s.
    Single zone, ceiling supply of warm air 8 K above the space with ceiling return (Ez = 0.8, 62.1
    Table 6-4, from memory): Voz = Vot = 510/0.8 = 637.5 L/s.
    Multiple-zone, D = 0.5: Vou = 0.5 × 150 + 360 = 435 L/s, Ev = 0.88 × 0.5 + 0.22 = 0.66,
    Vot = 435/0.66 = 659.1 L/s. With Ev 0.9 from the design: Vot = 435/0.9 = 483.3 L/s.
    """
    single = outdoor_air_intake(
        space_kind="office",
        floor_area_m2=1200,
        occupants=60,
        air_distribution="ceiling_supply_warm_8k_ceiling_return",
    )
    assert single.vbz_m3s == pytest.approx(0.510)
    assert single.ez == 0.8
    assert single.voz_m3s == pytest.approx(0.6375)
    assert single.vot_m3s == pytest.approx(0.6375)
    assert single.ev is None and single.vou_m3s is None
    full = outdoor_air_intake(space_kind="office", floor_area_m2=1200, occupants=60, system="full_outdoor_air")
    assert full.vot_m3s == pytest.approx(0.510)  # Ez = 1.0, ceiling supply of cool air
    multi = outdoor_air_intake(
        space_kind="office", floor_area_m2=1200, occupants=60, system="multi_zone", occupant_diversity=0.5
    )
    assert multi.vou_m3s == pytest.approx(0.435)
    assert multi.ev == pytest.approx(0.66)
    assert multi.vot_m3s == pytest.approx(0.435 / 0.66)  # 0.6591 m³/s
    given_ev = outdoor_air_intake(
        space_kind="office", floor_area_m2=1200, occupants=60, system="multi_zone", occupant_diversity=0.5, ev=0.9
    )
    assert given_ev.vot_m3s == pytest.approx(0.4833, abs=1e-4) and given_ev.ev_given
    no_d = outdoor_air_intake(space_kind="office", floor_area_m2=1200, occupants=60, system="multi_zone")
    assert no_d.vot_m3s == pytest.approx(0.510 / 0.75)  # D = 1: Vou = Vbz, Ev = 0.75


def test_outdoor_air_intake_refuses_diversity_on_a_single_zone_and_unknown_choices():
    with pytest.raises(EngineeringInputError) as exc:
        outdoor_air_intake(space_kind="office", floor_area_m2=100, occupant_diversity=0.7)
    assert exc.value.field == "occupant_diversity"
    with pytest.raises(EngineeringInputError, match="air_distribution='sideways'"):
        outdoor_air_intake(space_kind="office", floor_area_m2=100, air_distribution="sideways")
    with pytest.raises(EngineeringInputError, match="system='dual_duct'"):
        outdoor_air_intake(space_kind="office", floor_area_m2=100, system="dual_duct")
