"""Season starts and degree-days. Climate normals here are invented for the
tests; only their shape (cold winter, warm summer) matters."""

from datetime import date

import pytest

from engineering import (
    HDD_BASE_65F_C,
    EngineeringInputError,
    Verdict,
    cooling_season_start,
    daily_minimums_from_normals,
    freeze_risk,
    freeze_season_start,
    freeze_trip_setting_check,
    heating_degree_days,
    heating_degree_days_65f,
)

NORTH_MIN = [-5, -4, 0, 4, 9, 13, 15, 14, 10, 6, 1, -3]  # invented, northern mid-latitude shape
SOUTH_MIN = [18, 18, 16, 12, 9, 6, 4, 6, 8, 11, 14, 16]  # invented, southern shape


def test_normals_are_met_at_mid_month_and_interpolated_between():
    days = dict(daily_minimums_from_normals(monthly_min_c=NORTH_MIN, start=date(2025, 1, 1), days=365))
    assert days[date(2025, 1, 16)] == pytest.approx(-5)  # mid-January (31-day month)
    assert days[date(2025, 7, 16)] == pytest.approx(15)
    assert -5 < days[date(2025, 2, 1)] < -4


def test_interpolation_wraps_over_the_new_year():
    days = dict(daily_minimums_from_normals(monthly_min_c=NORTH_MIN, start=date(2024, 12, 20), days=20))
    assert -5 < days[date(2025, 1, 1)] < -3


def test_northern_freeze_season_starts_in_autumn_even_when_searched_from_winter():
    """Searching from January (already cold) finds next autumn, not today."""
    series = daily_minimums_from_normals(monthly_min_c=NORTH_MIN, start=date(2025, 1, 1), days=730)
    start = freeze_season_start(daily_minimums=series)
    assert date(2025, 10, 1) <= start <= date(2025, 11, 15)
    assert start == freeze_season_start(daily_minimums=series, search_from=date(2025, 6, 1))


def test_southern_freeze_season_starts_around_june():
    series = daily_minimums_from_normals(monthly_min_c=SOUTH_MIN, start=date(2025, 1, 1), days=365)
    start = freeze_season_start(daily_minimums=series, threshold_c=5.0)
    assert date(2025, 6, 1) <= start <= date(2025, 7, 31)


def test_no_crossing_gives_none():
    series = daily_minimums_from_normals(monthly_min_c=[20] * 12, start=date(2025, 1, 1), days=365)
    assert freeze_season_start(daily_minimums=series) is None


def test_cooling_season_from_daily_maximums():
    maxima = [
        (d, t + 11) for d, t in daily_minimums_from_normals(monthly_min_c=NORTH_MIN, start=date(2025, 1, 1), days=365)
    ]
    start = cooling_season_start(daily_maximums=maxima, threshold_c=24.0)
    assert date(2025, 5, 15) <= start <= date(2025, 7, 16)


def test_heating_degree_days_by_daily_mean():
    # HDD = Σ max(0, base − mean), mean = (min+max)/2 (daily-mean method; from memory of ASHRAE Fundamentals ch.14).
    assert heating_degree_days(daily_min_max_c=[(0, 10), (20, 30), (15, 17)]) == pytest.approx(13 + 0 + 2)
    assert heating_degree_days(daily_mean_c=[18, 19]) == 0


def test_65f_base_in_fahrenheit_degree_days():
    # 65 °F = 18.33 °C; a day at 32 °F mean is 33 °F·day on the 65 °F base (definition).
    assert abs(HDD_BASE_65F_C - 18.3333) < 1e-4
    assert heating_degree_days_65f(daily_mean_c=[0.0]) == pytest.approx(33.0)


def test_freeze_risk_grades():
    assert freeze_risk(minimum_c=4.0).verdict is Verdict.FAIL
    assert freeze_risk(minimum_c=7.0).verdict is Verdict.WATCH
    assert freeze_risk(minimum_c=9.0).verdict is Verdict.OK


def test_wrong_number_of_normals_and_nan_are_refused():
    with pytest.raises(EngineeringInputError, match="12 values"):
        daily_minimums_from_normals(monthly_min_c=[1.0] * 11, start=date(2025, 1, 1), days=10)
    with pytest.raises(EngineeringInputError, match="not a finite number"):
        heating_degree_days(daily_mean_c=[float("nan")])


# The frost thermostat's band as the checklist sets it (inspections.checklists.FREEZE_TRIP_*), each value's source:
# - 2.0 °C (35.6 °F), fail below: common practice, a margin over the 1 °C (34 °F) of ASHRAE Guideline 36-2021
#   5.16.12.3 (its last freeze stage: supply air below 3.3 °C for 15 min or below 1 °C for 5 min shuts the unit
#   down; as summarised in PNNL's ConStrain rule library).
# - 2.5 °C (36.5 °F), bottom of the ok band: common practice (no published source).
# - 3.3 °C (38 °F), the usual setting: the 3.3 °C of the same Guideline 36 stage; 38 °F frost thermostats from memory.
# - 5.5 °C (41.9 °F), top of the ok band: common practice, covering the 5 °C (41 °F) setting usual in Europe (from
#   memory). A typical setting is thus 2–5 °C, about 36–41 °F (1.8 × °C + 32).
FREEZE_OK_LOW_C, FREEZE_OK_HIGH_C, FREEZE_FAIL_BELOW_C = 2.5, 5.5, 2.0


def test_the_band_here_is_the_checklists():
    """The values above are the ones the checklist ships (so the sources named here are the checklist's)."""
    from inspections.checklists import FREEZE_TRIP_OK, FREEZE_TRIP_WATCH

    assert FREEZE_TRIP_OK == (FREEZE_OK_LOW_C, FREEZE_OK_HIGH_C)
    assert FREEZE_TRIP_WATCH[0] == FREEZE_FAIL_BELOW_C


@pytest.mark.parametrize(
    ("trip_c", "verdict"),
    [
        (1.9, "fail"),
        (2.0, "watch"),
        (2.4, "watch"),
        (2.5, "ok"),
        (3.3, "ok"),
        (5.5, "ok"),
        (5.6, "watch"),
        (12.5, "watch"),
    ],
)
def test_a_trip_set_too_high_is_a_watch_too_low_a_failure(trip_c, verdict):
    chk = freeze_trip_setting_check(
        trip_c=trip_c, ok_low=FREEZE_OK_LOW_C, ok_high=FREEZE_OK_HIGH_C, fail_below=FREEZE_FAIL_BELOW_C
    )
    assert chk.verdict == verdict
    if trip_c > FREEZE_OK_HIGH_C:
        assert "set higher than needed, nuisance trips likely" in chk.reason
        assert chk.limits["above_band_k"] == pytest.approx(trip_c - FREEZE_OK_HIGH_C)
    else:
        assert chk.limits["above_band_k"] == 0.0


def test_a_trip_band_out_of_order_is_refused_by_name():
    with pytest.raises(EngineeringInputError) as e:
        freeze_trip_setting_check(trip_c=3.0, ok_low=FREEZE_OK_LOW_C, ok_high=FREEZE_OK_HIGH_C, fail_below=3.0)
    assert e.value.field == "ok_low"
