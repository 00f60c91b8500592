"""Which run-hour meter a runtime task is due by: the trend-fed fan meter while it is current, else the typed one.

The rule (``scheduling.engine.TREND_METER_CURRENT_DAYS`` = 7): a fan meter whose latest reading came from the
building-automation trend at most 7 days ago is the basis, where it reaches back to the task's last completion;
otherwise the unit's own typed meter. Switching basis moves the one open occurrence (re-keyed), never duplicates
it. The clock is set for every step; nothing depends on today's date.

Numbers (worked by hand): the unit's typed meter reads 10,000 h on 1 October 2026 and 10,900 h on 30 December
(10 h a day). The supply fan's trend-fed meter starts at 0 h on 20 December and gains 20 h a night to 200 h on
30 December. The filter change every 4,000 run-hours (scheduling.library) is then due:

- by the typed meter: at 12,000 h, (12,000 − 10,900) / 10 = 110 days after 30 December → 19 April 2027;
- by the trend: at 4,000 h, (4,000 − 200) / 20 = 190 days after 30 December → 8 July 2027.
"""

import datetime as dt

import pytest
import time_machine

from scheduling.engine import TREND_METER_CURRENT_DAYS, work_orders_generate
from scheduling.models import MeterReading, WorkOrderTask
from scheduling.services import meter_reading_record, task_library_install
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

pytestmark = pytest.mark.django_db
UTC = dt.UTC
TREND_START = dt.date(2026, 12, 20)
LAST = dt.datetime(2026, 12, 30, tzinfo=UTC)


def _at(day: dt.date) -> dt.datetime:
    return dt.datetime.combine(day, dt.time(), tzinfo=UTC)


@pytest.fixture
def unit():
    org = OrganisationFactory(name="Meter Air", slug="meter-air")
    site = SiteFactory(organisation=org, name="Heath Offices", time_zone="UTC")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-11")
    task_library_install()
    fan = ahu.components.get(name="Supply fan")
    with time_machine.travel(LAST + dt.timedelta(hours=1), tick=False):
        meter_reading_record(ahu=ahu, hours=10_000, taken_at=dt.datetime(2026, 10, 1, tzinfo=UTC))
        meter_reading_record(ahu=ahu, hours=10_900, taken_at=LAST)
        for i in range(11):
            meter_reading_record(
                ahu=ahu,
                hours=20.0 * i,
                taken_at=_at(TREND_START + dt.timedelta(days=i)),
                source=MeterReading.Source.BAS_TREND,
                component=fan,
            )
    return ahu, fan


def _generate(ahu, now: dt.datetime):
    with time_machine.travel(now, tick=False):
        return work_orders_generate(organisation=ahu.building.site.organisation, horizon_days=400)


def _filter_changes(ahu):
    return list(
        WorkOrderTask.objects.filter(
            ahu=ahu, task_code="filter_replace", component__name="Final filters", occurrence_key__startswith="h:"
        ).order_by("pk")
    )


def test_a_current_trend_fed_fan_meter_dates_the_runtime_task_over_the_typed_meter(unit):
    """With the trend's last reading a day old, the filter change is due by the trend's 20 h a day from 200 h."""
    ahu, fan = unit
    _generate(ahu, LAST + dt.timedelta(hours=6))
    [task] = _filter_changes(ahu)
    assert task.due_date == dt.date(2027, 7, 8)  # 30 Dec + 190 days
    assert task.occurrence_key == f"h:0:4000:fan{fan.pk}"


def test_when_the_trend_stops_for_longer_than_the_limit_the_typed_meter_is_used_again_without_a_duplicate(unit):
    """Eight days without a trend reading (more than 7): the same open occurrence moves to the typed meter's date
    and key; a trend reading again moves it back. One open filter change throughout."""
    ahu, fan = unit
    _generate(ahu, LAST + dt.timedelta(hours=6))
    assert TREND_METER_CURRENT_DAYS == 7
    # Still current on the 7th day after the last trend reading.
    _generate(ahu, LAST + dt.timedelta(days=7))
    [task] = _filter_changes(ahu)
    assert task.occurrence_key.endswith(f":fan{fan.pk}")

    _generate(ahu, LAST + dt.timedelta(days=8, hours=1))
    [task] = _filter_changes(ahu)
    assert task.occurrence_key == "h:0:12000"
    assert task.due_date == dt.date(2027, 4, 19)  # 30 Dec + 110 days, by the typed meter

    # The trend comes back: 8 silent days (no running counted) and 20 h on 8 January.
    with time_machine.travel(_at(dt.date(2027, 1, 8)) + dt.timedelta(hours=1), tick=False):
        meter_reading_record(
            ahu=ahu,
            hours=220.0,
            taken_at=_at(dt.date(2027, 1, 8)),
            source=MeterReading.Source.BAS_TREND,
            component=fan,
        )
    _generate(ahu, _at(dt.date(2027, 1, 8)) + dt.timedelta(hours=6))
    [task] = _filter_changes(ahu)
    assert task.occurrence_key == f"h:0:4000:fan{fan.pk}"


def test_a_trend_meter_begun_after_the_tasks_last_completion_leaves_the_task_on_the_typed_meter(unit):
    """The filters were changed on 1 December, before the trend-fed meter began (20 December): it cannot count the
    hours since that change, so the typed meter dates the next one: 10,000 h at the change (its reading at or
    before it) + 4,000 = 14,000 h, (14,000 − 10,900) / 10 = 310 days after 30 December."""
    from scheduling.models import WorkOrder

    ahu, _fan = unit
    _generate(ahu, LAST + dt.timedelta(hours=6))
    [task] = _filter_changes(ahu)
    WorkOrderTask.objects.filter(pk=task.pk).update(completed_at=dt.datetime(2026, 12, 1, 10, tzinfo=UTC))
    WorkOrder.objects.filter(pk=task.work_order_id).update(state=WorkOrder.State.COMPLETED)
    _generate(ahu, LAST + dt.timedelta(hours=7))
    open_tasks = [t for t in _filter_changes(ahu) if t.completed_at is None]
    assert [t.occurrence_key for t in open_tasks] == ["h:0:14000"]
    assert open_tasks[0].due_date == (LAST + dt.timedelta(days=310)).date()
