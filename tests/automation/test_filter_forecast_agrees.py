"""A filter row of the building-automation trend never says both "ok" (or "watch") and "change now".

The trend day's words are the change forecast of the line through the bank's points (``FilterLife.forecast_points``,
the trend days on the fan's meter). When that line is at its final pressure drop and the day itself has not failed,
the row said "change now" beside "ok": the forecast's words now come from the rule a technician's reading is worded
by (``inspections.evaluation.filter_checks.forecast_agreeing``): such a day is watched and both are to be
re-checked; a failed day says change now.

Final filters: clean 90 Pa, final 250 Pa at design airflow (tests.factories.inventory.FILTER_SPECS); the fan at
100 % speed gives design airflow by the first fan law, so each day's median is its own value at design airflow.
Bands of engineering.filters.filter_loading (common practice): watch from 75 % of the span (210 Pa), fail from
95 % (242 Pa). Four days at 260–275 Pa (over final) put the fitted line at its final value; the fifth day reaches
one band.
"""

import datetime as dt

import pytest
import time_machine

from automation.fault_models import FilterDay
from automation.judging import unit_day_judge
from inspections.evaluation.filter_checks import RECHECK_WORDS
from scheduling.services import task_library_install
from tests.automation.trend_builders import map_points, put_day
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

pytestmark = pytest.mark.django_db
DAY1 = dt.date(2026, 1, 12)
OVER_FINAL = [260, 265, 270, 275]  # Pa, each over the final 250 Pa


@pytest.fixture
def unit():
    org = OrganisationFactory(name="Trend Air", slug="trend-air")
    site = SiteFactory(organisation=org, name="Dune Offices", time_zone="UTC")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-07")
    task_library_install()
    return ahu, map_points(ahu)


def judge_days(unit, values: list[float]) -> list[FilterDay]:
    ahu, points = unit
    for i, dp in enumerate(values):
        day = DAY1 + dt.timedelta(days=i)
        start = dt.datetime.combine(day, dt.time(), tzinfo=dt.UTC)
        put_day(points, start, {"SF-STS": 1, "SF-SPD": 100, "FILT-DP": dp})
        with time_machine.travel(start + dt.timedelta(days=1, hours=1), tick=False):
            unit_day_judge(ahu=ahu, day=day)
    return list(FilterDay.objects.filter(component__name="Final filters").order_by("day"))


@pytest.mark.parametrize(
    ("last_dp", "verdict", "words"),
    [
        (150, "watch", RECHECK_WORDS),  # 38 % of the span, ok by itself: watched, both re-checked
        (225, "watch", RECHECK_WORDS),  # 84 %: watch
        (246, "fail", "at its final pressure drop by the trend: change now"),  # 98 %: fail
    ],
)
def test_a_day_below_a_line_at_final_is_worded_by_its_own_verdict(unit, last_dp, verdict, words):
    days = judge_days(unit, [*OVER_FINAL, last_dp])
    assert [d.verdict for d in days[:4]] == ["fail"] * 4
    last = days[-1]
    assert last.corrected_dp_pa == pytest.approx(last_dp, abs=0.5)
    assert last.verdict == verdict
    assert last.reason.endswith(f"; {words}"), last.reason
    if verdict != "fail":
        assert "change now" not in last.reason


def test_every_stored_day_agrees_with_its_forecast_words(unit):
    """Days rising through each band and past final, then falling back: no row says change now unless it failed."""
    days = judge_days(unit, [120, 180, 220, 260, 270, 200, 150])
    assert {d.verdict for d in days} >= {"ok", "watch", "fail"}
    for d in days:
        if "change now" in d.reason:
            assert d.verdict == "fail", (d.day, d.reason)
        if d.corrected_dp_pa >= 250:  # at or over final: change now, never a date ahead (as a reading says it)
            assert d.reason.endswith("; at or over its final pressure drop: change now"), d.reason


# A day the trend cannot judge, or one whose media reads torn or bypassed, gets no forecast words, as a technician's
# reading in that state gets none (``inspections.evaluation.filter_checks.forecast_said``): the line through the
# earlier days at its final value says nothing of filters that read below their clean value or cannot be judged.


def test_a_day_with_no_clean_value_in_the_registry_never_says_change_now(unit):
    from inventory.models import Component

    ahu, points = unit
    judge_days(unit, OVER_FINAL)
    bank = Component.objects.get(ahu=ahu, name="Final filters")
    bank.specs = {k: v for k, v in bank.specs.items() if k != "clean_dp_pa"}
    bank.save(update_fields=["specs"])
    day = DAY1 + dt.timedelta(days=len(OVER_FINAL))
    start = dt.datetime.combine(day, dt.time(), tzinfo=dt.UTC)
    put_day(points, start, {"SF-STS": 1, "SF-SPD": 100, "FILT-DP": 150})
    with time_machine.travel(start + dt.timedelta(days=1, hours=1), tick=False):
        unit_day_judge(ahu=ahu, day=day)
    last = FilterDay.objects.get(component=bank, day=day)
    assert last.verdict == ""
    assert last.reason == (
        "cannot judge the filter loading: the filter bank has no clean or final pressure drop in the registry"
    )


@pytest.mark.parametrize("last_dp", [30, 60, 80])  # 33 % of clean (fail), 67 % (watch), 89 % (below clean)
def test_a_day_reading_torn_bypassed_or_below_clean_gets_no_forecast_words(unit, last_dp):
    last = judge_days(unit, [*OVER_FINAL, last_dp])[-1]
    assert "change now" not in last.reason and "forecast" not in last.reason and "re-check" not in last.reason
    if last_dp < 72:
        assert "torn or bypassed media" in last.reason, last.reason
