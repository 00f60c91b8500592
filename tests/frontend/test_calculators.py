"""The field calculator: the checklist's formulas, the reader's units, plain rounded figures."""

import pytest

from engineering.airside import dry_air_density_kg_m3, sensible_heat_w
from engineering.units import from_display
from frontend.calculators import CalcError, calculate

# 1,200 cfm heated from 50 to 80 °F (the tryout's case).
TYPED_US = {"airflow_m3s": "1200", "t_in_c": "50", "t_out_c": "80"}


def test_sensible_heat_uses_the_checklist_function_with_airflow_at_the_leaving_state():
    """By default the airflow is taken at the leaving air (a supply fan after the coil), as the
    checklist's coil check takes the supply airflow; the figure is the same engineering function's,
    rounded to whole Btu/h with thousands grouped."""
    rows = calculate(name="sensible-heat", values=TYPED_US, system="us")
    expected_w = sensible_heat_w(
        airflow_m3s=from_display(value=1200, quantity="airflow", system="us"),
        t_in_c=from_display(value=50, quantity="temperature", system="us"),
        t_out_c=from_display(value=80, quantity="temperature", system="us"),
        airflow_at="leaving",
    )
    assert rows == [{"label": "Sensible heat added to the air", "value": "38,147", "unit": "Btu/h"}]
    assert expected_w / 0.29307107 == pytest.approx(38_147, abs=0.5)  # 1 Btu_IT/h = 0.29307107 W


def test_sensible_heat_hand_check_against_the_1_08_rule():
    """Hand check: 1.08 × cfm × ΔT°F = 1.08 × 1200 × 30 = 38,880 Btu/h for standard air, 0.075 lb/ft³
    (1.2014 kg/m³) and c_p 0.24 Btu/lb·°F (ASHRAE Handbook—Fundamentals, the 1.08 factor for standard air at
    sea level, from memory). Our figure differs only by the density (dry air at 80 °F, 101.325 kPa:
    1.1774 kg/m³, ρ = p/(R_da·T), ASHRAE Fundamentals ch.1) and c_p (1.006 kJ/kg·K = 0.2403 Btu/lb·°F,
    ASHRAE Fundamentals ch.1 eq. 32): 38,880 × 1.1774/1.2014 × 0.2403/0.24 = 38,147 Btu/h."""
    rho_leaving = dry_air_density_kg_m3(t_c=(80 - 32) / 1.8)
    assert rho_leaving == pytest.approx(1.1774, abs=1e-4)
    rule = 1.08 * 1200 * 30
    assert rule == pytest.approx(38_880)
    scaled = rule * (rho_leaving / 1.2014) * (1006 / 4186.8 / 0.24)  # 1 Btu/lb·°F = 4186.8 J/kg·K
    assert scaled == pytest.approx(38_147, rel=1e-3)


def test_sensible_heat_at_the_entering_state_when_the_user_picks_it():
    """Picking "entering air" takes the density at 50 °F (1.2467 kg/m³), 5.9 % denser: 40,393 Btu/h."""
    rows = calculate(name="sensible-heat", values={**TYPED_US, "airflow_at": "entering"}, system="us")
    assert rows[0]["value"] == "40,393"
    rows_si = calculate(
        name="sensible-heat", values={"airflow_m3s": "566.3", "t_in_c": "10", "t_out_c": "26.7"}, system="si"
    )
    assert rows_si == [{"label": "Sensible heat added to the air", "value": "11.2", "unit": "kW"}]


def test_sensible_heat_refuses_an_unknown_state_in_plain_words():
    """A state that is neither entering nor leaving is refused, naming the field in plain words."""
    with pytest.raises(CalcError) as caught:
        calculate(name="sensible-heat", values={**TYPED_US, "airflow_at": "middle"}, system="us")
    (message,) = caught.value.errors["airflow_at"]
    assert message.startswith("Airflow measured at: choose leaving air")
    assert "airflow_at" not in message
