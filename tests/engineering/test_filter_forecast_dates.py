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
