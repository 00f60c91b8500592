"""A site-day's units are kept in one savepoint; when one unit's write is refused, the pass is taken back and made
again with each unit's day in a savepoint of its own: the refused unit's day is rolled back alone (its run-hour
readings and filter days gone, a note saying why) and the other units' days are kept as a first pass keeps them."""

import datetime as dt

import pytest
import time_machine
from django.core.exceptions import ValidationError

from automation import judging
from automation.fault_models import FilterDay
from automation.judging import trends_judge
from scheduling.models import MeterReading
from scheduling.services import task_library_install
from tests.automation.test_judging import DAY1, HEATING, STUCK_MAT, WORKING_MAT
from tests.automation.trend_builders import map_points, put_day
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit

pytestmark = pytest.mark.django_db
START = dt.datetime.combine(DAY1, dt.time(), tzinfo=dt.UTC)


def _site_of_three():
    """Three units on a UTC site; the second's outdoor-air damper is stuck open (FC6 opens a fault)."""
    site = SiteFactory(organisation=OrganisationFactory(), time_zone="UTC")
    building = BuildingFactory(site=site)
    units = []
    for i, mat in enumerate((WORKING_MAT, STUCK_MAT, WORKING_MAT)):
        ahu = make_full_unit(building=building, tag=f"AHU-{i + 1:02d}")
        put_day(map_points(ahu), START, {**HEATING, "MAT": mat, "FILT-DP": 150})
        units.append(ahu)
    return site, units


def _judged(site):
    with time_machine.travel(START + dt.timedelta(days=1, hours=1), tick=False):
        return trends_judge(site=site, start=DAY1, end=DAY1).days


def test_a_refused_unit_is_rolled_back_alone_and_the_others_kept(monkeypatch):
    task_library_install()
    site, (first, refused, third) = _site_of_three()
    feed, calls = judging.filter_feed, []

    def refusing(*, trends, **kw):
        calls.append(trends.ahu.pk)
        if trends.ahu.pk == refused.pk:  # after its run-hour readings were written
            raise ValidationError({"reading": ["Reading: refused for this test; allowed: nothing"]})
        return feed(trends=trends, **kw)

    monkeypatch.setattr(judging, "filter_feed", refusing)
    days = {d.ahu.pk: d for d in _judged(site)}
    # The fast pass stopped at the refused unit; the careful pass judged all three again.
    assert calls == [first.pk, refused.pk, first.pk, refused.pk, third.pk]
    assert days[refused.pk].notes == ["not judged: Reading: refused for this test; allowed: nothing"]
    assert days[refused.pk].faults is None and not days[refused.pk].opened
    assert not MeterReading.objects.filter(ahu=refused).exists()
    assert not FilterDay.objects.filter(component__ahu=refused).exists()
    for ahu in (first, third):
        assert days[ahu.pk].faults is not None and days[ahu.pk].run_hours.reading is not None
        assert MeterReading.objects.filter(ahu=ahu).count() == 2  # the meter's first day: 0 h at its start
        assert FilterDay.objects.filter(component__ahu=ahu).exists()


def test_a_site_day_judged_in_one_pass_keeps_what_the_careful_pass_would(monkeypatch):
    """The same site judged with the fast pass and, on a twin site, with every unit's day refused-then-kept
    carefully (a refusal of nothing forces the careful pass): the same readings, filter days and faults."""
    task_library_install()
    fast_site, _ = _site_of_three()
    fast = _judged(fast_site)
    careful_site, _ = _site_of_three()
    keep, forced = judging.site_day_keep, []

    def forcing(*args, careful, **kw):
        if not careful and not forced:
            forced.append(True)
            raise ValidationError("forced: the careful pass")
        return keep(*args, careful=careful, **kw)

    monkeypatch.setattr(judging, "site_day_keep", forcing)
    careful = _judged(careful_site)
    assert forced == [True]

    def outcome(days):
        return [
            (
                d.ahu.tag,
                round(d.run_hours.reading.hours, 3),
                sorted(f.code for f in d.opened),
                sorted((f.bank.name, f.day.verdict, f.day.reason) for f in d.filters if f.day is not None),
                d.notes,
            )
            for d in days
        ]

    assert outcome(fast) == outcome(careful)
    assert sorted(f.code for d in fast for f in d.opened) == ["FC6"]
