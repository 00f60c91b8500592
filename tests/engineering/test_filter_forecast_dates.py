"""A filter change forecast is never dated before the readings it is made from."""

import datetime as dt

import pytest

from engineering.filters import FilterPoint, filter_forecast

QD = 2.0  # design airflow, m³/s; all points at design, so no correction (Δp × (Qd/Q)^n with Q = Qd)


def _points(dps: list[float], *, start_h: float = 1_000.0, h_per_day: float = 12.0, step_days: int = 30):
    day0 = dt.date(2025, 1, 6)
    return [
        FilterPoint(
            run_hours=start_h + i * step_days * h_per_day,
            dp_pa=dp,
            airflow_m3s=QD,
            when=day0 + dt.timedelta(days=i * step_days),
        )
        for i, dp in enumerate(dps)
    ]


def test_a_filter_already_over_its_final_value_is_due_now_not_in_the_past():
    """Readings 200, 260, 330 Pa against a final 250 Pa: the line crossed 250 Pa before the last reading.

    Worked by hand (common practice, linear extrapolation): the Theil–Sen slope of (1000 h, 200),
    (1360 h, 260), (1720 h, 330) is the median of 60/360, 130/720, 70/360 = 0.1806 Pa/h; the line
    reaches 250 Pa near 1,330 h, before the last reading at 1,720 h. The old forecast dated that
    about a month before the last reading; now it is the last reading's day, flagged as due now.
    """
    points = _points([200, 260, 330])
    fc = filter_forecast(points=points, design_airflow_m3s=QD, final_dp_pa=250)
    assert fc.run_hours_at_final < points[-1].run_hours
    assert fc.at_final_now is True
    last = points[-1].when
    assert fc.date_at_final == last
    assert fc.date_low == last
    assert fc.date_high is None or fc.date_high >= last


def test_a_meter_jump_cannot_date_the_change_years_back():
    """A last reading with a run-hour jump (30,000 h in a month) still gives no date before it."""
    points = _points([150, 170, 190])
    points.append(FilterPoint(run_hours=41_250, dp_pa=400, airflow_m3s=QD, when=dt.date(2025, 5, 6)))
    fc = filter_forecast(points=points, design_airflow_m3s=QD, final_dp_pa=250)
    for d in (fc.date_at_final, fc.date_low, fc.date_high):
        assert d is None or d >= dt.date(2025, 5, 6)


def test_a_forecast_ahead_keeps_its_date_and_is_not_due_now():
    """100, 130, 160 Pa, 30 days and 360 h apart, final 250 Pa: 90 Pa more at 30 Pa per 360 h.

    Worked by hand (linear extrapolation, common practice): 1,080 h more at 12 h a day = 90 days
    after the last reading (2025-03-07), so 2025-06-05.
    """
    points = _points([100, 130, 160])
    fc = filter_forecast(points=points, design_airflow_m3s=QD, final_dp_pa=250)
    assert fc.at_final_now is False
    assert fc.run_hours_at_final == pytest.approx(1_720 + 1_080)
    assert fc.date_at_final == dt.date(2025, 6, 5)


def test_a_last_reading_over_final_is_due_now_even_when_the_fitted_line_is_below():
    """Readings 100, 110, 120, 300 Pa (final 250 Pa): the last reading is over final, the fitted line is not.

    Worked by hand (Theil–Sen as scipy.stats.theilslopes, Sen 1968): run-hours 1000, 1360, 1720, 2080;
    pairwise slopes 10/360, 20/720, 200/1080, 10/360, 190/720, 180/360 Pa/h; median
    (0.02778 + 0.18519)/2 = 0.1065 Pa/h; intercept at the median run-hours 1540 h is the median Δp
    115 Pa, so the line reads 115 + 0.1065 × 540 = 172.5 Pa at 2080 h and would reach 250 Pa near
    2,800 h, about two months on. The reading itself is 300 Pa ≥ 250 Pa: due now, dated the last
    reading's day, never a future date (issue "One truth from reading to record").
    """
    points = _points([100, 110, 120, 300])
    fc = filter_forecast(points=points, design_airflow_m3s=QD, final_dp_pa=250)
    assert fc.rate_pa_per_hour == pytest.approx(0.1065, abs=5e-4)
    assert fc.at_final_now is True
    last = points[-1].when
    assert fc.date_at_final == last
    assert fc.date_low == last
    assert fc.date_high == last
    assert fc.run_hours_at_final == points[-1].run_hours


def test_a_last_reading_over_final_is_dated_even_without_a_run_hour_rate():
    """Over final with the run-hours per day unknown (all readings on one day) still gives the reading's
    day, not "no date": the filter is due now whatever the rate."""
    day = dt.date(2026, 3, 2)
    points = [
        FilterPoint(run_hours=h, dp_pa=dp, airflow_m3s=QD, when=day)
        for h, dp in ((1000, 100), (1360, 110), (1720, 120), (2080, 300))
    ]
    fc = filter_forecast(points=points, design_airflow_m3s=QD, final_dp_pa=250)
    assert fc.at_final_now is True
    assert fc.date_at_final == day
