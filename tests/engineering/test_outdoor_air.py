"""Outdoor-air fraction: mixing balance, propagated uncertainty, refusals."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from engineering import (
    EngineeringInputError,
    IndeterminateError,
    Verdict,
    fraction_check,
    oa_fraction_from_co2,
    oa_fraction_from_temperatures,
    outdoor_airflow_m3s,
)


def test_temperature_method_mixing_balance():
    # x = (t_r − t_m)/(t_r − t_o): ASHRAE Handbook—Fundamentals 2017 ch.1,
    # adiabatic mixing eq. 46–47 (sensible form). 22 °C return, 0 °C outdoor,
    # 16.5 °C mixed → 5.5/22 = 0.25.
    f = oa_fraction_from_temperatures(t_outdoor_c=0.0, t_return_c=22.0, t_mixed_c=16.5)
    assert f.fraction == pytest.approx(0.25)
    assert f.method == "temperature"
    assert f.low < 0.25 < f.high


@settings(max_examples=60, deadline=None)
@given(
    t_o=st.floats(min_value=-30.0, max_value=40.0),
    t_r=st.floats(min_value=18.0, max_value=28.0),
    x=st.floats(min_value=0.0, max_value=1.0),
    acc=st.floats(min_value=0.05, max_value=1.0),
)
def test_uncertainty_equals_root_sum_square_of_numerical_sensitivities(t_o, t_r, x, acc):
    """The propagated uncertainty is the GUM (JCGM 100:2008 §5.1.2) root-sum-square
    of each sensor's accuracy times the fraction's sensitivity to it."""
    if abs(t_r - t_o) < 8.0:
        return
    t_m = t_r - x * (t_r - t_o)
    try:
        f = oa_fraction_from_temperatures(t_outdoor_c=t_o, t_return_c=t_r, t_mixed_c=t_m, sensor_accuracy_k=acc)
    except IndeterminateError:
        return

    def frac(o, r, m):
        return (r - m) / (r - o)

    h = 1e-5
    sens = [
        (frac(t_o + h, t_r, t_m) - frac(t_o - h, t_r, t_m)) / (2 * h),
        (frac(t_o, t_r + h, t_m) - frac(t_o, t_r - h, t_m)) / (2 * h),
        (frac(t_o, t_r, t_m + h) - frac(t_o, t_r, t_m - h)) / (2 * h),
    ]
    expected = sum((s * acc) ** 2 for s in sens) ** 0.5
    assert f.uncertainty == pytest.approx(expected, rel=1e-4)
    assert f.raw_fraction == pytest.approx(x, abs=1e-9)


def test_co2_method_and_its_larger_uncertainty():
    # (900 − 780)/(900 − 420) = 0.25; sensors ±(50 ppm + 3 %), a typical NDIR
    # specification (common practice).
    f = oa_fraction_from_co2(co2_outdoor_ppm=420.0, co2_return_ppm=900.0, co2_supply_or_mixed_ppm=780.0)
    t = oa_fraction_from_temperatures(t_outdoor_c=0.0, t_return_c=22.0, t_mixed_c=16.5)
    assert f.fraction == pytest.approx(0.25)
    assert f.uncertainty > t.uncertainty


def test_outdoor_and_return_too_alike_is_indeterminate():
    """Outdoor 20.5 °C against return 22 °C (1.5 K apart, less than the 3 K
    minimum — common practice) gives no fraction."""
    with pytest.raises(IndeterminateError) as exc:
        oa_fraction_from_temperatures(t_outdoor_c=20.5, t_return_c=22.0, t_mixed_c=21.0)
    assert "at least 3 K" in str(exc.value) and "1.5 K" in str(exc.value)
    assert isinstance(exc.value, EngineeringInputError) and exc.value.low == 3.0


def test_co2_too_alike_is_indeterminate():
    with pytest.raises(IndeterminateError, match="at least 100 ppm"):
        oa_fraction_from_co2(co2_outdoor_ppm=420.0, co2_return_ppm=480.0, co2_supply_or_mixed_ppm=450.0)


def test_uncertainty_too_large_is_indeterminate():
    """350 ppm apart with ±(50 ppm + 3 %) sensors is ±0.5 (± 50 points) or worse: meaningless; the texts
    say the uncertainty in percentage points, as the checklist's reasons do."""
    with pytest.raises(IndeterminateError, match=r"± 50 points or more"):
        oa_fraction_from_co2(co2_outdoor_ppm=420.0, co2_return_ppm=560.0, co2_supply_or_mixed_ppm=500.0)


def test_mixed_outside_the_outdoor_return_range_is_refused():
    with pytest.raises(IndeterminateError, match="not between outdoor"):
        oa_fraction_from_temperatures(t_outdoor_c=0.0, t_return_c=22.0, t_mixed_c=25.0)


def test_mixed_slightly_outside_within_accuracy_is_clipped():
    f = oa_fraction_from_temperatures(t_outdoor_c=0.0, t_return_c=22.0, t_mixed_c=22.2)
    assert f.fraction == 0.0 and f.raw_fraction < 0


def test_outdoor_airflow_and_bad_fraction():
    assert outdoor_airflow_m3s(fraction=0.25, supply_airflow_m3s=4.0) == pytest.approx(1.0)
    with pytest.raises(EngineeringInputError, match=r"fraction=1\.2 is outside 0–1"):
        outdoor_airflow_m3s(fraction=1.2, supply_airflow_m3s=4.0)


@pytest.mark.parametrize(
    ("fraction", "uncertainty", "verdict", "decided"),
    [
        (0.30, 0.05, Verdict.OK, True),
        (0.10, 0.05, Verdict.FAIL, True),
        (0.22, 0.05, Verdict.WATCH, False),
    ],
)
def test_fraction_check_cannot_decide_when_band_straddles_minimum(fraction, uncertainty, verdict, decided):
    c = fraction_check(fraction=fraction, uncertainty=uncertainty, minimum=0.2)
    assert c.verdict is verdict and c.decided is decided
    if not decided:
        assert c.reason.startswith("cannot decide")


def test_nan_temperature_is_refused():
    with pytest.raises(EngineeringInputError, match="t_mixed_c=nan is not a finite number"):
        oa_fraction_from_temperatures(t_outdoor_c=0.0, t_return_c=22.0, t_mixed_c=float("nan"))
