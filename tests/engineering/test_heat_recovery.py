"""Heat-recovery temperature effectiveness and its check against design.

Formula: supply-side temperature ratio ε = (t_supply − t_outdoor)/(t_extract − t_outdoor),
EN 308:1997 / ASHRAE Handbook—HVAC Systems and Equipment, "Air-to-air energy recovery equipment"
(from memory). Uncertainty: GUM (JCGM 100:2008) §5.1.2 first-order propagation, worked by hand below.
Margins (5 / 15 points below design) are common practice, no published source.
"""

import pytest

from engineering import IndeterminateError, Verdict, heat_recovery_check, heat_recovery_effectiveness


def test_winter_reading_gives_the_temperature_ratio_and_its_uncertainty():
    """Outdoor 0 °C, extract 22 °C, supply after the exchanger 15.4 °C: ε = 15.4/22 = 0.700.

    u = 0.5 K × √((1/22)² + ((15.4 − 22)/22²)² + (15.4/22²)²) = 0.5 × √(0.0020661 + 0.0001860 + 0.0010124)
      = 0.5 × 0.05714 = 0.0286.
    """
    hr = heat_recovery_effectiveness(t_outdoor_c=0.0, t_supply_after_recovery_c=15.4, t_extract_c=22.0)
    assert hr.effectiveness == pytest.approx(0.700, abs=1e-9)
    assert hr.uncertainty == pytest.approx(0.0286, abs=0.0001)
    assert hr.extract_outdoor_difference_k == pytest.approx(22.0)


def test_summer_cooling_recovery_uses_the_same_ratio():
    """Outdoor 32 °C, extract 24 °C, supply 27.2 °C: ε = (27.2 − 32)/(24 − 32) = 4.8/8 = 0.60."""
    hr = heat_recovery_effectiveness(t_outdoor_c=32.0, t_supply_after_recovery_c=27.2, t_extract_c=24.0)
    assert hr.effectiveness == pytest.approx(0.60)


def test_outdoor_and_extract_too_close_are_refused():
    """Outdoor 19 °C and extract 22 °C differ by 3 K, below the 5 K minimum: no honest ratio."""
    with pytest.raises(IndeterminateError) as exc:
        heat_recovery_effectiveness(t_outdoor_c=19.0, t_supply_after_recovery_c=21.0, t_extract_c=22.0)
    assert exc.value.field == "t_extract_c" and exc.value.low == 5.0
    assert "differ by 3 K" in str(exc.value)


def test_supply_outside_the_outdoor_extract_range_is_refused():
    """Supply 30 °C between outdoor 0 °C and extract 22 °C is impossible (ε = 1.36): a heater upstream."""
    with pytest.raises(IndeterminateError) as exc:
        heat_recovery_effectiveness(t_outdoor_c=0.0, t_supply_after_recovery_c=30.0, t_extract_c=22.0)
    assert exc.value.field == "t_supply_after_recovery_c"


@pytest.mark.parametrize(
    ("design_pct", "verdict"),
    [
        (72, Verdict.OK),  # 2 points below design, within 5
        (80, Verdict.WATCH),  # 10 points below: beyond 5, within 15
        (90, Verdict.FAIL),  # 20 below; even 70 + 2.9 = 72.9 % is 17.1 below design
    ],
)
def test_measured_effectiveness_against_design(design_pct, verdict):
    chk = heat_recovery_check(effectiveness=0.70, uncertainty=0.0286, design_effectiveness_pct=design_pct)
    assert chk.verdict == verdict
    assert chk.limits["below_design_points"] == pytest.approx(design_pct - 70)


def test_a_band_reaching_the_fail_line_is_watch_not_decided():
    """70 % ± 3 points against 86 %: 16 points below, but 73 % is only 13 below → watch, not decided."""
    chk = heat_recovery_check(effectiveness=0.70, uncertainty=0.03, design_effectiveness_pct=86)
    assert chk.verdict == Verdict.WATCH and not chk.decided
    assert chk.reason.startswith("cannot decide")
