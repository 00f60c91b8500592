"""The shared filter series takes points from registered sources, each labelled, and forecasts on one meter's scale.

Hand-built points (no database): a technician's reading carries the unit's typed meter (10,000 h), a trend day the
trend-fed fan meter (from 0 h); where the two are within a day of each other the trend days are shifted by the two
meters' difference (here 10,000 − 100 = 9,900 h), so one line is fitted over both.
"""

import datetime as dt

from engineering.filters import FilterPoint
from inspections.selectors import (
    FILTER_READING,
    FILTER_TREND,
    FilterLife,
    FilterSeriesPoint,
    filter_sources_words,
)
from inspections.selectors.filter_banks import _with_points

UTC = dt.UTC


def _p(day: int, hours: float, source: str, dp: float = 150.0) -> FilterSeriesPoint:
    return FilterSeriesPoint(
        at=dt.datetime(2027, 1, day, tzinfo=UTC),
        inspection_id=day if source == FILTER_READING else None,
        dp_pa=dp,
        airflow_m3s=3.0,
        corrected_dp_pa=dp,
        run_hours=hours,
        after_change=False,
        source=source,
    )


def test_trend_points_join_the_set_fitted_at_their_time_and_are_labelled():
    """A change on 10 January: trend days before it belong to the earlier filters, after it to the new set."""
    change = dt.datetime(2027, 1, 10, tzinfo=UTC)
    lives = [
        FilterLife(changed_at=None, points=(_p(2, 9_000, FILTER_READING),)),
        FilterLife(changed_at=change, points=(_p(11, 10_000, FILTER_READING),)),
    ]
    merged = _with_points(lives, [_p(5, 50, FILTER_TREND), _p(12, 100, FILTER_TREND)])
    assert [[p.at.day for p in life.points] for life in merged] == [[2, 5], [11, 12]]
    assert merged[1].points[1].source_label == "building-automation trend"
    assert filter_sources_words(points=[p for life in merged for p in life.points]) == (
        "2 technician readings and 2 building-automation trend days"
    )


def test_the_forecast_puts_trend_days_on_the_typed_meters_scale():
    """A reading at 10,000 h on 11 January beside a trend day at 100 h on 12 January: trend days get +9,900 h."""
    life = FilterLife(
        changed_at=None,
        points=(_p(11, 10_000, FILTER_READING), _p(12, 100, FILTER_TREND), _p(13, 120, FILTER_TREND)),
    )
    assert [p.run_hours for p in life.forecast_points()] == [10_000, 10_000, 10_020]


def test_without_a_reading_near_a_trend_day_the_larger_source_is_used_alone():
    life = FilterLife(
        changed_at=None,
        points=(_p(1, 9_000, FILTER_READING), _p(20, 100, FILTER_TREND), _p(21, 120, FILTER_TREND)),
    )
    assert [p.run_hours for p in life.forecast_points()] == [100, 120]


def test_with_no_reading_near_a_trend_day_the_newest_evidence_is_used_alone():
    """Three trend days, then a technician's reading a week later on the typed meter: the reading's own meter
    (the newest evidence), never the trend days' with the new reading's 10,000 h laid after their 120 h."""
    life = FilterLife(
        changed_at=None,
        points=(
            _p(1, 9_000, FILTER_READING),
            _p(5, 100, FILTER_TREND),
            _p(6, 110, FILTER_TREND),
            _p(7, 120, FILTER_TREND),
        ),
    )
    assert [p.run_hours for p in life.forecast_points()] == [100, 110, 120]
    reading = FilterPoint(run_hours=9_500, dp_pa=100.0, airflow_m3s=3.0, when=dt.datetime(2027, 1, 14, tzinfo=UTC))
    assert [p.run_hours for p in life.forecast_points(reading)] == [9_000, 9_500]
    # Within a day of the last trend day, the new reading puts the trend days on its meter: +9,380 h.
    near = FilterPoint(run_hours=9_500, dp_pa=100.0, airflow_m3s=3.0, when=dt.datetime(2027, 1, 7, 12, tzinfo=UTC))
    assert [p.run_hours for p in life.forecast_points(near)] == [9_000, 9_480, 9_490, 9_500, 9_500]
