"""Theil–Sen rates."""

from datetime import date, timedelta

import pytest

from engineering import InsufficientDataError, robust_rate, run_hours_per_day


def test_theil_sen_ignores_one_wild_point():
    pts = [(x, 2.0 * x + 1.0) for x in range(10)]
    pts[4] = (4, 500.0)
    r = robust_rate(points=pts)
    assert r.slope == pytest.approx(2.0)
    assert r.intercept == pytest.approx(1.0)
    assert r.low <= r.slope <= r.high


def test_run_hours_per_day_from_meter_readings():
    readings = [(date(2025, 3, 1) + timedelta(days=7 * i), 1000 + 7 * 16.0 * i) for i in range(6)]
    assert run_hours_per_day(readings=readings).slope == pytest.approx(16.0)


def test_fewer_than_two_points_or_one_x_is_refused():
    with pytest.raises(InsufficientDataError, match="at least 2 points; got 1"):
        robust_rate(points=[(0, 1)])
    with pytest.raises(InsufficientDataError, match="same x"):
        robust_rate(points=[(1, 1), (1, 2)])
    with pytest.raises(InsufficientDataError):
        run_hours_per_day(readings=[(date(2025, 1, 1), 10.0)])
