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


def test_the_rate_is_scipys_theil_sen_fit_to_the_last_bit():
    """``robust_rate`` calls scipy's Theil–Sen without its array wrapper: slope, intercept and Sen's interval are
    exactly what ``scipy.stats.theilslopes`` (method "joint") gives for the same points, repeated x included."""
    from scipy import stats

    sets = [
        [(0.0, 100.0), (100.0, 110.0), (250.0, 130.0), (400.0, 149.0), (420.5, 150.0)],
        [(1.0, 5.0), (1.0, 6.0), (2.0, 7.5), (3.0, 7.0), (5.0, 11.0), (8.0, 15.5), (13.0, 30.0)],
        [(0.0, 0.0), (1.0, 1.0)],
    ]
    for points in sets:
        xs, ys = [x for x, _ in points], [y for _, y in points]
        for confidence in (0.95, 0.8):
            expected = stats.theilslopes(ys, xs, alpha=confidence, method="joint")
            got = robust_rate(points=points, confidence=confidence)
            assert (got.slope, got.intercept) == (float(expected.slope), float(expected.intercept))
            assert (got.low, got.high) == (float(expected.low_slope), float(expected.high_slope))
