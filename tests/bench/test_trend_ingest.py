"""The trend-ingest benchmark scenario (bench/trends.py) at a tiny size: every value stored, every unit judged."""

import datetime as dt

import numpy as np
import pytest
import time_machine

from automation.models import Point, TrendDay
from automation.vocabulary import PLAUSIBLE
from bench import trends
from bench.generate import portfolio_generate
from bench.scenarios import WrongOutcome

pytestmark = pytest.mark.django_db
TODAY = dt.date(2025, 12, 3)
DAY = TODAY - dt.timedelta(days=1)
NOW = dt.datetime(2025, 12, 3, 12, 0, tzinfo=dt.UTC)


@pytest.fixture
def portfolio():
    with time_machine.travel(NOW, tick=False):
        yield portfolio_generate(sites=2, ahus=6, years=1, today=TODAY)


def _run(portfolio):
    with time_machine.travel(NOW, tick=False):
        return trends.trend_ingest(ahu_ids=portfolio.main.ahu_ids, day=DAY, runs=2)


def test_a_tiny_day_is_stored_whole_and_every_unit_judged(portfolio):
    """6 units × 20 points × 96 samples = 11,520 values, each in the day buckets; each unit judged once."""
    out = _run(portfolio)
    assert out["values"] == 6 * 20 * 96 == 11_520
    assert Point.objects.filter(ahu_id__in=portfolio.main.ahu_ids).count() == 120
    stored = sum(TrendDay.objects.filter(point__ahu_id__in=portfolio.main.ahu_ids).values_list("count", flat=True))
    assert stored == 11_520
    assert out["judged_units"] == 6 and out["run_hour_readings"] == 6
    assert out["ingest_s"] > 0 and out["baseline_s"] > 0 and out["values_per_s"] > 0
    assert set(out["targets"]) == {"ingest_over_baseline <= 3", "judge_over_ingest <= 2"}


def test_a_value_lost_on_the_way_fails_the_scenario(portfolio, monkeypatch):
    """The writer storing one value fewer than sent is a wrong outcome, named with both counts."""
    whole = trends.site_samples

    def short(*args, **kwargs):
        out = whole(*args, **kwargs)
        first = next(iter(out.values()))
        first.pop(next(iter(first)))
        return out

    monkeypatch.setattr(trends, "site_samples", short)
    with pytest.raises(WrongOutcome, match="values sent"):
        _run(portfolio)


def test_a_unit_not_judged_fails_the_scenario(portfolio, monkeypatch):
    judge = trends._judge
    monkeypatch.setattr(trends, "_judge", lambda by_site, day: judge(by_site, day)[1:])
    with pytest.raises(WrongOutcome, match="1 of 6 units not judged"):
        _run(portfolio)


def test_values_are_seeded_and_plausible_for_each_points_unit(portfolio):
    """The same seed gives the same day; every value lies in its point's plausible range (automation.vocabulary)."""
    units = trends.points_build(ahu_ids=portfolio.main.ahu_ids)
    a, b = trends.day_values(units, seed=3), trends.day_values(units, seed=3)
    assert all(np.array_equal(a[k], b[k]) for k in a)
    unit_of = dict(Point.objects.filter(ahu_id__in=units.ahu_ids).values_list("pk", "unit"))
    for i, ids in enumerate(units.point_ids):
        for point_id, signal in zip(ids, units.signals[i], strict=True):
            low, high = PLAUSIBLE[unit_of[point_id]]
            row = a[signal][i]
            assert row.shape == (96,) and (row >= low).all() and (row <= high).all(), (signal, row.min(), row.max())
